package cluster

import (
	"encoding/json"
	"math"
	"os"
	"slices"
	"testing"
)

// fixturePath holds scipy's results on the matrices of testdata/cluster/make_fixture.py;
// the scipy, NumPy and Python versions are at its top.
const fixturePath = "../testdata/cluster/linkage_fixture.json"

type fixtureDoc struct {
	Scipy, Numpy, Python string
	Cases                []struct {
		Name     string
		Names    []string
		Strength [][]*float64 // null for unknown
		Methods  map[string]struct {
			Z      [][4]float64
			Leaves []int
			Cuts   []struct {
				H      float64
				Labels []int
			}
			Maxclust []struct {
				K      int
				Labels []int
			}
			Silhouette []struct {
				H     float64
				K     int
				Value float64
			}
			Auto struct { // null in the fixture when no cut qualifies
				H      float64
				K      int
				Value  float64
				Labels []int
			}
		}
	}
}

func loadFixture(t *testing.T) fixtureDoc {
	t.Helper()
	b, err := os.ReadFile(fixturePath)
	if err != nil {
		t.Fatal(err)
	}
	var doc fixtureDoc
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatalf("%s: %v", fixturePath, err)
	}
	if len(doc.Cases) == 0 {
		t.Fatalf("%s: no cases", fixturePath)
	}
	return doc
}

// TestAgainstScipy compares Hierarchy, Leaves, CutHeight, CutCount, Silhouette and CutAuto
// with scipy.cluster.hierarchy (linkage, leaves_list, fcluster) and the NumPy silhouette of
// testdata/cluster/make_fixture.py, on matrices with and without tied distances and with
// unknown pairs. Merge heights are compared exactly for every linkage (they agree to the bit:
// same update formula, same order of operations). Average and complete linkage use the same
// nearest-neighbour chain conventions as scipy, so their whole linkage matrix and leaf order,
// ties included, must be identical. scipy computes single linkage from a minimum spanning
// tree, which may merge a different one of tied pairs first (it does in the eighths9 and
// eighths14 cases), so for single linkage only the heights and the clusters at every cut
// (unique for single linkage) are compared. Cuts are taken half-way between distinct heights.
func TestAgainstScipy(t *testing.T) {
	doc := loadFixture(t)
	source := "scipy " + doc.Scipy + ", numpy " + doc.Numpy
	silhouettes := 0
	defer func() {
		if silhouettes < 20 {
			t.Errorf("only %d silhouette values checked", silhouettes)
		}
	}()
	for _, c := range doc.Cases {
		p := len(c.Names)
		in := Input{Names: c.Names, Strength: make([]float64, 0, p*p)}
		for _, row := range c.Strength {
			for _, v := range row {
				if v == nil {
					in.Strength = append(in.Strength, math.NaN())
				} else {
					in.Strength = append(in.Strength, *v)
				}
			}
		}
		for _, m := range []Method{Average, Single, Complete} {
			want, ok := c.Methods[m.String()]
			if !ok {
				t.Fatalf("%s: no %v results in fixture", c.Name, m)
			}
			t.Run(c.Name+"/"+m.String(), func(t *testing.T) {
				tr, err := Hierarchy(in, m)
				if err != nil {
					t.Fatal(err)
				}
				if len(tr.Merges) != len(want.Z) {
					t.Fatalf("%d merges, want %d", len(tr.Merges), len(want.Z))
				}
				for k, got := range tr.Merges {
					z := want.Z[k]
					if got.Height != z[2] {
						t.Errorf("merge %d height = %.17g, want %.17g (%s linkage)", k, got.Height, z[2], source)
					}
					if m != Single && (got.A != int(z[0]) || got.B != int(z[1]) || got.Size != int(z[3])) {
						t.Errorf("merge %d = %+v, want %v (%s linkage)", k, got, z, source)
					}
				}
				if m != Single && !slices.Equal(tr.Leaves(), want.Leaves) {
					t.Errorf("Leaves() = %v, want %v (%s leaves_list)", tr.Leaves(), want.Leaves, source)
				}
				for _, cut := range want.Cuts {
					if got := tr.CutHeight(cut.H); !slices.Equal(canon(got), canon(cut.Labels)) {
						t.Errorf("CutHeight(%v) = %v, want %v (%s fcluster distance)", cut.H, got, cut.Labels, source)
					}
				}
				for _, mc := range want.Maxclust {
					if got := tr.CutCount(mc.K); !slices.Equal(canon(got), canon(mc.Labels)) {
						t.Errorf("CutCount(%d) = %v, want %v (%s fcluster maxclust)", mc.K, got, mc.Labels, source)
					}
				}
				for _, s := range want.Silhouette {
					if got := Silhouette(in, tr.CutHeight(s.H)); math.Abs(got-s.Value) > 1e-12 {
						t.Errorf("Silhouette at h=%v (k=%d) = %.15g, want %.15g (make_fixture.py, numpy %s)",
							s.H, s.K, got, s.Value, doc.Numpy)
					}
				}
				labels, h, s := tr.CutAuto(0)
				if want.Auto.Labels == nil { // every cut in [2, p−1] clusters is tied away
					if !slices.Equal(canon(labels), canon(tr.CutCount(p))) || !math.IsNaN(s) {
						t.Errorf("CutAuto = %v, s=%v; want singletons, NaN (make_fixture.py: no candidate)", labels, s)
					}
					return
				}
				silhouettes += len(want.Silhouette)
				if !slices.Equal(canon(labels), canon(want.Auto.Labels)) || math.Abs(h-want.Auto.H) > 1e-12 ||
					math.Abs(s-want.Auto.Value) > 1e-12 {
					t.Errorf("CutAuto = %v, h=%v, s=%.15g; want %v, h=%v, s=%.15g (make_fixture.py)",
						labels, h, s, want.Auto.Labels, want.Auto.H, want.Auto.Value)
				}
			})
		}
	}
}

// TestAgainstRHclust compares merge heights and the clusters at every k with R's hclust and
// cutree on |Spearman ρ| of R's mtcars (testdata/cluster/make_mtcars.R, R version in the
// fixture): an implementation independent of scipy, on a real data set. hclust orders
// merges and leaves by its own conventions, so only heights (to 1e-12: its Fortran updates
// in another order of operations) and memberships are compared.
func TestAgainstRHclust(t *testing.T) {
	b, err := os.ReadFile("../testdata/cluster/mtcars_fixture.json")
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		R        string
		Names    []string
		Strength [][]float64
		Methods  map[string]struct {
			Heights []float64
			Cutree  [][]int
		}
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	in := Input{Names: doc.Names}
	for _, row := range doc.Strength {
		in.Strength = append(in.Strength, row...)
	}
	p := len(doc.Names)
	for _, m := range []Method{Average, Single, Complete} {
		want, ok := doc.Methods[m.String()]
		if !ok || len(want.Heights) != p-1 || len(want.Cutree) != p {
			t.Fatalf("fixture lacks %v results", m)
		}
		tr, err := Hierarchy(in, m)
		if err != nil {
			t.Fatal(err)
		}
		for k, mg := range tr.Merges {
			if math.Abs(mg.Height-want.Heights[k]) > 1e-12 {
				t.Errorf("%v merge %d height = %.17g, want %.17g (%s hclust)", m, k, mg.Height, want.Heights[k], doc.R)
			}
		}
		for k := 1; k <= p; k++ {
			if got := tr.CutCount(k); !slices.Equal(canon(got), canon(want.Cutree[k-1])) {
				t.Errorf("%v CutCount(%d) = %v, want %v (%s cutree)", m, k, got, want.Cutree[k-1], doc.R)
			}
		}
	}
}
