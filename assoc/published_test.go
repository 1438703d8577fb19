package assoc

import (
	"math"
	"testing"
)

// Published worked examples with printed answers. Each case names where the
// numbers are printed; where we cite from memory we say so, and every such
// value was also recomputed with SciPy 1.10.1 or R 4.2.2 (see comments).

func TestSpearmanPublished(t *testing.T) {
	for _, tc := range []struct {
		name        string
		x, y        []float64
		rho, p, tol float64
		source      string
	}{
		{name: "scipy doc example with a tie", x: []float64{1, 2, 3, 4, 5}, y: []float64{5, 6, 7, 8, 7},
			rho: 0.8207826816681233, p: 0.08858700531354381, tol: 1e-15,
			source: "SciPy 1.10.1 reference, scipy.stats.spearmanr, Examples (printed statistic and pvalue; y has a tie at 7)"},
		{name: "Hollander & Wolfe tuna quality", x: []float64{44.4, 45.9, 41.9, 53.3, 44.7, 44.1, 50.7, 45.2, 60.1},
			y: []float64{2.6, 3.1, 2.5, 5.0, 3.6, 4.0, 5.2, 2.8, 3.8}, rho: 0.6, p: math.NaN(), tol: 1e-15,
			source: "R 4.2.2 example(cor.test), Hollander & Wolfe (1973) p. 187f.: prints rho 0.6"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := Spearman(tc.x, tc.y)
			if !near(got.Rho, tc.rho, tc.tol) {
				t.Errorf("Spearman(%v, %v).Rho = %.17g, want %.17g (%s)", tc.x, tc.y, got.Rho, tc.rho, tc.source)
			}
			if !math.IsNaN(tc.p) && !near(got.P, tc.p, 1e-12) {
				t.Errorf("Spearman(%v, %v).P = %.17g, want %.17g (%s)", tc.x, tc.y, got.P, tc.p, tc.source)
			}
		})
	}
}

func TestCramersVPublished(t *testing.T) {
	// SciPy 1.10.1 reference, scipy.stats.contingency.association, Examples:
	// association(obs4x2, method="cramer") printed as 0.18617813077483678.
	obs := []float64{100, 150, 203, 322, 420, 700, 320, 210}
	got := CramersV(obs, 4, 2)
	if want := 0.18617813077483678; !near(got.V, want, 1e-14) {
		t.Errorf("CramersV(obs4x2).V = %.17g, want %.17g (SciPy 1.10.1 association docs)", got.V, want)
	}
	if got.DF != 3 {
		t.Errorf("CramersV(obs4x2).DF = %d, want 3", got.DF)
	}
	// For a 2-column table Cramér's V is |φ|: hand-derived consistency.
	if min(got.R, got.C) == 2 && !near(got.V, math.Sqrt(got.Chi2/got.N), 1e-15) {
		t.Errorf("V = %g, want √(χ²/n) = %g for a table with two columns", got.V, math.Sqrt(got.Chi2/got.N))
	}
}

func TestSomersDPublished(t *testing.T) {
	t.Run("Laerd hotel cleanliness via scipy docs", func(t *testing.T) {
		// SciPy 1.10.1 reference, scipy.stats.somersd, Examples: the hotel
		// room cleanliness (rows) by customer satisfaction (columns) table of
		// Laerd Statistics, "Somers' d using SPSS Statistics"; printed
		// statistic 0.6032766111513396 and pvalue 1.0007091191074533e-27.
		tab := []float64{27, 25, 14, 7, 0, 7, 14, 18, 35, 12, 1, 3, 2, 7, 17}
		got := SomersD(tab, 3, 5)
		if want := 0.6032766111513396; !near(got.DYX, want, 1e-14) {
			t.Errorf("d(Y|X) = %.17g, want %.17g (SciPy somersd docs)", got.DYX, want)
		}
		if want := 1.0007091191074533e-27; !near(got.P/want, 1, 1e-9) {
			t.Errorf("P = %.17g, want %.17g (SciPy somersd docs)", got.P, want)
		}
	})
	t.Run("Agresti job satisfaction by income", func(t *testing.T) {
		// Agresti, Categorical Data Analysis, 2nd ed. (2002), the
		// job-satisfaction-by-income table of the gamma example in §2.4
		// (n = 96), cited from memory: C = 1331 concordant and D = 849
		// discordant pairs, γ̂ = 0.221. The recalled table reproduces all
		// three printed numbers; d(Y|X) and its SEs were recomputed with
		// scipy.stats.somersd and make_reference.R's somers_pairs.
		tab := []float64{1, 3, 10, 6, 2, 3, 10, 7, 1, 6, 14, 12, 0, 1, 9, 11}
		got := SomersD(tab, 4, 4)
		if got.Conc != 1331 || got.Disc != 849 {
			t.Errorf("concordant, discordant = %g, %g, want 1331, 849 (Agresti 2002 §2.4, from memory)", got.Conc, got.Disc)
		}
		if g := (got.Conc - got.Disc) / (got.Conc + got.Disc); math.Abs(g-0.221) > 0.0005 {
			t.Errorf("gamma = %.4f, want 0.221 (Agresti 2002 §2.4, from memory)", g)
		}
		// SciPy 1.10.1: stats.somersd(table).statistic.
		if want := 0.14172302264039988; !near(got.DYX, want, 1e-14) {
			t.Errorf("d(Y|X) = %.17g, want %.17g (SciPy 1.10.1 somersd)", got.DYX, want)
		}
		if want := 0.163778457356439; !near(got.DXY, want, 1e-14) {
			t.Errorf("d(X|Y) = %.17g, want %.17g (SciPy 1.10.1 somersd of the transpose)", got.DXY, want)
		}
	})
}

func TestKruskalPublished(t *testing.T) {
	for _, tc := range []struct {
		name   string
		x      []float64
		g      []int
		h, p   float64
		tol    float64 // relative, on H
		pTol   float64 // absolute, on P
		source string
	}{
		{name: "Hollander & Wolfe mucociliary efficiency",
			x: []float64{2.9, 3.0, 2.5, 2.6, 3.2, 3.8, 2.7, 4.0, 2.4, 2.8, 3.4, 3.7, 2.2, 2.0},
			g: []int{0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 2},
			h: 0.77143, p: 0.68, tol: 5e-6, pTol: 0.005, // printed to 5 and 2 significant digits
			source: "R 4.2.2 example(kruskal.test), Hollander & Wolfe (1973) p. 116: Kruskal-Wallis chi-squared = 0.77143, p-value = 0.68"},
		{name: "scipy doc example, all tied within groups",
			x: []float64{1, 1, 1, 2, 2, 2, 2, 2}, g: []int{0, 0, 0, 1, 1, 1, 2, 2},
			h: 7.0, p: 0.0301973834223185, tol: 1e-14, pTol: 1e-15,
			source: "SciPy 1.10.1 reference, scipy.stats.kruskal, Examples: statistic=7.0, pvalue=0.0301973834223185"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := KruskalWallis(tc.x, tc.g)
			if math.Abs(got.H-tc.h) > tc.tol*math.Max(1, tc.h) {
				t.Errorf("H = %.17g, want %.17g (%s)", got.H, tc.h, tc.source)
			}
			if math.Abs(got.P-tc.p) > tc.pTol {
				t.Errorf("P = %.17g, want %.17g (%s)", got.P, tc.p, tc.source)
			}
		})
	}
	// Theoretical: in the scipy example every group is internally tied and the
	// groups do not overlap, so H reaches its maximum n − 1 and ε² = 1.
	if e := KruskalWallis([]float64{1, 1, 1, 2, 2, 2, 2, 2}, []int{0, 0, 0, 1, 1, 1, 2, 2}).EpsilonSq; e != 1 {
		t.Errorf("ε² = %.17g, want 1 (theoretical: H = n − 1)", e)
	}
}

func TestBenjaminiHochbergPublished(t *testing.T) {
	// R 4.2.2: p.adjust(c(0.01, 0.04, 0.03, 0.005, NA, 0.2), method = "BH")
	// prints 0.025 0.050 0.050 0.025 NA 0.200.
	p := []float64{0.01, 0.04, 0.03, 0.005, math.NaN(), 0.2}
	want := []float64{0.025, 0.05, 0.05, 0.025, math.NaN(), 0.2}
	got := BenjaminiHochberg(p, nil)
	for i := range want {
		if !near(got[i], want[i], 1e-15) {
			t.Errorf("BenjaminiHochberg(%v)[%d] = %.17g, want %.17g (R p.adjust BH)", p, i, got[i], want[i])
		}
	}
}
