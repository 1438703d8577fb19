package cluster

import (
	"fmt"
	"math"
	"slices"
)

// Method is the linkage: how the distance between two clusters follows from the distances
// between their members.
type Method int

const (
	// Average is UPGMA: the mean of the distances between members of the two clusters
	// (Sokal & Michener 1958, Univ. Kansas Sci. Bull. 38:1409–1438).
	Average Method = iota
	// Single is the smallest distance between members of the two clusters.
	Single
	// Complete is the largest distance between members of the two clusters.
	Complete
)

// String returns the method's name as used by [ParseMethod]: "average", "single" or
// "complete".
func (m Method) String() string {
	switch m {
	case Average:
		return "average"
	case Single:
		return "single"
	case Complete:
		return "complete"
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// ParseMethod returns the Method named s ("average", "single" or "complete").
func ParseMethod(s string) (Method, error) {
	for _, m := range []Method{Average, Single, Complete} {
		if s == m.String() {
			return m, nil
		}
	}
	return 0, fmt.Errorf("unknown linkage %q (want average, single or complete)", s)
}

// A Merge is one row of the linkage matrix. Cluster ids are 0-based: leaves are 0…p−1 (the
// variable indexes), and the cluster formed by Tree.Merges[i] is p+i.
type Merge struct {
	A, B   int     // ids of the merged clusters, A < B
	Height float64 // linkage distance at which A and B merge, in [0, 1]
	Size   int     // number of variables in the new cluster
}

// A Tree is the hierarchy built by [Hierarchy]: p leaves and p−1 merges sorted by height,
// laid out like scipy.cluster.hierarchy.linkage's matrix.
type Tree struct {
	Method Method
	Merges []Merge // p−1 merges, non-decreasing Height
	p      int
	dist   []float64 // condensed distances of the input, see condensedIndex
}

// Len returns the number of leaves (variables).
func (t *Tree) Len() int { return t.p }

// Hierarchy clusters the variables of in with the linkage m using the nearest-neighbour chain
// algorithm (see the package documentation for the algorithm, its tie-breaking and the
// treatment of unknown strengths). It returns an *[InputError] when in is malformed.
//
// The heights are monotone: should rounding make a merge lower than one of its children (a
// difference of an ulp, possible only with average linkage), it is recorded at the child's
// height, so the tree always has p−1 valid merges in height order.
func Hierarchy(in Input, m Method) (*Tree, error) {
	if err := in.Validate(); err != nil {
		return nil, err
	}
	if m != Average && m != Single && m != Complete {
		return nil, fmt.Errorf("cluster: unknown linkage %v", m)
	}
	p := in.Len()
	dist := in.condensed()
	work := slices.Clone(dist)
	raw := nnChain(work, p, m)
	return &Tree{Method: m, Merges: label(raw, p), p: p, dist: dist}, nil
}

// nnChain runs the nearest-neighbour chain algorithm on the condensed distances d of n items,
// which it overwrites. It returns the n−1 merges in the order found, with A and B the slots
// (0…n−1) merged; the merged cluster lives on in slot B, the higher of the two.
func nnChain(d []float64, n int, m Method) []Merge {
	size := make([]int, n)
	for i := range size {
		size[i] = 1
	}
	height := make([]float64, n) // height of the cluster in each slot, 0 for a leaf
	chain := make([]int, 0, n)
	merges := make([]Merge, 0, max(n-1, 0))
	for range n - 1 {
		if len(chain) == 0 {
			for i := range n {
				if size[i] > 0 {
					chain = append(chain, i)
					break
				}
			}
		}
		var x, y int
		var cur float64
		for {
			x = chain[len(chain)-1]
			y, cur = -1, math.Inf(1)
			if len(chain) > 1 {
				// Prefer the previous element among equally near neighbours, or the chain
				// could cycle through ties forever.
				y = chain[len(chain)-2]
				cur = d[condensedIndex(n, x, y)]
			}
			for i := range n {
				if size[i] == 0 || i == x {
					continue
				}
				if di := d[condensedIndex(n, x, i)]; di < cur {
					cur, y = di, i
				}
			}
			if len(chain) > 1 && y == chain[len(chain)-2] {
				break
			}
			chain = append(chain, y)
		}
		chain = chain[:len(chain)-2]
		if x > y {
			x, y = y, x
		}
		nx, ny := size[x], size[y]
		h := max(cur, height[x], height[y])
		merges = append(merges, Merge{A: x, B: y, Height: h, Size: nx + ny})
		size[x], size[y] = 0, nx+ny
		height[y] = h
		for i := range n {
			if size[i] == 0 || i == y {
				continue
			}
			ix, iy := condensedIndex(n, i, x), condensedIndex(n, i, y)
			switch m {
			case Single:
				d[iy] = min(d[ix], d[iy])
			case Complete:
				d[iy] = max(d[ix], d[iy])
			default: // Average
				d[iy] = (float64(nx)*d[ix] + float64(ny)*d[iy]) / float64(nx+ny)
			}
		}
	}
	return merges
}

// label sorts the merges found by nnChain stably by height and renames slots to cluster ids:
// leaf i is i, the cluster formed by sorted merge k is n+k, the lower id first in each row.
func label(raw []Merge, n int) []Merge {
	slices.SortStableFunc(raw, func(a, b Merge) int {
		switch {
		case a.Height < b.Height:
			return -1
		case a.Height > b.Height:
			return 1
		}
		return 0
	})
	parent := make([]int, 2*n-1)
	for i := range parent {
		parent[i] = i
	}
	find := func(x int) int {
		r := x
		for parent[r] != r {
			r = parent[r]
		}
		for parent[x] != r { // path compression
			parent[x], x = r, parent[x]
		}
		return r
	}
	out := make([]Merge, len(raw))
	for k, r := range raw {
		a, b := find(r.A), find(r.B)
		if a > b {
			a, b = b, a
		}
		id := n + k
		parent[a], parent[b] = id, id
		out[k] = Merge{A: a, B: b, Height: r.Height, Size: r.Size}
	}
	return out
}

// Leaves returns the variable indexes in dendrogram order: a depth-first walk from the root
// that visits each merge's A before its B (scipy.cluster.hierarchy.leaves_list). Clusters of
// any cut are contiguous in this order.
func (t *Tree) Leaves() []int {
	if t.p == 1 {
		return []int{0}
	}
	out := make([]int, 0, t.p)
	stack := []int{2*t.p - 2}
	for len(stack) > 0 {
		id := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if id < t.p {
			out = append(out, id)
			continue
		}
		mg := t.Merges[id-t.p]
		stack = append(stack, mg.B, mg.A)
	}
	return out
}

// Distance returns the input distance between variables i and j (0-based), as given to the
// clustering: 1 − strength, 1 when unknown, 0 when i == j.
func (t *Tree) Distance(i, j int) float64 {
	if i == j {
		return 0
	}
	return t.dist[condensedIndex(t.p, i, j)]
}
