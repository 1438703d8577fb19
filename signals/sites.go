package signals

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
)

// Defaults of SiteOptions.
const (
	// DefaultMinSiteN is the fewest subjects a site needs to be tested.
	DefaultMinSiteN = 20
	// DefaultAlpha is the false discovery rate of the site tests.
	DefaultAlpha = 0.05
	// DefaultMinRhoDiff is the smallest |ρ_site − ρ_others| that is flagged:
	// a difference that can change a consistency rule, not only a significant
	// one.
	DefaultMinRhoDiff = 0.2
	// DefaultMinEffect is the smallest |Â − 0.5| of a distribution shift that is
	// flagged, Â the Brunner–Munzel relative effect (the Vargha–Delaney A):
	// 0.21 is the "large" bound A ≥ 0.71 of Vargha & Delaney (2000, J. Educ.
	// Behav. Stat. 25:101–132).
	DefaultMinEffect = 0.21
	// DefaultPairMinRho is the smallest pooled |Spearman ρ| of a pair chosen
	// automatically for the relationship test.
	DefaultPairMinRho = 0.5
	// DefaultMaxPairs bounds the pairs chosen automatically.
	DefaultMaxPairs = 40
)

// SiteOptions control Relationships and Shifts. The zero value uses the
// defaults.
type SiteOptions struct {
	MinSiteN   int     // 0 means DefaultMinSiteN
	Alpha      float64 // 0 means DefaultAlpha
	MinRhoDiff float64 // 0 means DefaultMinRhoDiff; < 0 flags on q alone
	MinEffect  float64 // 0 means DefaultMinEffect; < 0 flags on q alone
	PairMinRho float64 // 0 means DefaultPairMinRho
	MaxPairs   int     // 0 means DefaultMaxPairs
	// NoStrata turns off the per-visit strata of Shifts on a table keyed by
	// VISITNUM.
	NoStrata bool
}

func (o SiteOptions) withDefaults() SiteOptions {
	if o.MinSiteN == 0 {
		o.MinSiteN = DefaultMinSiteN
	}
	if o.Alpha == 0 {
		o.Alpha = DefaultAlpha
	}
	if o.MinRhoDiff == 0 {
		o.MinRhoDiff = DefaultMinRhoDiff
	}
	if o.MinEffect == 0 {
		o.MinEffect = DefaultMinEffect
	}
	if o.PairMinRho == 0 {
		o.PairMinRho = DefaultPairMinRho
	}
	if o.MaxPairs == 0 {
		o.MaxPairs = DefaultMaxPairs
	}
	return o
}

// A Relation is the heterogeneity test of one pair of variables at one site.
type Relation struct {
	Table      string // the table's level or name
	X, Y       string
	Site       string
	N, NOthers int     // units (subjects) with both values: at the site, at the other sites
	Rho        float64 // Spearman ρ within the site
	RhoOthers  float64 // ρ over the other sites' rows pooled
	RhoAll     float64 // ρ over every row
	Z          float64 // (atanh ρ − atanh ρ_others) / √(1/(N−3) + 1/(NOthers−3))
	P, Q       float64 // two-sided normal p-value; Benjamini–Hochberg q over all tests of the call
	Flag       bool
}

// A Shift compares one variable's distribution at one site (within one
// stratum) with the other sites'.
type Shift struct {
	Table   string
	Var     string
	Stratum string // "" or e.g. "VISITNUM=4"
	Site    string
	N       int // values at the site
	NOthers int // values at the other sites
	// Median and OthersMedian are the medians at the site and over the other
	// sites' values pooled; Ratio is Median / OthersMedian (NaN when that is 0).
	Median, OthersMedian, Ratio float64
	// Spread and OthersSpread are 1.4826 × MAD; ScaleRatio their ratio.
	Spread, OthersSpread, ScaleRatio float64
	// MedianZ is the robust z of the site's median among the medians of all
	// sites tested in the stratum: (m_s − median m) / (1.4826 · MAD m).
	MedianZ float64
	// Effect is the Brunner–Munzel relative effect Â = P(Y < X) + ½P(Y = X),
	// X a value at the site, Y at another site: 0.5 means no shift, above 0.5
	// the site is higher.
	Effect   float64
	Stat, DF float64 // Brunner–Munzel statistic and Welch–Satterthwaite degrees of freedom
	P, Q     float64
	Flag     bool
}

// unitKey returns the subject of each row, for counting independent units:
// the first key column when the table has more than one key (rows are then
// repeated measures of a subject), else nil (each row a unit).
func unitKey(t *dataset.Table) *dataset.Column {
	if len(t.Keys) > 1 {
		return t.Col(t.Keys[0])
	}
	return nil
}

func tableName(t *dataset.Table) string {
	if t.Level != "" {
		return t.Level
	}
	return t.Name
}

// numericCols returns the continuous, float-stored, non-key columns of t.
func numericCols(t *dataset.Table) []*dataset.Column {
	var out []*dataset.Column
	for _, c := range t.Cols {
		if !t.IsKey(c.Name) && c.Type == dataset.Continuous && c.Storage == dataset.StoreFloat {
			out = append(out, c)
		}
	}
	return out
}

// StrongPairs returns the pairs of t's continuous variables whose Spearman ρ
// over all rows has |ρ| ≥ minRho, by decreasing |ρ| then names, at most max.
func StrongPairs(t *dataset.Table, minRho float64, maxPairs int) [][2]string {
	cols := numericCols(t)
	type sp struct {
		x, y string
		r    float64
	}
	var all []sp
	for a := range cols {
		for b := a + 1; b < len(cols); b++ {
			r := assoc.Spearman(cols[a].Floats, cols[b].Floats)
			if r.N >= 10 && math.Abs(r.Rho) >= minRho {
				all = append(all, sp{cols[a].Name, cols[b].Name, math.Abs(r.Rho)})
			}
		}
	}
	slices.SortStableFunc(all, func(a, b sp) int { return cmp.Compare(b.r, a.r) })
	var out [][2]string
	for _, p := range all[:min(len(all), maxPairs)] {
		out = append(out, [2]string{p.x, p.y})
	}
	return out
}

// sitesOf returns the sorted site codes of t's rows ("" rows left out).
func sitesOf(t *dataset.Table) []string {
	var s []string
	for i := range t.NRows {
		if v := t.SiteOf(i); v != "" && !slices.Contains(s, v) {
			s = append(s, v)
		}
	}
	slices.Sort(s)
	return s
}

// Relationships tests, for each pair (X, Y) of numeric variables of t and each
// site, whether the site's Spearman correlation differs from that of the
// other sites pooled. With z(ρ) = atanh ρ (Fisher 1921, Metron 1:3–32),
//
//	Z = (z(ρ_site) − z(ρ_others)) / √(1/(n_s − 3) + 1/(n_o − 3))
//
// is referred to the standard normal, two-sided. 1/(n − 3) is the large-sample
// variance of z for Pearson's r; for Spearman's ρ it is slightly too small
// (Fieller, Hartley & Pearson 1957, Biometrika 44:470–481, give 1.06/(n − 3)),
// a small anti-conservative bias that the effect-size floor absorbs. n counts
// units: subjects when t has repeated rows per subject (a visit-level table,
// keyed by subject then visit), since rows of one subject are not independent;
// rows otherwise. ρ is computed on all rows. |ρ| is capped at 1 − 1e-9 before
// atanh. Sites with fewer than o.MinSiteN units (or whose complement has fewer)
// are not tested. q-values are Benjamini–Hochberg over every site × pair test
// of the call; a test is flagged when q ≤ o.Alpha and |ρ − ρ_others| ≥
// o.MinRhoDiff. pairs nil chooses StrongPairs(t, o.PairMinRho, o.MaxPairs).
// A pair naming a variable that t lacks or that is not numeric is an error.
func Relationships(t *dataset.Table, pairs [][2]string, o SiteOptions) ([]Relation, error) {
	o = o.withDefaults()
	if t.Site == "" {
		return nil, fmt.Errorf("signals: table %q has no site column", t.Name)
	}
	if pairs == nil {
		pairs = StrongPairs(t, o.PairMinRho, o.MaxPairs)
	}
	unit := unitKey(t)
	sites := sitesOf(t)
	var out []Relation
	for _, pr := range pairs {
		cx, cy := t.Col(pr[0]), t.Col(pr[1])
		for i, c := range []*dataset.Column{cx, cy} {
			if c == nil {
				return nil, fmt.Errorf("signals: table %q has no variable %q", t.Name, pr[i])
			}
			if c.Storage != dataset.StoreFloat {
				return nil, fmt.Errorf("signals: variable %q of table %q is %v, not numeric", pr[i], t.Name, c.Type)
			}
		}
		all := assoc.Spearman(cx.Floats, cy.Floats)
		for _, site := range sites {
			var xs, ys, xo, yo []float64
			us, uo := map[string]bool{}, map[string]bool{}
			for i := range t.NRows {
				x, y := cx.Floats[i], cy.Floats[i]
				if math.IsNaN(x) || math.IsNaN(y) {
					continue
				}
				u := strconv.Itoa(i)
				if unit != nil {
					u = unit.String(i)
				}
				if t.SiteOf(i) == site {
					xs, ys = append(xs, x), append(ys, y)
					us[u] = true
				} else {
					xo, yo = append(xo, x), append(yo, y)
					uo[u] = true
				}
			}
			r := Relation{Table: tableName(t), X: pr[0], Y: pr[1], Site: site, N: len(us), NOthers: len(uo),
				RhoAll: all.Rho, Rho: math.NaN(), RhoOthers: math.NaN(), Z: math.NaN(), P: math.NaN()}
			if r.N >= o.MinSiteN && r.NOthers >= o.MinSiteN {
				r.Rho = assoc.Spearman(xs, ys).Rho
				r.RhoOthers = assoc.Spearman(xo, yo).Rho
				r.Z = (fisherZ(r.Rho) - fisherZ(r.RhoOthers)) / math.Sqrt(1/float64(r.N-3)+1/float64(r.NOthers-3))
				if !math.IsNaN(r.Z) {
					r.P = 2 * distuv.UnitNormal.Survival(math.Abs(r.Z))
				}
			}
			out = append(out, r)
		}
	}
	p := make([]float64, len(out))
	for i := range out {
		p[i] = out[i].P
	}
	q := assoc.BenjaminiHochberg(p, nil)
	for i := range out {
		out[i].Q = q[i]
		out[i].Flag = q[i] <= o.Alpha && (o.MinRhoDiff < 0 || math.Abs(out[i].Rho-out[i].RhoOthers) >= o.MinRhoDiff)
	}
	return out, nil
}

func fisherZ(r float64) float64 {
	const lim = 1 - 1e-9
	return math.Atanh(math.Max(-lim, math.Min(lim, r)))
}

// Shifts compares, for each variable of vars (nil: every continuous variable
// of t) and each site, the site's values with the other sites' pooled values:
// medians and their ratio, spreads (1.4826 × MAD) and their ratio, the robust z
// of the site's median among all sites' medians, and the Brunner–Munzel test
// (BrunnerMunzel), which allows unequal spreads. A table keyed by VISITNUM (a
// visit-level table) is split into one stratum per visit unless o.NoStrata, so
// that each subject contributes one value per test and a change from one visit
// on (weights recorded in pounds from week 4) shows in the visits it affects.
// Sites (and complements) with fewer than o.MinSiteN values in a stratum are
// not tested. q-values are Benjamini–Hochberg over every test of the call; a
// test is flagged when q ≤ o.Alpha and |Effect − 0.5| ≥ o.MinEffect.
func Shifts(t *dataset.Table, vars []string, o SiteOptions) ([]Shift, error) {
	o = o.withDefaults()
	if t.Site == "" {
		return nil, fmt.Errorf("signals: table %q has no site column", t.Name)
	}
	var cols []*dataset.Column
	if vars == nil {
		cols = numericCols(t)
	} else {
		for _, v := range vars {
			c := t.Col(v)
			if c == nil {
				return nil, fmt.Errorf("signals: table %q has no variable %q", t.Name, v)
			}
			if c.Storage != dataset.StoreFloat {
				return nil, fmt.Errorf("signals: variable %q of table %q is %v, not numeric", v, t.Name, c.Type)
			}
			cols = append(cols, c)
		}
	}
	// Strata: the values of VISITNUM when it is a key.
	strata := []string{""}
	var stratumOf func(i int) string
	if vc := t.Col("VISITNUM"); vc != nil && t.IsKey("VISITNUM") && !o.NoStrata {
		strata = strata[:0]
		var vals []float64
		for i := range t.NRows {
			if v := vc.Float(i); !math.IsNaN(v) && !slices.Contains(vals, v) {
				vals = append(vals, v)
			}
		}
		slices.Sort(vals)
		for _, v := range vals {
			strata = append(strata, "VISITNUM="+dataset.FormatFloat(v))
		}
		stratumOf = func(i int) string { return "VISITNUM=" + vc.String(i) }
	}
	sites := sitesOf(t)
	var out []Shift
	for _, c := range cols {
		for _, st := range strata {
			bySite := map[string][]float64{}
			for i := range t.NRows {
				if v := c.Floats[i]; !math.IsNaN(v) && (stratumOf == nil || stratumOf(i) == st) {
					bySite[t.SiteOf(i)] = append(bySite[t.SiteOf(i)], v)
				}
			}
			first := len(out)
			var meds []float64
			for _, site := range sites {
				x := bySite[site]
				var y []float64
				for _, s2 := range sites {
					if s2 != site {
						y = append(y, bySite[s2]...)
					}
				}
				sh := Shift{Table: tableName(t), Var: c.Name, Stratum: st, Site: site, N: len(x), NOthers: len(y)}
				if sh.N < o.MinSiteN || sh.NOthers < o.MinSiteN {
					continue
				}
				sh.Median, sh.Spread = medianMAD(x)
				sh.OthersMedian, sh.OthersSpread = medianMAD(y)
				sh.Ratio = ratio(sh.Median, sh.OthersMedian)
				sh.ScaleRatio = ratio(sh.Spread, sh.OthersSpread)
				bm := BrunnerMunzel(x, y)
				sh.Effect, sh.Stat, sh.DF, sh.P = bm.Effect, bm.Stat, bm.DF, bm.P
				meds = append(meds, sh.Median)
				out = append(out, sh)
			}
			mm, ms := medianMAD(meds)
			for i := first; i < len(out); i++ {
				out[i].MedianZ = math.NaN()
				if len(meds) >= 3 && ms > 0 {
					out[i].MedianZ = (out[i].Median - mm) / ms
				}
			}
		}
	}
	p := make([]float64, len(out))
	for i := range out {
		p[i] = out[i].P
	}
	q := assoc.BenjaminiHochberg(p, nil)
	for i := range out {
		out[i].Q = q[i]
		out[i].Flag = q[i] <= o.Alpha && (o.MinEffect < 0 || math.Abs(out[i].Effect-0.5) >= o.MinEffect)
	}
	return out, nil
}

func ratio(a, b float64) float64 {
	if b == 0 {
		return math.NaN()
	}
	return a / b
}

// BMResult is the result of BrunnerMunzel.
type BMResult struct {
	Effect float64 // Â = P(Y < X) + ½P(Y = X), estimated from mid-ranks
	Stat   float64 // W, positive when X tends to be larger
	DF     float64
	P      float64 // two-sided, Student t with DF degrees of freedom
}

// BrunnerMunzel returns the Brunner–Munzel test of stochastic equality of x
// and y, which allows unequal variances (Brunner & Munzel 2000, Biometrical J.
// 42:17–25), in the form of scipy.stats.brunnermunzel (scipy 1.10): with R
// the mid-ranks in the pooled sample, R⁽ˣ⁾ the mid-ranks within x, and n, m
// the sizes of x and y,
//
//	S²_x = Σ (R_i − R⁽ˣ⁾_i − R̄_x + (n+1)/2)² / (n − 1)   (likewise S²_y)
//	W    = n·m·(R̄_x − R̄_y) / ((n + m)·√(n·S²_x + m·S²_y))
//	ν    = (n·S²_x + m·S²_y)² / ((n·S²_x)²/(n − 1) + (m·S²_y)²/(m − 1))
//
// and Â = (R̄_x − (n+1)/2)/m. Its statistic has the opposite sign to scipy's,
// which tests y against x. It returns NaNs (but the effect) when either sample
// has fewer than 2 values or both S² are 0 (no overlap within the samples'
// ranks: e.g. complete separation with no ties); NaN values are dropped.
func BrunnerMunzel(x, y []float64) BMResult {
	x, y = dropNaN(x), dropNaN(y)
	n, m := float64(len(x)), float64(len(y))
	res := BMResult{Effect: math.NaN(), Stat: math.NaN(), DF: math.NaN(), P: math.NaN()}
	if len(x) == 0 || len(y) == 0 {
		return res
	}
	pooled := midRanks(append(slices.Clone(x), y...))
	rx, ry := midRanks(x), midRanks(y)
	var mx, my float64
	for i := range x {
		mx += pooled[i]
	}
	for j := range y {
		my += pooled[len(x)+j]
	}
	mx /= n
	my /= m
	res.Effect = (mx - (n+1)/2) / m
	if len(x) < 2 || len(y) < 2 {
		return res
	}
	var sx, sy float64
	for i := range x {
		d := pooled[i] - rx[i] - mx + (n+1)/2
		sx += d * d
	}
	for j := range y {
		d := pooled[len(x)+j] - ry[j] - my + (m+1)/2
		sy += d * d
	}
	sx /= n - 1
	sy /= m - 1
	v := n*sx + m*sy
	if v == 0 {
		return res
	}
	res.Stat = n * m * (mx - my) / ((n + m) * math.Sqrt(v))
	res.DF = v * v / ((n*sx)*(n*sx)/(n-1) + (m*sy)*(m*sy)/(m-1))
	tdist := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: res.DF}
	res.P = 2 * math.Min(tdist.CDF(res.Stat), tdist.Survival(res.Stat))
	return res
}

func dropNaN(v []float64) []float64 {
	out := make([]float64, 0, len(v))
	for _, x := range v {
		if !math.IsNaN(x) {
			out = append(out, x)
		}
	}
	return out
}

// midRanks returns the 1-based ranks of v, ties given their mean rank.
func midRanks(v []float64) []float64 {
	idx := make([]int, len(v))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int { return cmp.Compare(v[a], v[b]) })
	r := make([]float64, len(v))
	for i := 0; i < len(idx); {
		j := i
		for j+1 < len(idx) && v[idx[j+1]] == v[idx[i]] {
			j++
		}
		mid := float64(i+j)/2 + 1
		for k := i; k <= j; k++ {
			r[idx[k]] = mid
		}
		i = j + 1
	}
	return r
}
