package check

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
)

// Options control Run.
type Options struct {
	// IncludeProposed also runs proposed rules, to preview what accepting them
	// would raise; their findings carry RuleStatus "proposed".
	IncludeProposed bool
	// Table returns the table a level's rules run on ("subject", "visit",
	// "record:AE", "table"). When nil, Run shapes the study itself (Shape).
	// An error from Table makes that level's rules not evaluable, with the
	// error as the reason.
	Table func(level string) (*dataset.Table, error)
	// ShapeOptions are passed to Study.Shape when Table is nil.
	ShapeOptions dataset.ShapeOptions
	// Workers bounds the goroutines evaluating rules; ≤ 0 means GOMAXPROCS.
	// The result never depends on it.
	Workers int
	// Sites configures the site screening test.
	Sites SiteTestOptions

	// ToolVersion, Parameters and Inputs go into the Manifest: the version
	// of the program, the run's parameters as the user gave them (flag name
	// → value), and input files to hash besides the study's tables and the
	// rule set (a variables file, Define-XML).
	ToolVersion string
	Parameters  map[string]string
	Inputs      []string
	// Now returns the run time for the manifest; nil means time.Now. It is
	// converted to UTC.
	Now func() time.Time
}

// A Finding is one discrepancy: one record that fails one rule.
type Finding struct {
	// Key identifies the discrepancy across extracts: RuleID, "|", RecordKey.
	Key        string         `json:"key"`
	RuleID     string         `json:"rule_id"`
	Kind       string         `json:"kind"`
	Severity   rules.Severity `json:"severity"`
	RuleStatus rules.Status   `json:"rule_status"`
	Level      string         `json:"level"`
	Site       string         `json:"site"`
	Subject    string         `json:"subject"`
	// Visit is VISITNUM as display text and VisitLabel VISIT, "" when the
	// rule's table has none.
	Visit      string `json:"visit"`
	VisitLabel string `json:"visit_label"`
	// Domain is the source domain: the record's domain for record-level
	// rules, else the domains the rule's variables come from, comma-separated.
	Domain string `json:"domain"`
	// Seq is the record's --SEQ where the table has one ("" otherwise); it
	// helps find the record in this extract but is not part of Key.
	Seq string `json:"seq"`
	// RecordKey is the natural key of the record (NaturalKey), written
	// "VAR=value;VAR=value" with '\', ';', '=', '|' and '#' escaped by '\'.
	RecordKey string `json:"record_key"`
	// Vars and Values are the variables the rule reads and their values in
	// this record ("" when missing), in the rule's order. Vars is shared
	// with the rule and among its findings: do not modify it.
	Vars   []string `json:"vars"`
	Values []string `json:"values"`
	// Query is the rule's query text with the values filled in.
	Query string `json:"query"`
	// Detail says why the record failed when the rule can tell (which side
	// of a band, the previous visit's value); never part of the query.
	Detail string `json:"detail,omitempty"`

	// Class, Changed and Previous are set by Classify: the discrepancy's
	// class against the previous listing, whether its values changed, and
	// the previous values when they did.
	Class    Class    `json:"class,omitempty"`
	Changed  bool     `json:"changed,omitempty"`
	Previous []string `json:"previous_values,omitempty"`

	// Row is the 0-based row in the table the rule ran on; −1 for a finding
	// read back from a listing.
	Row int `json:"-"`
}

// Unevaluable is a rule that could not run on this extract at all.
type Unevaluable struct {
	RuleID   string         `json:"rule_id"`
	Kind     string         `json:"kind"`
	Level    string         `json:"level"`
	Severity rules.Severity `json:"severity"`
	Reason   string         `json:"reason"`
}

// RuleSummary counts one rule's verdicts.
type RuleSummary struct {
	RuleID   string         `json:"rule_id"`
	Kind     string         `json:"kind"`
	Level    string         `json:"level"`
	Severity rules.Severity `json:"severity"`
	Status   rules.Status   `json:"status"`
	// Evaluable is false when the rule could not run (see Reason); all
	// counts are then 0 and Rate NaN.
	Evaluable bool   `json:"evaluable"`
	Reason    string `json:"reason,omitempty"`
	// Records is the number of rows of the rule's table; Evaluated those
	// judged Pass or Fail; NotEvaluable those the rule could not judge
	// (Records = Evaluated + NotEvaluable).
	Records      int `json:"records"`
	Evaluated    int `json:"evaluated"`
	Violations   int `json:"violations"`
	NotEvaluable int `json:"not_evaluable"`
	// Rate is Violations / Evaluated, NaN when Evaluated is 0.
	Rate float64 `json:"rate"`
}

// SiteSummary counts one site's records and discrepancies and gives its
// screening test.
type SiteSummary struct {
	Site string `json:"site"`
	// Subjects is the number of distinct subjects of the site in the tables
	// the evaluable rules ran on; Records the number of rows of those tables
	// (each table counted once, however many rules ran on it).
	Subjects int `json:"subjects"`
	Records  int `json:"records"`
	// Evaluations counts rule×record pairs judged Pass or Fail, Violations
	// those judged Fail; Rate is Violations / Evaluations (NaN when 0).
	Evaluations int     `json:"evaluations"`
	Violations  int     `json:"violations"`
	Rate        float64 `json:"rate"`
	// PerSubject is Violations / Subjects (NaN when no subject).
	PerSubject float64 `json:"per_subject"`
	// New and Persisting count the site's discrepancies by class after
	// Result.Compare (0 before).
	New        int `json:"new"`
	Persisting int `json:"persisting"`
	// BySeverity counts the violations by rule severity.
	BySeverity map[rules.Severity]int `json:"by_severity"`
	// Test is the screening test against the other sites (SiteTest).
	Test SiteTestResult `json:"test"`
}

// TableInfo describes the table of one level the rules ran on.
type TableInfo struct {
	Level string   `json:"level"`
	Name  string   `json:"name"`
	Rows  int      `json:"rows"`
	Key   []string `json:"key"`   // natural key columns (NaturalKey)
	Rules int      `json:"rules"` // rules bound to the table
	// Error says why the level could not be shaped ("" when it was); its
	// rules are then all in Result.NotEvaluable.
	Error string `json:"error,omitempty"`
	// Report is Study.Shape's account of the shaping (nil when
	// Options.Table supplied the table), for the caller to show.
	Report *dataset.ShapeReport `json:"-"`
}

// Result is the outcome of Run.
type Result struct {
	// Findings are sorted by site, subject, visit (numerically when both
	// parse as numbers), rule id and record key.
	Findings []Finding `json:"findings"`
	// NotEvaluable lists the rules that could not run, sorted by rule id.
	NotEvaluable []Unevaluable `json:"not_evaluable"`
	// Rules has one summary per rule run (accepted, plus proposed when asked),
	// sorted by rule id; Sites one per site, sorted by site.
	Rules  []RuleSummary `json:"rules"`
	Sites  []SiteSummary `json:"sites"`
	Tables []TableInfo   `json:"tables"`
	// Resolved and Classes are set by Compare: the previous listing's
	// discrepancies no longer firing, and the counts by class (nil before).
	Resolved []Finding    `json:"resolved,omitempty"`
	Classes  *ClassCounts `json:"classes,omitempty"`
	// Warnings are rules.Lint's warnings about the rule set (unknown keys, a
	// rule without severity, which counts as minor).
	Warnings []string `json:"warnings"`
	// Manifest records the run; Classify results are added by the caller
	// (Manifest.SetClasses).
	Manifest *Manifest `json:"-"`
}

// AtOrAbove returns the number of findings whose severity is sev or higher
// (critical > major > minor).
func (r *Result) AtOrAbove(sev rules.Severity) int {
	n := 0
	for i := range r.Findings {
		if r.Findings[i].Severity.Rank() >= sev.Rank() {
			n++
		}
	}
	return n
}

// level holds what Run needs of one shaped table.
type level struct {
	name    string
	t       *dataset.Table
	err     error // shaping failed: rules at this level are not evaluable
	keyCols []string
	keys    []string // record key per row, built when a rule fails here
	keyOnce sync.Once
	site    []int32 // index into Run's site list per row, -1 when unknown
	subject *dataset.Column
	visit   *dataset.Column
	visitLb *dataset.Column
	seq     *dataset.Column
	domain  string // for record:DOMAIN levels
	nrules  int
	report  *dataset.ShapeReport
}

type ruleRun struct {
	r      *rules.Rule
	lv     *level
	c      rules.Check
	unev   string
	evals  []int // per site index
	viols  []int
	n, v   int
	ne     int
	fails  []int32 // failing rows
	off    int     // offset of the rule's findings in Result.Findings
	domain string
}

// Run applies every accepted rule of rs (and proposed ones when
// o.IncludeProposed) to study, each on the table of the level it was defined
// on, and returns one Finding per violation with summaries per rule and per
// site. A rule set that fails rules.Lint is refused with a *LintError. A rule
// whose variables are missing or whose types changed is listed in
// Result.NotEvaluable with the reason; a malformed rule (*rules.RuleError) is
// an error. Run checks ctx between rules.
func Run(ctx context.Context, rs *rules.RuleSet, study *dataset.Study, o Options) (*Result, error) {
	lintErrs, lintWarnings := lint(rs)
	if len(lintErrs) > 0 {
		return nil, &LintError{Path: rs.Path, Issues: lintErrs}
	}
	var sel []*rules.Rule
	for _, r := range rs.Rules {
		if r.Status == rules.StatusAccepted || (o.IncludeProposed && r.Status == rules.StatusProposed) {
			sel = append(sel, r)
		}
	}
	slices.SortStableFunc(sel, func(a, b *rules.Rule) int { return cmp.Compare(a.ID, b.ID) })
	tableFor := func(lv string) (*dataset.Table, *dataset.ShapeReport, error) {
		t, err := o.Table(lv)
		return t, nil, err
	}
	if o.Table == nil {
		if study == nil {
			return nil, errors.New("check: no study and no Options.Table")
		}
		tableFor = func(lv string) (*dataset.Table, *dataset.ShapeReport, error) {
			return Shape(study, lv, o.ShapeOptions)
		}
	}

	// Shape each level once.
	levels := map[string]*level{}
	var levelNames []string
	ruleLevel := make([]string, len(sel)) // the level each rule runs on, normalised
	for i, r := range sel {
		ruleLevel[i] = canonicalLevel(r.Level)
		if _, ok := levels[ruleLevel[i]]; !ok {
			levels[ruleLevel[i]] = nil
			levelNames = append(levelNames, ruleLevel[i])
		}
	}
	sort.Strings(levelNames)
	sites := newSiteIndex(study)
	for _, name := range levelNames {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		lv := &level{name: name}
		t, rep, err := tableFor(name)
		lv.report = rep
		switch {
		case err != nil:
			lv.err = err
		case t == nil:
			lv.err = fmt.Errorf("no table for level %q", name)
		default:
			lv.init(t, sites)
		}
		levels[name] = lv
	}

	runs := make([]*ruleRun, len(sel))
	for i, r := range sel {
		lv := levels[ruleLevel[i]]
		rr := &ruleRun{r: r, lv: lv}
		runs[i] = rr
		if lv.err != nil {
			rr.unev = fmt.Sprintf("level %q: %v", r.Level, lv.err)
			continue
		}
		c, err := rules.Bind(r, lv.t)
		var ue *rules.UnevaluableError
		switch {
		case errors.As(err, &ue):
			rr.unev = ue.Reason
			continue
		case err != nil:
			if rs.Path != "" {
				return nil, fmt.Errorf("%s: %w", rs.Path, err)
			}
			return nil, err
		}
		rr.c = c
		rr.domain = ruleDomain(r, lv)
		lv.nrules++
	}

	nsites := sites.n()
	if err := parallel(ctx, runs, o.Workers, func(rr *ruleRun) { rr.eval(nsites) }); err != nil {
		return nil, err
	}
	// Findings are built once, in place, each rule into its own segment.
	total := 0
	for _, rr := range runs {
		rr.off = total
		total += len(rr.fails)
	}
	findings := make([]Finding, total)
	if err := parallel(ctx, runs, o.Workers, func(rr *ruleRun) { rr.fill(findings[rr.off:rr.off+len(rr.fails)], sites) }); err != nil {
		return nil, err
	}
	res := assemble(runs, levels, levelNames, sites, o)
	res.Findings = findings
	SortFindings(res.Findings)
	res.Warnings = lintWarnings
	m, err := newManifest(rs, study, res, o)
	if err != nil {
		return nil, err
	}
	res.Manifest = m
	return res, nil
}

// init records what Run needs of t.
func (lv *level) init(t *dataset.Table, sites *siteIndex) {
	lv.t = t
	lv.keyCols = NaturalKey(t, lv.name)
	lv.subject = t.Col(colSubject)
	if lv.subject == nil && len(t.Keys) > 0 {
		lv.subject = t.Col(t.Keys[0])
	}
	lv.visit = t.Col(colVisit)
	lv.visitLb = t.Col(colVisitLb)
	if d, ok := strings.CutPrefix(lv.name, "record:"); ok {
		lv.domain = strings.ToUpper(d)
		lv.seq = t.Col(lv.domain + "SEQ")
	}
	lv.site = make([]int32, t.NRows)
	siteCol := t.Col(t.Site)
	if siteCol == nil {
		siteCol = t.Col(colSite)
	}
	for i := range lv.site {
		s, known := "", false
		if siteCol != nil {
			s, known = siteCol.String(i), true
		} else if lv.subject != nil {
			s, known = sites.bySubject[lv.subject.String(i)]
		}
		if !known {
			lv.site[i] = -1
			continue
		}
		lv.site[i] = sites.id(s)
	}
}

func (lv *level) recordKey(row int) string {
	lv.keyOnce.Do(func() { lv.keys = recordKeys(lv.t, lv.keyCols) })
	return lv.keys[row]
}

func str(c *dataset.Column, row int) string {
	if c == nil {
		return ""
	}
	return c.String(row)
}

// ruleDomain is the source domain of r's findings.
func ruleDomain(r *rules.Rule, lv *level) string {
	if lv.domain != "" {
		return lv.domain
	}
	var ds []string
	for _, v := range r.Vars {
		if c := lv.t.Col(v); c != nil && c.Prov.Domain != "" && !contains(ds, c.Prov.Domain) {
			ds = append(ds, c.Prov.Domain)
		}
	}
	if len(ds) == 0 {
		return lv.t.Name
	}
	sort.Strings(ds)
	return strings.Join(ds, ",")
}

// parallel calls f on every bound rule of runs, up to workers at a time,
// checking ctx before each.
func parallel(ctx context.Context, runs []*ruleRun, workers int, f func(*ruleRun)) error {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	jobs := make(chan *ruleRun)
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for rr := range jobs {
				f(rr)
			}
		}()
	}
	var err error
	for _, rr := range runs {
		if rr.c == nil {
			continue
		}
		if err = ctx.Err(); err != nil {
			break
		}
		jobs <- rr
	}
	close(jobs)
	wg.Wait()
	return err
}

// eval judges every row of the rule's table, counting verdicts per site and
// keeping the failing rows.
func (rr *ruleRun) eval(nsites int) {
	lv := rr.lv
	rr.evals = make([]int, nsites)
	rr.viols = make([]int, nsites)
	for i := 0; i < lv.t.NRows; i++ {
		v := rr.c.Eval(i)
		s := lv.site[i]
		switch v {
		case rules.Pass:
			rr.n++
			if s >= 0 {
				rr.evals[s]++
			}
		case rules.Fail:
			rr.n++
			rr.v++
			if s >= 0 {
				rr.evals[s]++
				rr.viols[s]++
			}
			rr.fails = append(rr.fails, int32(i))
		default:
			rr.ne++
		}
	}
}

// fill writes the rule's findings into dst (len(dst) == len(rr.fails)).
func (rr *ruleRun) fill(dst []Finding, sites *siteIndex) {
	lv, r := rr.lv, rr.r
	ex, _ := rr.c.(rules.Explainer)
	sev := severity(r)
	for k, row := range rr.fails {
		i := int(row)
		vals := rr.c.Values(i)
		if len(vals) != len(r.Vars) { // keep Vars and Values parallel whatever the kind returns
			v := make([]string, len(r.Vars))
			copy(v, vals)
			vals = v
		}
		rk := lv.recordKey(i)
		f := &dst[k]
		*f = Finding{
			Key: r.ID + "|" + rk, RuleID: r.ID, Kind: r.Kind, Severity: sev, RuleStatus: r.Status,
			Level: r.Level, Subject: str(lv.subject, i), Visit: str(lv.visit, i), VisitLabel: str(lv.visitLb, i),
			Domain: rr.domain, Seq: str(lv.seq, i), RecordKey: rk,
			Vars: r.Vars, Values: vals, Query: rules.FillQuery(r, r.Vars, vals), Row: i,
		}
		if s := lv.site[i]; s >= 0 {
			f.Site = sites.names[s]
		}
		if ex != nil {
			f.Detail = ex.Explain(i)
		}
	}
	rr.fails = nil
}

// assemble builds the Result from the evaluated rules.
func assemble(runs []*ruleRun, levels map[string]*level, levelNames []string, sites *siteIndex, o Options) *Result {
	res := &Result{NotEvaluable: []Unevaluable{}}
	ns := sites.n()
	evals, viols := make([]int, ns), make([]int, ns)
	bySev := make([]map[rules.Severity]int, ns)
	for i := range bySev {
		bySev[i] = map[rules.Severity]int{}
	}
	for _, rr := range runs {
		r := rr.r
		s := RuleSummary{RuleID: r.ID, Kind: r.Kind, Level: r.Level, Severity: severity(r), Status: r.Status, Rate: math.NaN()}
		if rr.c == nil {
			s.Reason = rr.unev
			res.NotEvaluable = append(res.NotEvaluable, Unevaluable{RuleID: r.ID, Kind: r.Kind, Level: r.Level, Severity: severity(r), Reason: rr.unev})
			res.Rules = append(res.Rules, s)
			continue
		}
		s.Evaluable = true
		s.Records = rr.lv.t.NRows
		s.Evaluated, s.Violations, s.NotEvaluable = rr.n, rr.v, rr.ne
		if rr.n > 0 {
			s.Rate = float64(rr.v) / float64(rr.n)
		}
		res.Rules = append(res.Rules, s)
		for k := range ns {
			evals[k] += rr.evals[k]
			viols[k] += rr.viols[k]
			if rr.viols[k] > 0 {
				bySev[k][severity(r)] += rr.viols[k]
			}
		}
	}
	// Subjects and records per site, over the tables evaluable rules ran on.
	subjects := make([]map[string]struct{}, ns)
	records := make([]int, ns)
	for i := range subjects {
		subjects[i] = map[string]struct{}{}
	}
	for _, name := range levelNames {
		lv := levels[name]
		if lv.err != nil {
			res.Tables = append(res.Tables, TableInfo{Level: name, Error: lv.err.Error()})
			continue
		}
		res.Tables = append(res.Tables, TableInfo{Level: name, Name: lv.t.Name, Rows: lv.t.NRows, Key: lv.keyCols, Rules: lv.nrules, Report: lv.report})
		if lv.nrules == 0 {
			continue
		}
		for i, s := range lv.site {
			if s < 0 {
				continue
			}
			records[s]++
			if lv.subject != nil {
				subjects[s][lv.subject.String(i)] = struct{}{}
			}
		}
	}
	counts := make([]SiteCount, ns)
	for k := range ns {
		counts[k] = SiteCount{Site: sites.names[k], Subjects: len(subjects[k]), Evaluations: evals[k], Violations: viols[k]}
	}
	tests := SiteTest(counts, o.Sites)
	for k := range ns {
		if records[k] == 0 {
			continue // a site known only from DM, with no record in any table checked
		}
		s := SiteSummary{Site: sites.names[k], Subjects: counts[k].Subjects, Records: records[k],
			Evaluations: evals[k], Violations: viols[k], Rate: math.NaN(), PerSubject: math.NaN(), BySeverity: bySev[k], Test: tests[k]}
		if evals[k] > 0 {
			s.Rate = float64(viols[k]) / float64(evals[k])
		}
		if s.Subjects > 0 {
			s.PerSubject = float64(viols[k]) / float64(s.Subjects)
		}
		res.Sites = append(res.Sites, s)
	}
	slices.SortFunc(res.Sites, func(a, b SiteSummary) int { return cmp.Compare(a.Site, b.Site) })
	return res
}

// SortFindings sorts fs by site, subject, visit (numerically when both
// parse as numbers), rule id, record key and key: the order of every
// listing. Findings are moved once (an index sort, then the permutation
// applied in place), so sorting a million findings stays cheap.
func SortFindings(fs []Finding) {
	n := len(fs)
	idx := make([]int32, n)
	vnum := make([]float64, n)
	for i := range fs {
		idx[i] = int32(i)
		vnum[i] = math.NaN()
		if x, err := strconv.ParseFloat(fs[i].Visit, 64); err == nil {
			vnum[i] = x
		}
	}
	slices.SortFunc(idx, func(i, j int32) int {
		a, b := &fs[i], &fs[j]
		return cmp.Or(
			cmp.Compare(a.Site, b.Site),
			cmp.Compare(a.Subject, b.Subject),
			compareVisit(a.Visit, b.Visit, vnum[i], vnum[j]),
			cmp.Compare(a.RuleID, b.RuleID),
			cmp.Compare(a.RecordKey, b.RecordKey),
			cmp.Compare(a.Key, b.Key),
			cmp.Compare(i, j),
		)
	})
	// Apply the permutation: position k receives fs[idx[k]], cycle by cycle.
	for k := range n {
		if idx[k] < 0 {
			continue
		}
		tmp := fs[k]
		j := k
		for {
			src := int(idx[j])
			idx[j] = -1
			if src == k {
				fs[j] = tmp
				break
			}
			fs[j] = fs[src]
			j = src
		}
	}
}

// compareVisit orders visits numerically when both parse (x, y; NaN when
// not), "" first, else as text.
func compareVisit(a, b string, x, y float64) int {
	if a == b {
		return 0
	}
	if !math.IsNaN(x) && !math.IsNaN(y) && x != y {
		return cmp.Compare(x, y)
	}
	return cmp.Compare(a, b)
}

// siteIndex numbers the sites seen, and maps subjects to sites from DM for
// tables that carry no site column.
type siteIndex struct {
	names     []string
	ids       map[string]int32
	bySubject map[string]string
}

func newSiteIndex(study *dataset.Study) *siteIndex {
	s := &siteIndex{ids: map[string]int32{}, bySubject: map[string]string{}}
	if study == nil {
		return s
	}
	if dm := study.Table("DM"); dm != nil {
		subj, site := dm.Col(colSubject), dm.Col(colSite)
		if subj != nil && site != nil {
			for i := 0; i < dm.NRows; i++ {
				s.bySubject[subj.String(i)] = site.String(i)
			}
		}
	}
	return s
}

func (s *siteIndex) id(name string) int32 {
	if k, ok := s.ids[name]; ok {
		return k
	}
	k := int32(len(s.names))
	s.ids[name] = k
	s.names = append(s.names, name)
	return k
}

func (s *siteIndex) n() int { return len(s.names) }
