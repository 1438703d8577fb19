package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/cluster"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
)

// defaultLevels returns the levels rules are proposed at: subject, visit and
// the AE records for an SDTM study; the table itself otherwise.
func defaultLevels(s *dataset.Study) []string {
	if !s.IsSDTM() {
		if len(s.Tables) == 1 {
			return []string{"table:" + s.Tables[0].Name}
		}
		return nil
	}
	lv := []string{"subject", "visit"}
	if s.Table("AE") != nil {
		lv = append(lv, "record:AE")
	}
	return lv
}

// shapeLevel returns the study's table at level lv ("table:NAME" included).
func shapeLevel(s *dataset.Study, lv string, infer dataset.InferOptions) (*dataset.Table, error) {
	l, err := dataset.ParseLevel(lv)
	if err != nil {
		return nil, usageError{err}
	}
	t, _, err := s.Shape(l, dataset.ShapeOptions{Infer: infer})
	if err != nil {
		return nil, err
	}
	return t, nil
}

// hintsOf turns an association matrix into proposer hints.
func hintsOf(m *assoc.Matrix) []rules.Hint {
	var h []rules.Hint
	for i := range m.Pairs {
		p := &m.Pairs[i]
		if p.Skip != assoc.NotSkipped {
			continue
		}
		h = append(h, rules.Hint{A: m.Names[p.I], B: m.Names[p.J], Measure: p.Measure.String(), Strength: p.Strength, Q: p.Q})
	}
	return h
}

// clustersOf clusters the matrix's variables (average linkage, cut at the
// default strength) for the proposer's per-cluster limit: variable → cluster
// number, singletons left out.
func clustersOf(m *assoc.Matrix) (map[string]int, error) {
	in := cluster.Input{Names: m.Names, Strength: m.Dense()}
	tr, err := cluster.Hierarchy(in, cluster.Average)
	if err != nil {
		return nil, err
	}
	part := cluster.Summarize(in, tr.CutStrength(cluster.DefaultMinStrength), 0)
	out := map[string]int{}
	for _, c := range part.Clusters {
		for _, mb := range c.Members {
			out[mb.Name] = c.ID
		}
	}
	return out, nil
}

type proposeOptions struct {
	g        *globalOptions
	data     dataFlags
	path     string
	rules    string
	levels   string
	by       string
	top      int
	json     bool
	noAssoc  bool
	ctx      context.Context
	stdout   io.Writer
	now      time.Time
	proposed []*rules.Rule // filled by proposeRun, for the demo
}

func newProposeCmd(g *globalOptions, runF func(*proposeOptions) error) *cobra.Command {
	o := &proposeOptions{g: g}
	cmd := &cobra.Command{
		Use:   "propose PATH --rules FILE",
		Short: "Propose cross-variable consistency rules with their evidence into a YAML rule set",
		Long: `propose measures every variable pair's association at each level, turns
strong associations and the data into candidate rules (order, implies, band,
derived, presence, group_range, visit_change, cutoff) with their evidence
(records judged, support, violations, example records, confidence), and merges
them into the rule set FILE (created if absent) as "proposed". Proposals are
ranked by their expected value to a reviewer and limited per variable (6) and
per cluster of related variables (20), so that one large group cannot crowd
out the rest.

Merging never loses a decision: accepted, rejected and retired rules keep
their status and history, their evidence is refreshed, a rejected rule is never
proposed again, and hand-written rules and comments are kept. The file is
saved atomically and refused if it changed since it was read.

A proposal describes a pattern in this extract, not clinical truth: every
rule needs a reviewer's decision (crossform decide) before the checker uses it.`,
		Example: `  crossform propose demo/extract-1 --rules rules.yaml
  crossform propose visits.csv --keys SUBJ,VISIT --rules rules.yaml --top 20`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if o.rules == "" {
				return usageError{errors.New("--rules FILE is required")}
			}
			if runF != nil {
				return runF(o)
			}
			return proposeRun(o)
		},
	}
	o.data.register(cmd)
	f := cmd.Flags()
	f.StringVar(&o.rules, "rules", "", "rule set `FILE` (YAML) to merge the proposals into")
	f.StringVar(&o.levels, "levels", "", "levels to propose at, comma-separated (default: subject, visit, record:AE for SDTM; the table otherwise)")
	f.StringVar(&o.by, "by", "crossform", "name recorded as proposer in each new rule's history")
	f.IntVar(&o.top, "top", 30, "proposals listed per level in the summary (all are saved)")
	f.BoolVar(&o.json, "json", false, "write the proposals as JSON instead of a text summary")
	f.BoolVar(&o.noAssoc, "no-associations", false, "propose from the data alone, without association hints")
	return cmd
}

func proposeRun(o *proposeOptions) error {
	s, err := o.data.open(o.path)
	if err != nil {
		return err
	}
	opts, _ := o.data.options()
	levels := splitList(o.levels)
	if levels == nil {
		if levels = defaultLevels(s); levels == nil {
			return usageError{fmt.Errorf("%s holds %d tables and no SDTM DM table: choose levels with --levels table:NAME", o.path, len(s.Tables))}
		}
	}
	rs, err := rules.LoadOrNew(o.rules)
	if err != nil {
		return err
	}
	if o.now.IsZero() {
		o.now = time.Now().UTC()
	}
	var all []*rules.Rule
	for _, lv := range levels {
		t, err := shapeLevel(s, lv, opts.CSV.Infer)
		if err != nil {
			return err
		}
		var hints []rules.Hint
		var clusters map[string]int
		if !o.noAssoc {
			m, err := computeMatrix(o.ctx, o.g, t, assoc.Options{})
			if err != nil {
				return err
			}
			hints = hintsOf(m)
			if clusters, err = clustersOf(m); err != nil {
				return err
			}
		}
		fp := rules.Fingerprint(t)
		props, err := rules.Propose(t, lv, hints, rules.ProposeOptions{Fingerprint: fp, Now: o.now, By: o.by, Clusters: clusters})
		if err != nil {
			return fmt.Errorf("proposing at %s level: %w", lv, err)
		}
		rep := rules.Merge(rs, props, fp)
		o.g.log.Info("proposed", "level", lv, "rules", len(props), "new", len(rep.Added), "refreshed", len(rep.Refreshed), "hand_written_kept", len(rep.Skipped))
		all = append(all, props...)
	}
	if err := rs.Save(); err != nil {
		return err
	}
	o.proposed = all
	if o.json {
		return render.RulesJSON(o.stdout, all)
	}
	fmt.Fprintf(o.stdout, "%d rules proposed into %s (candidates: each needs a reviewer's decision)\n", len(all), o.rules)
	return render.RulesText(o.stdout, topPerLevel(all, levels, o.top))
}

func topPerLevel(rs []*rules.Rule, levels []string, n int) []*rules.Rule {
	var out []*rules.Rule
	for _, lv := range levels {
		k := 0
		for _, r := range rs {
			if r.Level == lv && (n <= 0 || k < n) {
				out = append(out, r)
				k++
			}
		}
	}
	return out
}

type decideOptions struct {
	g      *globalOptions
	action string
	ids    []string
	rules  string
	by     string
	note   string
	filter rules.Filter
	status string
	stdout io.Writer
}

func newDecideCmd(g *globalOptions, runF func(*decideOptions) error) *cobra.Command {
	o := &decideOptions{g: g}
	cmd := &cobra.Command{
		Use:   "decide accept|reject|retire [ID...] --rules FILE --by NAME --note TEXT",
		Short: "Record reviewers' decisions on rules: accept, reject or retire, with who and why",
		Long: `decide records a decision on each named rule, or on every rule a filter
selects (--kind, --level, --status, --var, --min-confidence), appending it to
the rule's history with the reviewer's name, the UTC time and the note. Only
accepted rules are run by the checker. A rejected rule is never proposed
again; a retired rule stops being checked. Histories are never rewritten.`,
		Example: `  crossform decide accept order-3f9a1c2b7e --rules rules.yaml --by "A. Reviewer" --note "per DVP item 4.2"
  crossform decide reject --kind band --level visit --rules rules.yaml --by "A. Reviewer" --note "clinically expected"`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) < 1 {
				return usageError{errors.New("want an action: accept, reject or retire")}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			o.action, o.ids, o.stdout = args[0], args[1:], cmd.OutOrStdout()
			switch o.action {
			case "accept", "reject", "retire":
			default:
				return usageError{fmt.Errorf("unknown action %q (want accept, reject or retire)", o.action)}
			}
			if o.rules == "" || o.by == "" {
				return usageError{errors.New("--rules FILE and --by NAME are required")}
			}
			if o.status != "" {
				st, err := rules.ParseStatus(o.status)
				if err != nil {
					return usageError{err}
				}
				o.filter.Status = st
			}
			if len(o.ids) == 0 && o.filter == (rules.Filter{}) {
				return usageError{errors.New("name rule ids or a filter (--kind, --level, --status, --var, --min-confidence)")}
			}
			if len(o.ids) > 0 && o.filter != (rules.Filter{}) {
				return usageError{errors.New("give rule ids or a filter, not both")}
			}
			if runF != nil {
				return runF(o)
			}
			return decideRun(o)
		},
	}
	f := cmd.Flags()
	f.StringVar(&o.rules, "rules", "", "rule set `FILE` (YAML)")
	f.StringVar(&o.by, "by", "", "reviewer's name, recorded in the history")
	f.StringVar(&o.note, "note", "", "why, recorded in the history")
	f.StringVar(&o.filter.Kind, "kind", "", "bulk: rules of this kind")
	f.StringVar(&o.filter.Level, "level", "", "bulk: rules at this level")
	f.StringVar(&o.status, "status", "", "bulk: rules with this status")
	f.StringVar(&o.filter.Var, "var", "", "bulk: rules reading this variable")
	f.Float64Var(&o.filter.MinConfidence, "min-confidence", 0, "bulk: rules whose evidence confidence is at least this")
	return cmd
}

// decideAttempts bounds how often decideRun reloads the rule set after
// another process saved it between our load and our save (rules.ErrConflict).
const decideAttempts = 20

// decideRun loads the rule set, applies the decision and saves it. When the
// file changed on disk in between (another reviewer's decision landed first),
// it reloads and applies the decision again to the new content, so the file
// is never overwritten blindly and non-conflicting decisions all land; after
// decideAttempts tries it gives up with the conflict error.
func decideRun(o *decideOptions) error {
	var ids []string
	var err error
	for attempt := 1; ; attempt++ {
		ids, err = decideOnce(o)
		if err == nil || !errors.Is(err, rules.ErrConflict) || attempt == decideAttempts {
			break
		}
		time.Sleep(time.Duration(attempt*(5+rand.IntN(20))) * time.Millisecond)
	}
	if err != nil {
		return err
	}
	fmt.Fprintf(o.stdout, "%s: %d rules (%s)\n", pastTense(o.action), len(ids), strings.Join(ids, ", "))
	return nil
}

// decideOnce is one load–decide–save round of decideRun.
func decideOnce(o *decideOptions) ([]string, error) {
	rs, err := rules.Load(o.rules)
	if err != nil {
		return nil, err
	}
	ids := o.ids
	if len(ids) == 0 {
		if ids = rules.Select(rs, o.filter); len(ids) == 0 {
			return nil, fmt.Errorf("no rule in %s matches the filter", o.rules)
		}
	}
	if err := rules.Decide(rs, ids, o.action, o.by, o.note, time.Now().UTC()); err != nil {
		return nil, err
	}
	return ids, rs.Save()
}

func pastTense(a string) string {
	switch a {
	case "accept":
		return "accepted"
	case "reject":
		return "rejected"
	}
	return "retired"
}

type rulesOptions struct {
	g      *globalOptions
	data   dataFlags
	file   string
	path   string
	json   bool
	status string
	stdout io.Writer
}

func newRulesCmd(g *globalOptions) *cobra.Command {
	cmd := &cobra.Command{
		Use:     "rules",
		Short:   "Inspect and lint a YAML rule set",
		Example: "  crossform rules list rules.yaml --status accepted\n  crossform rules lint rules.yaml --data demo/extract-1",
	}
	lo := &rulesOptions{g: g}
	lint := &cobra.Command{
		Use:   "lint FILE [--data PATH]",
		Short: "Check a rule set: schema, duplicate ids, unknown kinds, bad expressions, variables absent from the data",
		Long: `lint reads a rule set and reports every problem with its YAML line: schema
errors, duplicate ids, unknown kinds, expressions that do not compile, and,
with --data, variables absent from the data at the rule's level. It exits 1
when it finds an error (warnings alone exit 0).`,
		Example: "  crossform rules lint rules.yaml --data demo/extract-1",
		Args:    exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			lo.file, lo.stdout = args[0], cmd.OutOrStdout()
			return lintRun(lo)
		},
	}
	lo.data.register(lint)
	lint.Flags().StringVar(&lo.path, "data", "", "study `PATH` whose variables the rules must find")
	lint.Flags().BoolVar(&lo.json, "json", false, "write the issues as JSON")

	li := &rulesOptions{g: g}
	list := &cobra.Command{
		Use:     "list FILE",
		Short:   "List the rules of a rule set with their status and evidence",
		Example: "  crossform rules list rules.yaml --status proposed --json",
		Args:    exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			li.file, li.stdout = args[0], cmd.OutOrStdout()
			rs, err := rules.Load(li.file)
			if err != nil {
				return err
			}
			var sel []*rules.Rule
			for _, r := range rs.Rules {
				if li.status == "" || string(r.Status) == li.status {
					sel = append(sel, r)
				}
			}
			if li.json {
				return render.RulesJSON(li.stdout, sel)
			}
			return render.RulesText(li.stdout, sel)
		},
	}
	list.Flags().StringVar(&li.status, "status", "", "only rules with this status (proposed, accepted, rejected, retired)")
	list.Flags().BoolVar(&li.json, "json", false, "write JSON")
	cmd.AddCommand(lint, list)
	return cmd
}

// tablesForRules shapes the study at every level the rules use.
func tablesForRules(s *dataset.Study, rs *rules.RuleSet, infer dataset.InferOptions) ([]*dataset.Table, error) {
	seen := map[string]bool{}
	var out []*dataset.Table
	for _, r := range rs.Rules {
		if seen[r.Level] {
			continue
		}
		seen[r.Level] = true
		t, err := shapeLevel(s, r.Level, infer)
		if err != nil {
			return nil, fmt.Errorf("rule %s: level %q: %w", r.ID, r.Level, err)
		}
		t.Level = r.Level
		out = append(out, t)
	}
	return out, nil
}

func lintRun(o *rulesOptions) error {
	rs, err := rules.Load(o.file)
	if err != nil {
		return err
	}
	var tables []*dataset.Table
	if o.path != "" {
		s, err := o.data.open(o.path)
		if err != nil {
			return err
		}
		opts, _ := o.data.options()
		if tables, err = tablesForRules(s, rs, opts.CSV.Infer); err != nil {
			return err
		}
	}
	issues := rules.Lint(rs, tables...)
	errorsFound := 0
	for _, is := range issues {
		if !is.Warning {
			errorsFound++
		}
	}
	if o.json {
		if err := render.LintJSON(o.stdout, issues); err != nil {
			return err
		}
	} else {
		for _, is := range issues {
			fmt.Fprintln(o.stdout, is.Error())
		}
		fmt.Fprintf(o.stdout, "%s: %d rules, %d errors, %d warnings\n", o.file, len(rs.Rules), errorsFound, len(issues)-errorsFound)
	}
	if errorsFound > 0 {
		return errFindings
	}
	return nil
}
