package signals

import (
	"cmp"
	"context"
	"fmt"
	"slices"

	"github.com/crossform/crossform/cluster"
)

// Defaults of subject clustering.
const (
	// DefaultClusterMaxRows bounds the subjects clustered: the full distance
	// matrix needs 8·n² bytes and the hierarchy two condensed copies more.
	DefaultClusterMaxRows = 3000
	// DefaultClusterMaxK is the largest number of clusters the silhouette cut
	// considers.
	DefaultClusterMaxK = 8
)

// SubjectClusters is a flat clustering of subjects on the Gower distance.
type SubjectClusters struct {
	// Of holds each row's cluster, 1-based, numbered by decreasing size then
	// first row.
	Of         []int
	Sizes      []int   // Sizes[c−1] is the size of cluster c
	Height     float64 // cut height (a Gower distance)
	Silhouette float64 // mean silhouette width of the cut (Rousseeuw 1987)
	PerSite    []SiteCluster
}

// A SiteCluster counts the subjects of one site in one cluster.
type SiteCluster struct {
	Site    string
	Cluster int // 1-based
	N       int
	// SiteShare is N over the site's subjects; StudyShare the cluster's size over
	// all subjects: a site whose SiteShare far exceeds StudyShare has an unusual
	// mix of subjects.
	SiteShare, StudyShare float64
}

// ClusterSubjects clusters the rows of g with average linkage (UPGMA) by
// package cluster's Hierarchy, passing strength 1 − d (an undefined distance
// becomes an unknown strength, which cluster treats as distance 1), and cuts
// the tree where the mean silhouette width is largest among 2 … maxK clusters
// (Tree.CutAuto). labels name the rows and must be unique; sites may be nil.
// It refuses more than maxRows rows (the matrix is held in full).
func ClusterSubjects(ctx context.Context, g *Gower, labels, sites []string, maxK, maxRows, workers int) (*SubjectClusters, error) {
	n := g.Len()
	if n > maxRows {
		return nil, fmt.Errorf("signals: %d subjects to cluster, more than the limit %d", n, maxRows)
	}
	if n < 3 {
		return nil, fmt.Errorf("signals: %d subjects, too few to cluster", n)
	}
	cond, err := g.Condensed(ctx, workers)
	if err != nil {
		return nil, err
	}
	in := cluster.Input{Names: labels, Strength: make([]float64, n*n)}
	for i := range n {
		for j := i + 1; j < n; j++ {
			s := 1 - cond[CondensedIndex(n, i, j)]
			in.Strength[i*n+j], in.Strength[j*n+i] = s, s
		}
		in.Strength[i*n+i] = 1
	}
	tree, err := cluster.Hierarchy(in, cluster.Average)
	if err != nil {
		return nil, fmt.Errorf("signals: clustering subjects: %w", err)
	}
	lab, h, sil := tree.CutAuto(maxK)
	// Renumber by size (largest first), then first row.
	size := map[int]int{}
	first := map[int]int{}
	for i, l := range lab {
		if _, ok := first[l]; !ok {
			first[l] = i
		}
		size[l]++
	}
	var ids []int
	for l := range size {
		ids = append(ids, l)
	}
	slices.SortFunc(ids, func(a, b int) int {
		if c := cmp.Compare(size[b], size[a]); c != 0 {
			return c
		}
		return cmp.Compare(first[a], first[b])
	})
	renum := map[int]int{}
	res := &SubjectClusters{Of: make([]int, n), Height: h, Silhouette: sil}
	for k, l := range ids {
		renum[l] = k + 1
		res.Sizes = append(res.Sizes, size[l])
	}
	for i, l := range lab {
		res.Of[i] = renum[l]
	}
	siteN := map[string]int{}
	count := map[[2]string]int{}
	var siteList []string
	for i := range n {
		s := ""
		if sites != nil {
			s = sites[i]
		}
		if siteN[s] == 0 {
			siteList = append(siteList, s)
		}
		siteN[s]++
		count[[2]string{s, fmt.Sprint(res.Of[i])}]++
	}
	slices.Sort(siteList)
	for _, s := range siteList {
		for c := 1; c <= len(res.Sizes); c++ {
			k := count[[2]string{s, fmt.Sprint(c)}]
			if k == 0 {
				continue
			}
			res.PerSite = append(res.PerSite, SiteCluster{Site: s, Cluster: c, N: k,
				SiteShare: float64(k) / float64(siteN[s]), StudyShare: float64(res.Sizes[c-1]) / float64(n)})
		}
	}
	return res, nil
}
