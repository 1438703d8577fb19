package cluster

import (
	"math"
)

// DefaultMinStrength is the default strength threshold for [Tree.CutStrength]: variables end
// up together when their linkage distance is at most 1 − 0.3 = 0.7, i.e. their (average,
// single or complete) strength is at least 0.3. In the usual reading of a correlation
// (e.g. Cohen 1988, Statistical Power Analysis, 2nd ed., §3.2: 0.1 small, 0.3 medium, 0.5
// large) 0.3 is the lower end of a medium association: weaker relations are rarely the basis
// of a consistency rule.
const DefaultMinStrength = 0.3

// CutHeight returns a flat clustering: labels[i] is the cluster of variable i, numbered
// 0, 1, … in order of first appearance in [Tree.Leaves]. Two variables share a cluster when
// the merges joining them all have Height ≤ h (scipy fcluster(Z, h, criterion="distance"),
// up to the numbering of the clusters).
func (t *Tree) CutHeight(h float64) []int {
	return t.cutMerges(func(k int) bool { return t.Merges[k].Height <= h })
}

// CutStrength returns [Tree.CutHeight](1 − s): see [DefaultMinStrength].
func (t *Tree) CutStrength(s float64) []int {
	return t.CutHeight(1 - s)
}

// CutCount returns the flat clustering with at most k clusters at the lowest height that gives
// no more than k (scipy fcluster(Z, k, criterion="maxclust")). Merges tied at the cut height
// are all applied, so there are fewer than k clusters when the k-th merge from the top is tied
// with the one below it. k ≤ 1 gives one cluster, k ≥ p gives p. (scipy 1.10.1's fcluster
// never cuts below the second-lowest merge, so for k = p − 1 it returns p − 2 clusters where
// CutCount returns p − 1.)
func (t *Tree) CutCount(k int) []int {
	if k >= t.p {
		return t.cutMerges(func(int) bool { return false })
	}
	if k < 1 {
		k = 1
	}
	return t.CutHeight(t.Merges[t.p-k-1].Height)
}

// cutMerges applies the merges for which keep returns true and labels the leaves. A merge is
// applied only when its children's merges are (a cut never separates a cluster's inside).
func (t *Tree) cutMerges(keep func(k int) bool) []int {
	p := t.p
	parent := make([]int, 2*p-1)
	applied := make([]bool, p-1)
	for i := range parent {
		parent[i] = i
	}
	for k, mg := range t.Merges {
		ok := keep(k)
		for _, c := range []int{mg.A, mg.B} {
			if c >= p && !applied[c-p] {
				ok = false
			}
		}
		if ok {
			applied[k] = true
			parent[mg.A], parent[mg.B] = p+k, p+k
		}
	}
	root := func(x int) int {
		for parent[x] != x {
			x = parent[x]
		}
		return x
	}
	labels := make([]int, p)
	ids := map[int]int{}
	for _, leaf := range t.Leaves() {
		r := root(leaf)
		id, ok := ids[r]
		if !ok {
			id = len(ids)
			ids[r] = id
		}
		labels[leaf] = id
	}
	return labels
}

// CutAuto returns the flat clustering, among the cuts between two distinct merge heights with
// 2 ≤ k ≤ maxK clusters, whose mean silhouette width ([Silhouette]) is largest; ties go to the
// lower cut (more clusters). maxK ≤ 0 or ≥ p means p − 1. It also returns the cut height (a
// merge height: any h from there up to the next merge height gives the same clusters) and the
// silhouette. With fewer than 3 variables no such cut exists and CutAuto returns all
// variables as singletons, height 0 and silhouette NaN.
//
// The silhouette of every candidate cut is updated incrementally along the merges, in
// O(p·k) per candidate: O(p³) in the worst case, about 0.9 s for p = 1,000 (BenchmarkCutAuto);
// pass a smaller maxK to bound it.
func (t *Tree) CutAuto(maxK int) (labels []int, height, silhouette float64) {
	p := t.p
	if maxK <= 0 || maxK >= p {
		maxK = p - 1
	}
	if p < 3 || maxK < 2 {
		return t.cutMerges(func(int) bool { return false }), 0, math.NaN()
	}
	// sum[i*p+s] is the sum of distances from variable i to the members of the cluster that
	// lives in slot s; a cluster lives in the slot of its lowest leaf.
	sum := make([]float64, p*p)
	for i := 0; i < p; i++ {
		for j := 0; j < p; j++ {
			sum[i*p+j] = t.Distance(i, j)
		}
	}
	own := make([]int, p)  // slot of each variable's cluster
	size := make([]int, p) // cluster size by slot, 0 when the slot is empty
	alive := make([]int, p)
	for i := range own {
		own[i], size[i], alive[i] = i, 1, i
	}
	inv := make([]float64, p) // 1/size, by slot
	for i := range inv {
		inv[i] = 1
	}
	slot := make([]int, 2*p-1) // slot by cluster id
	for i := 0; i < p; i++ {
		slot[i] = i
	}
	best, bestK := math.Inf(-1), -1
	for k, mg := range t.Merges {
		a, b := slot[mg.A], slot[mg.B]
		if b < a {
			a, b = b, a
		}
		slot[p+k] = a
		for i := 0; i < p; i++ {
			sum[i*p+a] += sum[i*p+b]
			if own[i] == b {
				own[i] = a
			}
		}
		size[a] += size[b]
		size[b] = 0
		inv[a] = 1 / float64(size[a])
		for j, s := range alive {
			if s == b {
				alive[j] = alive[len(alive)-1]
				alive = alive[:len(alive)-1]
				break
			}
		}
		nk := p - 1 - k // clusters after this merge
		if nk > maxK || nk < 2 || t.Merges[k+1].Height == mg.Height {
			continue
		}
		if s := silhouetteSums(sum, own, size, alive, p, inv); s > best {
			best, bestK = s, k
		}
	}
	if bestK < 0 { // every candidate cut was tied away
		return t.cutMerges(func(int) bool { return false }), 0, math.NaN()
	}
	h := t.Merges[bestK].Height
	return t.CutHeight(h), h, best
}

// silhouetteSums returns the mean silhouette width from per-cluster distance sums.
func silhouetteSums(sum []float64, own, size, alive []int, p int, inv []float64) float64 {
	var total float64
	for i := 0; i < p; i++ {
		c := own[i]
		if size[c] == 1 {
			continue // s(i) = 0 for a singleton
		}
		a := sum[i*p+c] / float64(size[c]-1)
		b := math.Inf(1)
		row := sum[i*p : (i+1)*p]
		for _, s := range alive {
			if v := row[s] * inv[s]; v < b && s != c {
				b = v
			}
		}
		total += silhouetteWidth(a, b)
	}
	return total / float64(p)
}

// silhouetteWidth returns (b − a) / max(a, b), 0 when both are 0.
func silhouetteWidth(a, b float64) float64 {
	m := max(a, b)
	if m == 0 {
		return 0
	}
	return (b - a) / m
}

// Silhouette returns the mean silhouette width of the clustering labels of in's variables
// (Rousseeuw 1987, J. Comput. Appl. Math. 20:53–65): for variable i in cluster C,
// a(i) is its mean distance ([Input.Distance]) to the other members of C, b(i) the smallest
// mean distance to the members of another cluster, s(i) = (b − a) / max(a, b), and s(i) = 0
// when C = {i}. It returns NaN unless there are at least 2 and at most p − 1 clusters.
// Labels may be any integers. Silhouette panics with "cluster: labels length mismatch" when
// len(labels) != in.Len().
func Silhouette(in Input, labels []int) float64 {
	p := in.Len()
	if len(labels) != p {
		panic("cluster: labels length mismatch")
	}
	idx := map[int]int{}
	for _, l := range labels {
		if _, ok := idx[l]; !ok {
			idx[l] = len(idx)
		}
	}
	k := len(idx)
	if k < 2 || k > p-1 {
		return math.NaN()
	}
	size := make([]int, k)
	for _, l := range labels {
		size[idx[l]]++
	}
	var total float64
	sums := make([]float64, k)
	for i := 0; i < p; i++ {
		c := idx[labels[i]]
		if size[c] == 1 {
			continue
		}
		clear(sums)
		for j := 0; j < p; j++ {
			if j != i {
				sums[idx[labels[j]]] += in.Distance(i, j)
			}
		}
		a := sums[c] / float64(size[c]-1)
		b := math.Inf(1)
		for o := range k {
			if o != c {
				b = min(b, sums[o]/float64(size[o]))
			}
		}
		total += silhouetteWidth(a, b)
	}
	return total / float64(p)
}
