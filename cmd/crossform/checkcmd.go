package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

type checkOptions struct {
	g                *globalOptions
	data             dataFlags
	path             string
	rules            string
	includeProposed  bool
	previous         string
	format           string
	out              string
	failOn           string
	allowUnevaluable bool
	manifest         string
	summaryDir       string
	bySite           bool
	ctx              context.Context
	stdout           io.Writer
	flags            map[string]string
	result           *check.Result // filled by checkRun, for the demo
}

func newCheckCmd(g *globalOptions, runF func(*checkOptions) error) *cobra.Command {
	o := &checkOptions{g: g}
	cmd := &cobra.Command{
		Use:   "check PATH --rules FILE",
		Short: "Rerun the accepted rules on an extract and list every discrepancy",
		Long: `check applies every accepted rule of FILE (and the proposed ones with
--include-proposed, to preview them) to the extract at the level each rule was
defined on, and writes a discrepancy listing: one row per violation with a
stable key (rule id + the record's natural key), severity, site, subject,
visit, domain, the values involved and the query text with the values filled
in. Listings are CSV (default), JSON, or an Excel workbook (--format xlsx, one
sheet per severity or --by-site, needs --out).

Summaries per rule and per site go to stderr (and to --summary DIR as CSV and
JSON); sites whose discrepancy rate stands out from the other sites' pooled
rate are flagged (exact binomial test, Benjamini–Hochberg across sites).
With --previous LISTING each discrepancy is classed new, persisting (changed
when its values differ) or resolved.

Nothing silently passes: a rule whose variables are missing from the extract
or whose types changed is reported as not evaluable and fails the run unless
--allow-unevaluable; records a rule cannot judge are counted as not evaluable.
A rule set that fails lint is refused.

Exit codes: 0 no discrepancy at or above --fail-on, 1 there is one, 2 usage
or input error. A discrepancy is a candidate for a data query; whether a query
is raised is decided by data management under the data validation plan.`,
		Example: `  crossform check demo/extract-2 --rules rules.yaml --previous listing-1.csv --out listing-2.csv --manifest run.json
  crossform check extract/ --rules rules.yaml --format xlsx --out listing.xlsx --fail-on critical`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if o.rules == "" {
				return usageError{errors.New("--rules FILE is required")}
			}
			if o.format == "xlsx" && (o.out == "" || o.out == "-") {
				return usageError{errors.New("--format xlsx needs --out FILE")}
			}
			o.flags = map[string]string{}
			cmd.Flags().Visit(func(f *pflag.Flag) { o.flags[f.Name] = f.Value.String() })
			if runF != nil {
				return runF(o)
			}
			return checkRun(o)
		},
	}
	o.data.register(cmd)
	f := cmd.Flags()
	f.StringVar(&o.rules, "rules", "", "rule set `FILE` (YAML)")
	f.BoolVar(&o.includeProposed, "include-proposed", false, "also run proposed rules (preview)")
	f.StringVar(&o.previous, "previous", "", "previous listing `FILE` (CSV or JSON) to class discrepancies as new, persisting or resolved")
	f.StringVar(&o.format, "format", "csv", "listing format: "+strings.Join(render.ListingFormats(), ", "))
	f.StringVarP(&o.out, "out", "o", "", "write the listing to `FILE` instead of stdout")
	f.StringVar(&o.failOn, "fail-on", "minor", "exit 1 when a discrepancy has this severity or higher: critical, major or minor")
	f.BoolVar(&o.allowUnevaluable, "allow-unevaluable", false, "do not fail when a rule cannot be evaluated on this extract")
	f.StringVar(&o.manifest, "manifest", "", "write a run manifest `FILE` (JSON): tool version, input and rule-set SHA-256, time, counts")
	f.StringVar(&o.summaryDir, "summary", "", "write rule and site summaries (CSV and JSON) to `DIR`")
	f.BoolVar(&o.bySite, "by-site", false, "xlsx: one sheet per site instead of per severity")
	return cmd
}

func checkRun(o *checkOptions) error {
	failOn, err := rules.ParseSeverity(o.failOn)
	if err != nil {
		return usageError{err}
	}
	s, err := o.data.open(o.path)
	if err != nil {
		return err
	}
	rs, err := rules.Load(o.rules)
	if err != nil {
		return err
	}
	opts, _ := o.data.options()
	var inputs []string
	for _, p := range []string{o.data.vars, o.data.define} {
		if p != "" {
			inputs = append(inputs, p)
		}
	}
	res, err := check.Run(o.ctx, rs, s, check.Options{IncludeProposed: o.includeProposed, ToolVersion: toolVersion(),
		Parameters: o.flags, Inputs: inputs, ShapeOptions: dataset.ShapeOptions{Infer: opts.CSV.Infer}})
	if err != nil {
		var le *check.LintError
		if errors.As(err, &le) {
			for _, is := range le.Issues {
				fmt.Fprintln(o.g.stderr, is.Error())
			}
		}
		return err
	}
	o.result = res
	if o.previous != "" {
		prev, err := check.ReadListing(o.previous)
		if err != nil {
			return err
		}
		if _, err := res.Compare(prev, o.previous); err != nil {
			return err
		}
	}
	listing := render.NewListing(res)
	xo := render.XLSXOptions{BySite: o.bySite}
	if o.out == "" || o.out == "-" {
		if err := render.WriteListing(o.stdout, o.format, listing, xo); err != nil {
			return err
		}
	} else if err := render.WriteListingFile(o.out, o.format, listing, xo); err != nil {
		return err
	}
	w := o.g.stderr
	for _, wn := range res.Warnings {
		o.g.log.Warn(wn)
	}
	fmt.Fprintf(w, "%d discrepancies from %d rules (candidates for data queries; people decide)\n", len(res.Findings), len(res.Rules))
	if err := render.RuleSummaryText(w, res.Rules); err != nil {
		return err
	}
	if err := render.SiteSummaryText(w, res.Sites); err != nil {
		return err
	}
	if res.Classes != nil {
		if err := render.ClassText(w, *res.Classes); err != nil {
			return err
		}
	}
	if o.summaryDir != "" {
		if err := writeCheckSummaries(o.summaryDir, res); err != nil {
			return err
		}
	}
	if o.manifest != "" {
		if o.out != "" && o.out != "-" {
			if err := res.Manifest.AddOutput(o.out); err != nil {
				return err
			}
		}
		if err := res.Manifest.WriteFile(o.manifest); err != nil {
			return err
		}
	}
	if len(res.NotEvaluable) > 0 {
		fmt.Fprintf(w, "%d rules could not be evaluated on this extract:\n", len(res.NotEvaluable))
		render.NotEvaluableText(w, res.NotEvaluable)
		if !o.allowUnevaluable {
			return fmt.Errorf("%d rules not evaluable (%s); fix the extract or the rule set, or pass --allow-unevaluable", len(res.NotEvaluable), unevaluableIDs(res))
		}
	}
	if n := res.AtOrAbove(failOn); n > 0 {
		fmt.Fprintf(w, "%d discrepancies at or above %s\n", n, failOn)
		return errFindings
	}
	return nil
}

func unevaluableIDs(res *check.Result) string {
	var ids []string
	for _, u := range res.NotEvaluable {
		ids = append(ids, u.RuleID)
	}
	sort.Strings(ids)
	if len(ids) > 5 {
		ids = append(ids[:5], "…")
	}
	return strings.Join(ids, ", ")
}

func writeCheckSummaries(dir string, res *check.Result) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for _, f := range []struct {
		name  string
		write func(io.Writer) error
	}{
		{"rules.csv", func(w io.Writer) error { return render.WriteRuleSummaryCSV(w, res.Rules) }},
		{"rules.json", func(w io.Writer) error { return render.WriteRuleSummaryJSON(w, res.Rules) }},
		{"sites.csv", func(w io.Writer) error { return render.WriteSiteSummaryCSV(w, res.Sites) }},
		{"sites.json", func(w io.Writer) error { return render.WriteSiteSummaryJSON(w, res.Sites) }},
	} {
		if err := writeFileAtomic(filepath.Join(dir, f.name), f.write); err != nil {
			return err
		}
	}
	return nil
}
