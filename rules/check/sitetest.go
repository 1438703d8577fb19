package check

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/crossform/crossform/assoc"
)

// Defaults for SiteTestOptions.
const (
	DefaultSiteAlpha          = 0.05
	DefaultMinSiteSubjects    = 3
	DefaultMinSiteEvaluations = 30
)

// SiteTestOptions control the site screening test (SiteTest).
type SiteTestOptions struct {
	// Alpha is the false discovery rate at which sites are flagged after the
	// Benjamini–Hochberg adjustment; 0 means DefaultSiteAlpha.
	Alpha float64
	// MinSubjects and MinEvaluations are the minimum site size: a site with
	// fewer subjects or fewer evaluated rule×record pairs is not tested (its
	// rate is too unstable to compare) and is not counted in the number of
	// tests. 0 means the defaults; a negative value means no minimum.
	MinSubjects, MinEvaluations int
}

func (o SiteTestOptions) withDefaults() SiteTestOptions {
	if o.Alpha == 0 {
		o.Alpha = DefaultSiteAlpha
	}
	if o.MinSubjects == 0 {
		o.MinSubjects = DefaultMinSiteSubjects
	}
	if o.MinEvaluations == 0 {
		o.MinEvaluations = DefaultMinSiteEvaluations
	}
	return o
}

// SiteCount is the input of SiteTest for one site.
type SiteCount struct {
	Site        string
	Subjects    int // distinct subjects
	Evaluations int // rule×record pairs judged Pass or Fail
	Violations  int // of which Fail
}

// SiteTestResult is the screening result for one site.
type SiteTestResult struct {
	Site string `json:"site"`
	// Tested is false when the site is below the minimum size, or when no other
	// site has evaluations to compare with; Reason then says why and P, Q,
	// OthersRate and Ratio are NaN (null in JSON).
	Tested bool   `json:"tested"`
	Reason string `json:"reason,omitempty"`
	// OthersRate is the pooled violation rate of all other sites, ΣV/ΣN over
	// sites ≠ this one (all sites, including those below the minimum size).
	OthersRate float64 `json:"-"`
	// Ratio is the site's rate divided by OthersRate (+Inf when OthersRate is 0
	// and the site has violations).
	Ratio float64 `json:"-"`
	// P is the exact one-sided binomial p-value P(X ≥ Violations) for
	// X ~ Binomial(Evaluations, OthersRate).
	P float64 `json:"-"`
	// Q is the Benjamini–Hochberg adjusted p-value over the tested sites.
	Q float64 `json:"-"`
	// Flagged is true when Q ≤ Alpha.
	Flagged bool `json:"flagged"`
}

// BinomialUpperTail returns P(X ≥ k) for X ~ Binomial(n, p), the exact
// one-sided p-value for "more than expected" (Conover, Practical Nonparametric
// Statistics, 3rd ed., 1999, §3.1, the binomial test). It is computed with
// gonum's Binomial CDF through the reflection n − X ~ Binomial(n, 1 − p):
// P(X ≥ k) = P(n − X ≤ n − k), which keeps small p-values accurate where
// 1 − CDF would round to 0. It returns 1 for k ≤ 0 and 0 for k > n;
// p = 0 gives 0 for any k ≥ 1.
func BinomialUpperTail(k, n int, p float64) float64 {
	switch {
	case k <= 0:
		return 1
	case k > n:
		return 0
	case p <= 0:
		return 0
	case p >= 1:
		return 1
	}
	return distuv.Binomial{N: float64(n), P: 1 - p}.CDF(float64(n - k))
}

// BenjaminiHochberg returns the Benjamini–Hochberg adjusted p-values (the
// "BH" step-up q-values) of p, in p's order: q(i) = min over j ≥ i of
// p(j)·m/j for the p-values sorted ascending, capped at 1 (Benjamini and
// Hochberg 1995, J. R. Stat. Soc. B 57:289–300; the same definition as R's
// p.adjust(method = "BH")). NaN inputs are left NaN and not counted in m.
func BenjaminiHochberg(p []float64) []float64 {
	return assoc.BenjaminiHochberg(p, nil)
}

// SiteTest screens sites for a discrepancy rate that stands out: for each site
// of adequate size, the exact one-sided binomial test of its violations out of
// its evaluations against the pooled rate of the other sites
// (BinomialUpperTail), then the Benjamini–Hochberg adjustment across the
// tested sites, flagging those with Q ≤ Alpha. Comparing against the other
// sites, not the whole study, keeps a large outlying site from raising its own
// reference rate.
//
// The test treats each rule×record evaluation as an independent trial; rules
// on the same record and records of the same subject are correlated, so P is
// a screening score for the data manager, not a confirmatory test. The result
// is in counts' order.
func SiteTest(counts []SiteCount, o SiteTestOptions) []SiteTestResult {
	o = o.withDefaults()
	var totN, totV int
	for _, c := range counts {
		totN += c.Evaluations
		totV += c.Violations
	}
	out := make([]SiteTestResult, len(counts))
	ps := make([]float64, len(counts))
	nan := math.NaN()
	for i, c := range counts {
		r := SiteTestResult{Site: c.Site, OthersRate: nan, Ratio: nan, P: nan, Q: nan}
		ps[i] = nan
		othN, othV := totN-c.Evaluations, totV-c.Violations
		switch {
		case o.MinSubjects > 0 && c.Subjects < o.MinSubjects:
			r.Reason = "fewer subjects than the minimum site size"
		case o.MinEvaluations > 0 && c.Evaluations < o.MinEvaluations:
			r.Reason = "fewer evaluations than the minimum site size"
		case c.Evaluations == 0:
			r.Reason = "no evaluations"
		case othN == 0:
			r.Reason = "no other site to compare with"
		default:
			r.Tested = true
			r.OthersRate = float64(othV) / float64(othN)
			rate := float64(c.Violations) / float64(c.Evaluations)
			switch {
			case r.OthersRate > 0:
				r.Ratio = rate / r.OthersRate
			case c.Violations > 0:
				r.Ratio = math.Inf(1)
			}
			r.P = BinomialUpperTail(c.Violations, c.Evaluations, r.OthersRate)
			ps[i] = r.P
		}
		out[i] = r
	}
	q := BenjaminiHochberg(ps)
	for i := range out {
		if out[i].Tested {
			out[i].Q = q[i]
			out[i].Flagged = q[i] <= o.Alpha
		}
	}
	return out
}
