package cluster

import (
	"math"
	"slices"
	"testing"
)

// FuzzHierarchy builds a strength matrix from bytes (0–250 map to strengths k/250, 251–254 to
// out-of-range values, 255 to unknown) and checks that Hierarchy either reports an
// *InputError or returns a tree that is self-consistent: p−1 merges, non-decreasing heights,
// children formed before their parent, sizes that add up, and cuts that agree with each other.
func FuzzHierarchy(f *testing.F) {
	f.Add(byte(4), byte(0), []byte{10, 200, 30, 255, 0, 250})
	f.Add(byte(3), byte(2), []byte{125, 125, 125})
	f.Add(byte(5), byte(1), []byte{1, 2, 3, 4, 5, 6, 7, 8, 9, 10})
	f.Fuzz(func(t *testing.T, np, method byte, b []byte) {
		p := int(np%12) + 1
		in := Input{Names: make([]string, p), Strength: make([]float64, p*p)}
		for i := range p {
			in.Names[i] = string(rune('A' + i))
		}
		k := 0
		for i := range p {
			for j := i + 1; j < p; j++ {
				var s float64
				if k < len(b) {
					switch v := b[k]; {
					case v <= 250:
						s = float64(v) / 250
					case v == 255:
						s = math.NaN()
					default:
						s = float64(v) - 250 // 1 < s ≤ 4: out of range
					}
				}
				k++
				in.Strength[i*p+j], in.Strength[j*p+i] = s, s
			}
		}
		tr, err := Hierarchy(in, Method(method%3))
		if err != nil {
			if _, ok := err.(*InputError); !ok {
				t.Fatalf("error %v is not an *InputError", err)
			}
			return
		}
		if len(tr.Merges) != p-1 {
			t.Fatalf("%d merges for %d variables", len(tr.Merges), p)
		}
		size := make([]int, 2*p-1)
		for i := range p {
			size[i] = 1
		}
		for k, m := range tr.Merges {
			if k > 0 && m.Height < tr.Merges[k-1].Height {
				t.Fatalf("heights not sorted: %v", tr.Merges)
			}
			if m.A >= m.B || m.B >= p+k || size[m.A] == 0 || size[m.B] == 0 || size[m.A]+size[m.B] != m.Size {
				t.Fatalf("merge %d = %+v invalid: %v", k, m, tr.Merges)
			}
			size[p+k] = m.Size
			size[m.A], size[m.B] = 0, 0
		}
		leaves := slices.Clone(tr.Leaves())
		slices.Sort(leaves)
		for i, l := range leaves {
			if i != l {
				t.Fatalf("Leaves() is not a permutation: %v", tr.Leaves())
			}
		}
		labels, h, s := tr.CutAuto(0)
		if !math.IsNaN(s) && (!slices.Equal(labels, tr.CutHeight(h)) || math.Abs(Silhouette(in, labels)-s) > 1e-9) {
			t.Fatalf("CutAuto inconsistent: %v at %v, silhouette %v", labels, h, s)
		}
		for c := 1; c <= p; c++ {
			if n := len(slices.Compact(slices.Sorted(slices.Values(tr.CutCount(c))))); n > c {
				t.Fatalf("CutCount(%d) gives %d clusters", c, n)
			}
		}
		Summarize(in, labels, 3)
	})
}
