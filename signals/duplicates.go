package signals

import (
	"cmp"
	"context"
	"math"
	"slices"
)

// Defaults of DuplicateOptions.
const (
	// DefaultDupZ is the robust z (on the log scale, see Duplicates) at or
	// below whose negative a pair is flagged: 4.5. A lognormal-ish spread of
	// nearest-neighbour distances puts the smallest of a few thousand subjects
	// near z = −3.5; fabricated copies sit far below that (about −6 and lower in
	// the demo study).
	DefaultDupZ = 4.5
	// DefaultDupAlpha bounds the empirical tail probability of a flagged pair.
	DefaultDupAlpha = 0.05
	// DefaultAgreeTol is the largest per-variable contribution d_k at which a
	// variable counts as agreeing in a pair (0 for categories; a numeric
	// difference of at most 2% of the variable's scale).
	DefaultAgreeTol = 0.02
	// DefaultMaxAgree is how many agreeing variables a pair lists.
	DefaultMaxAgree = 12
)

// DuplicateOptions control Duplicates. The zero value uses the defaults.
type DuplicateOptions struct {
	Z         float64 // flag at z ≤ −Z; 0 means DefaultDupZ
	Alpha     float64 // and empirical p ≤ Alpha; 0 means DefaultDupAlpha
	CrossSite bool    // also flag pairs of subjects at different sites
	AgreeTol  float64 // 0 means DefaultAgreeTol
	MaxAgree  int     // 0 means DefaultMaxAgree; < 0 lists none
	Workers   int     // ≤ 0: GOMAXPROCS
}

// An Agreement is one variable on which the two subjects of a pair agree.
type Agreement struct {
	Var string
	// Diff is the variable's contribution d_k to the pair's distance (0 for
	// equal values).
	Diff float64
	// Chance is the share of all pairs of subjects with both values present
	// that agree at least as closely (d_k ≤ AgreeTol): how unremarkable the
	// agreement is. Sex agrees in about half of all pairs; a systolic blood
	// pressure within 2% of its scale in a few percent.
	Chance float64
}

// A DuplicatePair is two subjects far closer to each other than subjects
// usually are to their nearest neighbour.
type DuplicatePair struct {
	A, B         int // rows, A < B (0-based)
	SiteA, SiteB string
	Dist         float64
	Z            float64 // robust z of ln(Dist) against ln of the nearest-neighbour distances
	P            float64 // empirical tail probability (see Duplicates)
	Group        int     // 1-based index into DuplicateResult.Groups
	Compared     int     // variables present on both rows (δ = 1)
	Agree        []Agreement
}

// A DuplicateGroup is a connected set of flagged pairs.
type DuplicateGroup struct {
	ID      int    // 1-based
	Site    string // the site of its members, or "" when they span sites
	Rows    []int  // sorted
	Pairs   int
	MaxDist float64 // largest distance among its flagged pairs
}

// DuplicateResult is what Duplicates finds.
type DuplicateResult struct {
	// NearestDist and Nearest give each row's distance to its nearest other
	// row and that row (−1 when none), and NearestZ its robust z.
	NearestDist []float64
	Nearest     []int
	NearestZ    []float64
	// Center and Spread are the median and 1.4826 × MAD of ln(nearest
	// distance) over rows with a positive nearest distance: the reference.
	Center, Spread float64
	Pairs          []DuplicatePair  // by group, then distance, then rows
	Groups         []DuplicateGroup // by size (largest first), then first row
}

// Duplicates looks for near-identical rows (subjects) in g. Every row's
// nearest-neighbour distance D_i is found over all other rows (Gower.Nearest).
// A pair (i, j) at distance d gets
//
//	z = (ln d − median ln D) / (1.4826 · MAD ln D)
//	p = (1 + #{k : D_k ≤ d}) / (1 + N)
//
// (the log makes the right-skewed distances roughly symmetric; the MAD keeps
// the copies themselves from widening the reference; p is the empirical tail
// probability of d among the N nearest-neighbour distances, Davison & Hinkley
// 1997, Bootstrap Methods, eq. 4.11 form). A pair is flagged when z ≤ −o.Z
// and p ≤ o.Alpha, and, unless o.CrossSite, both rows are at the same site
// (sites[i]; nil sites means one site). p alone cannot decide, as the
// smallest nearest-neighbour distance of any study has p = 2/(N+1); z asks
// that the pair be far outside the bulk. A distance of 0 has z = −Inf.
// Flagged pairs are joined into groups by connected components. For each
// pair, the variables that agree (d_k ≤ o.AgreeTol) are listed, least likely
// by chance first. The result does not depend on o.Workers.
func Duplicates(ctx context.Context, g *Gower, m *Mixed, sites []string, o DuplicateOptions) (*DuplicateResult, error) {
	o = o.withDefaults()
	nd, nidx, err := g.Nearest(ctx, o.Workers)
	if err != nil {
		return nil, err
	}
	n := g.Len()
	res := &DuplicateResult{NearestDist: nd, Nearest: nidx, NearestZ: make([]float64, n)}
	var logs []float64
	sortedD := make([]float64, 0, n)
	for _, d := range nd {
		if !math.IsNaN(d) {
			sortedD = append(sortedD, d)
			if d > 0 {
				logs = append(logs, math.Log(d))
			}
		}
	}
	slices.Sort(sortedD)
	res.Center, res.Spread = medianMAD(logs)
	z := func(d float64) float64 {
		if d == 0 {
			return math.Inf(-1)
		}
		if !(res.Spread > 0) {
			return math.NaN()
		}
		return (math.Log(d) - res.Center) / res.Spread
	}
	pval := func(d float64) float64 {
		k, _ := slices.BinarySearch(sortedD, math.Nextafter(d, math.Inf(1)))
		return float64(1+k) / float64(1+len(sortedD))
	}
	for i, d := range nd {
		res.NearestZ[i] = z(d)
	}
	// Every flagged pair has d ≤ t = exp(Center − Z·Spread) (z is increasing
	// in d), and both of its rows have a nearest-neighbour distance ≤ d: so
	// scanning the rows with D_i ≤ t against all rows finds every flagged pair.
	t := math.Exp(res.Center-o.Z*res.Spread) * (1 + 1e-9)
	var rows []int
	for i, d := range nd {
		if d <= t {
			rows = append(rows, i)
		}
	}
	if len(rows) == 0 {
		return res, nil
	}
	cands, err := g.Within(ctx, rows, t, o.Workers)
	if err != nil {
		return nil, err
	}
	siteOf := func(i int) string {
		if sites == nil {
			return ""
		}
		return sites[i]
	}
	for _, c := range cands {
		if z(c.Dist) > -o.Z || pval(c.Dist) > o.Alpha {
			continue
		}
		if !o.CrossSite && siteOf(c.I) != siteOf(c.J) {
			continue
		}
		res.Pairs = append(res.Pairs, DuplicatePair{A: c.I, B: c.J, SiteA: siteOf(c.I), SiteB: siteOf(c.J),
			Dist: c.Dist, Z: z(c.Dist), P: pval(c.Dist)})
	}
	res.groupPairs(siteOf)
	chance := agreementChance(g, o.AgreeTol)
	for pi := range res.Pairs {
		p := &res.Pairs[pi]
		for k := range g.Vars() {
			d, ok := g.Contribution(p.A, p.B, k)
			if !ok {
				continue
			}
			p.Compared++
			if d <= o.AgreeTol && o.MaxAgree > 0 {
				p.Agree = append(p.Agree, Agreement{Var: m.Names[k], Diff: d, Chance: chance[k]})
			}
		}
		slices.SortStableFunc(p.Agree, func(a, b Agreement) int {
			if c := cmp.Compare(a.Chance, b.Chance); c != 0 {
				return c
			}
			return cmp.Compare(a.Var, b.Var)
		})
		if len(p.Agree) > o.MaxAgree {
			p.Agree = p.Agree[:o.MaxAgree]
		}
	}
	return res, nil
}

func (o DuplicateOptions) withDefaults() DuplicateOptions {
	if o.Z == 0 {
		o.Z = DefaultDupZ
	}
	if o.Alpha == 0 {
		o.Alpha = DefaultDupAlpha
	}
	if o.AgreeTol == 0 {
		o.AgreeTol = DefaultAgreeTol
	}
	if o.MaxAgree == 0 {
		o.MaxAgree = DefaultMaxAgree
	}
	return o
}

// groupPairs joins the flagged pairs into connected components (union–find)
// and orders groups and pairs.
func (res *DuplicateResult) groupPairs(siteOf func(int) string) {
	parent := map[int]int{}
	var find func(int) int
	find = func(i int) int {
		if p, ok := parent[i]; ok && p != i {
			r := find(p)
			parent[i] = r
			return r
		}
		parent[i] = i
		return i
	}
	for _, p := range res.Pairs {
		a, b := find(p.A), find(p.B)
		if a != b {
			parent[max(a, b)] = min(a, b)
		}
	}
	byRoot := map[int]*DuplicateGroup{}
	for _, p := range res.Pairs {
		r := find(p.A)
		gr := byRoot[r]
		if gr == nil {
			gr = &DuplicateGroup{}
			byRoot[r] = gr
		}
		gr.Pairs++
		gr.MaxDist = max(gr.MaxDist, p.Dist)
		for _, i := range []int{p.A, p.B} {
			if !slices.Contains(gr.Rows, i) {
				gr.Rows = append(gr.Rows, i)
			}
		}
	}
	res.Groups = res.Groups[:0]
	for _, gr := range byRoot {
		slices.Sort(gr.Rows)
		gr.Site = siteOf(gr.Rows[0])
		for _, i := range gr.Rows {
			if siteOf(i) != gr.Site {
				gr.Site = ""
			}
		}
		res.Groups = append(res.Groups, *gr)
	}
	slices.SortFunc(res.Groups, func(a, b DuplicateGroup) int {
		if c := cmp.Compare(len(b.Rows), len(a.Rows)); c != 0 {
			return c
		}
		return cmp.Compare(a.Rows[0], b.Rows[0])
	})
	groupOf := map[int]int{}
	for gi := range res.Groups {
		res.Groups[gi].ID = gi + 1
		for _, i := range res.Groups[gi].Rows {
			groupOf[i] = gi + 1
		}
	}
	for pi := range res.Pairs {
		res.Pairs[pi].Group = groupOf[res.Pairs[pi].A]
	}
	slices.SortFunc(res.Pairs, func(a, b DuplicatePair) int {
		if c := cmp.Compare(a.Group, b.Group); c != 0 {
			return c
		}
		if c := cmp.Compare(a.Dist, b.Dist); c != 0 {
			return c
		}
		if c := cmp.Compare(a.A, b.A); c != 0 {
			return c
		}
		return cmp.Compare(a.B, b.B)
	})
}

// agreementChance returns, per variable, the share of row pairs with both
// values present whose contribution is ≤ tol: Σ n_l(n_l − 1) / (m(m − 1)) over
// the categories l of a categorical variable (for an asymmetric binary, among
// the pairs that count: not both absent), and for a numeric one the share of
// pairs within tol of each other on the scaled values (two pointers over the
// sorted values). NaN when fewer than two rows have the variable.
func agreementChance(g *Gower, tol float64) []float64 {
	out := make([]float64, g.Vars())
	for k := range g.Vars() {
		r := g.pos[k]
		switch g.kinds[k] {
		case Numeric, Ordinal:
			m := 2 * g.nNum
			var v []float64
			for i := range g.n {
				if g.num[i*m+2*r+1] == 1 {
					v = append(v, g.num[i*m+2*r])
				}
			}
			slices.Sort(v)
			var close float64
			lo := 0
			for hi := range v {
				for v[hi]-v[lo] > tol {
					lo++
				}
				close += float64(hi - lo)
			}
			out[k] = close / (float64(len(v)) * float64(len(v)-1) / 2)
		default:
			nc := g.nSym + g.nAsym
			counts := map[int32]float64{}
			var total float64
			for i := range g.n {
				if c := g.cat[i*nc+r]; c >= 0 {
					counts[c]++
					total++
				}
			}
			var same, pairs float64
			pairs = total * (total - 1)
			for c, nl := range counts {
				if g.kinds[k] == AsymmetricBinary && c == 0 {
					pairs -= nl * (nl - 1)
					continue
				}
				same += nl * (nl - 1)
			}
			out[k] = same / pairs
		}
		if math.IsInf(out[k], 0) {
			out[k] = math.NaN()
		}
	}
	return out
}

// medianMAD returns the median of v and 1.4826 × its MAD (NaN, NaN when v is
// empty).
func medianMAD(v []float64) (med, spread float64) {
	if len(v) == 0 {
		return math.NaN(), math.NaN()
	}
	s := slices.Clone(v)
	slices.Sort(s)
	med = quantileSorted(s, 0.5)
	for i, x := range s {
		s[i] = math.Abs(x - med)
	}
	slices.Sort(s)
	return med, madToSD * quantileSorted(s, 0.5)
}
