package main

import (
	"context"
	"fmt"
	"io"
	"os"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/dataset/demostudy"
)

type demoDataOptions struct {
	g      *globalOptions
	out    string
	seed   uint64
	clean  bool
	cut    int
	stdout io.Writer
}

func newDemoDataCmd(g *globalOptions, runF func(*demoDataOptions) error) *cobra.Command {
	o := &demoDataOptions{g: g}
	def := demostudy.DefaultConfig()
	cmd := &cobra.Command{
		Use:   "demo-data --out DIR",
		Short: "Write the invented demo study as one CSV file per form, with its ground truth",
		Long: `demo-data writes the built-in demo study: an invented phase II trial of an
oral blood-pressure drug (about 600 subjects at 14 sites), one CSV file per form
(dm, vs, lb, ae, cm, ex, ds, sv) with SDTM variable names, and truth.csv listing
every planted problem (class, domain, subject, site, visit, record key). The
data are deterministic for a given seed. No real subject is represented.`,
		Example: `  crossform demo-data --out demo/
  crossform demo-data --out demo-clean/ --clean
  crossform demo-data --out demo-cut2/ --cut 2`,
		Args: exactArgs(0),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.stdout = cmd.OutOrStdout()
			if o.out == "" {
				return usageError{fmt.Errorf("--out DIR is required")}
			}
			if runF != nil {
				return runF(o)
			}
			return demoDataRun(o)
		},
	}
	cmd.Flags().StringVarP(&o.out, "out", "o", "", "folder to write the study to (created if needed)")
	cmd.Flags().Uint64Var(&o.seed, "seed", def.Seed, "random seed")
	cmd.Flags().BoolVar(&o.clean, "clean", false, "plant no problems")
	cmd.Flags().IntVar(&o.cut, "cut", 1, "data cut: 1 = first extract, 2 = a later extract of the same study")
	return cmd
}

func demoDataRun(o *demoDataOptions) error {
	cfg := demostudy.DefaultConfig()
	cfg.Seed, cfg.Clean, cfg.Cut = o.seed, o.clean, o.cut
	st, err := demostudy.Generate(cfg)
	if err != nil {
		return usageError{err}
	}
	if err := os.MkdirAll(o.out, 0o755); err != nil {
		return err
	}
	if err := st.WriteCSV(o.out); err != nil {
		return err
	}
	o.g.log.Info("demo study written", "dir", o.out, "planted_problems", len(st.Truth))
	return nil
}

type demoOptions struct {
	g       *globalOptions
	out     string
	clean   bool
	verbose bool
	ctx     context.Context
	stdout  io.Writer
	summary *demoSummary // filled by demoRun, for tests
}

func newDemoCmd(g *globalOptions, runF func(*demoOptions) error) *cobra.Command {
	o := &demoOptions{g: g}
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Run crossform end to end on the built-in invented demo study",
		Long: `demo runs the whole job on the built-in invented demo study (a fictional
phase II trial of an oral blood-pressure drug, about 600 subjects at 14 sites,
with a few planted problems): it generates the first extract, profiles every
variable, measures every pair's association and clusters the variables at
visit and subject level, proposes rules, accepts the proposals whose
confidence is at least 0.90 as reviewer "demo" (a real study's reviewers
decide each rule themselves), checks the extract, looks for site and subject
signals, writes the HTML report, then generates a later extract (some problems
fixed, new subjects, visits and problems) and checks it against the first
listing to show what is new, persisting and resolved.

Everything is written under --out; the last lines say where. With --verbose
the summary adds the recall of every planted problem class.`,
		Example: `  crossform demo
  crossform demo --out /tmp/crossform-demo --verbose`,
		Args: exactArgs(0),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.stdout, o.ctx, o.verbose = cmd.OutOrStdout(), cmd.Context(), g.verbose
			if runF != nil {
				return runF(o)
			}
			return demoRun(o)
		},
	}
	cmd.Flags().StringVarP(&o.out, "out", "o", "crossform-demo", "folder for the demo study and results")
	cmd.Flags().BoolVar(&o.clean, "clean", false, "generate the study without planted problems (to see false alarms)")
	return cmd
}
