package main

import (
	"context"
	"fmt"
	"io"
	"time"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/review"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// reviewInputFlags are the options report and review share.
type reviewInputFlags struct {
	rules        string
	previous     string
	acceptedOnly bool
	noSignals    bool
	workers      int
}

func (f *reviewInputFlags) register(cmd *cobra.Command) {
	fl := cmd.Flags()
	fl.StringVar(&f.rules, "rules", "", "rule set `FILE` (YAML) whose rules are shown (required)")
	fl.StringVar(&f.previous, "previous", "", "previous listing `FILE` (.csv or .json) to class discrepancies as new, persisting or resolved")
	fl.BoolVar(&f.acceptedOnly, "accepted-only", false, "run only accepted rules for the discrepancy section (default: proposed rules too, as a preview)")
	fl.BoolVar(&f.noSignals, "no-signals", false, "leave out the Sites section (site tests, near-identical subjects, quality scores), which takes a few seconds on a large study")
	fl.IntVar(&f.workers, "workers", 0, "worker goroutines (default: GOMAXPROCS); results do not depend on it")
}

// buildReport reads the study and the rule set and computes the report data.
func buildReport(ctx context.Context, g *globalOptions, d *dataFlags, path string, f *reviewInputFlags, now time.Time) (*render.ReportData, *rules.RuleSet, error) {
	if f.rules == "" {
		return nil, nil, usageError{fmt.Errorf("--rules FILE is required")}
	}
	s, err := d.open(path)
	if err != nil {
		return nil, nil, err
	}
	for _, w := range s.Warnings {
		g.log.Warn(w)
	}
	rs, err := rules.Load(f.rules)
	if err != nil {
		return nil, nil, err
	}
	o, _ := d.options()
	in := review.Input{Study: s, RuleSet: rs, Levels: splitList(d.level), IncludeProposed: !f.acceptedOnly,
		ToolVersion: toolVersion(), Now: now, Workers: f.workers, Signals: !f.noSignals}
	in.Shape.Infer = o.CSV.Infer
	if f.previous != "" {
		prev, err := check.ReadListing(f.previous)
		if err != nil {
			return nil, nil, err
		}
		if prev == nil {
			prev = []check.Finding{}
		}
		in.Previous, in.PreviousPath = prev, f.previous
	}
	if ctx == nil {
		ctx = context.Background()
	}
	start := time.Now()
	data, err := review.Build(ctx, in)
	if err != nil {
		return nil, nil, err
	}
	g.log.Info("report computed", "rules", len(rs.Rules), "tables", len(data.Tables), "seconds", fmt.Sprintf("%.2f", time.Since(start).Seconds()))
	return data, rs, nil
}

type reportOptions struct {
	g      *globalOptions
	data   dataFlags
	in     reviewInputFlags
	path   string
	out    string
	title  string
	now    time.Time // zero: time.Now(); set by tests
	ctx    context.Context
	stdout io.Writer
}

func newReportCmd(g *globalOptions, runF func(*reportOptions) error) *cobra.Command {
	o := &reportOptions{g: g}
	cmd := &cobra.Command{
		Use:   "report PATH --rules FILE --out FILE",
		Short: "Write the reviewer's report: one self-contained HTML file",
		Long: `report writes one HTML file for the reviewers of a rule set: an overview of
the extract and the rule set, the variables of each analysed table (sortable,
filterable), their associations (ordered heatmap, cluster graphs, strong
dependencies across forms), one card per rule with its evidence, a figure that
shows why and example flagged records, and the discrepancies the rules raise
by rule and by site (sites that stand out are flagged), classed new,
persisting or resolved when --previous names an earlier listing, and a Sites
section (site relationship and distribution tests, near-identical subjects,
quality scores, with a figure per flagged site; --no-signals leaves it out).

The file carries its styles, script and figures inline and loads nothing from
a network, so it can be opened from disk or sent by email. It contains study
data: keep it within the study team. Its bytes depend only on the inputs,
except the time of the run printed in it.

--level may name several tables, comma-separated (e.g. visit,subject); by
default the levels the rule set's rules use are analysed.`,
		Example: `  crossform report demo/extract-1 --rules rules.yaml --out report.html
  crossform report demo/extract-2 --rules rules.yaml --previous listing-1.csv --accepted-only --out report-2.html`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if o.in.rules == "" {
				return usageError{fmt.Errorf("--rules FILE is required")}
			}
			if runF != nil {
				return runF(o)
			}
			return reportRun(o)
		},
	}
	o.data.register(cmd)
	o.in.register(cmd)
	f := cmd.Flags()
	f.StringVarP(&o.out, "out", "o", "", "write the report to `FILE` (default or \"-\": stdout)")
	f.StringVar(&o.title, "title", "", "title of the report (default \"crossform review report\")")
	return cmd
}

func reportRun(o *reportOptions) error {
	data, _, err := buildReport(o.ctx, o.g, &o.data, o.path, &o.in, o.now)
	if err != nil {
		return err
	}
	data.Title = o.title
	if err := writeOut(o.out, o.stdout, func(w io.Writer) error {
		return render.ReportHTML(w, data, render.ReportOptions{})
	}); err != nil {
		return err
	}
	if o.out != "" && o.out != "-" {
		o.g.log.Info("report written", "file", o.out)
	}
	return nil
}
