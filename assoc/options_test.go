package assoc

import (
	"context"
	"math"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// smallTable has one variable of each situation the engine must handle.
func smallTable(t *testing.T) *dataset.Table {
	t.Helper()
	n := 40
	tbl := dataset.NewTable("small", n)
	tbl.Keys = []string{"SUBJ"}
	subj := dataset.NewBuilder("SUBJ")
	text := dataset.NewBuilder("COMMENT")
	for i := 0; i < n; i++ {
		subj.Append("S"+string(rune('A'+i%26))+string(rune('a'+i/26)), false)
		text.Append("note "+strings.Repeat("x", i), false)
	}
	add := func(c *dataset.Column, err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
		if err := tbl.Add(c); err != nil {
			t.Fatal(err)
		}
	}
	add(subj.Column(dataset.InferOptions{Vars: map[string]dataset.VarSpec{"SUBJ": {Type: dataset.Identifier}}}))
	add(text.Column(dataset.InferOptions{Vars: map[string]dataset.VarSpec{"COMMENT": {Type: dataset.FreeText}}}))
	x, y, c, sparse := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	dates := make([]dataset.Date, n)
	for i := range x {
		x[i] = float64(i)
		y[i] = float64((i * 7) % 40)
		c[i] = 3
		sparse[i] = math.NaN()
		if i%5 == 0 {
			x[i] = math.NaN()
		}
		if i < 6 {
			sparse[i] = float64(i)
		}
		d, err := dataset.ParseISO8601("2024-01-" + string(rune('0'+(i%28+1)/10)) + string(rune('0'+(i%28+1)%10)))
		if err != nil {
			t.Fatal(err)
		}
		if i%4 == 0 {
			d, _ = dataset.ParseISO8601("2024-02") // partial: missing for ranking
		}
		dates[i] = d
	}
	add(dataset.NewFloatColumn("X", dataset.Continuous, x), nil)
	add(dataset.NewFloatColumn("Y", dataset.Continuous, y), nil)
	add(dataset.NewFloatColumn("CONST", dataset.Continuous, c), nil)
	add(dataset.NewFloatColumn("SPARSE", dataset.Continuous, sparse), nil)
	add(dataset.NewDateColumn("VISDT", dates), nil)
	return tbl
}

func TestAllPairsOptions(t *testing.T) {
	tbl := smallTable(t)
	ctx := context.Background()
	t.Run("excluded listed", func(t *testing.T) {
		m, err := AllPairs(ctx, tbl, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if got := strings.Join(m.Names, ","); got != "X,Y,CONST,SPARSE,VISDT" {
			t.Errorf("Names = %s, want X,Y,CONST,SPARSE,VISDT", got)
		}
		if len(m.Excluded) != 2 || m.Excluded[0].Name != "SUBJ" || m.Excluded[0].Reason != SkipNotAnalysable ||
			m.Excluded[1].Name != "COMMENT" || m.Excluded[1].Reason != SkipNotAnalysable {
			t.Errorf("Excluded = %+v, want SUBJ and COMMENT not analysable", m.Excluded)
		}
		checks := []struct {
			a, b string
			skip Skip
			n    int32
		}{
			{"X", "Y", NotSkipped, 32},
			{"X", "CONST", SkipConstant, 32},
			{"X", "SPARSE", SkipFewPairs, 4},
			{"Y", "VISDT", NotSkipped, 30},
		}
		for _, c := range checks {
			pr := m.Pair(m.Index(c.a), m.Index(c.b))
			if pr.Skip != c.skip || pr.N != c.n {
				t.Errorf("%s: skip %q n %d, want %q n %d", m.Describe(pr), pr.Skip, pr.N, c.skip, c.n)
			}
			if (pr.Skip == NotSkipped) == math.IsNaN(m.Strength(m.Index(c.a), m.Index(c.b))) {
				t.Errorf("%s: Strength %g inconsistent with skip %q", m.Describe(pr), pr.Strength, pr.Skip)
			}
		}
		// The date pair is Spearman on days, partial dates dropped.
		pr := m.Pair(m.Index("Y"), m.Index("VISDT"))
		yv, dv := make([]float64, 40), make([]float64, 40)
		for i := range yv {
			yv[i] = tbl.Col("Y").Float(i)
			dv[i] = tbl.Col("VISDT").Float(i)
		}
		if want := Spearman(yv, dv).Rho; pr.Measure != MeasureSpearman || pr.Estimate != want {
			t.Errorf("%s: want spearman %g", m.Describe(pr), want)
		}
		// Missingness: X is missing on rows 0, 5, 10, …; SPARSE on rows ≥ 6.
		mx, ms := make([]bool, 40), make([]bool, 40)
		for i := range mx {
			mx[i], ms[i] = tbl.Col("X").Missing(i), tbl.Col("SPARSE").Missing(i)
		}
		want := MissingPhi(mx, ms)
		if got := m.Pair(m.Index("X"), m.Index("SPARSE")); got.MissPhi != want.Phi || got.MissP != want.P {
			t.Errorf("MissPhi = %g (p %g), want %g (p %g)", got.MissPhi, got.MissP, want.Phi, want.P)
		}
		if got := m.Pair(m.Index("X"), m.Index("Y")).MissPhi; !math.IsNaN(got) {
			t.Errorf("MissPhi with Y never missing = %g, want NaN", got)
		}
		// Dense is symmetric with 1 on the diagonal.
		d, p := m.Dense(), m.Len()
		for i := 0; i < p; i++ {
			for j := 0; j < p; j++ {
				if a, b := d[i*p+j], d[j*p+i]; !(a == b || math.IsNaN(a) && math.IsNaN(b)) || i == j && a != 1 {
					t.Fatalf("Dense[%d,%d] = %g, [%d,%d] = %g", i, j, a, j, i, b)
				}
			}
		}
	})
	t.Run("keep excluded", func(t *testing.T) {
		tbl.Cols[0].Type = dataset.Nominal // make the key analysable by type: still excluded as key
		defer func() { tbl.Cols[0].Type = dataset.Identifier }()
		m, err := AllPairs(ctx, tbl, Options{KeepExcluded: true})
		if err != nil {
			t.Fatal(err)
		}
		if m.Len() != 7 {
			t.Fatalf("Len = %d, want 7", m.Len())
		}
		if pr := m.Pair(0, 2); pr.Skip != SkipKey {
			t.Errorf("%s: want skip key", m.Describe(pr))
		}
		if pr := m.Pair(1, 2); pr.Skip != SkipNotAnalysable {
			t.Errorf("%s: want skip not_analysable", m.Describe(pr))
		}
	})
	t.Run("vars", func(t *testing.T) {
		m, err := AllPairs(ctx, tbl, Options{Vars: []string{"Y", "X"}})
		if err != nil {
			t.Fatal(err)
		}
		if m.Len() != 2 || m.Names[0] != "X" || len(m.Pairs) != 1 {
			t.Errorf("Vars Y, X: names %v, want [X Y] in table order", m.Names)
		}
		for _, bad := range [][]string{{"X", "NOPE"}, {"X", "X"}} {
			if _, err := AllPairs(ctx, tbl, Options{Vars: bad}); err == nil {
				t.Errorf("Vars %q: no error", bad)
			}
		}
	})
	t.Run("one variable", func(t *testing.T) {
		calls := 0
		m, err := AllPairs(ctx, tbl, Options{Vars: []string{"X"}, Progress: func(d, tot int) { calls++ }})
		if err != nil || len(m.Pairs) != 0 || calls != 1 {
			t.Errorf("one variable: %d pairs, err %v, %d progress calls; want 0, nil, 1", len(m.Pairs), err, calls)
		}
	})
}

func TestSlot(t *testing.T) {
	m := &Matrix{Names: []string{"a", "b", "c", "d"}}
	k := 0
	for i := 0; i < 4; i++ {
		for j := i + 1; j < 4; j++ {
			if m.Slot(i, j) != k || m.Slot(j, i) != k {
				t.Errorf("Slot(%d,%d) = %d, want %d", i, j, m.Slot(i, j), k)
			}
			if a, b := pairAt(4, k); a != i || b != j {
				t.Errorf("pairAt(4, %d) = %d,%d, want %d,%d", k, a, b, i, j)
			}
			k++
		}
	}
	defer func() {
		if r := recover(); r != "assoc: pair index out of range" {
			t.Errorf("Slot(1,1) panic %v", r)
		}
	}()
	m.Slot(1, 1)
}
