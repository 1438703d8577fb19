package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/signals"
)

type signalsOptions struct {
	g      *globalOptions
	data   dataFlags
	path   string
	out    string
	json   bool
	ctx    context.Context
	stdout io.Writer
	checks []signals.CheckRecord
}

func newSignalsCmd(g *globalOptions, runF func(*signalsOptions) error) *cobra.Command {
	o := &signalsOptions{g: g}
	cmd := &cobra.Command{
		Use:   "signals PATH --out DIR",
		Short: "Find sites whose data behave differently, near-identical subjects, and quality scores",
		Long: `signals looks at sites and subjects rather than single records:

  sites.csv         per site and test: within-site relationships of strongly
                    associated pairs against the other sites (Fisher z), and
                    distribution shifts of continuous variables (medians, their
                    ratio, Brunner–Munzel), with Benjamini–Hochberg q-values
  site-summary.csv  one row per site: tests run and flagged, largest median ratio
  subjects.csv      per subject: nearest other subject (robust Gower distance
                    over the subject-level profile) and its robust z, cluster
  duplicates.csv    pairs of subjects at one site far closer than the study's
                    nearest-neighbour distances predict, with the variables that agree
  scores.csv        quality scores per site, subject and variable, each component shown

An SDTM folder is analysed at subject level and visit level; another single
table is taken as one row per subject (--keys names the subject, --site the
site). A flag is a candidate for review, not a finding of misconduct or error.`,
		Example: `  crossform signals demo/extract-1 --out signals/
  crossform signals subjects.csv --keys SUBJ --site CENTRE --out signals/ --json`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if o.out == "" {
				return usageError{fmt.Errorf("--out DIR is required")}
			}
			if runF != nil {
				return runF(o)
			}
			return signalsRun(o)
		},
	}
	o.data.register(cmd)
	cmd.Flags().StringVarP(&o.out, "out", "o", "", "folder for the outputs (created if needed)")
	cmd.Flags().BoolVar(&o.json, "json", false, "also write signals.json")
	return cmd
}

// signalTables returns the subject-level and visit-level tables of a study.
func signalTables(s *dataset.Study) (subject, visit *dataset.Table, err error) {
	if !s.IsSDTM() {
		if len(s.Tables) != 1 {
			return nil, nil, usageError{fmt.Errorf("signals needs an SDTM folder or a single table with one row per subject")}
		}
		return s.Tables[0], nil, nil
	}
	if subject, _, err = s.Shape(dataset.Level{Kind: dataset.LevelSubject}, dataset.ShapeOptions{}); err != nil {
		return nil, nil, err
	}
	if visit, _, err = s.Shape(dataset.Level{Kind: dataset.LevelVisit}, dataset.ShapeOptions{}); err != nil {
		return nil, nil, err
	}
	return subject, visit, nil
}

func signalsCompute(ctx context.Context, s *dataset.Study, checks []signals.CheckRecord) (*signals.Report, error) {
	subject, visit, err := signalTables(s)
	if err != nil {
		return nil, err
	}
	return signals.Run(ctx, subject, visit, signals.Options{Checks: checks})
}

func signalsRun(o *signalsOptions) error {
	s, err := o.data.open(o.path)
	if err != nil {
		return err
	}
	rep, err := signalsCompute(o.ctx, s, o.checks)
	if err != nil {
		return err
	}
	if err := writeSignalFiles(o.out, rep, o.json); err != nil {
		return err
	}
	return signalsSummary(o.stdout, rep)
}

func writeSignalFiles(dir string, rep *signals.Report, asJSON bool) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for _, f := range []struct {
		name string
		rows [][]string
	}{
		{"sites.csv", signals.SitesCSV(rep)},
		{"site-summary.csv", signals.SiteSummaryCSV(rep)},
		{"subjects.csv", signals.SubjectsCSV(rep)},
		{"duplicates.csv", signals.DuplicatesCSV(rep)},
		{"scores.csv", signals.ScoresCSV(rep)},
	} {
		rows := f.rows
		if err := writeFileAtomic(filepath.Join(dir, f.name), func(w io.Writer) error {
			return render.CSV(w, rows[0], rows[1:])
		}); err != nil {
			return err
		}
	}
	if asJSON {
		b, err := signals.JSON(rep)
		if err != nil {
			return err
		}
		return writeFileAtomic(filepath.Join(dir, "signals.json"), func(w io.Writer) error {
			_, err := w.Write(b)
			return err
		})
	}
	return nil
}

func signalsSummary(w io.Writer, rep *signals.Report) error {
	flagged := 0
	for _, s := range rep.SiteSignals {
		if s.Flagged {
			flagged++
			fmt.Fprintf(w, "site %s flagged: %d of %d relationship tests, %d of %d distribution tests, %d subjects in near-identical groups",
				s.Site, s.RelationFlags, s.RelationTests, s.ShiftFlags, s.ShiftTests, s.DuplicateSubjects)
			if s.MaxRatioVar != "" {
				fmt.Fprintf(w, " (largest median ratio %.2f, %s)", s.MaxRatio, s.MaxRatioVar)
			}
			fmt.Fprintln(w)
		}
	}
	groups := 0
	if rep.Duplicates != nil {
		groups = len(rep.Duplicates.Groups)
		for _, g := range rep.Duplicates.Groups {
			fmt.Fprintf(w, "near-identical subjects at site %s: %d subjects\n", g.Site, len(g.Rows))
		}
	}
	_, err := fmt.Fprintf(w, "%d subjects, %d sites: %d sites flagged, %d near-identical groups (candidates for review)\n",
		rep.Subjects, len(rep.Sites), flagged, groups)
	return err
}
