package review

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/cluster"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
	"github.com/crossform/crossform/signals"
)

// Cautions are the statements every report and review page opens with
// (EDIT-CHECKS.md §6).
var Cautions = []string{
	"Everything listed here is a candidate for human review. Whether a value is wrong, and whether a query is raised, is decided by data management and clinical judgement under the study's data validation plan.",
	"Rules proposed from associations describe patterns in this extract, not clinical truth: a strong association can be real biology, a unit mix-up or a site artefact, and limits learned from data that contain errors are biased by them. Review every rule before accepting it.",
	"With many variable pairs, some strong associations appear by chance; small sites give unstable estimates.",
	"This report does not replace medical or safety review, the study's edit-check specification, or the checks of the data-capture system. Partial dates and missing values make many records not evaluable: no discrepancy is not proof of correctness.",
	"The report contains study data. Keep it within the study team; associations involving treatment arm or dose can reveal allocation in a blinded study.",
}

// Input is what Build needs to compute a report.
type Input struct {
	Study   *dataset.Study
	RuleSet *rules.RuleSet
	// Levels are the tables to profile and analyse ("visit", "subject",
	// "record:AE", "table:NAME"). nil means the levels the rule set's rules use,
	// in order of first use; with no rules, visit and subject for an SDTM
	// study, else its first table.
	Levels []string
	Shape  dataset.ShapeOptions
	// IncludeProposed runs proposed rules in the checker too, as a preview of
	// what accepting them would raise.
	IncludeProposed bool
	// Previous is a previous listing's discrepancies (check.ReadListing) and
	// PreviousPath its path; nil means no comparison.
	Previous     []check.Finding
	PreviousPath string
	// Fingerprint identifies the extract; "" means the fingerprint of the first
	// analysed table (rules.Fingerprint).
	Fingerprint string
	ToolVersion string
	// Now is the run time; zero means time.Now().
	Now time.Time
	// MinStrength is where the cluster tree is cut (default
	// cluster.DefaultMinStrength).
	MinStrength float64
	// MaxPoints bounds the passing records drawn in one scatter plot (default
	// 1500); flagged records are all drawn, up to 400.
	MaxPoints int
	// Examples is the number of example flagged records per rule (default 5).
	Examples int
	// Workers bounds the goroutines of the association engine and the checker.
	Workers int
	// Signals computes the site and subject signals of package signals for the Sites
	// section (site relationship and distribution tests, near-identical subjects,
	// quality scores counting the checker's findings) when the study is an SDTM folder
	// (subject and visit level) or a single table with one row per subject; otherwise
	// the section says why it is empty.
	Signals bool
}

// Build computes the report for in: each level's table is shaped once, profiled, its
// associations computed and clustered; every rule is bound to its table and evaluated
// for its card and plot; the checker runs the accepted rules (and the proposed ones when
// asked), and its findings are compared with the previous listing when one is given.
func Build(ctx context.Context, in Input) (*render.ReportData, error) {
	if in.Study == nil || in.RuleSet == nil {
		return nil, errors.New("review: Build needs a study and a rule set")
	}
	now := in.Now
	if now.IsZero() {
		now = time.Now()
	}
	in.Now = now
	d := &render.ReportData{
		ToolVersion: in.ToolVersion,
		Generated:   now.UTC(),
		Cautions:    Cautions,
		Study:       studyInfo(in.Study),
		RuleSet:     ruleSetInfo(in.RuleSet),
	}
	tables := newTables(in.Study, in.Shape)
	levels := in.Levels
	if levels == nil {
		levels = defaultLevels(in.Study, in.RuleSet)
	}
	minS := in.MinStrength
	if minS == 0 {
		minS = cluster.DefaultMinStrength
	}
	for _, lv := range levels {
		t, err := tables.get(lv)
		if err != nil {
			return nil, fmt.Errorf("level %s: %w", lv, err)
		}
		rt := render.ReportTable{Level: lv, Name: t.Name, Rows: t.NRows, Profiles: dataset.Profile(t)}
		a, err := associations(ctx, t, minS, in.Workers)
		if err != nil {
			return nil, fmt.Errorf("level %s: %w", lv, err)
		}
		rt.Assoc = a
		d.Tables = append(d.Tables, rt)
	}
	d.Study.Fingerprint = in.Fingerprint
	if d.Study.Fingerprint == "" && len(levels) > 0 {
		if t, err := tables.get(levels[0]); err == nil {
			d.Study.Fingerprint = rules.Fingerprint(t)
		}
	}
	for _, r := range in.RuleSet.Rules {
		d.Proposals = append(d.Proposals, proposal(r, tables, in))
	}
	disc, err := discrepancies(ctx, in, tables)
	if err != nil {
		return nil, err
	}
	d.Discrepancies = disc
	if in.Signals {
		var checks []signals.CheckRecord
		if disc != nil {
			checks = CheckRecords(disc.Result)
		}
		if d.Sites, err = siteSignals(ctx, in, tables, checks); err != nil {
			return nil, err
		}
		if disc != nil && d.Sites.Note == "" {
			d.Sites.Scored = fmt.Sprintf("the %d discrepancies listed in this report", len(disc.Result.Findings))
		}
	}
	return d, nil
}

func studyInfo(s *dataset.Study) render.ReportStudy {
	info := render.ReportStudy{Name: filepath.Base(filepath.Clean(s.Path)), Path: s.Path}
	seen := map[string]bool{}
	for _, t := range s.Tables {
		if t.Source != "" && !seen[t.Source] {
			seen[t.Source] = true
			info.Files = append(info.Files, filepath.Base(t.Source))
		}
	}
	sort.Strings(info.Files)
	if dm := s.Table("DM"); dm != nil {
		subj, sites := map[string]bool{}, map[string]bool{}
		us, site := dm.Col("USUBJID"), dm.Col("SITEID")
		for i := 0; i < dm.NRows; i++ {
			if us != nil && !us.Missing(i) {
				subj[us.String(i)] = true
			}
			if site != nil && !site.Missing(i) {
				sites[site.String(i)] = true
			}
		}
		info.Subjects, info.Sites = len(subj), len(sites)
	}
	return info
}

func ruleSetInfo(rs *rules.RuleSet) render.ReportRuleSet {
	info := render.ReportRuleSet{Path: rs.Path, Hash: rs.Hash()}
	for _, r := range rs.Rules {
		switch r.Status {
		case rules.StatusProposed:
			info.Proposed++
		case rules.StatusAccepted:
			info.Accepted++
		case rules.StatusRejected:
			info.Rejected++
		case rules.StatusRetired:
			info.Retired++
		}
	}
	return info
}

func defaultLevels(s *dataset.Study, rs *rules.RuleSet) []string {
	var out []string
	seen := map[string]bool{}
	for _, r := range rs.Rules {
		if r.Level != "" && !seen[r.Level] {
			seen[r.Level] = true
			out = append(out, r.Level)
		}
	}
	if len(out) > 0 {
		return out
	}
	if s.IsSDTM() {
		return []string{dataset.LevelVisit, dataset.LevelSubject}
	}
	if len(s.Tables) > 0 {
		return []string{"table:" + s.Tables[0].Name}
	}
	return nil
}

// tableCache shapes each level's table once.
type tableCache struct {
	mu    sync.Mutex
	s     *dataset.Study
	o     dataset.ShapeOptions
	byLvl map[string]*dataset.Table
	errs  map[string]error
}

func newTables(s *dataset.Study, o dataset.ShapeOptions) *tableCache {
	return &tableCache{s: s, o: o, byLvl: map[string]*dataset.Table{}, errs: map[string]error{}}
}

func (c *tableCache) get(level string) (*dataset.Table, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if t, ok := c.byLvl[level]; ok {
		return t, nil
	}
	if err, ok := c.errs[level]; ok {
		return nil, err
	}
	var t *dataset.Table
	var err error
	if level == dataset.LevelTable && len(c.s.Tables) == 1 {
		t = c.s.Tables[0] // a single file: its table as read
	} else {
		t, _, err = check.Shape(c.s, level, c.o)
	}
	if err != nil {
		c.errs[level] = err
		return nil, err
	}
	c.byLvl[level] = t
	return t, nil
}

func associations(ctx context.Context, t *dataset.Table, minStrength float64, workers int) (*render.ReportAssoc, error) {
	m, err := assoc.AllPairs(ctx, t, assoc.Options{Workers: workers})
	if err != nil {
		return nil, err
	}
	if m.Len() < 2 {
		return nil, nil
	}
	in := cluster.Input{Names: m.Names, Labels: m.Labels, Groups: m.Domains, Strength: m.Dense()}
	tree, err := cluster.Hierarchy(in, cluster.Average)
	if err != nil {
		return nil, err
	}
	part := cluster.Summarize(in, tree.CutStrength(minStrength), 5)
	a := &render.ReportAssoc{In: in, Tree: tree, Part: part, MinStrength: minStrength, Pairs: len(m.Pairs)}
	vars := make([]cluster.VarInfo, m.Len())
	for i, name := range m.Names {
		v := cluster.VarInfo{Name: name, Domain: m.Domains[i], IsDate: m.Types[i] == dataset.DateTime}
		if c := t.Col(name); c != nil {
			v.TestCode, v.Source, v.Derived = c.Prov.TestCode, c.Prov.Source, c.Prov.Derived
		}
		vars[i] = v
	}
	var pi []cluster.PairInfo
	for k := range m.Pairs {
		p := &m.Pairs[k]
		if p.Skip != assoc.NotSkipped {
			continue
		}
		a.Estimated++
		pi = append(pi, cluster.PairInfo{A: int(p.I), B: int(p.J), Measure: p.Measure.String(), Strength: p.Strength, Q: p.Q})
		a.Edges = append(a.Edges, render.GraphEdge{A: int(p.I), B: int(p.J), Strength: p.Strength, Measure: p.Measure.String()})
	}
	a.Deps = cluster.Dependencies(vars, pi, cluster.DepOptions{})
	return a, nil
}

// proposal evaluates r on its table for its card.
func proposal(r *rules.Rule, tables *tableCache, in Input) render.Proposal {
	p := render.Proposal{Rule: r}
	t, err := tables.get(r.Level)
	if err != nil {
		p.Unevaluable = err.Error()
		return p
	}
	chk, err := rules.Bind(r, t)
	if err != nil {
		var ue *rules.UnevaluableError
		if errors.As(err, &ue) {
			p.Unevaluable = ue.Reason
		} else {
			p.Unevaluable = err.Error()
		}
		return p
	}
	nEx := in.Examples
	if nEx <= 0 {
		nEx = 5
	}
	verdicts := make([]rules.Verdict, t.NRows)
	p.KeyNames = append([]string(nil), t.Keys...)
	for i := 0; i < t.NRows; i++ {
		v := chk.Eval(i)
		verdicts[i] = v
		switch v {
		case rules.Pass:
			p.Pass++
		case rules.Fail:
			p.Fail++
			if len(p.Examples) < nEx {
				vals := chk.Values(i)
				ex := render.Example{Site: t.SiteOf(i), Key: t.RowKey(i), Values: vals, Query: rules.FillQuery(r, r.Vars, vals)}
				if e, ok := chk.(rules.Explainer); ok {
					ex.Detail = e.Explain(i)
				}
				p.Examples = append(p.Examples, ex)
			}
		default:
			p.NotEval++
		}
	}
	p.Plot = plotFor(r, t, chk, verdicts, in)
	return p
}

func discrepancies(ctx context.Context, in Input, tables *tableCache) (*render.ReportDiscrepancies, error) {
	run := len(in.RuleSet.Accepted()) > 0
	if in.IncludeProposed {
		for _, r := range in.RuleSet.Rules {
			if r.Status == rules.StatusProposed {
				run = true
			}
		}
	}
	if !run {
		return nil, nil
	}
	res, err := check.Run(ctx, in.RuleSet, in.Study, check.Options{
		IncludeProposed: in.IncludeProposed,
		Table:           tables.get,
		Workers:         in.Workers,
		ToolVersion:     in.ToolVersion,
		Now:             func() time.Time { return in.Now },
	})
	if err != nil {
		return nil, err
	}
	d := &render.ReportDiscrepancies{IncludesProposed: in.IncludeProposed, Result: res}
	if in.Previous != nil {
		c := check.Classify(res.Findings, in.Previous)
		res.Findings = c.Current
		d.Classes, d.Resolved, d.Previous = &c.Counts, c.Resolved, in.PreviousPath
	}
	return d, nil
}

// CheckRecords turns the checker's findings into the quality-score input of package
// signals: one record per finding and variable the finding is about.
func CheckRecords(res *check.Result) []signals.CheckRecord {
	var out []signals.CheckRecord
	for _, f := range res.Findings {
		for _, v := range f.Vars {
			out = append(out, signals.CheckRecord{Site: f.Site, Subject: f.Subject, Variable: v})
		}
	}
	return out
}

const (
	maxSiteFigures = 4  // figures per flagged site
	maxGroupShown  = 8  // subjects of a near-identical group shown
	maxGroupVars   = 15 // agreeing variables of a group shown
)

// signalTables returns the subject-level and visit-level tables of the study for package
// signals, or a note saying why there are none.
func signalTables(s *dataset.Study, tables *tableCache) (subject, visit *dataset.Table, note string) {
	if s.IsSDTM() {
		var err error
		if subject, err = tables.get(dataset.LevelSubject); err != nil {
			return nil, nil, "Site and subject signals were not computed: subject level: " + err.Error()
		}
		if visit, err = tables.get(dataset.LevelVisit); err != nil {
			return nil, nil, "Site and subject signals were not computed: visit level: " + err.Error()
		}
		return subject, visit, ""
	}
	if len(s.Tables) != 1 {
		return nil, nil, fmt.Sprintf("Site and subject signals need an SDTM folder or a single table with one row per subject; this study has %d tables.", len(s.Tables))
	}
	t, err := tables.get(dataset.LevelTable)
	if err != nil {
		return nil, nil, "Site and subject signals were not computed: " + err.Error()
	}
	if t.Site == "" {
		return nil, nil, fmt.Sprintf("Site and subject signals need a site column; table %q has none (name it with --site).", t.Name)
	}
	if len(t.Keys) > 0 {
		if c := t.Col(t.Keys[0]); c != nil {
			seen := make(map[string]bool, t.NRows)
			for i := range t.NRows {
				k := c.String(i)
				if seen[k] {
					return nil, nil, fmt.Sprintf("Site and subject signals need one row per subject; table %q has more than one row for %s %q.", t.Name, t.Keys[0], k)
				}
				seen[k] = true
			}
		}
	}
	return t, nil, ""
}

// siteSignals runs package signals on the study and lays its results out for the Sites
// section: one row per site (flagged first), and for each flagged site its flagged tests,
// a figure per flagged variable or pair, and its groups of near-identical subjects.
func siteSignals(ctx context.Context, in Input, tables *tableCache, checks []signals.CheckRecord) (*render.ReportSites, error) {
	subject, visit, note := signalTables(in.Study, tables)
	if note != "" {
		return &render.ReportSites{Note: note}, nil
	}
	rep, err := signals.Run(ctx, subject, visit, signals.Options{Checks: checks, Workers: in.Workers})
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		return &render.ReportSites{Note: "Site and subject signals could not be computed: " + err.Error()}, nil
	}
	out := &render.ReportSites{Subjects: rep.Subjects, Profile: len(rep.Profile), MinSiteN: signals.DefaultMinSiteN, Components: signals.Components}
	scores := map[string]signals.Score{}
	for _, sc := range rep.Scores {
		if sc.Unit == signals.UnitSite {
			scores[sc.ID] = sc
		}
	}
	for _, ss := range rep.SiteSignals {
		row := render.SiteRow{SiteSignal: ss, Score: math.NaN()}
		if sc, ok := scores[ss.Site]; ok {
			row.Score, row.Rank, row.Components = sc.Total, sc.Rank, sc.Components
		}
		out.Rows = append(out.Rows, row)
	}
	sort.SliceStable(out.Rows, func(a, b int) bool { return out.Rows[a].Flagged && !out.Rows[b].Flagged })
	byName := map[string]*dataset.Table{}
	for _, t := range []*dataset.Table{subject, visit} {
		if t != nil {
			byName[signalTableName(t)] = t
		}
	}
	maxPts := in.MaxPoints
	if maxPts <= 0 {
		maxPts = 1500
	}
	for _, row := range out.Rows {
		if row.Flagged {
			out.Flagged = append(out.Flagged, flaggedSite(rep, row.Site, byName, subject, maxPts))
		}
	}
	return out, nil
}

// signalTableName is the name package signals gives a table in its results: its level,
// else its name.
func signalTableName(t *dataset.Table) string {
	if t.Level != "" {
		return t.Level
	}
	return t.Name
}

// flaggedSite collects why site is flagged.
func flaggedSite(rep *signals.Report, site string, byName map[string]*dataset.Table, subject *dataset.Table, maxPts int) render.FlaggedSite {
	f := render.FlaggedSite{Site: site}
	figures := 0
	drawn := map[string]bool{}
	draw := func(key string, mk func() render.Plot) {
		if drawn[key] {
			return
		}
		drawn[key] = true
		if figures >= maxSiteFigures {
			f.NotDrawn++
			return
		}
		if p := mk(); p.Shift != nil || p.Scatter != nil {
			f.Figures = append(f.Figures, p)
			figures++
		} else {
			f.NotDrawn++
		}
	}
	for _, x := range rep.Shifts {
		if !x.Flag || x.Site != site {
			continue
		}
		t := byName[x.Table]
		f.Tests = append(f.Tests, render.SiteTest{Kind: "distribution", Table: x.Table, Vars: x.Var, Stratum: stratumLabel(t, x.Stratum),
			N: x.N, NOthers: x.NOthers, Site: x.Median, Others: x.OthersMedian, Ratio: x.Ratio, Effect: x.Effect, Q: x.Q})
		if t != nil {
			draw("shift|"+x.Table+"|"+x.Var, func() render.Plot { return shiftPlot(t, x.Var, site, rep.Shifts) })
		}
	}
	for _, x := range rep.Relations {
		if !x.Flag || x.Site != site {
			continue
		}
		f.Tests = append(f.Tests, render.SiteTest{Kind: "relationship", Table: x.Table, Vars: x.X + " ~ " + x.Y,
			N: x.N, NOthers: x.NOthers, Site: x.Rho, Others: x.RhoOthers, Ratio: math.NaN(), Effect: math.NaN(), Q: x.Q})
		if t := byName[x.Table]; t != nil {
			draw("rel|"+x.Table+"|"+x.X+"|"+x.Y, func() render.Plot { return relationPlot(t, x, maxPts) })
		}
	}
	if rep.Duplicates != nil {
		for _, g := range rep.Duplicates.Groups {
			at := false
			for _, r := range g.Rows {
				at = at || subject.SiteOf(r) == site
			}
			if at {
				f.Groups = append(f.Groups, nearGroup(rep, g, subject))
			}
		}
	}
	return f
}

// stratumLabel turns a stratum of package signals ("VISITNUM=4") into words, with the
// visit's label when t has one: "visit 4 (WEEK 4)".
func stratumLabel(t *dataset.Table, stratum string) string {
	v, ok := strings.CutPrefix(stratum, "VISITNUM=")
	if !ok {
		return stratum
	}
	if t != nil {
		if lbl := visitLabels(t)[v]; lbl != "" && lbl != v {
			return "visit " + v + " (" + lbl + ")"
		}
	}
	return "visit " + v
}

// visitLabels maps each VISITNUM of t (as its display string) to the first VISIT label
// recorded with it.
func visitLabels(t *dataset.Table) map[string]string {
	out := map[string]string{}
	vn, lbl := t.Col("VISITNUM"), t.Col("VISIT")
	if vn == nil || lbl == nil {
		return out
	}
	for i := range t.NRows {
		if vn.Missing(i) || lbl.Missing(i) {
			continue
		}
		if k := vn.String(i); out[k] == "" {
			out[k] = lbl.String(i)
		}
	}
	return out
}

// nearGroup lays out one group of near-identical subjects: its subjects, its pairs, and
// the subjects' values of the variables that agree in any pair, least likely by chance
// first.
func nearGroup(rep *signals.Report, g signals.DuplicateGroup, subject *dataset.Table) render.NearGroup {
	ng := render.NearGroup{ID: g.ID}
	rows := g.Rows
	if len(rows) > maxGroupShown {
		ng.Hidden, rows = len(rows)-maxGroupShown, rows[:maxGroupShown]
	}
	for _, r := range rows {
		ng.Subjects = append(ng.Subjects, rep.SubjectIDs[r])
	}
	type agg struct {
		chance float64
		pairs  int
	}
	vars := map[string]*agg{}
	var names []string
	for _, p := range rep.Duplicates.Pairs {
		if p.Group != g.ID {
			continue
		}
		ng.Pairs = append(ng.Pairs, render.NearPair{A: rep.SubjectIDs[p.A], B: rep.SubjectIDs[p.B], Dist: p.Dist, Z: p.Z, P: p.P,
			Compared: p.Compared, Agree: len(p.Agree)})
		for _, a := range p.Agree {
			v := vars[a.Var]
			if v == nil {
				v = &agg{chance: a.Chance}
				vars[a.Var] = v
				names = append(names, a.Var)
			}
			v.pairs++
		}
	}
	sort.SliceStable(names, func(a, b int) bool {
		va, vb := vars[names[a]], vars[names[b]]
		if va.chance != vb.chance {
			return va.chance < vb.chance
		}
		return names[a] < names[b]
	})
	if len(names) > maxGroupVars {
		names = names[:maxGroupVars]
	}
	for _, n := range names {
		nv := render.NearVar{Name: n, Chance: vars[n].chance, Pairs: vars[n].pairs}
		c := subject.Col(n)
		for _, r := range rows {
			val := ""
			if c != nil && !c.Missing(r) {
				val = c.String(r)
			}
			nv.Values = append(nv.Values, val)
		}
		ng.Vars = append(ng.Vars, nv)
	}
	return ng
}
