package signals

import (
	"encoding/csv"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// TestBrunnerMunzel checks BrunnerMunzel against scipy 1.10.1
// scipy.stats.brunnermunzel(x, y) on samples from R's datasets package
// (testdata/signals/make_bm.py; versions in bm_versions.txt). Our statistic
// tests x against y, scipy's y against x: the signs are opposite.
func TestBrunnerMunzel(t *testing.T) {
	read := func(name string) [][]string {
		f, err := os.Open("../testdata/signals/" + name)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		recs, err := csv.NewReader(f).ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		return recs[1:]
	}
	x, y := map[string][]float64{}, map[string][]float64{}
	for _, r := range read("bm_data.csv") {
		v, err := strconv.ParseFloat(r[2], 64)
		if err != nil {
			t.Fatal(err)
		}
		if r[1] == "x" {
			x[r[0]] = append(x[r[0]], v)
		} else {
			y[r[0]] = append(y[r[0]], v)
		}
	}
	exp := read("bm_expected.csv")
	if len(exp) != 4 {
		t.Fatalf("bm_expected.csv has %d cases, want 4", len(exp))
	}
	for _, r := range exp {
		stat, _ := strconv.ParseFloat(r[1], 64)
		p, _ := strconv.ParseFloat(r[2], 64)
		eff, _ := strconv.ParseFloat(r[3], 64)
		got := BrunnerMunzel(x[r[0]], y[r[0]])
		src := "scipy 1.10.1 brunnermunzel, " + r[0]
		if math.Abs(got.Stat+stat) > 1e-10*math.Max(1, math.Abs(stat)) {
			t.Errorf("%s: Stat = %.15g, want %.15g (%s, sign flipped)", r[0], got.Stat, -stat, src)
		}
		if math.Abs(got.P-p) > 1e-9*p+1e-15 {
			t.Errorf("%s: P = %.15g, want %.15g (%s)", r[0], got.P, p, src)
		}
		if math.Abs(got.Effect-eff) > 1e-12 {
			t.Errorf("%s: Effect = %.15g, want %.15g (%s mid-ranks)", r[0], got.Effect, eff, src)
		}
	}
}

// plantedTable returns a subject table of 8 sites × 40 subjects where y =
// x + noise (ρ ≈ 0.9) everywhere except at site "S3", where y is unrelated to
// x, and where z is standard normal except at site "S5", shifted by 3.
func plantedTable(t *testing.T) *dataset.Table {
	r := rand.New(rand.NewPCG(7, 7))
	n := 320
	x, y, z := make([]float64, n), make([]float64, n), make([]float64, n)
	codes := make([]int32, n)
	ids := make([]int32, n)
	var idLevels []string
	levels := []string{"S0", "S1", "S2", "S3", "S4", "S5", "S6", "S7"}
	for i := range n {
		s := i / 40
		codes[i] = int32(s)
		ids[i] = int32(i)
		idLevels = append(idLevels, "P"+strconv.Itoa(1000+i))
		x[i] = r.NormFloat64()
		y[i] = x[i] + 0.4*r.NormFloat64()
		if s == 3 {
			y[i] = r.NormFloat64()
		}
		z[i] = r.NormFloat64()
		if s == 5 {
			z[i] += 3
		}
	}
	tb := dataset.NewTable("planted", n)
	for _, c := range []*dataset.Column{
		dataset.NewCodeColumn("USUBJID", dataset.Identifier, ids, idLevels),
		dataset.NewCodeColumn("SITEID", dataset.Identifier, codes, levels),
		dataset.NewFloatColumn("X", dataset.Continuous, x),
		dataset.NewFloatColumn("Y", dataset.Continuous, y),
		dataset.NewFloatColumn("Z", dataset.Continuous, z),
	} {
		if err := tb.Add(c); err != nil {
			t.Fatal(err)
		}
	}
	if err := tb.SetKeys([]string{"USUBJID"}, "SITEID"); err != nil {
		t.Fatal(err)
	}
	return tb
}

func TestRelationshipsPlanted(t *testing.T) {
	tb := plantedTable(t)
	rel, err := Relationships(tb, [][2]string{{"X", "Y"}}, SiteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rel) != 8 {
		t.Fatalf("%d tests, want 8", len(rel))
	}
	for _, x := range rel {
		if want := x.Site == "S3"; x.Flag != want {
			t.Errorf("site %s: flag %v, want %v (ρ %.3f vs %.3f, q %.3g)", x.Site, x.Flag, want, x.Rho, x.RhoOthers, x.Q)
		}
		// Theoretical: Z is the Fisher-z difference over its standard error.
		want := (math.Atanh(x.Rho) - math.Atanh(x.RhoOthers)) / math.Sqrt(1.0/37+1.0/277)
		if math.Abs(x.Z-want) > 1e-12 || x.N != 40 || x.NOthers != 280 {
			t.Errorf("site %s: Z %.15g n %d/%d, want %.15g with n 40/280", x.Site, x.Z, x.N, x.NOthers, want)
		}
	}
	small, err := Relationships(tb, [][2]string{{"X", "Y"}}, SiteOptions{MinSiteN: 41})
	if err != nil {
		t.Fatal(err)
	}
	for _, x := range small {
		if !math.IsNaN(x.P) || x.Flag {
			t.Errorf("site %s of 40 tested with MinSiteN 41", x.Site)
		}
	}
	if _, err := Relationships(tb, [][2]string{{"X", "W"}}, SiteOptions{}); err == nil {
		t.Error("unknown variable: no error")
	}
	auto := StrongPairs(tb, 0.5, 10)
	if len(auto) != 1 || auto[0] != [2]string{"X", "Y"} {
		t.Errorf("StrongPairs = %v, want [[X Y]]", auto)
	}
}

func TestShiftsPlanted(t *testing.T) {
	tb := plantedTable(t)
	sh, err := Shifts(tb, []string{"Z"}, SiteOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(sh) != 8 {
		t.Fatalf("%d tests, want 8", len(sh))
	}
	for _, s := range sh {
		if want := s.Site == "S5"; s.Flag != want {
			t.Errorf("site %s: flag %v, want %v (effect %.3f, q %.3g)", s.Site, s.Flag, want, s.Effect, s.Q)
		}
		if s.Site == "S5" && (s.Effect < 0.9 || s.MedianZ < 3) {
			t.Errorf("site S5: effect %.3f, median z %.3f; want > 0.9 and > 3", s.Effect, s.MedianZ)
		}
	}
}

// TestScoreUnits checks the robust z and totals on a hand-derived case.
func TestScoreUnits(t *testing.T) {
	in := []ScoreInput{
		{ID: "A", Values: []float64{1, 0, 0.1, 0}},
		{ID: "B", Values: []float64{2, 0, 0.2, 0}},
		{ID: "C", Values: []float64{3, 0, 0.3, 0}},
		{ID: "D", Values: []float64{10, 0, math.NaN(), 4}},
	}
	sc, ref := ScoreUnits(UnitSite, in)
	// Component 1: median 2.5, |dev| 1.5, 0.5, 0.5, 7.5 → MAD 1, s = 1.4826…
	// Component 2: all 0 → MAD 0, mean |dev| 0 → z 0.
	// Component 3: 0.1, 0.2, 0.3 → median 0.2, MAD 0.1.
	// Component 4: 0, 0, 0, 4 → median 0, MAD 0 → s = 1.2533 × 1 (mean |dev| = 1).
	if ref.Medians[0] != 2.5 || math.Abs(ref.Spreads[0]-madToSD) > 1e-15 {
		t.Errorf("component 1 median %g spread %g, want 2.5 and %g (hand-derived)", ref.Medians[0], ref.Spreads[0], madToSD)
	}
	if math.Abs(ref.Spreads[3]-math.Sqrt(math.Pi/2)) > 1e-15 {
		t.Errorf("component 4 spread %g, want √(π/2) (hand-derived mean-deviation fallback)", ref.Spreads[3])
	}
	if sc[0].ID != "D" || sc[0].Rank != 1 {
		t.Fatalf("worst unit %s, want D", sc[0].ID)
	}
	z1 := (10 - 2.5) / madToSD
	z4 := 4 / math.Sqrt(math.Pi/2)
	if want := (z1 + 0 + z4) / 3; math.Abs(sc[0].Total-want) > 1e-12 {
		t.Errorf("D total %.15g, want %.15g (hand-derived: NaN component left out)", sc[0].Total, want)
	}
}
