package signals

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
)

// A Kind says how a variable enters the Gower distance.
type Kind uint8

// The kinds of variable of a Mixed data set, after the types of R's
// cluster::daisy (Kaufman & Rousseeuw 1990, Finding Groups in Data, ch. 1).
const (
	KindNone Kind = iota
	// Numeric is interval scaled: the contribution is |x_i − x_j| divided by
	// the variable's scale (the range, or the robust scale of Robust).
	Numeric
	// Ordinal holds the 0-based position of the level in the ordered levels;
	// like daisy's ordered factors (integer codes, "standard scoring"), the codes
	// are then treated as Numeric and scaled by their observed range under
	// both scalings.
	Ordinal
	// Nominal holds any category code: contribution 0 when equal, else 1.
	Nominal
	// SymmetricBinary holds 0 or 1, compared like Nominal (daisy type "symm").
	SymmetricBinary
	// AsymmetricBinary holds 0 (absent) or 1 (present); a pair where both are 0
	// is left out of that pair's distance (daisy type "asymm").
	AsymmetricBinary
)

var kindNames = [...]string{"none", "numeric", "ordinal", "nominal", "symmetric binary", "asymmetric binary"}

// String returns the kind's name ("numeric", "ordinal", …).
func (k Kind) String() string {
	if int(k) < len(kindNames) {
		return kindNames[k]
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// A Scaling says how the numeric variables of a Gower distance are scaled.
type Scaling uint8

const (
	// Robust scales each Numeric variable by S = RobustWidth × 1.4826 × MAD
	// (MAD: median absolute deviation from the median of the non-missing
	// values), about the width of the central 95% of a normal distribution,
	// and caps each variable's contribution at 1:
	//
	//	d_k(i, j) = min(1, |x_ik − x_jk| / S_k)
	//
	// When the MAD is 0 (more than half the values tied), S_k = RobustWidth ×
	// IQR_k / 1.349 (type-7 quantiles, R's default); when that is 0 too, S_k is
	// the range; a constant variable gets S_k = 1 (all contributions 0).
	// Ordinal, nominal and binary variables are treated as under Range. One
	// gross error (a weight in pounds, a blood pressure of 1420) then cannot
	// squash every other subject's differences on that variable towards 0, as
	// it does when it widens the range. This is crossform's own variant.
	Robust Scaling = iota
	// Range is Gower's (1971, Biometrics 27:857–874) scaling as R's
	// cluster::daisy(metric = "gower") computes it: every Numeric and Ordinal
	// variable is scaled to [0, 1] by (x − min) / (max − min) over the
	// non-missing values (a constant variable is divided by 1).
	Range
)

// String returns "robust" or "range".
func (s Scaling) String() string {
	switch s {
	case Robust:
		return "robust"
	case Range:
		return "range"
	}
	return fmt.Sprintf("Scaling(%d)", uint8(s))
}

// RobustWidth is the multiple of the robust standard deviation (1.4826 × MAD)
// that a difference must reach to count as a full disagreement under Robust
// scaling: 4, about the 3.92 standard deviations between the 2.5th and 97.5th
// centiles of a normal distribution.
const RobustWidth = 4.0

// madToSD is the consistency constant that makes the MAD estimate the standard
// deviation of a normal distribution, 1/Φ⁻¹(3/4) (Rousseeuw & Croux 1993,
// JASA 88:1273–1283).
const madToSD = 1.482602218505602

// iqrToSD is the interquartile range of the standard normal distribution,
// 2Φ⁻¹(3/4).
const iqrToSD = 1.3489795003921634

// Mixed is a data set of n rows (subjects) and p variables of mixed kinds,
// stored by column. It is the input of NewGower.
type Mixed struct {
	Names []string
	Kinds []Kind
	// Weights holds one weight per variable (≥ 0, finite); nil means all 1.
	Weights []float64
	// Cols[k][i] is variable k on row i (both 0-based), NaN when missing:
	// the value for Numeric, the 0-based level position for Ordinal (unused
	// levels keep their positions, as in an R factor), an integer category code
	// in [0, 2^31) for Nominal, 0 or 1 for the binary kinds.
	Cols [][]float64
}

// Rows returns the number of rows, 0 when there are no variables.
func (m *Mixed) Rows() int {
	if len(m.Cols) == 0 {
		return 0
	}
	return len(m.Cols[0])
}

// Validate reports the first problem with m: lengths that disagree, an unknown
// kind, a negative or non-finite weight, an infinite value, a binary value
// other than 0 or 1, or a nominal code that is not a non-negative int32.
func (m *Mixed) Validate() error {
	p := len(m.Names)
	if len(m.Kinds) != p || len(m.Cols) != p || (m.Weights != nil && len(m.Weights) != p) {
		return fmt.Errorf("signals: %d names, %d kinds, %d columns and %d weights", p, len(m.Kinds), len(m.Cols), len(m.Weights))
	}
	n := m.Rows()
	for k := range p {
		if len(m.Cols[k]) != n {
			return fmt.Errorf("signals: variable %q has %d rows, want %d", m.Names[k], len(m.Cols[k]), n)
		}
		if m.Kinds[k] < Numeric || m.Kinds[k] > AsymmetricBinary {
			return fmt.Errorf("signals: variable %q has unknown kind %d", m.Names[k], m.Kinds[k])
		}
		if m.Weights != nil && (m.Weights[k] < 0 || math.IsNaN(m.Weights[k]) || math.IsInf(m.Weights[k], 0)) {
			return fmt.Errorf("signals: variable %q has weight %g (want a finite weight ≥ 0)", m.Names[k], m.Weights[k])
		}
		bin := m.Kinds[k] == SymmetricBinary || m.Kinds[k] == AsymmetricBinary
		for i, v := range m.Cols[k] {
			switch {
			case math.IsNaN(v):
			case math.IsInf(v, 0):
				return fmt.Errorf("signals: variable %q row %d: infinite value", m.Names[k], i+1)
			case bin && v != 0 && v != 1:
				return fmt.Errorf("signals: binary variable %q row %d: value %g (want 0 or 1)", m.Names[k], i+1, v)
			case m.Kinds[k] == Nominal && (v != math.Trunc(v) || v < 0 || v > math.MaxInt32):
				return fmt.Errorf("signals: nominal variable %q row %d: code %g (want an integer 0 to 2^31−1)", m.Names[k], i+1, v)
			}
		}
	}
	return nil
}

// Gower is a mixed-type distance between the rows of a Mixed data set, ready
// to evaluate: the general dissimilarity coefficient of Gower (1971,
// Biometrics 27:857–874) with variable weights and pairwise-available
// variables, in the form of R's cluster::daisy(metric = "gower") (package
// cluster 2.1.4, ?daisy "Details", case 2):
//
//	d(i, j) = Σ_k w_k δ_ijk d_k(i, j) / Σ_k w_k δ_ijk
//
// where δ_ijk is 0 when variable k is missing on row i or j, or is
// AsymmetricBinary and 0 on both rows, else 1; d_k is |x_ik − x_jk| / S_k for
// Numeric and Ordinal variables (scaled as the Scaling says, capped at 1) and
// 0 for equal, 1 for different categories of Nominal and binary variables.
// The distance is NaN when Σ w_k δ_ijk = 0. With Range scaling every d_k is
// in [0, 1] already and the cap changes nothing, so Range gives daisy's values.
//
// daisy 2.1.4 also returns NA when 0 < Σ w_k δ_ijk ≤ 0.5 (its Fortran code
// tests the sum against 0.5, natural for unit weights); Gower returns the
// weighted mean there, as ?daisy documents it.
//
// A Gower holds the scaled values row by row (about 16 bytes per numeric and
// 4 per categorical value) and is safe for concurrent use.
type Gower struct {
	n, p    int
	scaling Scaling
	// num holds the numeric (and ordinal) variables row by row, interleaved
	// (value, present): value (v − Center) / Scale, or 0 when missing, and
	// present 1 or 0, so that the kernel needs no branch on missing values.
	num []float64
	// cat holds the nominal and symmetric binary variables, then the asymmetric
	// binary ones, row by row as int32 codes, −1 when missing.
	cat               []int32
	wNum, wCat        []float64 // weights in the reordered order
	nNum, nSym, nAsym int
	pos               []int // pos[k] = position of original variable k in num (numeric) or cat
	kinds             []Kind

	// Center and Scale are, per original variable, what Numeric and Ordinal
	// values were shifted by and divided by (the minimum and range under Range,
	// the median and S_k under Robust); NaN for the categorical kinds.
	Center, Scale []float64
}

// NewGower prepares the Gower distance of m's rows under scaling s. It
// returns an error when m is invalid (Mixed.Validate).
func NewGower(m *Mixed, s Scaling) (*Gower, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	if s != Robust && s != Range {
		return nil, fmt.Errorf("signals: unknown scaling %d", s)
	}
	n, p := m.Rows(), len(m.Names)
	g := &Gower{n: n, p: p, scaling: s, kinds: slices.Clone(m.Kinds),
		Center: make([]float64, p), Scale: make([]float64, p), pos: make([]int, p)}
	weight := func(k int) float64 {
		if m.Weights == nil {
			return 1
		}
		return m.Weights[k]
	}
	var numVars, symVars, asymVars []int
	for k, kind := range m.Kinds {
		switch kind {
		case Numeric, Ordinal:
			g.pos[k] = len(numVars)
			numVars = append(numVars, k)
		case Nominal, SymmetricBinary:
			symVars = append(symVars, k)
		default:
			asymVars = append(asymVars, k)
		}
	}
	g.nNum, g.nSym, g.nAsym = len(numVars), len(symVars), len(asymVars)
	catVars := append(symVars, asymVars...)
	for r, k := range catVars {
		g.pos[k] = r
	}
	nc := len(catVars)
	g.num = make([]float64, n*2*g.nNum)
	g.cat = make([]int32, n*nc)
	for r, k := range numVars {
		g.wNum = append(g.wNum, weight(k))
		c, sc := numericScale(m.Cols[k], s == Robust && m.Kinds[k] == Numeric)
		g.Center[k], g.Scale[k] = c, sc
		for i, v := range m.Cols[k] {
			if !math.IsNaN(v) {
				g.num[i*2*g.nNum+2*r] = (v - c) / sc
				g.num[i*2*g.nNum+2*r+1] = 1
			}
		}
	}
	for r, k := range catVars {
		g.wCat = append(g.wCat, weight(k))
		g.Center[k], g.Scale[k] = math.NaN(), math.NaN()
		for i, v := range m.Cols[k] {
			code := int32(-1)
			if !math.IsNaN(v) {
				code = int32(v)
			}
			g.cat[i*nc+r] = code
		}
	}
	return g, nil
}

// numericScale returns the centre and scale of a numeric column: the minimum
// and range (daisy), or the median and the robust scale S of Robust.
func numericScale(col []float64, robust bool) (center, scale float64) {
	v := make([]float64, 0, len(col))
	for _, x := range col {
		if !math.IsNaN(x) {
			v = append(v, x)
		}
	}
	if len(v) == 0 {
		return 0, 1
	}
	slices.Sort(v)
	lo, hi := v[0], v[len(v)-1]
	rng := hi - lo
	if !robust {
		if rng == 0 {
			rng = 1
		}
		return lo, rng
	}
	med := quantileSorted(v, 0.5)
	dev := make([]float64, len(v))
	for i, x := range v {
		dev[i] = math.Abs(x - med)
	}
	slices.Sort(dev)
	sc := RobustWidth * madToSD * quantileSorted(dev, 0.5)
	if sc == 0 {
		sc = RobustWidth * (quantileSorted(v, 0.75) - quantileSorted(v, 0.25)) / iqrToSD
	}
	if sc == 0 {
		sc = rng
	}
	if sc == 0 {
		sc = 1
	}
	return med, sc
}

// quantileSorted returns the type-7 quantile (R's default, linear interpolation
// between order statistics; Hyndman & Fan 1996, Am. Stat. 50:361–365) of the
// sorted, non-empty v.
func quantileSorted(v []float64, q float64) float64 {
	h := float64(len(v)-1) * q
	lo := int(math.Floor(h))
	if lo >= len(v)-1 {
		return v[len(v)-1]
	}
	return v[lo] + (h-float64(lo))*(v[lo+1]-v[lo])
}

// Len returns the number of rows.
func (g *Gower) Len() int { return g.n }

// Vars returns the number of variables.
func (g *Gower) Vars() int { return g.p }

// Scaling returns the scaling g was prepared with.
func (g *Gower) Scaling() Scaling { return g.scaling }

// Dist returns the distance between rows i and j (0-based); 0 when i == j.
// Dist panics with "signals: row out of range" when i or j is not in [0, n).
func (g *Gower) Dist(i, j int) float64 {
	if i < 0 || j < 0 || i >= g.n || j >= g.n {
		panic("signals: row out of range")
	}
	if i == j {
		return 0
	}
	return g.dist(i, j)
}

// dist is the kernel: one branch-free pass over the variables of rows i and j.
// A missing numeric value is 0 with present 0, so its term and weight vanish;
// category codes compare as integers, −1 (missing) making the sign bit of x|y
// set.
func (g *Gower) dist(i, j int) float64 {
	m := 2 * g.nNum
	a := g.num[i*m : (i+1)*m : (i+1)*m]
	b := g.num[j*m : (j+1)*m : (j+1)*m]
	w := g.wNum
	var s, ws float64
	for r := range w {
		both := a[2*r+1] * b[2*r+1] * w[r]
		s += both * min(math.Abs(a[2*r]-b[2*r]), 1)
		ws += both
	}
	nc := g.nSym + g.nAsym
	x := g.cat[i*nc : (i+1)*nc : (i+1)*nc]
	y := g.cat[j*nc : (j+1)*nc : (j+1)*nc]
	wc := g.wCat[:nc]
	for r := range g.nSym {
		valid := 1 + (x[r]|y[r])>>31 // 0 when either is −1
		ne := x[r] ^ y[r]
		differ := int32(uint32(ne|-ne) >> 31) // 1 when x ≠ y
		s += wc[r] * float64(differ&valid)
		ws += wc[r] * float64(valid)
	}
	for r := g.nSym; r < nc; r++ {
		or := x[r] | y[r]
		valid := (1 + or>>31) & int32(uint32(or|-or)>>31) // both present, not both 0
		ne := x[r] ^ y[r]
		differ := int32(uint32(ne|-ne) >> 31)
		s += wc[r] * float64(differ&valid)
		ws += wc[r] * float64(valid)
	}
	if ws == 0 {
		return math.NaN()
	}
	return s / ws
}

// Contribution returns d_k(i, j), variable k's contribution to the distance
// between rows i and j (k indexes the Mixed variables, 0-based), and whether
// the variable counts in that pair (δ_ijk = 1).
func (g *Gower) Contribution(i, j, k int) (d float64, ok bool) {
	if i < 0 || j < 0 || i >= g.n || j >= g.n {
		panic("signals: row out of range")
	}
	r := g.pos[k]
	switch g.kinds[k] {
	case Numeric, Ordinal:
		m := 2 * g.nNum
		if g.num[i*m+2*r+1] == 0 || g.num[j*m+2*r+1] == 0 {
			return math.NaN(), false
		}
		return min(math.Abs(g.num[i*m+2*r]-g.num[j*m+2*r]), 1), true
	}
	nc := g.nSym + g.nAsym
	x, y := g.cat[i*nc+r], g.cat[j*nc+r]
	switch {
	case x < 0 || y < 0:
		return math.NaN(), false
	case g.kinds[k] == AsymmetricBinary && x == 0 && y == 0:
		return math.NaN(), false
	case x == y:
		return 0, true
	}
	return 1, true
}

// CondensedIndex returns the position of the pair i < j in a condensed
// distance vector of n rows: the upper triangle row by row, which is R's dist
// order (lower triangle by columns) and scipy's condensed form.
func CondensedIndex(n, i, j int) int {
	if i > j {
		i, j = j, i
	}
	return n*i - i*(i+1)/2 + j - i - 1
}

func workerCount(w int) int {
	if w <= 0 {
		w = runtime.GOMAXPROCS(0)
	}
	return max(w, 1)
}

// rowsParallel calls f(i) for every row i in [0, n) from up to workers
// goroutines (worker index w passed along), handing rows out one at a time so
// that the triangular work stays balanced. It stops early when ctx is done.
func rowsParallel(ctx context.Context, n, workers int, f func(w, i int)) error {
	workers = min(workerCount(workers), max(n, 1))
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				if ctx.Err() != nil {
					return
				}
				i := int(next.Add(1) - 1)
				if i >= n {
					return
				}
				f(w, i)
			}
		}()
	}
	wg.Wait()
	return ctx.Err()
}

// Condensed returns all n(n−1)/2 distances in condensed order (see
// CondensedIndex), computed by up to workers goroutines (≤ 0: GOMAXPROCS).
// Every entry is computed by the same sequential kernel, so the result does not
// depend on scheduling. It needs 4·n² bytes: use it for clustering a few
// thousand rows, and Gower.Nearest for more.
func (g *Gower) Condensed(ctx context.Context, workers int) ([]float64, error) {
	n := g.n
	out := make([]float64, n*(n-1)/2)
	err := rowsParallel(ctx, n, workers, func(_, i int) {
		base := CondensedIndex(n, i, i+1)
		for j := i + 1; j < n; j++ {
			out[base+j-i-1] = g.dist(i, j)
		}
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// Nearest returns, for every row, the distance to its nearest other row and
// that row's index (−1 and NaN when every distance of the row is NaN or n < 2).
// Ties go to the lower index. It evaluates each of the n(n−1)/2 pairs once,
// with up to workers goroutines (≤ 0: GOMAXPROCS), each keeping its own
// nearest-neighbour arrays that are merged at the end, so memory is
// O(workers·n) and the result never depends on scheduling.
func (g *Gower) Nearest(ctx context.Context, workers int) (dist []float64, idx []int, err error) {
	n := g.n
	workers = min(workerCount(workers), max(n, 1))
	type best struct {
		d []float64
		j []int32
	}
	locals := make([]best, workers)
	for w := range locals {
		locals[w] = best{d: make([]float64, n), j: make([]int32, n)}
		for i := range n {
			locals[w].d[i] = math.Inf(1)
			locals[w].j[i] = -1
		}
	}
	// better reports whether candidate (d, j) beats (bd, bj): a smaller
	// distance, or an equal one at a lower index; bj < 0 is no candidate.
	better := func(d float64, j int32, bd float64, bj int32) bool {
		return bj < 0 || d < bd || (d == bd && j < bj)
	}
	err = rowsParallel(ctx, n, workers, func(w, i int) {
		L := locals[w]
		bd, bj := L.d[i], L.j[i]
		for j := i + 1; j < n; j++ {
			d := g.dist(i, j)
			if d != d {
				continue
			}
			if better(d, int32(j), bd, bj) {
				bd, bj = d, int32(j)
			}
			if better(d, int32(i), L.d[j], L.j[j]) {
				L.d[j], L.j[j] = d, int32(i)
			}
		}
		L.d[i], L.j[i] = bd, bj
	})
	if err != nil {
		return nil, nil, err
	}
	dist = make([]float64, n)
	idx = make([]int, n)
	for i := range n {
		bd, bj := math.Inf(1), int32(-1)
		for w := range locals {
			if d, j := locals[w].d[i], locals[w].j[i]; j >= 0 && better(d, j, bd, bj) {
				bd, bj = d, j
			}
		}
		if bj < 0 {
			dist[i], idx[i] = math.NaN(), -1
			continue
		}
		dist[i], idx[i] = bd, int(bj)
	}
	return dist, idx, nil
}

// A RowPair is two rows (0-based, I < J) and their distance.
type RowPair struct {
	I, J int
	Dist float64
}

// Within returns every pair of rows at distance ≤ t that involves at least one
// of rows (0-based), sorted by I then J, each pair once. It costs
// len(rows)·n distance evaluations, with up to workers goroutines.
func (g *Gower) Within(ctx context.Context, rows []int, t float64, workers int) ([]RowPair, error) {
	found := make([][]RowPair, len(rows))
	err := rowsParallel(ctx, len(rows), workers, func(_, r int) {
		i := rows[r]
		for j := range g.n {
			if j == i {
				continue
			}
			if d := g.dist(i, j); d <= t {
				found[r] = append(found[r], RowPair{I: min(i, j), J: max(i, j), Dist: d})
			}
		}
	})
	if err != nil {
		return nil, err
	}
	var out []RowPair
	for _, f := range found {
		out = append(out, f...)
	}
	slices.SortFunc(out, func(a, b RowPair) int {
		if a.I != b.I {
			return a.I - b.I
		}
		return a.J - b.J
	})
	return slices.CompactFunc(out, func(a, b RowPair) bool { return a.I == b.I && a.J == b.J }), nil
}
