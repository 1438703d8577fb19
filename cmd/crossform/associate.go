package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
)

type associateOptions struct {
	g           *globalOptions
	data        dataFlags
	path        string
	json        bool
	text        bool
	out         string
	minStrength float64
	maxQ        float64
	top         int
	vars        string
	minPairs    int
	workers     int
	ctx         context.Context
	stdout      io.Writer
}

func newAssociateCmd(g *globalOptions, runF func(*associateOptions) error) *cobra.Command {
	o := &associateOptions{g: g}
	cmd := &cobra.Command{
		Use:   "associate PATH",
		Short: "Measure the association of every variable pair with the measure that fits the pair",
		Long: `associate computes one association per variable pair, on pairwise-complete
rows: Spearman's rho for two numeric variables (continuous, ordinal with many
levels, full dates as days), Cramér's V for nominal pairs, Somers' D in both
directions for ordinal and binary pairs, and the square root of the
Kruskal–Wallis epsilon-squared for a numeric variable against a nominal one
with more than two levels. Every pair also gets phi between the two
variables' missingness. p-values get Benjamini–Hochberg q-values over all
pairs tested in the run.

It writes the pair table (CSV by default; --json) sorted by strength, and
prints a short summary on stderr: the strongest pairs per measure and the
pairs skipped, by reason.

JSON output: {"rows", "variables", "pairs": [{"a", "b", "type_a", "type_b",
"domain_a", "domain_b", "measure", "estimate", "estimate2", "strength", "se",
"ci_lo", "ci_hi", "p", "q", "n", "skipped", "miss_phi", "miss_q"}],
"excluded": [{"name", "type", "reason"}]}.`,
		Example: `  crossform associate demo/extract-1 --level visit --min-strength 0.3 --top 50
  crossform associate labs.csv --keys SUBJ,VISIT --json --out pairs.json`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if runF != nil {
				return runF(o)
			}
			return associateRun(o)
		},
	}
	o.data.register(cmd)
	f := cmd.Flags()
	f.BoolVar(&o.json, "json", false, "write JSON")
	f.BoolVar(&o.text, "text", false, "write a plain-text table instead of CSV")
	f.StringVarP(&o.out, "out", "o", "", "write to `FILE` instead of stdout")
	f.Float64Var(&o.minStrength, "min-strength", 0, "keep pairs with strength (0–1) at least this")
	f.Float64Var(&o.maxQ, "max-q", 1, "keep pairs with q-value at most this")
	f.IntVar(&o.top, "top", 0, "keep only the N strongest pairs (0: all)")
	f.StringVar(&o.vars, "only", "", "analyse only these variables, `VAR[,VAR...]`")
	f.IntVar(&o.minPairs, "min-pairs", 20, "fewest complete pairs a pair needs to be estimated")
	f.IntVar(&o.workers, "workers", 0, "worker goroutines (default: GOMAXPROCS); results do not depend on it")
	return cmd
}

// computeMatrix runs the all-pairs engine on t with a progress bar on stderr
// for runs that last more than about two seconds.
func computeMatrix(ctx context.Context, g *globalOptions, t *dataset.Table, o assoc.Options) (*assoc.Matrix, error) {
	start := time.Now()
	var bar *progressbar.ProgressBar
	o.Progress = func(done, total int) {
		if g.quiet {
			return
		}
		if bar == nil {
			if time.Since(start) < 2*time.Second {
				return
			}
			bar = progressbar.NewOptions(total, progressbar.OptionSetWriter(g.stderr),
				progressbar.OptionSetDescription("pairs"), progressbar.OptionShowCount(),
				progressbar.OptionThrottle(200*time.Millisecond), progressbar.OptionClearOnFinish())
		}
		bar.Set(done)
	}
	if ctx == nil {
		ctx = context.Background()
	}
	m, err := assoc.AllPairs(ctx, t, o)
	if bar != nil {
		bar.Finish()
	}
	if err != nil {
		return nil, err
	}
	g.log.Info("associations computed", "variables", m.Len(), "pairs", len(m.Pairs), "seconds", fmt.Sprintf("%.2f", time.Since(start).Seconds()))
	return m, nil
}

func splitList(s string) []string {
	if s == "" {
		return nil
	}
	var out []string
	for _, v := range strings.Split(s, ",") {
		if v = strings.TrimSpace(v); v != "" {
			out = append(out, v)
		}
	}
	return out
}

// rankedPairs returns the estimated pairs passing the filters, strongest
// first (ties by variable order).
func rankedPairs(m *assoc.Matrix, minStrength, maxQ float64, top int) []*assoc.Pair {
	var out []*assoc.Pair
	for i := range m.Pairs {
		p := &m.Pairs[i]
		if p.Skip != assoc.NotSkipped || math.IsNaN(p.Strength) || p.Strength < minStrength {
			continue
		}
		if maxQ < 1 && !(p.Q <= maxQ) {
			continue
		}
		out = append(out, p)
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].Strength > out[b].Strength })
	if top > 0 && len(out) > top {
		out = out[:top]
	}
	return out
}

func associateRun(o *associateOptions) error {
	t, _, err := o.data.loadTable(o.path, o.g)
	if err != nil {
		return err
	}
	m, err := computeMatrix(o.ctx, o.g, t, assoc.Options{Vars: splitList(o.vars), MinPairs: o.minPairs, Workers: o.workers})
	if err != nil {
		return err
	}
	pairs := rankedPairs(m, o.minStrength, o.maxQ, o.top)
	if err := writeOut(o.out, o.stdout, func(w io.Writer) error {
		switch {
		case o.json:
			return render.PairsJSON(w, m, pairs)
		case o.text:
			return render.PairsText(w, m, pairs)
		}
		return render.PairsCSV(w, m, pairs)
	}); err != nil {
		return err
	}
	if !o.g.quiet {
		associateSummary(o.g.stderr, m)
	}
	return nil
}

// associateSummary prints the strongest pairs per measure and the skipped
// pairs by reason.
func associateSummary(w io.Writer, m *assoc.Matrix) {
	byMeasure := map[assoc.Measure][]*assoc.Pair{}
	skipped := map[string]int{}
	for i := range m.Pairs {
		p := &m.Pairs[i]
		if p.Skip != assoc.NotSkipped {
			skipped[p.Skip.String()]++
			continue
		}
		byMeasure[p.Measure] = append(byMeasure[p.Measure], p)
	}
	fmt.Fprintf(w, "%d variables, %d pairs (%d rows)\n", m.Len(), len(m.Pairs), m.Rows)
	for meas := assoc.MeasureSpearman; meas <= assoc.MeasureKruskal; meas++ {
		ps := byMeasure[meas]
		if len(ps) == 0 {
			continue
		}
		sort.SliceStable(ps, func(a, b int) bool { return ps[a].Strength > ps[b].Strength })
		fmt.Fprintf(w, "strongest %s pairs (%d estimated):\n", meas, len(ps))
		for _, p := range ps[:min(3, len(ps))] {
			fmt.Fprintf(w, "  %s\n", m.Describe(p))
		}
	}
	var reasons []string
	for r := range skipped {
		reasons = append(reasons, r)
	}
	sort.Strings(reasons)
	for _, r := range reasons {
		fmt.Fprintf(w, "skipped: %d pairs (%s)\n", skipped[r], r)
	}
	for _, e := range m.Excluded {
		fmt.Fprintf(w, "excluded: %s (%s, %s)\n", e.Name, e.Type, e.Reason)
	}
}
