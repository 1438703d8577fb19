package main

import (
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
)

type profileOptions struct {
	g      *globalOptions
	data   dataFlags
	path   string
	json   bool
	csv    bool
	out    string
	stdout io.Writer
}

func newProfileCmd(g *globalOptions, runF func(*profileOptions) error) *cobra.Command {
	o := &profileOptions{g: g}
	cmd := &cobra.Command{
		Use:   "profile PATH",
		Short: "Describe every variable: inferred type and why, n, missing, levels, range",
		Long: `profile reads a data file, or a folder read as one study, and prints one
row per variable: its inferred type and the rule that decided it, the number of
values, the share missing, distinct levels, and min/median/max or the most
frequent levels. For an SDTM folder, --level profiles the table as the analysis
sees it (subject, visit, record:DOMAIN); without it every file is profiled as read.

JSON output (--json): {"variables": [{"table", "name", "type", "why", "n",
"missing", "rows", "distinct", "invalid", "min", "median", "max", "top":
[{"level", "count"}], "unit", "label"}]}.`,
		Example: `  crossform profile study/
  crossform profile study/ --level visit --json
  crossform profile vitals.csv --keys SUBJ,VISIT --site CENTRE --json`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout = args[0], cmd.OutOrStdout()
			if runF != nil {
				return runF(o)
			}
			return profileRun(o)
		},
	}
	o.data.register(cmd)
	cmd.Flags().BoolVar(&o.json, "json", false, "write JSON")
	cmd.Flags().BoolVar(&o.csv, "csv", false, "write CSV")
	cmd.Flags().StringVarP(&o.out, "out", "o", "", "write to `FILE` instead of stdout")
	return cmd
}

func profileRun(o *profileOptions) error {
	s, err := o.data.open(o.path)
	if err != nil {
		return err
	}
	for _, w := range s.Warnings {
		o.g.log.Warn(w)
	}
	if o.data.level != "" {
		// Profile the study shaped at the level asked for, as the analysis sees it.
		t, _, err := o.data.loadTable(o.path, o.g)
		if err != nil {
			return err
		}
		s = &dataset.Study{Path: o.path, Tables: []*dataset.Table{t}}
	}
	return writeOut(o.out, o.stdout, func(w io.Writer) error {
		return writeProfile(w, s, o.json, o.csv)
	})
}

func writeProfile(w io.Writer, s *dataset.Study, asJSON, asCSV bool) error {
	var ps []dataset.VarProfile
	for _, t := range s.Tables {
		ps = append(ps, dataset.Profile(t)...)
	}
	switch {
	case asJSON:
		return render.ProfileJSON(w, ps)
	case asCSV:
		return render.ProfileCSV(w, ps)
	}
	for _, t := range s.Tables {
		fmt.Fprintf(w, "# %s: %d rows, %d variables (%s)\n", t.Name, t.NRows, len(t.Cols), t.Source)
	}
	return render.ProfileText(w, ps)
}
