package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/cluster"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/demo"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/review"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// demoConfidence is the least evidence confidence of a proposal that the demo
// accepts on the reviewer's behalf.
const demoConfidence = 0.90

// demoReviewer and demoNote are recorded in the history of every rule the
// demo accepts.
const (
	demoReviewer = "demo"
	demoNote     = "accepted automatically for the demonstration (confidence ≥ 0.90); in a real study a reviewer decides each rule"
)

// demoSummary is what the demo found, for its closing lines and tests.
type demoSummary struct {
	variables, pairs, clusters int
	proposed, accepted         int
	bySeverity                 map[rules.Severity]int
	flaggedSites               []string
	dupGroups                  int
	classes                    check.ClassCounts
	recall                     []demo.ClassRecall
	flagged, records           int
	report, ruleSet, listing1  string
	listing2                   string
}

func demoRun(o *demoOptions) error {
	start := time.Now()
	step, steps := 0, 10
	stage := func(msg string) {
		step++
		fmt.Fprintf(o.g.stderr, "crossform demo [%d/%d] %s\n", step, steps, msg)
	}
	if err := os.MkdirAll(o.out, 0o755); err != nil {
		return err
	}
	sum := &demoSummary{bySeverity: map[rules.Severity]int{}}
	o.summary = sum
	ex1, ex2 := filepath.Join(o.out, "extract-1"), filepath.Join(o.out, "extract-2")

	stage("generating the invented demo study (first extract) in " + ex1)
	cfg := demostudy.DefaultConfig()
	cfg.Clean = o.clean
	st1, err := generateDemo(cfg, ex1)
	if err != nil {
		return err
	}
	d := dataFlags{encoding: "utf-8"}
	s1, err := d.open(ex1)
	if err != nil {
		return err
	}

	stage("profiling every variable → profile.csv")
	if err := writeFileAtomic(filepath.Join(o.out, "profile.csv"), func(w io.Writer) error {
		return writeProfile(w, s1, false, true)
	}); err != nil {
		return err
	}

	stage("measuring every pair's association and clustering (visit and subject level)")
	for _, level := range []string{"visit", "subject"} {
		t, err := shapeLevel(s1, level, dataset.InferOptions{})
		if err != nil {
			return err
		}
		m, err := computeMatrix(o.ctx, o.g, t, assoc.Options{})
		if err != nil {
			return err
		}
		co := &clusterOptions{minStrength: cluster.DefaultMinStrength, linkage: "average", depStrength: 0.3, depQ: 0.01}
		r, err := clusterCompute(t, m, co)
		if err != nil {
			return err
		}
		if err := writeClusterFiles(o.ctx, filepath.Join(o.out, "clusters-"+level), r, co); err != nil {
			return err
		}
		if err := writeFileAtomic(filepath.Join(o.out, "pairs-"+level+".csv"), func(w io.Writer) error {
			return render.PairsCSV(w, m, rankedPairs(m, 0, 1, 0))
		}); err != nil {
			return err
		}
		sum.variables += m.Len()
		sum.pairs += len(m.Pairs)
		sum.clusters += len(r.part.Clusters)
	}

	stage("proposing rules → rules.yaml")
	sum.ruleSet = filepath.Join(o.out, "rules.yaml")
	if err := os.Remove(sum.ruleSet); err != nil && !os.IsNotExist(err) {
		return err
	}
	po := &proposeOptions{g: o.g, path: ex1, rules: sum.ruleSet, ctx: o.ctx, stdout: io.Discard, data: d, top: 0}
	if err := proposeRun(po); err != nil {
		return err
	}
	sum.proposed = len(po.proposed)

	stage(fmt.Sprintf("accepting proposals with confidence ≥ %.2f as reviewer %q", demoConfidence, demoReviewer))
	rs, err := rules.Load(sum.ruleSet)
	if err != nil {
		return err
	}
	ids := rules.Select(rs, rules.Filter{Status: rules.StatusProposed, MinConfidence: demoConfidence})
	if len(ids) > 0 {
		if err := rules.Decide(rs, ids, "accept", demoReviewer, demoNote, time.Now().UTC()); err != nil {
			return err
		}
		if err := rs.Save(); err != nil {
			return err
		}
	}
	sum.accepted = len(ids)

	stage("checking the first extract → listing-1.csv")
	sum.listing1 = filepath.Join(o.out, "listing-1.csv")
	res1, err := demoCheck(o, ex1, sum.ruleSet, sum.listing1, "", "1")
	if err != nil {
		return err
	}
	for _, f := range res1.Findings {
		sum.bySeverity[f.Severity]++
	}
	sum.flagged, sum.records = demo.FalseAlarmRate(res1)

	stage("looking for site and subject signals → signals/")
	rep, err := signalsCompute(o.ctx, s1, review.CheckRecords(res1))
	if err != nil {
		return err
	}
	if err := writeSignalFiles(filepath.Join(o.out, "signals"), rep, false); err != nil {
		return err
	}
	for _, ss := range rep.SiteSignals {
		if ss.Flagged {
			sum.flaggedSites = append(sum.flaggedSites, ss.Site)
		}
	}
	if rep.Duplicates != nil {
		sum.dupGroups = len(rep.Duplicates.Groups)
	}
	sum.recall = demo.Recall(st1.Truth, res1.Findings, rep)

	stage("writing the report")
	sum.report = filepath.Join(o.out, "report.html")
	if err := reportRun(&reportOptions{g: o.g, data: d, in: reviewInputFlags{rules: sum.ruleSet, acceptedOnly: true},
		path: ex1, out: sum.report, title: "Demo study CFX-201 (invented)", ctx: o.ctx, stdout: io.Discard}); err != nil {
		return err
	}

	stage("generating a later extract (some problems fixed, new subjects, visits and problems) in " + ex2)
	cfg.Cut = 2
	if _, err := generateDemo(cfg, ex2); err != nil {
		return err
	}

	stage("checking the later extract against the first listing → listing-2.csv")
	sum.listing2 = filepath.Join(o.out, "listing-2.csv")
	res2, err := demoCheck(o, ex2, sum.ruleSet, sum.listing2, sum.listing1, "2")
	if err != nil {
		return err
	}
	if res2.Classes != nil {
		sum.classes = *res2.Classes
	}
	fmt.Fprintf(o.g.stderr, "crossform demo: done in %.1f s\n", time.Since(start).Seconds())
	return demoPrintSummary(o.stdout, sum, o.verbose)
}

func generateDemo(cfg demostudy.Config, dir string) (*demostudy.Study, error) {
	st, err := demostudy.Generate(cfg)
	if err != nil {
		return nil, err
	}
	if err := os.RemoveAll(dir); err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	return st, st.WriteCSV(dir)
}

// demoCheck runs the checker as `crossform check` would, writing the listing,
// the manifest and the summaries, and returns the result.
func demoCheck(o *demoOptions, dir, ruleSet, listing, previous, n string) (*check.Result, error) {
	co := &checkOptions{g: &globalOptions{quiet: true, log: o.g.log, stderr: io.Discard}, path: dir, rules: ruleSet,
		previous: previous, format: "csv", out: listing, failOn: "minor", allowUnevaluable: true,
		manifest: filepath.Join(o.out, "manifest-"+n+".json"), summaryDir: filepath.Join(o.out, "summary-"+n),
		ctx: o.ctx, stdout: io.Discard, flags: map[string]string{"rules": ruleSet}}
	co.data.encoding = "utf-8"
	if err := checkRun(co); err != nil && err != errFindings {
		return nil, err
	}
	return co.result, nil
}

func demoPrintSummary(w io.Writer, s *demoSummary, verbose bool) error {
	sevs := []string{}
	for _, sv := range []rules.Severity{rules.Critical, rules.Major, rules.Minor} {
		sevs = append(sevs, fmt.Sprintf("%s %d", sv, s.bySeverity[sv]))
	}
	sites := "none"
	if len(s.flaggedSites) > 0 {
		sort.Strings(s.flaggedSites)
		sites = strings.Join(s.flaggedSites, ", ")
	}
	fmt.Fprintf(w, "variables: %d analysed, %d pairs measured, %d clusters\n", s.variables, s.pairs, s.clusters)
	fmt.Fprintf(w, "rules: %d proposed, %d accepted for the demonstration\n", s.proposed, s.accepted)
	fmt.Fprintf(w, "discrepancies (first extract): %s\n", strings.Join(sevs, ", "))
	fmt.Fprintf(w, "signals: sites flagged %s; %d group(s) of near-identical subjects\n", sites, s.dupGroups)
	fmt.Fprintf(w, "later extract: new %d, persisting %d (changed %d), resolved %d\n", s.classes.New, s.classes.Persisting, s.classes.Changed, s.classes.Resolved)
	if verbose {
		fmt.Fprintln(w, "planted-problem recall (first extract):")
		rows := [][]string{}
		for _, r := range s.recall {
			rows = append(rows, []string{r.Class, fmt.Sprint(r.Planted), fmt.Sprint(r.ByRules), fmt.Sprint(r.BySigs), fmt.Sprint(r.Caught), fmt.Sprintf("%.0f%%", 100*r.Rate())})
		}
		if err := render.TextTable(w, []string{"class", "planted", "by_rules", "by_signals", "caught", "recall"}, rows, 40); err != nil {
			return err
		}
		fmt.Fprintf(w, "records flagged: %d of %d (%.2f%%)\n", s.flagged, s.records, 100*float64(s.flagged)/float64(max(1, s.records)))
	}
	fmt.Fprintf(w, "report: %s\nrule set: %s\nlistings: %s, %s\n", s.report, s.ruleSet, s.listing1, s.listing2)
	_, err := fmt.Fprintln(w, "Everything above is a candidate for review: people decide, under the study's data validation plan.")
	return err
}
