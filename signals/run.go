package signals

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
)

// Options control Run. The zero value uses every default.
type Options struct {
	// Pairs are the variable pairs of the relationship test; each is tested in
	// every table (subject, visit) that holds both. nil chooses strongly
	// associated pairs per table (StrongPairs with Site.PairMinRho).
	Pairs [][2]string
	// ShiftVars are the variables of the distribution test, in every table that
	// holds them; nil tests every continuous variable.
	ShiftVars []string
	Site      SiteOptions
	Dup       DuplicateOptions
	// Scaling of the subject distance; the zero value is Robust.
	Scaling Scaling
	// Exclude names variables left out of the subject profile; nil means
	// DefaultExclude, an empty non-nil slice none.
	Exclude []string
	// Weights gives subject-profile variables a weight other than 1.
	Weights map[string]float64
	// ClusterMaxRows bounds the subjects clustered (0: DefaultClusterMaxRows;
	// < 0: no clustering); ClusterMaxK the clusters (0: DefaultClusterMaxK).
	ClusterMaxRows, ClusterMaxK int
	// Checks are the rule checker's discrepancies and not-evaluable records
	// for the quality scores; nil counts none.
	Checks  []CheckRecord
	Workers int // ≤ 0: GOMAXPROCS
}

// Report is everything Run finds. Slices are in a deterministic order.
type Report struct {
	Subjects int      // rows of the subject table
	Sites    []string // sorted
	Scaling  Scaling
	// Profile lists the subject-profile variables of the Gower distance and
	// their kinds.
	Profile     []string
	Kinds       []Kind
	SubjectIDs  []string // by subject-table row
	SiteSignals []SiteSignal
	SubjectSigs []SubjectSignal
	Relations   []Relation // by table, pair, site
	Shifts      []Shift    // by table, variable, stratum, site
	Duplicates  *DuplicateResult
	// Clusters is nil when clustering was off or refused; ClusterNote says why.
	Clusters    *SubjectClusters
	ClusterNote string
	Scores      []Score // sites, then subjects, then variables, each ranked
	References  []Reference
}

// A SiteSignal summarises one site's signals.
type SiteSignal struct {
	Site                         string
	Subjects                     int
	RelationTests, RelationFlags int
	ShiftTests, ShiftFlags       int
	DuplicateSubjects            int // subjects in a flagged duplicate pair
	// MaxRatio is the flagged shift whose median ratio is farthest from 1 (on
	// the log scale), NaN when no shift is flagged; MaxRatioVar names it.
	MaxRatio    float64
	MaxRatioVar string
	Flagged     bool // any flag above
}

// A SubjectSignal is one subject's nearest neighbour and memberships.
type SubjectSignal struct {
	Subject, Site  string
	Nearest        string // nearest other subject, "" when none
	NearestDist    float64
	NearestZ       float64
	Group          int // duplicate group (1-based), 0 when none
	DuplicatePairs int // flagged pairs involving the subject
	Cluster        int // 1-based, 0 when not clustered
}

// Run looks for site and subject signals in a study shaped at subject level
// (subject, required: one row per subject keyed by USUBJID, with a site
// column) and optionally at visit level (visit, may be nil): relationship
// heterogeneity and distribution shifts per site (Relationships, Shifts),
// near-identical subjects (Duplicates on the Gower distance of ProfileOf),
// subject clusters per site (ClusterSubjects) and quality scores per site,
// subject and variable (ScoreUnits). The q-values and flags of the site tests
// are recomputed over all tables' tests of a kind (relationship, distribution),
// so that one false-discovery control covers the whole run. It fails on a table without a site
// column, an unknown variable in o.Pairs, o.ShiftVars or o.Weights, or when ctx
// is cancelled.
func Run(ctx context.Context, subject, visit *dataset.Table, o Options) (*Report, error) {
	if subject == nil {
		return nil, errors.New("signals: no subject-level table")
	}
	if subject.Site == "" {
		return nil, fmt.Errorf("signals: subject table %q has no site column", subject.Name)
	}
	if visit != nil && visit.Site == "" {
		return nil, fmt.Errorf("signals: visit table %q has no site column", visit.Name)
	}
	tables := []*dataset.Table{subject}
	if visit != nil {
		tables = append(tables, visit)
	}
	r := &Report{Subjects: subject.NRows, Sites: sitesOf(subject), Scaling: o.Scaling}

	// 1. Sites: relationships and shifts.
	for _, pr := range o.Pairs {
		found := false
		for _, t := range tables {
			found = found || (t.Col(pr[0]) != nil && t.Col(pr[1]) != nil)
		}
		if !found {
			return nil, fmt.Errorf("signals: no table holds both %q and %q", pr[0], pr[1])
		}
	}
	for _, v := range o.ShiftVars {
		if !slices.ContainsFunc(tables, func(t *dataset.Table) bool { return t.Col(v) != nil }) {
			return nil, fmt.Errorf("signals: no table holds shift variable %q", v)
		}
	}
	var relP, shiftP []float64
	for _, t := range tables {
		var pairs [][2]string
		if o.Pairs != nil {
			pairs = [][2]string{}
			for _, pr := range o.Pairs {
				if t.Col(pr[0]) != nil && t.Col(pr[1]) != nil {
					pairs = append(pairs, pr)
				}
			}
		}
		rel, err := Relationships(t, pairs, o.Site)
		if err != nil {
			return nil, err
		}
		r.Relations = append(r.Relations, rel...)
		var vars []string
		if o.ShiftVars != nil {
			vars = []string{}
			for _, v := range o.ShiftVars {
				if t.Col(v) != nil {
					vars = append(vars, v)
				}
			}
		}
		sh, err := Shifts(t, vars, o.Site)
		if err != nil {
			return nil, err
		}
		r.Shifts = append(r.Shifts, sh...)
		if err := ctx.Err(); err != nil {
			return nil, err
		}
	}
	// One false-discovery control over all tables' tests of a kind.
	so := o.Site.withDefaults()
	for _, x := range r.Relations {
		relP = append(relP, x.P)
	}
	for _, x := range r.Shifts {
		shiftP = append(shiftP, x.P)
	}
	relQ, shiftQ := bh(relP), bh(shiftP)
	for i := range r.Relations {
		x := &r.Relations[i]
		x.Q = relQ[i]
		x.Flag = x.Q <= so.Alpha && (so.MinRhoDiff < 0 || math.Abs(x.Rho-x.RhoOthers) >= so.MinRhoDiff)
	}
	for i := range r.Shifts {
		x := &r.Shifts[i]
		x.Q = shiftQ[i]
		x.Flag = x.Q <= so.Alpha && (so.MinEffect < 0 || math.Abs(x.Effect-0.5) >= so.MinEffect)
	}

	// 2. Subjects: profile, distance, duplicates.
	exclude := o.Exclude
	if exclude == nil {
		exclude = DefaultExclude
	}
	m, err := ProfileOf(subject, exclude, o.Weights)
	if err != nil {
		return nil, err
	}
	r.Profile, r.Kinds = m.Names, m.Kinds
	g, err := NewGower(m, o.Scaling)
	if err != nil {
		return nil, err
	}
	sites := make([]string, subject.NRows)
	r.SubjectIDs = make([]string, subject.NRows)
	for i := range subject.NRows {
		sites[i] = subject.SiteOf(i)
		if k := subject.RowKey(i); len(k) > 0 {
			r.SubjectIDs[i] = k[0]
		} else {
			r.SubjectIDs[i] = strconv.Itoa(i + 1)
		}
	}
	dupOpt := o.Dup
	if dupOpt.Workers == 0 {
		dupOpt.Workers = o.Workers
	}
	r.Duplicates, err = Duplicates(ctx, g, m, sites, dupOpt)
	if err != nil {
		return nil, err
	}

	// 3. Clusters.
	maxRows, maxK := o.ClusterMaxRows, o.ClusterMaxK
	if maxRows == 0 {
		maxRows = DefaultClusterMaxRows
	}
	if maxK == 0 {
		maxK = DefaultClusterMaxK
	}
	switch {
	case maxRows < 0:
		r.ClusterNote = "clustering off"
	case subject.NRows > maxRows:
		r.ClusterNote = fmt.Sprintf("%d subjects, more than the clustering limit %d", subject.NRows, maxRows)
	default:
		labels := uniqueLabels(r.SubjectIDs)
		r.Clusters, err = ClusterSubjects(ctx, g, labels, sites, maxK, maxRows, o.Workers)
		if err != nil {
			if ctx.Err() != nil {
				return nil, err
			}
			r.Clusters, r.ClusterNote = nil, err.Error()
		}
	}
	r.summarise(subject)
	r.score(tables, o.Checks)
	return r, nil
}

func bh(p []float64) []float64 {
	if len(p) == 0 {
		return nil
	}
	return assoc.BenjaminiHochberg(p, nil)
}

func uniqueLabels(ids []string) []string {
	seen := map[string]int{}
	out := make([]string, len(ids))
	for i, id := range ids {
		seen[id]++
		out[i] = id
		if seen[id] > 1 || id == "" {
			out[i] = fmt.Sprintf("%s#%d", id, i+1)
		}
	}
	return out
}

// summarise fills SiteSignals and SubjectSigs.
func (r *Report) summarise(subject *dataset.Table) {
	d := r.Duplicates
	pairsOf := make([]int, subject.NRows)
	groupOf := make([]int, subject.NRows)
	for _, p := range d.Pairs {
		pairsOf[p.A]++
		pairsOf[p.B]++
		groupOf[p.A], groupOf[p.B] = p.Group, p.Group
	}
	for i := range subject.NRows {
		s := SubjectSignal{Subject: r.SubjectIDs[i], Site: subject.SiteOf(i), NearestDist: d.NearestDist[i],
			NearestZ: d.NearestZ[i], Group: groupOf[i], DuplicatePairs: pairsOf[i]}
		if j := d.Nearest[i]; j >= 0 {
			s.Nearest = r.SubjectIDs[j]
		}
		if r.Clusters != nil {
			s.Cluster = r.Clusters.Of[i]
		}
		r.SubjectSigs = append(r.SubjectSigs, s)
	}
	for _, site := range r.Sites {
		ss := SiteSignal{Site: site, MaxRatio: math.NaN()}
		for _, s := range r.SubjectSigs {
			if s.Site == site {
				ss.Subjects++
				if s.DuplicatePairs > 0 {
					ss.DuplicateSubjects++
				}
			}
		}
		for _, x := range r.Relations {
			if x.Site == site && !math.IsNaN(x.P) {
				ss.RelationTests++
				if x.Flag {
					ss.RelationFlags++
				}
			}
		}
		for _, x := range r.Shifts {
			if x.Site == site && !math.IsNaN(x.P) {
				ss.ShiftTests++
				if x.Flag {
					ss.ShiftFlags++
					if math.IsNaN(ss.MaxRatio) || math.Abs(math.Log(x.Ratio)) > math.Abs(math.Log(ss.MaxRatio)) {
						ss.MaxRatio, ss.MaxRatioVar = x.Ratio, x.Var
					}
				}
			}
		}
		ss.Flagged = ss.RelationFlags+ss.ShiftFlags+ss.DuplicateSubjects > 0
		r.SiteSignals = append(r.SiteSignals, ss)
	}
}

// score computes the quality scores of sites, subjects and variables.
//
// Components, per unit (higher is worse):
//   - discrepancy_rate: discrepancies (CheckRecord with NotEvaluable false) per
//     subject for a site, their count for a subject, per non-missing value for
//     a variable (per subject when no table holds the variable);
//   - not_evaluable_rate: the same for records a rule could not evaluate;
//   - missing_rate: the share of missing cells among the analysable, non-key
//     variables of the subject and visit tables, over the unit's rows (site,
//     subject) or the variable's rows;
//   - signal_count: flags from the site tests and duplicates: for a site its
//     flagged relationship and distribution tests plus its subjects in
//     flagged duplicate pairs; for a subject its flagged duplicate pairs; for a
//     variable the flagged tests that involve it.
func (r *Report) score(tables []*dataset.Table, checks []CheckRecord) {
	type acc struct {
		site                  string
		disc, ne, miss, cells float64
		signals, nonMissing   float64
		subjects              float64
		known                 bool
	}
	sites, subjects, vars := map[string]*acc{}, map[string]*acc{}, map[string]*acc{}
	get := func(m map[string]*acc, k string) *acc {
		a := m[k]
		if a == nil {
			a = &acc{}
			m[k] = a
		}
		return a
	}
	for _, s := range r.Sites {
		get(sites, s).known = true
	}
	for _, s := range r.SubjectSigs {
		a := get(subjects, s.Subject)
		a.site, a.known = s.Site, true
		get(sites, s.Site).subjects++
		a.signals = float64(s.DuplicatePairs)
		if s.DuplicatePairs > 0 {
			get(sites, s.Site).signals++
		}
	}
	for _, t := range tables {
		var subj *dataset.Column
		if len(t.Keys) > 0 {
			subj = t.Col(t.Keys[0])
		}
		for _, c := range t.Cols {
			if t.IsKey(c.Name) || !c.Type.Analysable() {
				continue
			}
			v := get(vars, c.Name)
			v.known = true
			for i := range t.NRows {
				miss := 0.0
				if c.Missing(i) {
					miss = 1
				}
				v.miss += miss
				v.cells++
				v.nonMissing += 1 - miss
				st := get(sites, t.SiteOf(i))
				st.miss += miss
				st.cells++
				if subj != nil {
					sj := get(subjects, subj.String(i))
					sj.miss += miss
					sj.cells++
				}
			}
		}
	}
	for _, x := range r.Relations {
		if x.Flag {
			get(sites, x.Site).signals++
			get(vars, x.X).signals++
			get(vars, x.Y).signals++
		}
	}
	for _, x := range r.Shifts {
		if x.Flag {
			get(sites, x.Site).signals++
			get(vars, x.Var).signals++
		}
	}
	for _, c := range checks {
		for _, a := range []*acc{get(sites, c.Site), get(subjects, c.Subject), get(vars, c.Variable)} {
			if c.NotEvaluable {
				a.ne++
			} else {
				a.disc++
			}
		}
		if sj := get(subjects, c.Subject); sj.site == "" {
			sj.site = c.Site
		}
	}
	delete(vars, "")
	delete(subjects, "")
	nSubj := float64(max(1, len(r.SubjectSigs)))
	build := func(unit string, m map[string]*acc) {
		var in []ScoreInput
		for id, a := range m {
			if id == "" && unit == UnitSite && a.cells == 0 {
				continue
			}
			den := 1.0
			switch unit {
			case UnitSite:
				den = a.subjects
			case UnitVariable:
				den = a.nonMissing
				if !a.known {
					den = nSubj
				}
			}
			rate := func(x float64) float64 {
				if den == 0 {
					return math.NaN()
				}
				return x / den
			}
			missing := math.NaN()
			if a.cells > 0 {
				missing = a.miss / a.cells
			}
			in = append(in, ScoreInput{ID: id, Site: a.site, Values: []float64{rate(a.disc), rate(a.ne), missing, a.signals}})
		}
		slices.SortFunc(in, func(a, b ScoreInput) int { return compareStrings(a.ID, b.ID) })
		sc, ref := ScoreUnits(unit, in)
		r.Scores = append(r.Scores, sc...)
		r.References = append(r.References, ref)
	}
	build(UnitSite, sites)
	build(UnitSubject, subjects)
	build(UnitVariable, vars)
}

func compareStrings(a, b string) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}
