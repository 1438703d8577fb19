package signals

import (
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
)

// readFlower reads testdata/signals/gower_flower.csv (written by make_gower.R
// from R's cluster::flower) and returns the "plain" or "na" copy by column.
func readFlower(t *testing.T, copy string) map[string][]float64 {
	t.Helper()
	f, err := os.Open("../testdata/signals/gower_flower.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	cols := map[string][]float64{}
	for li, r := range recs[1:] {
		if r[0] != copy {
			continue
		}
		for c := 1; c < len(r); c++ {
			v := math.NaN()
			if r[c] != "NA" {
				if v, err = strconv.ParseFloat(r[c], 64); err != nil {
					t.Fatalf("gower_flower.csv:%d: %v", li+2, err)
				}
			}
			cols[recs[0][c]] = append(cols[recs[0][c]], v)
		}
	}
	return cols
}

// readExpected reads the condensed distances of one case of gower_expected.csv.
func readExpected(t *testing.T, name string) map[[2]int]float64 {
	t.Helper()
	f, err := os.Open("../testdata/signals/gower_expected.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	out := map[[2]int]float64{}
	for _, r := range recs[1:] {
		if r[0] != name {
			continue
		}
		i, _ := strconv.Atoi(r[1])
		j, _ := strconv.Atoi(r[2])
		d := math.NaN()
		if r[3] != "NA" {
			d, _ = strconv.ParseFloat(r[3], 64)
		}
		out[[2]int{i - 1, j - 1}] = d
	}
	return out
}

// TestGowerDaisy checks Range scaling against R 4.2.2, cluster 2.1.4
// daisy(metric = "gower") on the flower data (see testdata/signals/make_gower.R
// for the exact calls and gower_versions.txt for the versions).
func TestGowerDaisy(t *testing.T) {
	all := []string{"V1", "V2", "V3", "V4", "V5", "V6", "V7", "V8"}
	cases := []struct {
		name    string
		copy    string
		vars    []string
		kinds   []Kind
		weights []float64
		source  string
	}{
		{"A", "plain", all, []Kind{AsymmetricBinary, SymmetricBinary, AsymmetricBinary, Nominal, Ordinal, Ordinal, Numeric, Numeric}, nil,
			`daisy(flower, metric = "gower", type = list(asymm = c(1, 3), symm = 2))`},
		{"B", "na", all, []Kind{AsymmetricBinary, SymmetricBinary, AsymmetricBinary, Nominal, Ordinal, Ordinal, Numeric, Numeric}, nil,
			`daisy(na, metric = "gower", type = list(asymm = c(1, 3), symm = 2))`},
		{"C", "na", all, []Kind{SymmetricBinary, SymmetricBinary, SymmetricBinary, Nominal, Ordinal, Ordinal, Numeric, Numeric},
			[]float64{1, 2, 0.5, 1, 3, 1, 2, 1.5},
			`daisy(na, metric = "gower", type = list(symm = 1:3), weights = c(1, 2, 0.5, 1, 3, 1, 2, 1.5))`},
		{"D", "na", []string{"V7", "V8"}, []Kind{Numeric, Numeric}, nil, `daisy(na[, c("V7", "V8")], metric = "gower")`},
		{"E", "na", []string{"V1", "V3"}, []Kind{AsymmetricBinary, AsymmetricBinary}, nil,
			`daisy(na[, c("V1", "V3")], metric = "gower", type = list(asymm = 1:2))`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			data := readFlower(t, tc.copy)
			m := &Mixed{Names: tc.vars, Kinds: tc.kinds, Weights: tc.weights}
			for _, v := range tc.vars {
				m.Cols = append(m.Cols, data[v])
			}
			g, err := NewGower(m, Range)
			if err != nil {
				t.Fatal(err)
			}
			want := readExpected(t, tc.name)
			if len(want) != 18*17/2 {
				t.Fatalf("expected file has %d pairs for case %s, want %d", len(want), tc.name, 18*17/2)
			}
			cond, err := g.Condensed(context.Background(), 2)
			if err != nil {
				t.Fatal(err)
			}
			for ij, w := range want {
				got := g.Dist(ij[0], ij[1])
				if c := cond[CondensedIndex(18, ij[0], ij[1])]; !sameFloat(c, got) {
					t.Errorf("Condensed[%d,%d] = %g, Dist = %g", ij[0], ij[1], c, got)
				}
				if !(math.IsNaN(w) && math.IsNaN(got)) && !(math.Abs(got-w) <= 1e-12) {
					t.Errorf("Dist(%d, %d) = %.17g, want %.17g (R %s)", ij[0]+1, ij[1]+1, got, w, tc.source)
				}
			}
		})
	}
}

func sameFloat(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }

// TestGowerRobust checks the Robust scaling on a small case derived by hand from
// its definition (Scaling Robust): one numeric variable x = 1, 2, 3, 4, 100
// (median 3, absolute deviations 2, 1, 0, 1, 97, MAD 1, so S = 4 × 1.4826… × 1),
// a numeric variable with MAD 0 (falls back to the IQR), a nominal variable and
// an asymmetric binary, with a missing value.
func TestGowerRobust(t *testing.T) {
	S := RobustWidth * madToSD // x's scale
	// y = 5, 5, 5, 6, 9: median 5, deviations 0,0,0,1,4 → MAD 0;
	// type-7 quartiles 5 and 6 → IQR 1 → S_y = 4 / 1.349
	Sy := RobustWidth / iqrToSD
	m := &Mixed{
		Names:   []string{"x", "y", "n", "a"},
		Kinds:   []Kind{Numeric, Numeric, Nominal, AsymmetricBinary},
		Weights: []float64{1, 2, 1, 1},
		Cols: [][]float64{
			{1, 2, 3, 4, 100},
			{5, 5, 5, 6, 9},
			{0, 0, 1, math.NaN(), 1},
			{0, 0, 1, 0, 1},
		},
	}
	g, err := NewGower(m, Robust)
	if err != nil {
		t.Fatal(err)
	}
	if g.Scale[0] != S || g.Center[0] != 3 {
		t.Errorf("x: center %g scale %g, want 3 and %g (hand-derived)", g.Center[0], g.Scale[0], S)
	}
	if math.Abs(g.Scale[1]-Sy) > 1e-15 || g.Center[1] != 5 {
		t.Errorf("y: center %g scale %g, want 5 and %g (hand-derived: MAD 0, IQR 1)", g.Center[1], g.Scale[1], Sy)
	}
	cases := []struct {
		i, j int
		want float64
		how  string
	}{
		// rows 0,1: x 1/S, y 0, n equal, a both absent (left out): (1/S + 0 + 0) / (1+2+1)
		{0, 1, (1 / S) / 4, "a both 0 left out"},
		// rows 0,4: x |1−100|/S > 1 capped to 1, y 4/Sy > 1 capped (×2), n differs, a differs: (1+2+1+1)/5
		{0, 4, 1, "caps at 1"},
		// rows 2,3: x 1/S, y 1/Sy (×2), n missing on row 3, a 1 vs 0: (1/S + 2/Sy + 1) / (1+2+1)
		{2, 3, (1/S + 2*(1/Sy) + 1) / 4, "missing nominal left out"},
		// rows 2,4: x 97/S capped 1, y 4/Sy capped 1 (×2), n equal, a both 1: (1+2+0+0)/5
		{2, 4, 3.0 / 5, "asymmetric both present counts"},
	}
	for _, c := range cases {
		if got := g.Dist(c.i, c.j); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("Dist(%d, %d) = %.17g, want %.17g (hand-derived, %s)", c.i, c.j, got, c.want, c.how)
		}
	}
	// Range scaling of the same data: x range 99, so rows 0 and 1 differ by 1/99.
	gr, err := NewGower(m, Range)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := gr.Dist(0, 1), (1.0/99)/4; math.Abs(got-want) > 1e-15 {
		t.Errorf("Range Dist(0, 1) = %.17g, want %.17g (hand-derived: 1/99 over weight 4)", got, want)
	}
}

func TestGowerNearestWithin(t *testing.T) {
	m := randomMixed(rand.New(rand.NewPCG(3, 4)), 300, 12)
	g, err := NewGower(m, Robust)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	for _, w := range []int{1, 3} {
		d, idx, err := g.Nearest(ctx, w)
		if err != nil {
			t.Fatal(err)
		}
		for i := range g.Len() {
			bd, bj := math.Inf(1), -1
			for j := range g.Len() {
				if j != i {
					if x := g.Dist(i, j); x < bd {
						bd, bj = x, j
					}
				}
			}
			if d[i] != bd || idx[i] != bj {
				t.Fatalf("workers %d: Nearest row %d = (%g, %d), brute force (%g, %d)", w, i, d[i], idx[i], bd, bj)
			}
		}
	}
	thr := 0.25
	pairs, err := g.Within(ctx, []int{5, 17}, thr, 2)
	if err != nil {
		t.Fatal(err)
	}
	want := 0
	for j := range g.Len() {
		for _, i := range []int{5, 17} {
			if j != i && g.Dist(i, j) <= thr && !(i == 17 && j == 5) {
				want++
			}
		}
	}
	if len(pairs) != want {
		t.Errorf("Within found %d pairs, brute force %d", len(pairs), want)
	}
}

// randomMixed returns n rows of p variables of every kind, 5% missing.
func randomMixed(r *rand.Rand, n, p int) *Mixed {
	m := &Mixed{}
	kinds := []Kind{Numeric, Numeric, Numeric, Ordinal, Nominal, SymmetricBinary, AsymmetricBinary}
	for k := range p {
		kind := kinds[k%len(kinds)]
		col := make([]float64, n)
		for i := range col {
			switch kind {
			case Numeric:
				col[i] = math.Round(100*r.NormFloat64()) / 10
			case Ordinal:
				col[i] = float64(r.IntN(5))
			case Nominal:
				col[i] = float64(r.IntN(4))
			default:
				col[i] = float64(r.IntN(2))
			}
			if r.Float64() < 0.05 {
				col[i] = math.NaN()
			}
		}
		m.Names = append(m.Names, fmt.Sprintf("v%d", k))
		m.Kinds = append(m.Kinds, kind)
		m.Cols = append(m.Cols, col)
	}
	return m
}
