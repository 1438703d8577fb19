package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/cluster"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
)

type clusterOptions struct {
	g           *globalOptions
	data        dataFlags
	path        string
	out         string
	json        bool
	minStrength float64
	auto        bool
	linkage     string
	maxEdges    int
	depStrength float64
	depQ        float64
	graphviz    bool
	ctx         context.Context
	stdout      io.Writer
}

func newClusterCmd(g *globalOptions, runF func(*clusterOptions) error) *cobra.Command {
	o := &clusterOptions{g: g}
	cmd := &cobra.Command{
		Use:   "cluster PATH --out DIR",
		Short: "Group related variables, draw their dependency graphs and list unexpected cross-form dependencies",
		Long: `cluster computes every pair's association strength (0–1, as associate does),
clusters the variables hierarchically on the distance 1 − strength (average
linkage by default; pairs that could not be estimated count as distance 1, no
evidence of relation) and cuts the tree at --min-strength, or where the mean
silhouette is highest with --auto. It writes to DIR:

  clusters.csv      one row per variable: cluster, domain, cohesion
  clusters.json     the same with each cluster's strongest pairs (--json)
  dependencies.csv  strong, significant associations across forms, known-trivial ones ranked last with the reason
  clusters.dot      Graphviz source: one subgraph per cluster
  clusters.svg      the cluster graphs (built-in layout; --graphviz uses an installed dot)
  heatmap.svg       the strength matrix in dendrogram order with cluster boundaries
                    (above 300 variables: heatmap-cluster-N.svg, one per cluster)
  dendrogram.svg    the tree with the cut marked

and prints a short summary on stdout.`,
		Example: `  crossform cluster demo/extract-1 --level subject --out clusters/
  crossform cluster labs.csv --auto --out clusters/ --graphviz`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.path, o.stdout, o.ctx = args[0], cmd.OutOrStdout(), cmd.Context()
			if o.out == "" {
				return usageError{fmt.Errorf("--out DIR is required")}
			}
			if runF != nil {
				return runF(o)
			}
			return clusterRun(o)
		},
	}
	o.data.register(cmd)
	f := cmd.Flags()
	f.StringVarP(&o.out, "out", "o", "", "folder for the outputs (created if needed)")
	f.BoolVar(&o.json, "json", false, "also write clusters.json")
	f.Float64Var(&o.minStrength, "min-strength", cluster.DefaultMinStrength, "cut the tree where clusters' linkage strength falls below this")
	f.BoolVar(&o.auto, "auto", false, "cut where the mean silhouette is highest instead of at --min-strength")
	f.StringVar(&o.linkage, "linkage", "average", "average, single or complete")
	f.IntVar(&o.maxEdges, "max-edges", 0, "most edges drawn in the graph (0: built-in default 400)")
	f.Float64Var(&o.depStrength, "dep-strength", 0.3, "least strength of a listed cross-form dependency")
	f.Float64Var(&o.depQ, "dep-q", 0.01, "largest q-value of a listed cross-form dependency")
	f.BoolVar(&o.graphviz, "graphviz", false, "draw clusters.svg with an installed Graphviz dot instead of the built-in layout")
	return cmd
}

// clusterResult is what the cluster stage produces, for the command and the demo.
type clusterResult struct {
	m     *assoc.Matrix
	in    cluster.Input
	tree  *cluster.Tree
	part  *cluster.Partition
	deps  []cluster.Dependency
	vars  []cluster.VarInfo
	edges []render.GraphEdge
	cut   float64
}

func clusterCompute(t *dataset.Table, m *assoc.Matrix, o *clusterOptions) (*clusterResult, error) {
	meth, err := cluster.ParseMethod(o.linkage)
	if err != nil {
		return nil, usageError{err}
	}
	r := &clusterResult{m: m}
	r.in = cluster.Input{Names: m.Names, Labels: m.Labels, Groups: m.Domains, Strength: m.Dense()}
	if r.tree, err = cluster.Hierarchy(r.in, meth); err != nil {
		return nil, err
	}
	var labels []int
	r.cut = o.minStrength
	if o.auto {
		var h float64
		labels, h, _ = r.tree.CutAuto(0)
		r.cut = 1 - h
	} else {
		labels = r.tree.CutStrength(o.minStrength)
	}
	r.part = cluster.Summarize(r.in, labels, 5)
	r.vars = make([]cluster.VarInfo, m.Len())
	for i, name := range m.Names {
		v := cluster.VarInfo{Name: name, Domain: m.Domains[i], IsDate: m.Types[i] == dataset.DateTime}
		if c := t.Col(name); c != nil {
			v.TestCode, v.Source, v.Derived = c.Prov.TestCode, c.Prov.Source, c.Prov.Derived
		}
		r.vars[i] = v
	}
	var pi []cluster.PairInfo
	for k := range m.Pairs {
		p := &m.Pairs[k]
		if p.Skip != assoc.NotSkipped {
			continue
		}
		pi = append(pi, cluster.PairInfo{A: int(p.I), B: int(p.J), Measure: p.Measure.String(), Strength: p.Strength, Q: p.Q})
		r.edges = append(r.edges, render.GraphEdge{A: int(p.I), B: int(p.J), Strength: p.Strength, Measure: p.Measure.String(),
			Label: edgeLabel(p)})
	}
	r.deps = cluster.Dependencies(r.vars, pi, cluster.DepOptions{MinStrength: o.depStrength, MaxQ: o.depQ})
	return r, nil
}

func edgeLabel(p *assoc.Pair) string {
	sym := map[assoc.Measure]string{assoc.MeasureSpearman: "ρ", assoc.MeasureCramersV: "V",
		assoc.MeasureSomersD: "D", assoc.MeasureKruskal: "ε"}[p.Measure]
	v := p.Estimate
	if p.Measure == assoc.MeasureKruskal || p.Measure == assoc.MeasureCramersV {
		v = p.Strength
	}
	return sym + " " + strconv.FormatFloat(v, 'f', 2, 64)
}

func clusterRun(o *clusterOptions) error {
	t, _, err := o.data.loadTable(o.path, o.g)
	if err != nil {
		return err
	}
	m, err := computeMatrix(o.ctx, o.g, t, assoc.Options{})
	if err != nil {
		return err
	}
	r, err := clusterCompute(t, m, o)
	if err != nil {
		return err
	}
	if err := writeClusterFiles(o.ctx, o.out, r, o); err != nil {
		return err
	}
	return render.ClusterSummaryText(o.stdout, r.in, r.part, r.deps, r.vars, r.cut)
}

func writeClusterFiles(ctx context.Context, dir string, r *clusterResult, o *clusterOptions) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	files := []outFile{
		{"clusters.csv", func(w io.Writer) error { return render.ClustersCSV(w, r.in, r.part) }},
		{"dependencies.csv", func(w io.Writer) error { return render.DependenciesCSV(w, r.vars, r.deps) }},
		{"clusters.dot", func(w io.Writer) error {
			return render.ClusterGraphDOT(w, r.in, r.part, r.edges, render.GraphOptions{MaxEdges: o.maxEdges})
		}},
		{"clusters.svg", func(w io.Writer) error {
			if !o.graphviz {
				return render.ClusterGraphSVG(w, r.in, r.part, r.edges, render.GraphOptions{MaxEdges: o.maxEdges})
			}
			var src bytes.Buffer
			if err := render.ClusterGraphDOT(&src, r.in, r.part, r.edges, render.GraphOptions{MaxEdges: o.maxEdges}); err != nil {
				return err
			}
			return render.ClusterGraphSVGDot(ctx, w, src.Bytes())
		}},
		{"heatmap.svg", func(w io.Writer) error {
			return render.HeatmapSVG(w, r.in, r.tree.Leaves(), r.part, render.HeatmapOptions{Title: "Association strength"})
		}},
		{"dendrogram.svg", func(w io.Writer) error {
			return render.DendrogramSVG(w, r.in, r.tree, r.part, render.DendrogramOptions{ShowCut: true, Cut: 1 - r.cut})
		}},
	}
	if o.json {
		files = append(files, outFile{"clusters.json", func(w io.Writer) error { return render.ClustersJSON(w, r.in, r.part) }})
	}
	if r.in.Len() > heatmapMaxVars {
		// One heatmap of every variable would be unreadable: write one per
		// cluster instead, and the full one is left out.
		files = slices.DeleteFunc(files, func(f outFile) bool {
			return f.name == "heatmap.svg"
		})
		order := r.tree.Leaves()
		for _, c := range r.part.Clusters {
			c := c
			files = append(files, outFile{fmt.Sprintf("heatmap-cluster-%d.svg", c.ID), func(w io.Writer) error {
				return render.ClusterHeatmapSVG(w, r.in, order, c, render.HeatmapOptions{Title: fmt.Sprintf("Cluster %d", c.ID)})
			}})
		}
	}
	for _, f := range files {
		if err := writeFileAtomic(filepath.Join(dir, f.name), f.write); err != nil {
			return err
		}
	}
	return nil
}

// heatmapMaxVars is the most variables drawn in one heatmap; larger studies
// get one heatmap per cluster.
const heatmapMaxVars = 300

// An outFile is one output file and the function writing it.
type outFile struct {
	name  string
	write func(io.Writer) error
}
