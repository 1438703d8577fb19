package cluster

import (
	"cmp"
	"math"
	"slices"
)

// A Member is one variable of a cluster.
type Member struct {
	Index int    // 0-based index into Input.Names
	Name  string // Input.Names[Index]
	Group string // Input.Groups[Index], or ""
}

// A Pair is two variables and the strength between them.
type Pair struct {
	A, B     int // 0-based indexes into Input.Names, A < B
	Strength float64
}

// A Cluster is a group of two or more variables from a cut.
type Cluster struct {
	ID      int      // 1-based position in Partition.Clusters
	Members []Member // sorted by Name, then Index
	// Cohesion is the mean strength over the pairs of members whose strength is known;
	// NaN when none is.
	Cohesion float64
	Pairs    int // number of member pairs, n(n−1)/2
	Unknown  int // number of member pairs whose strength is unknown (left out of Cohesion)
	// Top holds the strongest known member pairs, at most the topK asked of Summarize, by
	// decreasing strength, then increasing A, then B.
	Top []Pair
}

// A Partition is a flat clustering of the variables, summarised.
type Partition struct {
	// Of is the cluster of each variable: an index into Clusters (0-based), or −1 when the
	// variable is a singleton.
	Of []int
	// Clusters holds the clusters of two or more variables, by decreasing size, then
	// decreasing Cohesion (NaN last), then first member name.
	Clusters []Cluster
	// Singletons holds the variables that are alone in their cluster, sorted by Name.
	Singletons []Member
	// Silhouette is the mean silhouette width of the clustering ([Silhouette]); NaN when it
	// has fewer than 2 or more than p − 1 clusters.
	Silhouette float64
}

// Summarize describes the flat clustering labels (any integers, one per variable, as returned
// by the Tree's Cut methods) of in's variables, listing at most topK strongest pairs per
// cluster (topK ≤ 0: none). Summarize panics with "cluster: labels length mismatch" when
// len(labels) != in.Len(); in must be valid ([Input.Validate]).
func Summarize(in Input, labels []int, topK int) *Partition {
	p := in.Len()
	if len(labels) != p {
		panic("cluster: labels length mismatch")
	}
	groups := map[int][]int{}
	var order []int // labels in order of first appearance, for a map-free walk
	for i, l := range labels {
		if _, ok := groups[l]; !ok {
			order = append(order, l)
		}
		groups[l] = append(groups[l], i)
	}
	member := func(i int) Member { return Member{Index: i, Name: in.Names[i], Group: in.Group(i)} }
	byName := func(a, b Member) int {
		return cmp.Or(cmp.Compare(a.Name, b.Name), cmp.Compare(a.Index, b.Index))
	}
	part := &Partition{Of: make([]int, p), Silhouette: Silhouette(in, labels)}
	for _, l := range order {
		idx := groups[l]
		if len(idx) == 1 {
			part.Singletons = append(part.Singletons, member(idx[0]))
			continue
		}
		c := Cluster{Pairs: len(idx) * (len(idx) - 1) / 2}
		var sum float64
		var known []Pair
		for x, i := range idx {
			c.Members = append(c.Members, member(i))
			for _, j := range idx[x+1:] {
				s := in.At(i, j)
				if math.IsNaN(s) {
					c.Unknown++
					continue
				}
				sum += s
				known = append(known, Pair{A: i, B: j, Strength: s})
			}
		}
		c.Cohesion = math.NaN()
		if len(known) > 0 {
			c.Cohesion = sum / float64(len(known))
		}
		slices.SortFunc(c.Members, byName)
		slices.SortFunc(known, func(a, b Pair) int {
			return cmp.Or(cmp.Compare(b.Strength, a.Strength), cmp.Compare(a.A, b.A), cmp.Compare(a.B, b.B))
		})
		if topK > 0 {
			c.Top = slices.Clip(known[:min(topK, len(known))])
		}
		part.Clusters = append(part.Clusters, c)
	}
	slices.SortFunc(part.Singletons, byName)
	slices.SortFunc(part.Clusters, func(a, b Cluster) int {
		return cmp.Or(
			cmp.Compare(len(b.Members), len(a.Members)),
			cmp.Compare(b.Cohesion, a.Cohesion), // cmp.Compare puts NaN first: reversed, last
			cmp.Compare(a.Members[0].Name, b.Members[0].Name),
			cmp.Compare(a.Members[0].Index, b.Members[0].Index))
	})
	for i := range part.Of {
		part.Of[i] = -1
	}
	for ci := range part.Clusters {
		part.Clusters[ci].ID = ci + 1
		for _, m := range part.Clusters[ci].Members {
			part.Of[m.Index] = ci
		}
	}
	return part
}
