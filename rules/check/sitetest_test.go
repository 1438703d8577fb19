package check

import (
	"math"
	"testing"
)

const rRef = "R 4.2.2 (testdata/check/site_reference.R)"

func TestBinomialUpperTail(t *testing.T) {
	tests := []struct {
		name string
		k, n int
		p    float64
		want float64
		tol  float64 // relative
	}{
		{"7 of 20 at 0.1", 7, 20, 0.1, 0.002386089408966128, 1e-12},
		{"0 of 10", 0, 10, 0.3, 1, 0},
		{"all of 3 at 0.5", 3, 3, 0.5, 0.12500000000000003, 1e-12},
		{"30 of 1000 at 0.01", 30, 1000, 0.01, 2.0599888509719647e-07, 1e-10},
		{"25 of 400 at 0.02", 25, 400, 0.02, 8.1738130792346958e-07, 1e-10},
		{"60 of 500 at 0.05", 60, 500, 0.05, 5.7127171679980669e-10, 1e-9},
		{"1 of 1000 at 1e-4", 1, 1000, 0.0001, 0.095167106441453805, 1e-12},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := BinomialUpperTail(tc.k, tc.n, tc.p)
			if math.Abs(got-tc.want) > tc.tol*tc.want {
				t.Errorf("BinomialUpperTail(%d, %d, %g) = %.17g, want %.17g (%s: binom.test(%d, %d, %g, alternative=\"greater\"))",
					tc.k, tc.n, tc.p, got, tc.want, rRef, tc.k, tc.n, tc.p)
			}
		})
	}
	// Theoretical edge cases.
	if got := BinomialUpperTail(1, 10, 0); got != 0 {
		t.Errorf("BinomialUpperTail(1, 10, 0) = %g, want 0 (impossible under p = 0)", got)
	}
	if got := BinomialUpperTail(11, 10, 0.5); got != 0 {
		t.Errorf("BinomialUpperTail(11, 10, 0.5) = %g, want 0 (k > n)", got)
	}
}

func TestBenjaminiHochberg(t *testing.T) {
	p := []float64{0.01, 0.04, 0.03, 0.005, 0.5, 0.2}
	want := []float64{0.03, 0.06, 0.06, 0.03, 0.5, 0.24} // R 4.2.2: p.adjust(p, "BH")
	got := BenjaminiHochberg(p)
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-15 {
			t.Errorf("BenjaminiHochberg(%v)[%d] = %.17g, want %.17g (%s)", p, i, got[i], want[i], rRef)
		}
	}
	got = BenjaminiHochberg([]float64{math.NaN(), 0.02, 0.04})
	if !math.IsNaN(got[0]) || got[1] != 0.04 || got[2] != 0.04 {
		t.Errorf("BenjaminiHochberg(NaN, 0.02, 0.04) = %v, want [NaN 0.04 0.04] (hand-derived, m = 2)", got)
	}
}

// TestSiteTestPlanted plants one high-rate site. Five sites of 10 subjects and
// 400 evaluations each; D has 40 violations (rate 0.10) while the others have
// 7–10 (rate ≈ 0.02). Hand-derived expectation: D against the pooled rate of
// the others, 34/1600 = 0.02125, expects 8.5 violations and has 40, far out in
// the upper tail; B (10/400 against 64/1600 = 0.04, i.e. expects 16) is below
// expectation and must not be flagged. P and Q are checked against R.
// Site F (2 subjects) is below the minimum size and not tested; its counts
// still enter the other sites' pooled rate, so it has 0 violations here to
// keep the R reference values.
func TestSiteTestPlanted(t *testing.T) {
	counts := []SiteCount{
		{"A", 10, 400, 8}, {"B", 10, 400, 10}, {"C", 10, 400, 9},
		{"D", 10, 400, 40}, {"E", 10, 400, 7}, {"F", 2, 0, 0},
	}
	wantP := map[string]float64{"A": 0.99346849059260345, "B": 0.95967641755400512, "C": 0.98257413211351852,
		"D": 1.3242521523377595e-15, "E": 0.99791217114309272}
	wantQ := map[string]float64{"A": 0.99791217114309272, "B": 0.99791217114309272, "C": 0.99791217114309272,
		"D": 6.6212607616887979e-15, "E": 0.99791217114309272}
	res := SiteTest(counts, SiteTestOptions{})
	if len(res) != len(counts) {
		t.Fatalf("SiteTest returned %d results, want %d", len(res), len(counts))
	}
	for _, r := range res {
		if r.Site == "F" {
			if r.Tested || r.Flagged || r.Reason == "" {
				t.Errorf("site F: Tested=%v Flagged=%v Reason=%q, want untested with a reason (2 subjects < minimum 3)", r.Tested, r.Flagged, r.Reason)
			}
			continue
		}
		if !r.Tested {
			t.Errorf("site %s: not tested (%s)", r.Site, r.Reason)
			continue
		}
		if math.Abs(r.P-wantP[r.Site]) > 1e-9*wantP[r.Site] {
			t.Errorf("site %s: P = %.17g, want %.17g (%s)", r.Site, r.P, wantP[r.Site], rRef)
		}
		if math.Abs(r.Q-wantQ[r.Site]) > 1e-9*wantQ[r.Site] {
			t.Errorf("site %s: Q = %.17g, want %.17g (%s)", r.Site, r.Q, wantQ[r.Site], rRef)
		}
		if wantFlag := r.Site == "D"; r.Flagged != wantFlag {
			t.Errorf("site %s: Flagged = %v, want %v", r.Site, r.Flagged, wantFlag)
		}
	}
	if d := res[3]; math.Abs(d.OthersRate-34.0/1600) > 1e-15 || math.Abs(d.Ratio-0.1/(34.0/1600)) > 1e-12 {
		t.Errorf("site D: OthersRate = %g, Ratio = %g, want %g, %g (hand-derived)", d.OthersRate, d.Ratio, 34.0/1600, 0.1/(34.0/1600))
	}
}
