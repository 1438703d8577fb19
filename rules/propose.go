package rules

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"
	"sort"
	"strings"
	"time"

	"github.com/crossform/crossform/dataset"
	"gonum.org/v1/gonum/stat/distuv"
)

// A Hint is one association between two variables, from the association
// engine: the measure's name ("spearman", "cramers_v", "somers_d", …), its
// value and its q-value (false-discovery-rate adjusted p; NaN or 0 when not
// computed).
type Hint struct {
	A, B, Measure string
	Strength, Q   float64
}

// ProposeOptions holds every threshold of Propose. A zero field takes the
// default given beside it (DefaultProposeOptions).
type ProposeOptions struct {
	// Fingerprint identifies the extract; it is copied into each rule's
	// evidence.
	Fingerprint string
	// Now and By stamp the "proposed" history event of each rule; a zero Now
	// means time.Now() (set it for reproducible output), an empty By
	// "crossform".
	Now time.Time
	By  string

	// MinN is the fewest records a rule must be able to judge (default 30).
	MinN int
	// MaxViolationRate is the largest share of judged records a proposed
	// rule may fail (default 0.01): data that break a rule more often do not
	// support it.
	MaxViolationRate float64
	// MaxOutlierRate is that bound for kinds whose limits come from a robust
	// fit of a relation (band, visit_change): their violations are outliers,
	// which the fit is built to resist (default 0.05). group_range, whose
	// far-out fences almost never fire on well-behaved data, keeps
	// MaxViolationRate.
	MaxOutlierRate float64
	// CatalogueMaxViolationRate is the same bound for the derived catalogue,
	// whose formulas are known to hold (default 0.10).
	CatalogueMaxViolationRate float64
	// MaxBaselineShare relaxes MaxViolationRate for rules whose baseline
	// (below) is known: a rule may fail up to 5 × MaxViolationRate of its
	// records when the upper 95% Wilson bound of its failure rate is at most
	// this share of the baseline, so a rule that unrelated data would break
	// 40% of the time is kept at a 1.5% failure rate on a small table
	// (default 0.1).
	MaxBaselineShare float64
	// MinKruskalP bounds the Kruskal–Wallis p-value (chi-squared
	// approximation, Kruskal & Wallis 1952, JASA 47:583–621) below which the
	// levels of a categorical variable are taken to differ for group_range
	// (default 1e-4).
	MaxKruskalP float64
	// MinBaseline is, for order and presence rules, the least rate at which
	// the rule would fail if its variables were unrelated (the values of one
	// variable paired with another record's value); below it the rule is
	// trivially true and not worth a reviewer's time (default 0.02).
	MinBaseline float64
	// MinOrderAssoc is the least |Spearman| between two numbers for an order
	// rule between them, unless they share a unit (default 0.3).
	MinOrderAssoc float64
	// MaxScaleRatio bounds the ratio of the medians of two numbers compared
	// by an order rule (default 5).
	MaxScaleRatio float64
	// MinBandAssoc is the least |Spearman| for a band rule (default 0.7).
	MinBandAssoc float64
	// MaxBandResid is the largest ratio of the residual scale to the
	// marginal scale of the predicted variable for a band (default 0.6).
	MaxBandResid float64
	// BandK is the band half-width in robust residual scales (default 5).
	BandK float64
	// FitPairs is the number of pairs above which Theil–Sen slopes are
	// sampled (default 20000).
	FitPairs int
	// Seed seeds that sampling (default 1).
	Seed uint64
	// FenceK is the multiplier of the interquartile range of group_range
	// limits: Q1 − k·IQR, Q3 + k·IQR (default 3, Tukey's far-out fences).
	FenceK float64
	// MinGroupEffect is the least difference of mean ranks between two levels,
	// as a share of the records, for a group_range rule (default 0.25).
	MinGroupEffect float64
	// MinGroup is the fewest records per level for group_range, cutoff and
	// implies (default 10).
	MinGroup int
	// MaxLevels is the most levels a categorical variable may have to enter
	// implies, presence and group_range (default 12).
	MaxLevels int
	// MinExpected is the least count that independence expects in a
	// contingency cell for an empty cell to become an implies rule
	// (default 10).
	MinExpected float64
	// MaxCellRatio is the largest ratio observed/expected of such a cell
	// (default 0.1).
	MaxCellRatio float64
	// VisitChangeK is the half-width of visit_change limits in robust scales
	// of the visit-to-visit change (default 6).
	VisitChangeK float64
	// MaxChangeRatio is the largest ratio of the change scale to the
	// between-subject scale for visit_change (default 0.5).
	MaxChangeRatio float64
	// MinExactAssoc is the least |Spearman| for an exact linear relation
	// (default 0.995).
	MinExactAssoc float64
	// MinHintStrength and MaxHintQ select hints that widen the candidate
	// pairs (defaults 0.3 and 0.05).
	MinHintStrength, MaxHintQ float64
	// PerVariable is the most proposals naming one variable (default 6).
	PerVariable int
	// Clusters maps variables to the cluster of related variables they
	// belong to (package cluster; 0 or absent: no cluster). A rule whose
	// variables all lie in one cluster counts against that cluster's limit
	// PerCluster (default 20), so that one large group of related variables
	// cannot crowd out the rest; rules across clusters are not limited.
	Clusters   map[string]int
	PerCluster int
	// MaxRules is the most proposals returned (default 200).
	MaxRules int
	// Exclude lists variables never used (e.g. treatment arm in a blinded
	// study, EDIT-CHECKS.md §6).
	Exclude []string
}

// DefaultProposeOptions returns the defaults documented on ProposeOptions.
func DefaultProposeOptions() ProposeOptions {
	return ProposeOptions{MinN: 30, MaxViolationRate: 0.01, MaxOutlierRate: 0.05, CatalogueMaxViolationRate: 0.10, MinBaseline: 0.02, MaxBaselineShare: 0.1, MaxKruskalP: 1e-4,
		MinOrderAssoc: 0.3, MaxScaleRatio: 5, MinBandAssoc: 0.7, MaxBandResid: 0.6, BandK: 5, FitPairs: 20000,
		Seed: 1, FenceK: 3, MinGroupEffect: 0.25, MinGroup: 10, MaxLevels: 12, MinExpected: 10, MaxCellRatio: 0.25,
		VisitChangeK: 6, MaxChangeRatio: 0.5, MinExactAssoc: 0.995, MinHintStrength: 0.3, MaxHintQ: 0.05,
		PerVariable: 6, PerCluster: 20, MaxRules: 200, By: "crossform"}
}

func (o ProposeOptions) withDefaults() ProposeOptions {
	d := DefaultProposeOptions()
	setI := func(p *int, v int) {
		if *p <= 0 {
			*p = v
		}
	}
	setF := func(p *float64, v float64) {
		if !(*p > 0) {
			*p = v
		}
	}
	setI(&o.MinN, d.MinN)
	setF(&o.MaxViolationRate, d.MaxViolationRate)
	setF(&o.MaxOutlierRate, d.MaxOutlierRate)
	setF(&o.CatalogueMaxViolationRate, d.CatalogueMaxViolationRate)
	setF(&o.MinBaseline, d.MinBaseline)
	setF(&o.MaxBaselineShare, d.MaxBaselineShare)
	setF(&o.MaxKruskalP, d.MaxKruskalP)
	setF(&o.MinOrderAssoc, d.MinOrderAssoc)
	setF(&o.MaxScaleRatio, d.MaxScaleRatio)
	setF(&o.MinBandAssoc, d.MinBandAssoc)
	setF(&o.MaxBandResid, d.MaxBandResid)
	setF(&o.BandK, d.BandK)
	setI(&o.FitPairs, d.FitPairs)
	if o.Seed == 0 {
		o.Seed = d.Seed
	}
	setF(&o.FenceK, d.FenceK)
	setF(&o.MinGroupEffect, d.MinGroupEffect)
	setI(&o.MinGroup, d.MinGroup)
	setI(&o.MaxLevels, d.MaxLevels)
	setF(&o.MinExpected, d.MinExpected)
	setF(&o.MaxCellRatio, d.MaxCellRatio)
	setF(&o.VisitChangeK, d.VisitChangeK)
	setF(&o.MaxChangeRatio, d.MaxChangeRatio)
	setF(&o.MinExactAssoc, d.MinExactAssoc)
	setF(&o.MinHintStrength, d.MinHintStrength)
	setF(&o.MaxHintQ, d.MaxHintQ)
	setI(&o.PerVariable, d.PerVariable)
	setI(&o.MaxRules, d.MaxRules)
	setI(&o.PerCluster, d.PerCluster)
	if o.By == "" {
		o.By = d.By
	}
	if o.Now.IsZero() {
		o.Now = time.Now()
	}
	o.Now = o.Now.UTC().Truncate(time.Second)
	return o
}

// pvar is one variable as the proposer sees it.
type pvar struct {
	c      *dataset.Column
	name   string
	num    []float64 // numeric view (StoreFloat values; dates: full-date day), NaN missing
	rank   []float64 // mid-ranks of num
	cat    []int32   // categorical codes (≤ MaxLevels levels), -1 missing; nil if not categorical
	levels []string
	isNum  bool // continuous enough for order/band (≥ 5 distinct values, float storage)
	isDate bool
	median float64
	nDist  int
}

type proposer struct {
	t     *dataset.Table
	level string
	o     ProposeOptions
	vars  []*pvar
	byNm  map[string]*pvar
	hints map[[2]string]Hint
	out   []*Rule
	rho   map[[2]string]float64
	src   *rand.PCG
}

// Propose suggests rules for table t (its level given by level, e.g.
// "visit") from the data and, when given, the associations in hints (pairs
// the hints name are examined even when the proposer's own screening would
// skip them, and a rule records the hint that suggested it). Without hints it
// scans candidate pairs itself: all numeric and date pairs for order, numeric
// pairs with a strong rank correlation for band and exact linear relations,
// categorical pairs for implies and presence, categorical × numeric for
// cutoff and group_range, every numeric variable for visit_change, and the
// catalogue of clinical derivations by SDTM test code. Every threshold is a
// ProposeOptions field; fits and limits use medians, the MAD and quantiles
// so that a few percent of bad records do not move them. Each rule carries
// evidence from evaluating it on t. Rules that another rule on the same
// variables implies are dropped, the rest ranked by Evidence.Score and
// limited per variable and in number.
func Propose(t *dataset.Table, level string, hints []Hint, o ProposeOptions) ([]*Rule, error) {
	if t == nil || t.NRows == 0 {
		return nil, fmt.Errorf("propose: empty table")
	}
	if level == "" {
		level = t.Level
	}
	o = o.withDefaults()
	p := &proposer{t: t, level: level, o: o, byNm: map[string]*pvar{}, hints: map[[2]string]Hint{},
		rho: map[[2]string]float64{}, src: rand.NewPCG(o.Seed, 0x9e3779b97f4a7c15)}
	for _, h := range hints {
		p.hints[pairKey(h.A, h.B)] = h
	}
	p.prepare()
	p.derivedCatalogue()
	p.numericPairs()
	p.datePairs()
	p.categoricalPairs()
	p.catNumPairs()
	p.presence()
	p.visitChange()
	return p.finish(), nil
}

func pairKey(a, b string) [2]string {
	if a > b {
		a, b = b, a
	}
	return [2]string{a, b}
}

func (p *proposer) prepare() {
	excl := set(p.o.Exclude)
	for _, c := range p.t.Cols {
		if excl[c.Name] || p.t.IsKey(c.Name) || c.Type == dataset.Identifier || c.Type == dataset.FreeText {
			continue
		}
		v := &pvar{c: c, name: c.Name}
		n := p.t.NRows
		switch c.Storage {
		case dataset.StoreFloat:
			v.num = make([]float64, n)
			copy(v.num, c.Floats)
			for i := range v.num {
				if c.Missing(i) {
					v.num[i] = math.NaN()
				}
			}
			d := dataset.Distinct(v.num)
			v.nDist = len(d)
			v.isNum = v.nDist >= 5 && c.Type != dataset.Nominal && c.Type != dataset.Binary
			if v.nDist >= 2 && v.nDist <= p.o.MaxLevels {
				v.levels = make([]string, len(d))
				for i, x := range d {
					v.levels[i] = dataset.FormatFloat(x)
				}
				v.cat = make([]int32, n)
				for i, x := range v.num {
					v.cat[i] = -1
					if !math.IsNaN(x) {
						v.cat[i] = int32(sort.SearchFloat64s(d, x))
					}
				}
			}
		case dataset.StoreCode:
			if len(c.Levels) >= 2 && len(c.Levels) <= p.o.MaxLevels {
				v.cat, v.levels = c.Codes, c.Levels
			}
			v.nDist = len(c.Levels)
		case dataset.StoreDate:
			v.isDate = true
			v.num = make([]float64, n)
			for i := range v.num {
				v.num[i] = c.Float(i)
			}
		}
		if v.num != nil {
			v.rank = ranks(v.num)
			var nn []float64
			for _, x := range v.num {
				if !math.IsNaN(x) {
					nn = append(nn, x)
				}
			}
			v.median = Median(nn)
		}
		p.vars = append(p.vars, v)
		p.byNm[v.name] = v
	}
}

// corr returns the screening rank correlation of two variables (cached).
func (p *proposer) corr(a, b *pvar) float64 {
	k := pairKey(a.name, b.name)
	if r, ok := p.rho[k]; ok {
		return r
	}
	r, _ := rankCorr(a.rank, b.rank)
	p.rho[k] = r
	return r
}

// hinted returns the hint for a pair when it passes the hint thresholds.
func (p *proposer) hinted(a, b string) (Hint, bool) {
	h, ok := p.hints[pairKey(a, b)]
	if !ok || math.Abs(h.Strength) < p.o.MinHintStrength || (h.Q > p.o.MaxHintQ && !math.IsNaN(h.Q)) {
		return Hint{}, false
	}
	return h, true
}

func (p *proposer) suggested(a, b string, own string) string {
	if h, ok := p.hints[pairKey(a, b)]; ok {
		s := fmt.Sprintf("%s(%s, %s) = %.3g", h.Measure, h.A, h.B, h.Strength)
		if h.Q > 0 && !math.IsNaN(h.Q) {
			s += fmt.Sprintf(", q = %.2g", h.Q)
		}
		return s
	}
	return own
}

// label returns a readable name for variable v: its label, else its name.
func (p *proposer) label(name string) string {
	if c := p.t.Col(name); c != nil && c.Label != "" {
		return c.Label
	}
	return name
}

func (p *proposer) form(name string) string {
	if c := p.t.Col(name); c != nil && c.Prov.Domain != "" {
		return c.Prov.Domain
	}
	if i := strings.IndexByte(name, '.'); i > 0 {
		return name[:i]
	}
	return p.t.Name
}

// A cand is a candidate rule with what add needs to judge it.
type cand struct {
	r       *Rule
	maxRate float64          // largest failure rate accepted
	support func(i int) bool // premise of a conditional rule; nil means every judged record
	// baseline is the failure rate the rule would have if its variables were
	// unrelated (0 when unknown); it enables the MaxBaselineShare relaxation.
	baseline float64
	// informative in (0, 1] scales the score: how far from trivially true.
	informative float64
	suggested   string
}

// add evaluates a candidate rule on the table and keeps it when the evidence
// supports it (see ProposeOptions.MaxViolationRate, MaxBaselineShare; at
// least MinN records judged).
func (p *proposer) add(c cand) *Rule {
	r := c.r
	r.Level = p.level
	r.ID = ComputeID(r)
	r.Origin = OriginProposer
	r.Status = StatusProposed
	chk, err := Bind(r, p.t)
	if err != nil {
		return nil
	}
	fails, notEval, n := Evaluate(chk, p.t)
	if n < p.o.MinN {
		return nil
	}
	rate := float64(len(fails)) / float64(n)
	ok := rate <= c.maxRate
	if !ok && c.baseline > 0 && rate <= 5*c.maxRate {
		ok = wilsonUpper(len(fails), n) <= p.o.MaxBaselineShare*c.baseline
	}
	if !ok {
		return nil
	}
	sup := n
	if c.support != nil {
		sup = 0
		for i := 0; i < p.t.NRows; i++ {
			if c.support(i) {
				sup++
			}
		}
		if sup < p.o.MinGroup {
			return nil
		}
	}
	e := &Evidence{Fingerprint: p.o.Fingerprint, N: n, NotEval: len(notEval), Support: sup, Violations: len(fails), Suggested: c.suggested}
	for _, i := range fails {
		if len(e.Examples) == 10 {
			break
		}
		e.Examples = append(e.Examples, p.t.RowKey(i))
	}
	e.Confidence = round(wilsonLower(n-len(fails), n), 4)
	// Score: expected value to a reviewer. Confidence that the rule holds,
	// times log coverage, times how informative it is (not trivially true),
	// times severity weight, with a bonus for rules that already flag a few
	// records (they find something now).
	sev := float64(r.Severity.Rank())
	if sev == 0 {
		sev = 1
	}
	bonus := 1.0
	if len(fails) > 0 {
		bonus = 1 + 0.5*math.Log1p(float64(len(fails)))
	}
	e.Score = round(e.Confidence*math.Log10(1+float64(sup))*c.informative*(0.5+0.5*sev)*bonus, 4)
	r.Evidence = e
	r.History = []Event{{At: p.o.Now, By: p.o.By, Action: string(StatusProposed), Note: "proposed from " + c.suggested}}
	p.out = append(p.out, r)
	return r
}

// wilsonUpper returns the upper end of the 95% Wilson score interval for k
// events in n trials (Wilson 1927, JASA 22:209–212).
func wilsonUpper(k, n int) float64 {
	return 1 - wilsonLower(n-k, n)
}

// wilsonLower returns the lower end of the 95% Wilson score interval for k
// successes in n trials (Wilson 1927, JASA 22:209–212).
func wilsonLower(k, n int) float64 {
	if n == 0 {
		return 0
	}
	z := distuv.UnitNormal.Quantile(0.975)
	ph := float64(k) / float64(n)
	nf := float64(n)
	den := 1 + z*z/nf
	c := ph + z*z/(2*nf)
	s := z * math.Sqrt(ph*(1-ph)/nf+z*z/(4*nf*nf))
	return math.Max(0, (c-s)/den)
}

// ---- numeric pairs: order, band, exact linear ----

// baselineGreater returns the share of pairs (x from a, y from b) of
// independent draws with x > y: how often X ≤ Y would fail if the
// variables were unrelated.
func baselineGreater(a, b []float64) float64 {
	xs := finite(a)
	ys := finite(b)
	if len(xs) == 0 || len(ys) == 0 {
		return 0
	}
	sort.Float64s(xs)
	sort.Float64s(ys)
	var cnt float64
	j := 0
	for _, x := range xs {
		for j < len(ys) && ys[j] < x {
			j++
		}
		cnt += float64(j)
	}
	return cnt / (float64(len(xs)) * float64(len(ys)))
}

func finite(a []float64) []float64 {
	out := make([]float64, 0, len(a))
	for _, x := range a {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			out = append(out, x)
		}
	}
	return out
}

func (p *proposer) numericPairs() {
	var nums []*pvar
	for _, v := range p.vars {
		if v.isNum {
			nums = append(nums, v)
		}
	}
	for i, a := range nums {
		for _, b := range nums[i+1:] {
			if bothJoined(a, b) {
				continue
			}
			rho := p.corr(a, b)
			_, hint := p.hinted(a.name, b.name)
			unitKnown := a.c.Unit != "" && b.c.Unit != ""
			sameUnit := unitKnown && strings.EqualFold(a.c.Unit, b.c.Unit)
			if math.IsNaN(rho) {
				continue
			}
			// Numbers in different units are never ordered; without units,
			// an association must suggest the pair.
			if sameUnit || !unitKnown && (math.Abs(rho) >= p.o.MinOrderAssoc || hint) {
				p.order(a, b, rho, sameUnit)
			}
			if math.Abs(rho) >= p.o.MinExactAssoc {
				p.exactLinear(a, b, rho)
			}
			if math.Abs(rho) >= p.o.MinBandAssoc || (hint && math.Abs(rho) >= p.o.MinBandAssoc*0.8) {
				p.band(a, b, rho)
			}
		}
	}
}

// order proposes X ≤ Y for two numbers on a similar scale (medians within
// MaxScaleRatio), oriented by the medians, when unrelated values would break
// it at least MinBaseline of the time (a quarter of that for numbers in the
// same unit).
func (p *proposer) order(a, b *pvar, rho float64, sameUnit bool) {
	if a.median > 0 && b.median > 0 {
		if r := a.median / b.median; r > p.o.MaxScaleRatio || r < 1/p.o.MaxScaleRatio {
			return
		}
	} else if math.Signbit(a.median) != math.Signbit(b.median) {
		return
	}
	x, y := a, b
	if a.median > b.median {
		x, y = b, a
	}
	base := baselineGreater(x.num, y.num)
	minBase := p.o.MinBaseline
	if sameUnit {
		minBase /= 4
	}
	if base < minBase {
		return
	}
	r := &Rule{Kind: KindOrder, Vars: []string{x.name, y.name}, Params: map[string]any{"tolerance": 0}, Severity: Major}
	r.Statement = fmt.Sprintf("%s is not greater than %s.", p.label(x.name), p.label(y.name))
	r.Query = fmt.Sprintf("On the %s form, %s is recorded as {%s} and %s as {%s}; %s is expected not to exceed %s. Please check both values against the source documents and correct them, or confirm them as recorded.",
		p.form(x.name), p.label(x.name), x.name, p.label(y.name), y.name, p.label(x.name), p.label(y.name))
	inf := math.Min(1, base/0.2)
	if sameUnit {
		inf = math.Min(1, 0.25+base/0.2)
	}
	p.add(cand{r: r, maxRate: p.o.MaxViolationRate, baseline: base, informative: inf,
		suggested: p.suggested(a.name, b.name, fmt.Sprintf("scan: rank correlation %.2f, order holds where unrelated values would break it %.1f%% of the time", rho, 100*base))})
}

func (p *proposer) datePairs() {
	var ds []*pvar
	for _, v := range p.vars {
		if v.isDate {
			ds = append(ds, v)
		}
	}
	for i, a := range ds {
		for _, b := range ds[i+1:] {
			if bothJoined(a, b) {
				continue
			}
			// Orient by the median; try that direction only.
			x, y := a, b
			if a.median > b.median {
				x, y = b, a
			}
			base := baselineGreater(x.num, y.num)
			if base < p.o.MinBaseline/4 {
				continue
			}
			r := &Rule{Kind: KindOrder, Vars: []string{x.name, y.name}, Params: map[string]any{"tolerance": 0, "unit": "day"}, Severity: Major}
			r.Statement = fmt.Sprintf("%s is on or before %s.", p.label(x.name), p.label(y.name))
			r.Query = fmt.Sprintf("%s ({%s}) is after %s ({%s}). Please check both dates against the source documents and correct them, or confirm them as recorded.",
				p.label(x.name), x.name, p.label(y.name), y.name)
			if p.form(x.name) == p.form(y.name) {
				r.Query = fmt.Sprintf("On the %s form, ", p.form(x.name)) + strings.ToLower(r.Query[:1]) + r.Query[1:]
			}
			p.add(cand{r: r, maxRate: p.o.MaxViolationRate, baseline: base, informative: math.Min(1, 0.25+base/0.2),
				suggested: p.suggested(a.name, b.name, fmt.Sprintf("scan: dates in this order; unrelated dates would break it %.1f%% of the time", 100*base))})
		}
	}
}

// transform decides whether to fit v on the log scale: all values positive
// and right-skewed by Bowley's quartile skewness (Q3 + Q1 − 2·Q2)/(Q3 − Q1)
// above 0.1 (Bowley 1901, Elements of Statistics).
func transformLog(v []float64) bool {
	s := finite(v)
	if len(s) < 4 {
		return false
	}
	sort.Float64s(s)
	if s[0] <= 0 {
		return false
	}
	q1, q2, q3 := Quantile(s, 0.25), Quantile(s, 0.5), Quantile(s, 0.75)
	if q3 == q1 {
		return false
	}
	return (q3+q1-2*q2)/(q3-q1) > 0.1 || s[len(s)-1]/s[0] > 20
}

func positive(v []float64) bool {
	for _, x := range v {
		if x <= 0 {
			return false
		}
	}
	return true
}

func pairs(a, b []float64, la, lb bool) (x, y []float64) {
	for i := range a {
		xa, yb := a[i], b[i]
		if la {
			xa = logPos(xa)
		}
		if lb {
			yb = logPos(yb)
		}
		if !math.IsNaN(xa) && !math.IsNaN(yb) {
			x = append(x, xa)
			y = append(y, yb)
		}
	}
	return x, y
}

func (p *proposer) fit(x, y []float64) (line, bool) {
	s, c := TheilSenSampled(x, y, p.o.FitPairs, p.src)
	if math.IsNaN(s) {
		return line{}, false
	}
	res := make([]float64, len(x))
	for i := range x {
		res[i] = y[i] - (c + s*x[i])
	}
	sc := MAD(res)
	if !(sc > 0) {
		return line{}, false
	}
	return line{slope: sigRound(s, 6), intercept: sigRound(c, 6), scale: sigRound(sc, 4)}, true
}

func (p *proposer) band(a, b *pvar, rho float64) {
	// Log both when both are positive and either is skewed: a relation
	// between two positive, skewed quantities is usually multiplicative.
	la, lb := transformLog(a.num), transformLog(b.num)
	if (la || lb) && positive(a.num) && positive(b.num) {
		la, lb = true, true
	}
	x, y := pairs(a.num, b.num, la, lb)
	if len(x) < p.o.MinN {
		return
	}
	yx, ok1 := p.fit(x, y)
	xy, ok2 := p.fit(y, x)
	if !ok1 || !ok2 {
		return
	}
	if yx.scale > p.o.MaxBandResid*MAD(y) || xy.scale > p.o.MaxBandResid*MAD(x) {
		return
	}
	r := &Rule{Kind: KindBand, Vars: []string{a.name, b.name}, Severity: Minor, Params: map[string]any{
		"log_x": la, "log_y": lb, "k": p.o.BandK, "flag_when": "both",
		"y_on_x": map[string]any{"slope": yx.slope, "intercept": yx.intercept, "scale": yx.scale},
		"x_on_y": map[string]any{"slope": xy.slope, "intercept": xy.intercept, "scale": xy.scale},
	}}
	r.Statement = fmt.Sprintf("%s and %s agree: each lies within the range the other predicts.", p.label(a.name), p.label(b.name))
	r.Query = fmt.Sprintf("On the %s form, %s is recorded as {%s} and %s as {%s}; this combination is unusual. Please check both values against the source documents and correct them, or confirm them as recorded.",
		p.form(b.name), p.label(a.name), a.name, p.label(b.name), b.name)
	p.add(cand{r: r, maxRate: p.o.MaxOutlierRate, informative: math.Min(1, math.Abs(rho)), suggested: p.suggested(a.name, b.name, fmt.Sprintf("scan: rank correlation %.2f", rho))})
}

// knownFactors are unit conversion factors recognised in exact relations:
// pounds per kilogram (1 lb = 0.45359237 kg exactly, international yard and
// pound agreement 1959), creatinine µmol/L per mg/dL (88.4, molar mass
// 113.12 g/mol), centimetres per inch (2.54 exactly).
var knownFactors = []struct {
	f    float64
	name string
}{{2.20462, "pounds from kilograms"}, {1 / 2.20462, "kilograms from pounds"},
	{88.4, "creatinine µmol/L from mg/dL"}, {1 / 88.4, "creatinine mg/dL from µmol/L"},
	{2.54, "centimetres from inches"}, {1 / 2.54, "inches from centimetres"}}

func (p *proposer) exactLinear(a, b *pvar, rho float64) {
	x, y := pairs(a.num, b.num, false, false)
	if len(x) < p.o.MinN {
		return
	}
	// Y on X with the variable of larger magnitude as Y.
	ya, xa := b, a
	if math.Abs(a.median) > math.Abs(b.median) {
		ya, xa = a, b
		x, y = y, x
	}
	s, c := TheilSenSampled(x, y, p.o.FitPairs, p.src)
	if math.IsNaN(s) || s == 0 {
		return
	}
	res := make([]float64, len(x))
	for i := range x {
		res[i] = math.Abs(y[i] - (c + s*x[i]))
	}
	sort.Float64s(res)
	q := Quantile(res, 0.99)
	spread := MAD(y)
	if !(spread > 0) || q > 0.02*spread {
		return // not exact: residuals are a noticeable share of the spread
	}
	tol := sigRound(math.Max(q*1.5, 1e-9*math.Abs(Median(y))), 2)
	r := &Rule{Kind: KindDerived, Severity: Minor}
	for _, kf := range knownFactors {
		if math.Abs(s/kf.f-1) < 0.005 && math.Abs(c) <= tol+0.005*math.Abs(Median(y)) {
			r.Vars = []string{ya.name, xa.name}
			r.Params = map[string]any{"formula": FormulaScale, "factor": kf.f, "tolerance": tol, "rel_tolerance": 0.005}
			r.Statement = fmt.Sprintf("%s equals %s × %g (%s).", p.label(ya.name), p.label(xa.name), kf.f, kf.name)
			break
		}
	}
	if r.Params == nil {
		r.Vars = []string{ya.name, xa.name}
		r.Params = map[string]any{"formula": FormulaLinear, "coef": []any{sigRound(c, 6), sigRound(s, 6)}, "tolerance": tol}
		r.Statement = fmt.Sprintf("%s equals %g + %g × %s.", p.label(ya.name), sigRound(c, 6), sigRound(s, 6), p.label(xa.name))
	}
	r.Query = fmt.Sprintf("%s ({%s}) does not match %s ({%s}) as expected. Please check both values against the source documents and correct them, or confirm them as recorded.",
		p.label(ya.name), ya.name, p.label(xa.name), xa.name)
	p.add(cand{r: r, maxRate: p.o.MaxViolationRate, informative: 1, suggested: p.suggested(a.name, b.name, fmt.Sprintf("scan: exact linear relation, rank correlation %.4f", rho))})
}

// ---- categorical pairs: implies ----

func (p *proposer) categoricalPairs() {
	var cats []*pvar
	for _, v := range p.vars {
		if v.cat != nil {
			cats = append(cats, v)
		}
	}
	for i, a := range cats {
		for _, b := range cats[i+1:] {
			p.implies(a, b)
		}
	}
}

// bothJoined reports whether both variables are subject attributes joined
// onto a visit or record table (DM.SEX, DM.AGE, …): a relation between them
// belongs to the subject level, where each subject counts once; repeated
// on every visit it would look far better supported than it is.
func bothJoined(a, b *pvar) bool {
	return a.c.Prov.Derived == dataset.DerivedJoin && b.c.Prov.Derived == dataset.DerivedJoin
}

// summaryOf reports whether two variables are summaries the shaping made
// from the same domain (AE.ANY, AE.N, AE.MAXSEV, …): rules between them are
// true by construction and not worth proposing.
func summaryOf(a, b *pvar) bool {
	sum := func(c *dataset.Column) bool {
		switch c.Prov.Derived {
		case dataset.DerivedAny, dataset.DerivedCount, dataset.DerivedMax, dataset.DerivedFirst:
			return true
		}
		return false
	}
	return bothJoined(a, b) || a.c.Prov.Domain != "" && a.c.Prov.Domain == b.c.Prov.Domain && sum(a.c) && sum(b.c)
}

// implies looks at the contingency table of two categorical variables. For
// each level x of X, the allowed values of Y are those with at least 2% of
// the row and more than MaxCellRatio of what independence expects; the other
// cells are violations. A row becomes a rule when independence would put at
// least MinExpected records outside the allowed values (so the rule is not
// trivially true). Rows with the same allowed set share a rule; the
// orientation (X → Y or Y → X) needing fewer rules is used.
func (p *proposer) implies(a, b *pvar) {
	if summaryOf(a, b) {
		return
	}
	ka, kb := len(a.levels), len(b.levels)
	tab := make([]float64, ka*kb)
	row, col := make([]float64, ka), make([]float64, kb)
	var n float64
	for i := range a.cat {
		x, y := a.cat[i], b.cat[i]
		if x < 0 || y < 0 {
			continue
		}
		tab[int(x)*kb+int(y)]++
		row[x]++
		col[y]++
		n++
	}
	if n < float64(p.o.MinN) {
		return
	}
	type group struct {
		rows    []int
		allowed []int
		base    float64 // expected count outside allowed
		sup     float64
	}
	orient := func(rowsA bool) map[string]*group {
		g := map[string]*group{}
		nr, nc := ka, kb
		if !rowsA {
			nr, nc = kb, ka
		}
		cell := func(r, c int) float64 {
			if rowsA {
				return tab[r*kb+c]
			}
			return tab[c*kb+r]
		}
		rowSum := func(r int) float64 {
			if rowsA {
				return row[r]
			}
			return col[r]
		}
		colSum := func(c int) float64 {
			if rowsA {
				return col[c]
			}
			return row[c]
		}
		for r := 0; r < nr; r++ {
			rs := rowSum(r)
			if rs < float64(p.o.MinGroup) {
				continue
			}
			var allowed []string
			var allowedIdx []int
			var base, viol float64
			for c := 0; c < nc; c++ {
				o, e := cell(r, c), rs*colSum(c)/n
				if o >= 0.02*rs && o > p.o.MaxCellRatio*e {
					allowed = append(allowed, fmt.Sprint(c))
					allowedIdx = append(allowedIdx, c)
				} else {
					base += e
					viol += o
				}
			}
			if len(allowed) == 0 || base < p.o.MinExpected || viol > 5*p.o.MaxViolationRate*rs {
				continue
			}
			k := strings.Join(allowed, ",")
			if g[k] == nil {
				g[k] = &group{allowed: allowedIdx}
			}
			g[k].rows = append(g[k].rows, r)
			g[k].base += base
			g[k].sup += rs
		}
		return g
	}
	// Orientation: the one whose rules cover more records, then the one
	// needing fewer rules, then the variable with fewer levels first.
	ga, gb := orient(true), orient(false)
	cover := func(g map[string]*group) (s float64) {
		for _, x := range g {
			s += x.sup
		}
		return s
	}
	ca, cb := cover(ga), cover(gb)
	x, y, g := a, b, ga
	if cb > ca || cb == ca && (len(gb) < len(ga) || len(gb) == len(ga) && kb < ka) {
		x, y, g = b, a, gb
	}
	keys := make([]string, 0, len(g))
	for k := range g {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		gr := g[k]
		var when, then []any
		var whenS, thenS []string
		for _, r := range gr.rows {
			when = append(when, x.levels[r])
			whenS = append(whenS, x.levels[r])
		}
		for _, c := range gr.allowed {
			then = append(then, y.levels[c])
			thenS = append(thenS, y.levels[c])
		}
		rl := &Rule{Kind: KindImplies, Vars: []string{x.name, y.name}, Severity: Major,
			Params: map[string]any{"when_in": when, "then_in": then}}
		rl.Statement = fmt.Sprintf("When %s is %s, %s is %s.", p.label(x.name), orList(whenS), p.label(y.name), orList(thenS))
		rl.Query = fmt.Sprintf("%s is recorded as {%s} and %s as {%s}; these two entries do not usually occur together. Please check both against the source documents and correct them, or confirm them as recorded.",
			p.label(x.name), x.name, p.label(y.name), y.name)
		wset := set(whenS)
		xv := x
		prem := func(i int) bool { return xv.cat[i] >= 0 && wset[xv.levels[xv.cat[i]]] }
		base := gr.base / gr.sup
		p.add(cand{r: rl, maxRate: p.o.MaxViolationRate, support: prem, baseline: base, informative: math.Min(1, base/0.2),
			suggested: p.suggested(a.name, b.name, fmt.Sprintf("scan: independence expects %.0f records outside these combinations", gr.base))})
	}
}

func orList(s []string) string {
	q := make([]string, len(s))
	for i, v := range s {
		q[i] = "“" + v + "”"
	}
	if len(q) == 1 {
		return q[0]
	}
	return strings.Join(q[:len(q)-1], ", ") + " or " + q[len(q)-1]
}

// ---- categorical × numeric: cutoff and group_range ----

func (p *proposer) catNumPairs() {
	for _, g := range p.vars {
		if g.cat == nil {
			continue
		}
		for _, y := range p.vars {
			if !y.isNum || y == g {
				continue
			}
			if summaryOf(g, y) {
				continue
			}
			if len(g.levels) == 2 && p.cutoff(g, y) {
				continue
			}
			p.groupRange(g, y)
		}
	}
}

// cutoff looks for a cut c with flag level on the side Y < c, misclassifying
// at most MaxViolationRate of the records.
func (p *proposer) cutoff(g, y *pvar) bool {
	type pt struct {
		v float64
		l int32
	}
	var pts []pt
	cnt := [2]int{}
	for i := range g.cat {
		if g.cat[i] >= 0 && !math.IsNaN(y.num[i]) {
			pts = append(pts, pt{y.num[i], g.cat[i]})
			cnt[g.cat[i]]++
		}
	}
	if len(pts) < p.o.MinN || cnt[0] < p.o.MinGroup || cnt[1] < p.o.MinGroup {
		return false
	}
	sort.Slice(pts, func(i, j int) bool { return pts[i].v < pts[j].v })
	best, bestErr, bestLow := -1, len(pts)+1, int32(0)
	for low := int32(0); low < 2; low++ {
		// errors with cut after position k (k values below): level ≠ low
		// below, level = low above.
		errs := cnt[low] // all low-level records are above when k = 0
		for k := 0; k <= len(pts); k++ {
			if k > 0 {
				if pts[k-1].l == low {
					errs--
				} else {
					errs++
				}
			}
			if k > 0 && k < len(pts) && pts[k].v == pts[k-1].v {
				continue // cannot cut between equal values
			}
			if errs < bestErr {
				best, bestErr, bestLow = k, errs, low
			}
		}
	}
	if best <= 0 || best >= len(pts) || float64(bestErr) > p.o.MaxViolationRate*float64(len(pts)) {
		return false
	}
	cut := niceIn(pts[best-1].v, pts[best].v)
	// Unrelated, the flag would disagree with the cut for 2·p·(1−p) of the
	// records (p the share flagged, the cut splitting at the same share).
	pf := float64(cnt[bestLow]) / float64(len(pts))
	base := 2 * pf * (1 - pf)
	flag := g.levels[bestLow]
	r := &Rule{Kind: KindCutoff, Vars: []string{g.name, y.name}, Severity: Major,
		Params: map[string]any{"flag": flag, "below": cut}}
	r.Statement = fmt.Sprintf("%s is “%s” exactly when %s is below %s.", p.label(g.name), flag, p.label(y.name), dataset.FormatFloat(cut))
	r.Query = fmt.Sprintf("%s is recorded as {%s} while %s is {%s}; these two entries are expected to agree (“%s” exactly when the value is below %s). Please check both against the source documents and correct them, or confirm them as recorded.",
		p.label(g.name), g.name, p.label(y.name), y.name, flag, dataset.FormatFloat(cut))
	return p.add(cand{r: r, maxRate: p.o.MaxViolationRate, baseline: base, informative: 1, suggested: p.suggested(g.name, y.name, "scan: a cut on the number separates the two values")}) != nil
}

func (p *proposer) groupRange(g, y *pvar) {
	// Screen: mean ranks per level (Kruskal–Wallis style, robust).
	k := len(g.levels)
	sum, cnt := make([]float64, k), make([]float64, k)
	var n float64
	for i := range g.cat {
		if g.cat[i] >= 0 && !math.IsNaN(y.rank[i]) {
			sum[g.cat[i]] += y.rank[i]
			cnt[g.cat[i]]++
			n++
		}
	}
	if n < float64(p.o.MinN) {
		return
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for j := 0; j < k; j++ {
		if cnt[j] < float64(p.o.MinGroup) {
			return // every level needs enough records for limits
		}
		m := sum[j] / cnt[j]
		lo, hi = math.Min(lo, m), math.Max(hi, m)
	}
	_, hint := p.hinted(g.name, y.name)
	if (hi-lo)/n < p.o.MinGroupEffect && !hint {
		return
	}
	// Kruskal–Wallis H = 12/(n(n+1)) Σ R_j²/n_j − 3(n+1), ranks taken over
	// all records with Y (close to the pairwise-complete ranks when G is
	// rarely missing), referred to χ² with k − 1 df.
	var h float64
	for j := 0; j < k; j++ {
		h += sum[j] * sum[j] / cnt[j]
	}
	h = 12/(n*(n+1))*h - 3*(n+1)
	chi := distuv.ChiSquared{K: float64(k - 1)}
	if pv := chi.Survival(h); !(pv <= p.o.MaxKruskalP) {
		return
	}
	lg := transformLog(y.num)
	vals := make([][]float64, k)
	for i := range g.cat {
		if g.cat[i] >= 0 && !math.IsNaN(y.num[i]) {
			v := y.num[i]
			if lg {
				v = math.Log(v)
			}
			vals[g.cat[i]] = append(vals[g.cat[i]], v)
		}
	}
	limits := map[string]any{}
	for j, v := range vals {
		sort.Float64s(v)
		q1, q3 := Quantile(v, 0.25), Quantile(v, 0.75)
		iqr := q3 - q1
		if !(iqr > 0) {
			return
		}
		l, h := q1-p.o.FenceK*iqr, q3+p.o.FenceK*iqr
		if lg {
			l, h = math.Exp(l), math.Exp(h)
		}
		limits[g.levels[j]] = []any{sigFloor(l, 4), sigCeil(h, 4)}
	}
	r := &Rule{Kind: KindGroupRange, Vars: []string{g.name, y.name}, Severity: Minor, Params: map[string]any{"limits": limits}}
	r.Statement = fmt.Sprintf("%s lies within the plausible range for each %s.", p.label(y.name), p.label(g.name))
	r.Query = fmt.Sprintf("%s is recorded as {%s} for %s {%s}, which is outside the usual range. Please check the value against the source documents and correct it, or confirm it as recorded.",
		p.label(y.name), y.name, p.label(g.name), g.name)
	p.add(cand{r: r, maxRate: p.o.MaxViolationRate, informative: math.Min(1, 2*(hi-lo)/n), suggested: p.suggested(g.name, y.name, fmt.Sprintf("scan: levels differ (mean-rank gap %.2f)", (hi-lo)/n))})
}

func sigFloor(x float64, d int) float64 {
	r := sigRound(x, d)
	if r > x {
		e := math.Floor(math.Log10(math.Abs(x)))
		r -= math.Pow(10, e-float64(d-1))
	}
	return sigRound(r, d+1)
}

func sigCeil(x float64, d int) float64 {
	r := sigRound(x, d)
	if r < x {
		e := math.Floor(math.Log10(math.Abs(x)))
		r += math.Pow(10, e-float64(d-1))
	}
	return sigRound(r, d+1)
}

// ---- presence ----

func bitmapOf(n int, f func(i int) bool) []uint64 {
	w := make([]uint64, (n+63)/64)
	for i := 0; i < n; i++ {
		if f(i) {
			w[i>>6] |= 1 << (uint(i) & 63)
		}
	}
	return w
}

func andCount(a, b []uint64) int {
	n := 0
	for i := range a {
		n += bits.OnesCount64(a[i] & b[i])
	}
	return n
}

func count(a []uint64) int {
	n := 0
	for _, w := range a {
		n += bits.OnesCount64(w)
	}
	return n
}

// presence looks, for each level of a categorical X, at whether Y is always
// absent (or always present) in its records while it is often present
// (absent) overall. Levels of X with the same finding share one rule; when
// every level shares it the rule is "X present ⇒ …".
func (p *proposer) presence() {
	n := p.t.NRows
	type target struct {
		v       *pvar
		present []uint64
		np      int
	}
	var targets []target
	for _, v := range p.vars {
		pr := bitmapOf(n, func(i int) bool { return !v.c.Missing(i) })
		np := count(pr)
		if np == 0 || np == n {
			continue
		}
		targets = append(targets, target{v, pr, np})
	}
	for _, x := range p.vars {
		if x.cat == nil {
			continue
		}
		prems := make([][]uint64, len(x.levels))
		nps := make([]int, len(x.levels))
		for lev := range x.levels {
			prems[lev] = bitmapOf(n, func(i int) bool { return x.cat[i] == int32(lev) })
			nps[lev] = count(prems[lev])
		}
		for _, y := range targets {
			if y.v == x || summaryOf(x, y.v) {
				continue
			}
			for _, then := range []string{"absent", "present"} {
				var levs []string
				var prem, viol int
				for lev := range x.levels {
					np := nps[lev]
					if np < p.o.MinGroup {
						continue
					}
					both := andCount(prems[lev], y.present)
					v, base := both, float64(y.np)/float64(n)
					if then == "present" {
						v, base = np-both, 1-float64(y.np)/float64(n)
					}
					if float64(v) > 5*p.o.MaxViolationRate*float64(np) || base < p.o.MinBaseline || float64(v)/float64(np) > base/5 {
						continue
					}
					levs = append(levs, x.levels[lev])
					prem += np
					viol += v
				}
				if len(levs) > 0 {
					base := float64(y.np) / float64(n)
					if then == "present" {
						base = 1 - base
					}
					p.presenceRule(x, levs, y.v, then, base, prem)
				}
			}
		}
	}
}

func (p *proposer) presenceRule(x *pvar, levs []string, y *pvar, then string, base float64, np int) {
	r := &Rule{Kind: KindPresence, Vars: []string{x.name, y.name}, Severity: Major}
	var vals []any
	for _, l := range levs {
		vals = append(vals, l)
	}
	cond := fmt.Sprintf("%s is %s", p.label(x.name), orList(levs))
	var prem func(i int) bool
	xv := x
	if len(levs) == len(x.levels) {
		r.Params = map[string]any{"when": "present", "then": then}
		cond = fmt.Sprintf("%s is recorded", p.label(x.name))
		prem = func(i int) bool { return xv.cat[i] >= 0 }
	} else {
		r.Params = map[string]any{"when": "in", "values": vals, "then": then}
		ls := set(levs)
		prem = func(i int) bool { return xv.cat[i] >= 0 && ls[xv.levels[xv.cat[i]]] }
	}
	if then == "absent" {
		r.Statement = fmt.Sprintf("When %s, %s is not recorded.", cond, p.label(y.name))
		r.Query = fmt.Sprintf("%s is recorded as {%s}, yet a value of %s is recorded ({%s}). Please check both against the source documents and correct them, or confirm them as recorded.",
			p.label(x.name), x.name, p.label(y.name), y.name)
	} else {
		r.Statement = fmt.Sprintf("When %s, %s is recorded.", cond, p.label(y.name))
		r.Query = fmt.Sprintf("%s is recorded as {%s}, but %s is not recorded. Please check the source documents and complete the entry, or confirm that it is not available.",
			p.label(x.name), x.name, p.label(y.name))
	}
	p.add(cand{r: r, maxRate: p.o.MaxViolationRate, support: prem, baseline: base, informative: math.Min(1, base/0.2),
		suggested: p.suggested(x.name, y.name, fmt.Sprintf("scan: %s is %s for %d records with these values; overall it is %s in %.1f%%", y.name, then, np, map[string]string{"absent": "present", "present": "absent"}[then], 100*base))})
}

// ---- visit_change ----

func (p *proposer) visitChange() {
	t := p.t
	if len(t.Keys) < 2 {
		return
	}
	subj, visit := t.Col(t.Keys[0]), t.Col(t.Keys[1])
	if subj == nil || visit == nil || visit.Storage != dataset.StoreFloat {
		return
	}
	// In a shaped SDTM table only findings results (with a test code) are
	// measured again at each visit.
	findings := false
	for _, v := range p.vars {
		if v.c.Prov.TestCode != "" {
			findings = true
		}
	}
	for _, v := range p.vars {
		if !v.isNum || v.c.Storage != dataset.StoreFloat || findings && v.c.Prov.TestCode == "" {
			continue
		}
		lg := true
		for _, x := range v.num {
			if x <= 0 {
				lg = false
				break
			}
		}
		r := &Rule{Kind: KindVisitChange, Vars: []string{v.name}, Severity: Minor,
			Params: map[string]any{"scale": map[bool]string{true: "log", false: "diff"}[lg], "low": -1.0, "high": 1.0}}
		r.Level = p.level
		chk, err := visitChangeKind{}.bind(r, t)
		if err != nil {
			continue
		}
		vc := chk.(*visitChangeCheck)
		var d, all []float64
		for i := 0; i < t.NRows; i++ {
			if x, ok := vc.change(i); ok {
				d = append(d, x)
			}
			if !math.IsNaN(v.num[i]) {
				x := v.num[i]
				if lg {
					x = math.Log(x)
				}
				all = append(all, x)
			}
		}
		if len(d) < p.o.MinN {
			continue
		}
		s := MAD(d)
		if !(s > 0) || s > p.o.MaxChangeRatio*MAD(all) {
			continue
		}
		m := Median(d)
		lo, hi := sigFloor(m-p.o.VisitChangeK*s, 3), sigCeil(m+p.o.VisitChangeK*s, 3)
		r.Params["low"], r.Params["high"] = lo, hi
		if lg {
			r.Statement = fmt.Sprintf("%s changes from one visit to the next by a factor between %.3g and %.3g.", p.label(v.name), math.Exp(lo), math.Exp(hi))
		} else {
			r.Statement = fmt.Sprintf("%s changes from one visit to the next by between %g and %g.", p.label(v.name), lo, hi)
		}
		r.Query = fmt.Sprintf("%s at this visit ({%s}) differs markedly from the subject's previous visit. Please check the value and its unit against the source documents and correct it, or confirm it as recorded.",
			p.label(v.name), v.name)
		p.add(cand{r: r, maxRate: p.o.MaxOutlierRate, informative: 1, suggested: fmt.Sprintf("scan: visit-to-visit change is small next to differences between subjects (%.2g vs %.2g)", s, MAD(all))})
	}
}

// ---- derived catalogue ----

// findCode returns the proposer variable whose SDTM test code (provenance
// or the name's last dotted part, ignoring a ".BL" suffix) is code, the
// shortest name first; nil if none.
func (p *proposer) findCode(codes ...string) *pvar {
	var best *pvar
	for _, code := range codes {
		for _, v := range p.vars {
			name := strings.TrimSuffix(v.name, ".BL")
			last := name[strings.LastIndexByte(name, '.')+1:]
			if v.c.Prov.TestCode == code || last == code || v.name == code {
				if best == nil || len(v.name) < len(best.name) {
					best = v
				}
			}
		}
		if best != nil {
			return best
		}
	}
	return nil
}

func allJoined(vs ...*pvar) bool {
	for _, v := range vs {
		if v.c.Prov.Derived != dataset.DerivedJoin {
			return false
		}
	}
	return true
}

func (p *proposer) derivedCatalogue() {
	max := p.o.CatalogueMaxViolationRate
	note := "catalogue: standard clinical derivation"
	if bmi, w, h := p.findCode("BMI"), p.findCode("WEIGHT"), p.findCode("HEIGHT"); bmi != nil && w != nil && h != nil {
		r := &Rule{Kind: KindDerived, Vars: []string{bmi.name, w.name, h.name}, Severity: Minor,
			Params: map[string]any{"formula": FormulaBMI, "tolerance": 0.1, "rel_tolerance": 0.005}}
		if h.median > 0 && h.median < 3 {
			r.Params["height_unit"] = "m"
		}
		if len(p.t.Keys) >= 2 && h.c.NMissing() > p.t.NRows/2 {
			r.Params["carry"] = []any{h.name}
		}
		r.Statement = fmt.Sprintf("%s equals weight / height² (kg/m²) from %s and %s, within 0.1.", p.label(bmi.name), w.name, h.name)
		r.Query = fmt.Sprintf("%s ({%s}) does not match weight {%s} and height {%s}. Please check weight, height and BMI against the source documents and correct them, or confirm them as recorded.",
			p.label(bmi.name), bmi.name, w.name, h.name)
		p.add(cand{r: r, maxRate: max, informative: 1, suggested: note + " (BMI = kg/m²)"})
	}
	if mp, s, d := p.findCode("MAP"), p.findCode("SYSBP"), p.findCode("DIABP"); mp != nil && s != nil && d != nil {
		r := &Rule{Kind: KindDerived, Vars: []string{mp.name, s.name, d.name}, Severity: Minor,
			Params: map[string]any{"formula": FormulaMAP, "tolerance": 1}}
		r.Statement = fmt.Sprintf("%s equals diastolic + (systolic − diastolic)/3, within 1.", p.label(mp.name))
		r.Query = fmt.Sprintf("%s ({%s}) does not match systolic {%s} and diastolic {%s}. Please check the three values against the source documents and correct them, or confirm them as recorded.",
			p.label(mp.name), mp.name, s.name, d.name)
		p.add(cand{r: r, maxRate: max, informative: 1, suggested: note + " (mean arterial pressure)"})
	}
	age := p.findCode("AGE")
	birth := p.findCode("BRTHDTC")
	if age != nil && birth != nil && birth.isDate && !allJoined(age, birth) {
		var best *Rule
		for _, refName := range []string{"RFICDTC", "RFSTDTC"} {
			ref := p.findCode(refName)
			if ref == nil || !ref.isDate {
				continue
			}
			r := &Rule{Kind: KindDerived, Vars: []string{age.name, birth.name, ref.name}, Severity: Minor,
				Params: map[string]any{"formula": FormulaAge, "tolerance": 0}}
			r.Statement = fmt.Sprintf("%s equals the whole years from %s to %s.", p.label(age.name), birth.name, ref.name)
			r.Query = fmt.Sprintf("Age ({%s}) does not match birth date {%s} and reference date {%s}. Please check these entries against the source documents and correct them, or confirm them as recorded.",
				age.name, birth.name, ref.name)
			before := len(p.out)
			if p.add(cand{r: r, maxRate: max, informative: 1, suggested: note + " (age in whole years)"}) != nil {
				got := p.out[len(p.out)-1]
				p.out = p.out[:before]
				if best == nil || got.Evidence.Violations < best.Evidence.Violations {
					best = got
				}
			}
		}
		if best != nil {
			p.out = append(p.out, best)
		}
	}
}

// ---- dedupe, rank, limit ----

// dominates reports whether rule a makes rule b redundant: same kind and
// variables (keep the better), a derived rule over b's variables, or a
// cutoff over a group_range, implies or band on the same pair.
func dominates(a, b *Rule) bool {
	sa, sb := set(a.Vars), set(b.Vars)
	sub := true
	for v := range sb {
		if !sa[v] {
			sub = false
		}
	}
	if !sub {
		return false
	}
	switch {
	case a.Kind == KindDerived && (b.Kind == KindBand || b.Kind == KindGroupRange || b.Kind == KindDerived && len(b.Vars) < len(a.Vars)):
		return true
	case a.Kind == KindCutoff && (b.Kind == KindGroupRange || b.Kind == KindImplies || b.Kind == KindBand || b.Kind == KindPresence):
		return true
	case a.Kind == KindImplies && b.Kind == KindPresence:
		// "X = a ⇒ Y ∈ B" says Y is present when X = a.
		return len(sa) == len(sb) && b.Param("then") == "present"
	}
	return false
}

func (p *proposer) finish() []*Rule {
	rs := p.out
	sort.SliceStable(rs, func(i, j int) bool {
		if rs[i].Evidence.Score != rs[j].Evidence.Score {
			return rs[i].Evidence.Score > rs[j].Evidence.Score
		}
		return rs[i].ID < rs[j].ID
	})
	var kept []*Rule
	seen := map[string]bool{}
	perVar := map[string]int{}
	perCluster := map[int]int{}
outer:
	for _, r := range rs {
		if seen[r.ID] {
			continue
		}
		for _, k := range kept {
			if dominates(k, r) {
				continue outer
			}
		}
		// A rule that dominates earlier, higher-ranked ones replaces them.
		for j := 0; j < len(kept); j++ {
			if dominates(r, kept[j]) {
				for _, v := range kept[j].Vars {
					perVar[v]--
				}
				if c := p.clusterOf(kept[j]); c != 0 {
					perCluster[c]--
				}
				kept = append(kept[:j], kept[j+1:]...)
				j--
			}
		}
		for _, v := range r.Vars {
			if perVar[v] >= p.o.PerVariable {
				continue outer
			}
		}
		c := p.clusterOf(r)
		if c != 0 && perCluster[c] >= p.o.PerCluster {
			continue
		}
		for _, v := range r.Vars {
			perVar[v]++
		}
		if c != 0 {
			perCluster[c]++
		}
		seen[r.ID] = true
		kept = append(kept, r)
		if len(kept) == p.o.MaxRules {
			break
		}
	}
	return kept
}

// clusterOf returns the cluster holding all of r's variables, or 0 when
// they are not all in one cluster.
func (p *proposer) clusterOf(r *Rule) int {
	c := 0
	for i, v := range r.Vars {
		k := p.o.Clusters[v]
		if k == 0 || i > 0 && k != c {
			return 0
		}
		c = k
	}
	return c
}

// Fingerprint returns a short fingerprint of a table's content (names,
// types and values of every column), "sha256:" and 16 hex digits, for
// Evidence.Fingerprint when the caller has no file hashes.
func Fingerprint(t *dataset.Table) string {
	h := sha256.New()
	var b [8]byte
	for _, c := range t.Cols {
		h.Write([]byte(c.Name))
		h.Write([]byte{0, byte(c.Type), byte(c.Storage)})
		for i := 0; i < t.NRows; i++ {
			if c.Missing(i) {
				h.Write([]byte{1})
				continue
			}
			switch c.Storage {
			case dataset.StoreFloat:
				binary.LittleEndian.PutUint64(b[:], math.Float64bits(c.Floats[i]))
				h.Write(b[:])
			default:
				h.Write([]byte(c.String(i)))
				h.Write([]byte{0})
			}
		}
	}
	return "sha256:" + hex.EncodeToString(h.Sum(nil))[:16]
}
