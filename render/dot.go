package render

// Dependency graph of variable clusters: edge selection, DOT (Graphviz) source, an SVG drawn
// with our own layout, and an SVG from an installed Graphviz "dot" binary.
//
// Why our own SVG layout (the package documentation should say so too): the graph view has to
// work with nothing installed. Two ways were tried on 100 variables in 10 clusters. An embedded
// Graphviz (github.com/goccy/go-graphviz v0.2.10: Graphviz 12.1.2 compiled to WebAssembly, run
// by the wazero runtime) works and is reproducible run to run, but adds seven modules (wazero,
// gg, freetype, imaging, x/image, go-findfont and itself) and 9 MB to the binary (a program that
// only renders one graph is 11.4 MB, hello-world 2.4 MB), and takes 50–100 ms per graph. Our variable graphs have a fixed
// shape — a few clusters, each a small spanning tree plus a few extra edges, no edges between
// clusters — which a grid of panels with each cluster's members on a circle draws legibly in
// about 1 ms, byte-for-byte reproducibly (so it has golden tests), with no dependency. Where a
// real Graphviz layout is wanted, ClusterGraphSVGDot runs the user's own "dot".

import (
	"bytes"
	"cmp"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os/exec"
	"slices"
	"strconv"
	"strings"

	"github.com/crossform/crossform/cluster"
	"github.com/emicklei/dot"
)

// A GraphEdge is one association to draw between two variables.
type GraphEdge struct {
	A, B     int     // 0-based indexes into cluster.Input.Names
	Strength float64 // in [0, 1]; sets the line width and the edge's rank
	// Measure names the association: "spearman" (drawn solid, symbol ρ), "cramers_v"
	// (dashed, V), "somers_d" (dotted, D); any other name is drawn solid with the name as
	// its symbol.
	Measure string
	// Label is the edge's text; "" means the measure symbol and the strength to two
	// decimals, e.g. "ρ 0.82".
	Label string
}

// DefaultExtraEdges and DefaultMaxEdges are the GraphOptions used when a field is 0.
const (
	DefaultExtraEdges = 3
	DefaultMaxEdges   = 400
)

// GraphOptions controls which edges a cluster graph shows.
type GraphOptions struct {
	Title string
	// Extra is how many edges each cluster shows beyond its maximum spanning tree, the
	// strongest first: 0 means DefaultExtraEdges, negative none.
	Extra int
	// MaxEdges caps the edges of the whole graph, spanning-tree edges kept first, then the
	// strongest: 0 means DefaultMaxEdges, negative no cap.
	MaxEdges int
	// Singletons adds the variables that are in no cluster, as unconnected nodes.
	Singletons bool
}

// ErrNoGraphviz is returned by ClusterGraphSVGDot when no "dot" program is on the PATH.
var ErrNoGraphviz = errors.New(`graphviz "dot" program not found on PATH`)

// SelectGraphEdges returns the edges to draw for each cluster of part, indexed like
// part.Clusters: the cluster's maximum spanning forest over edges (Kruskal's algorithm on
// decreasing strength, ties by lower A then B) plus its opts.Extra strongest other edges,
// then cut to opts.MaxEdges for the whole graph (weakest dropped first, spanning edges last).
// Only edges between members of one cluster are considered; of several edges for one pair
// the strongest is used (ties: the first given). Each edge is returned with A < B, and each
// cluster's edges sorted by decreasing strength, then A, then B. It returns an error when an
// edge has an index outside [0, p) or A == B, or a strength outside [0, 1] or NaN.
func SelectGraphEdges(in cluster.Input, part *cluster.Partition, edges []GraphEdge, opts GraphOptions) ([][]GraphEdge, error) {
	p := in.Len()
	if len(part.Of) != p {
		return nil, fmt.Errorf("render: partition has %d variables, input %d", len(part.Of), p)
	}
	extra := opts.Extra
	if extra == 0 {
		extra = DefaultExtraEdges
	}
	type pair struct{ a, b int }
	best := map[pair]GraphEdge{}
	var keys []pair
	for k, e := range edges {
		if e.A < 0 || e.B < 0 || e.A >= p || e.B >= p || e.A == e.B {
			return nil, fmt.Errorf("render: edge %d joins variables %d and %d, want two distinct indexes in [0, %d)", k, e.A, e.B, p)
		}
		if !(e.Strength >= 0 && e.Strength <= 1) {
			return nil, fmt.Errorf("render: edge %d (%q, %q): strength %g not in [0, 1]", k, in.Names[e.A], in.Names[e.B], e.Strength)
		}
		if e.A > e.B {
			e.A, e.B = e.B, e.A
		}
		c := part.Of[e.A]
		if c < 0 || c != part.Of[e.B] {
			continue
		}
		key := pair{e.A, e.B}
		old, ok := best[key]
		if !ok {
			keys = append(keys, key)
		}
		if !ok || e.Strength > old.Strength {
			best[key] = e
		}
	}
	byStrength := func(x, y GraphEdge) int {
		return cmp.Or(cmp.Compare(y.Strength, x.Strength), cmp.Compare(x.A, y.A), cmp.Compare(x.B, y.B))
	}
	perCluster := make([][]GraphEdge, len(part.Clusters))
	for _, k := range keys {
		e := best[k]
		c := part.Of[e.A]
		perCluster[c] = append(perCluster[c], e)
	}
	type ranked struct {
		e       GraphEdge
		c       int
		spanned bool
	}
	var all []ranked
	parent := make([]int, p)
	for i := range parent {
		parent[i] = i
	}
	find := func(x int) int {
		for parent[x] != x {
			parent[x] = parent[parent[x]]
			x = parent[x]
		}
		return x
	}
	for c, es := range perCluster {
		slices.SortFunc(es, byStrength)
		n := 0
		for _, e := range es {
			ra, rb := find(e.A), find(e.B)
			if ra != rb {
				parent[ra] = rb
				all = append(all, ranked{e, c, true})
			} else if n < extra {
				n++
				all = append(all, ranked{e, c, false})
			}
		}
	}
	if opts.MaxEdges >= 0 {
		maxEdges := cmp.Or(opts.MaxEdges, DefaultMaxEdges)
		if len(all) > maxEdges {
			slices.SortStableFunc(all, func(x, y ranked) int {
				if x.spanned != y.spanned {
					if x.spanned {
						return -1
					}
					return 1
				}
				return byStrength(x.e, y.e)
			})
			all = all[:maxEdges]
		}
	}
	out := make([][]GraphEdge, len(part.Clusters))
	for _, r := range all {
		out[r.c] = append(out[r.c], r.e)
	}
	for _, es := range out {
		slices.SortFunc(es, byStrength)
	}
	return out, nil
}

// graphMeasureStyle returns the symbol and DOT/SVG line style of a measure name.
func graphMeasureStyle(measure string) (symbol, style string) {
	switch measure {
	case "spearman":
		return "ρ", "solid"
	case "cramers_v":
		return "V", "dashed"
	case "somers_d":
		return "D", "dotted"
	}
	return measure, "solid"
}

// graphEdgeLabel returns e.Label, or the measure symbol and the strength to two decimals.
func graphEdgeLabel(e GraphEdge) string {
	if e.Label != "" {
		return e.Label
	}
	sym, _ := graphMeasureStyle(e.Measure)
	return strings.TrimSpace(sym + " " + strconv.FormatFloat(e.Strength, 'f', 2, 64))
}

// graphPenWidth maps a strength in [0, 1] to a line width from 0.5 to 4.5 points.
func graphPenWidth(s float64) float64 { return 0.5 + 4*s }

// graphGroupColors is the colour-blind-safe qualitative palette of Okabe & Ito (2008, "Color
// Universal Design", https://jfly.uni-koeln.de/color/), black left out, used to tell the
// variables' groups (domains or forms) apart, assigned in sorted group order and reused
// cyclically.
var graphGroupColors = []string{"#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7"}

// graphGroupColor returns a colour for each group of in, by sorted group name; nil when
// in.Groups is empty.
func graphGroupColor(in cluster.Input) map[string]string {
	if len(in.Groups) == 0 {
		return nil
	}
	names := slices.Clone(in.Groups)
	slices.Sort(names)
	names = slices.Compact(names)
	m := make(map[string]string, len(names))
	for i, g := range names {
		m[g] = graphGroupColors[i%len(graphGroupColors)]
	}
	return m
}

// graphClusterTitle returns the caption of a cluster: its number, size and cohesion.
func graphClusterTitle(c cluster.Cluster) string {
	coh := "n/a"
	if !math.IsNaN(c.Cohesion) {
		coh = strconv.FormatFloat(c.Cohesion, 'f', 2, 64)
	}
	return fmt.Sprintf("Cluster %d: %d variables, cohesion %s", c.ID, len(c.Members), coh)
}

// graphNodeLabel returns a variable's node text: its name, and its label on a second line.
func graphNodeLabel(in cluster.Input, i int) string {
	if l := in.Label(i); l != "" && l != in.Names[i] {
		return in.Names[i] + "\n" + l
	}
	return in.Names[i]
}

// ClusterGraphDOT writes the clusters of part as an undirected Graphviz graph: one subgraph
// (a "cluster_…" box) per cluster in part order, nodes labelled with the variable name and
// label and coloured by group, and the edges chosen by SelectGraphEdges, labelled like
// "ρ 0.82", with penwidth 0.5 + 4·strength and a style by measure (see GraphEdge.Measure).
// Nodes are added in name order within each cluster and the output does not depend on map
// order, so the same input gives the same bytes.
func ClusterGraphDOT(w io.Writer, in cluster.Input, part *cluster.Partition, edges []GraphEdge, opts GraphOptions) error {
	sel, err := SelectGraphEdges(in, part, edges, opts)
	if err != nil {
		return err
	}
	g := dot.NewGraph(dot.Undirected).ID("clusters")
	g.Attrs("fontname", "Helvetica", "fontsize", "12", "compound", "true")
	if opts.Title != "" {
		g.Attrs("label", opts.Title, "labelloc", "t")
	}
	colors := graphGroupColor(in)
	node := func(sub *dot.Graph, i int) dot.Node {
		n := sub.Node(in.Names[i]).Label(graphNodeLabel(in, i))
		n.Attrs("shape", "box", "style", "rounded,filled", "fontname", "Helvetica", "fontsize", "10")
		if c, ok := colors[in.Group(i)]; ok {
			n.Attrs("fillcolor", c+"40", "color", c, "tooltip", in.Group(i))
		} else {
			n.Attrs("fillcolor", "#F2F2F2")
		}
		return n
	}
	for ci, c := range part.Clusters {
		sub := g.Subgraph(fmt.Sprintf("C%06d", c.ID), dot.ClusterOption{})
		sub.Label(graphClusterTitle(c))
		sub.Attrs("style", "rounded", "color", "#7F7F7F", "fontname", "Helvetica", "fontsize", "11")
		nodes := map[int]dot.Node{}
		for _, m := range c.Members {
			nodes[m.Index] = node(sub, m.Index)
		}
		es := slices.Clone(sel[ci])
		slices.SortFunc(es, func(x, y GraphEdge) int {
			return cmp.Or(cmp.Compare(in.Names[x.A], in.Names[y.A]), cmp.Compare(in.Names[x.B], in.Names[y.B]))
		})
		for _, e := range es {
			a, b := e.A, e.B
			if in.Names[a] > in.Names[b] {
				a, b = b, a
			}
			_, style := graphMeasureStyle(e.Measure)
			// Added to the root graph: emicklei/dot writes "->" for edges owned by a subgraph
			// even when the graph is undirected.
			g.Edge(nodes[a], nodes[b], graphEdgeLabel(e)).Attrs(
				"penwidth", strconv.FormatFloat(graphPenWidth(e.Strength), 'f', 2, 64),
				"style", style, "fontsize", "9", "fontname", "Helvetica", "color", "#404040")
		}
	}
	if opts.Singletons {
		for _, m := range part.Singletons {
			node(g, m.Index)
		}
	}
	var buf bytes.Buffer
	g.Write(&buf)
	_, err = w.Write(buf.Bytes())
	return err
}

// ClusterGraphSVGDot writes the SVG that the Graphviz program "dot" (found on the PATH) lays
// out from the DOT source src, for example from ClusterGraphDOT. It returns ErrNoGraphviz
// when there is no such program, and dot's own message when it fails.
func ClusterGraphSVGDot(ctx context.Context, w io.Writer, src []byte) error {
	path, err := exec.LookPath("dot")
	if err != nil {
		return ErrNoGraphviz
	}
	var out, errb bytes.Buffer
	cmd := exec.CommandContext(ctx, path, "-Tsvg")
	cmd.Stdin = bytes.NewReader(src)
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		msg := strings.TrimSpace(errb.String())
		if msg == "" {
			return fmt.Errorf("running dot: %w", err)
		}
		return fmt.Errorf("running dot: %w: %s", err, msg)
	}
	_, err = w.Write(out.Bytes())
	return err
}

// Layout of ClusterGraphSVG, in SVG user units (pixels).
const (
	graphNodeR     = 5.0  // radius of a node's dot
	graphPanelPad  = 16.0 // padding inside a cluster panel
	graphPanelGap  = 20.0 // space between panels
	graphTitleH    = 22.0 // height of a panel's caption
	graphLabelRoom = 60.0 // room around the circle for variable names
	graphMargin    = 16.0
)

// ClusterGraphSVG draws the same graph as ClusterGraphDOT as an SVG with its own layout, with
// no external program: clusters in panels on a grid (ceil(√k) columns, in part order), the
// members of each cluster evenly spaced on a circle starting at the top, in the order of a
// depth-first walk of the cluster's maximum spanning tree (so that most tree edges join
// neighbours on the circle and few cross), names outside the circle, edges as straight lines styled like the DOT edges with their label at
// the middle, nodes coloured by group with a legend. Singletons, when asked for, are listed
// in a last panel without edges.
func ClusterGraphSVG(w io.Writer, in cluster.Input, part *cluster.Partition, edges []GraphEdge, opts GraphOptions) error {
	sel, err := SelectGraphEdges(in, part, edges, opts)
	if err != nil {
		return err
	}
	type panel struct {
		title   string
		members []cluster.Member
		edges   []GraphEdge
		w, h, r float64
		x, y    float64
		list    bool // singletons: a list, not a circle
	}
	var panels []*panel
	for ci, c := range part.Clusters {
		n := float64(len(c.Members))
		r := math.Max(45, n*50/(2*math.Pi)) // about 50 px of arc per variable
		side := 2*(r+graphLabelRoom) + 2*graphPanelPad
		panels = append(panels, &panel{title: graphClusterTitle(c), members: c.Members, edges: sel[ci],
			w: side, h: side + graphTitleH, r: r})
	}
	if opts.Singletons && len(part.Singletons) > 0 {
		cols := int(math.Ceil(float64(len(part.Singletons)) / 20))
		panels = append(panels, &panel{title: fmt.Sprintf("Not clustered: %d variables", len(part.Singletons)),
			members: part.Singletons, list: true, w: math.Max(200, float64(cols)*110) + 2*graphPanelPad,
			h: graphTitleH + 2*graphPanelPad + 14*float64(min(20, len(part.Singletons)))})
	}
	cols := max(1, int(math.Ceil(math.Sqrt(float64(len(panels))))))
	colW := make([]float64, cols)
	var rowH []float64
	for i, pn := range panels {
		c, r := i%cols, i/cols
		colW[c] = math.Max(colW[c], pn.w)
		if r >= len(rowH) {
			rowH = append(rowH, 0)
		}
		rowH[r] = math.Max(rowH[r], pn.h)
	}
	top := graphMargin
	if opts.Title != "" {
		top += 24
	}
	colors := graphGroupColor(in)
	legendH := 0.0
	if colors != nil {
		legendH = 24
	}
	totalW, totalH := graphMargin, top+legendH
	for _, cw := range colW {
		totalW += cw + graphPanelGap
	}
	for _, rh := range rowH {
		totalH += rh + graphPanelGap
	}
	totalW = math.Max(totalW, 320)
	for i, pn := range panels {
		c, r := i%cols, i/cols
		pn.x = graphMargin
		for _, cw := range colW[:c] {
			pn.x += cw + graphPanelGap
		}
		pn.y = top + legendH
		for _, rh := range rowH[:r] {
			pn.y += rh + graphPanelGap
		}
	}

	s := newClSVG(totalW, totalH)
	s.raw(`<style>text{font-family:Helvetica,Arial,sans-serif}.nm{font-size:10px}.el{font-size:8px;fill:#262626;paint-order:stroke;stroke:#FAFAFA;stroke-width:3px;stroke-linejoin:round}.ct{font-size:11px;font-weight:bold}</style>` + "\n")
	if opts.Title != "" {
		s.text(graphMargin, graphMargin+14, "font-size=\"14\" font-weight=\"bold\"", opts.Title)
	}
	if colors != nil {
		groups := make([]string, 0, len(colors))
		for g := range colors {
			groups = append(groups, g)
		}
		slices.Sort(groups)
		x := graphMargin
		y := top + 8
		for _, g := range groups {
			s.printf(`<circle cx="%s" cy="%s" r="%s" fill="%s" stroke="#404040" stroke-width="0.5"/>`+"\n",
				clNum(x+graphNodeR), clNum(y), clNum(graphNodeR), colors[g])
			s.text(x+2*graphNodeR+4, y+4, `class="nm"`, g)
			x += 2*graphNodeR + 14 + 7*float64(len([]rune(g)))
		}
	}
	fill := func(i int) string {
		if c, ok := colors[in.Group(i)]; ok {
			return c
		}
		return "#BFBFBF"
	}
	for _, pn := range panels {
		s.printf(`<g class="cluster"><rect x="%s" y="%s" width="%s" height="%s" rx="8" fill="#FAFAFA" stroke="#7F7F7F"/>`+"\n",
			clNum(pn.x), clNum(pn.y), clNum(pn.w), clNum(pn.h))
		s.text(pn.x+graphPanelPad, pn.y+graphPanelPad+4, `class="ct"`, pn.title)
		if pn.list {
			for k, m := range pn.members {
				x := pn.x + graphPanelPad + 110*float64(k/20)
				y := pn.y + graphTitleH + graphPanelPad + 14*float64(k%20) + 4
				s.printf(`<circle cx="%s" cy="%s" r="4" fill="%s"/>`+"\n", clNum(x+4), clNum(y), fill(m.Index))
				s.text(x+12, y+3.5, `class="nm"`, m.Name)
			}
			s.raw("</g>\n")
			continue
		}
		cx := pn.x + pn.w/2
		cy := pn.y + graphTitleH + (pn.h-graphTitleH)/2
		pos := map[int][2]float64{}
		angle := map[int]float64{}
		for k, m := range graphCircleOrder(pn.members, pn.edges) {
			a := -math.Pi/2 + 2*math.Pi*float64(k)/float64(len(pn.members))
			pos[m.Index] = [2]float64{cx + pn.r*math.Cos(a), cy + pn.r*math.Sin(a)}
			angle[m.Index] = a
		}
		for _, e := range pn.edges {
			a, b := pos[e.A], pos[e.B]
			_, style := graphMeasureStyle(e.Measure)
			dash := ""
			switch style {
			case "dashed":
				dash = ` stroke-dasharray="6 3"`
			case "dotted":
				dash = ` stroke-dasharray="1.5 3"`
			}
			s.printf(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#404040" stroke-width="%s"%s><title>%s – %s: %s</title></line>`+"\n",
				clNum(a[0]), clNum(a[1]), clNum(b[0]), clNum(b[1]), clNum(graphPenWidth(e.Strength)), dash,
				clEscape(in.Names[e.A]), clEscape(in.Names[e.B]), clEscape(graphEdgeLabel(e)))
			s.text((a[0]+b[0])/2, (a[1]+b[1])/2-2, `class="el" text-anchor="middle"`, graphEdgeLabel(e))
		}
		for _, m := range pn.members {
			p, a := pos[m.Index], angle[m.Index]
			title := m.Name
			if l := in.Label(m.Index); l != "" {
				title += ": " + l
			}
			s.printf(`<circle cx="%s" cy="%s" r="%s" fill="%s" stroke="#404040" stroke-width="0.5"><title>%s</title></circle>`+"\n",
				clNum(p[0]), clNum(p[1]), clNum(graphNodeR), fill(m.Index), clEscape(title))
			anchor := "start"
			if math.Cos(a) < -0.2 {
				anchor = "end"
			} else if math.Abs(math.Cos(a)) <= 0.2 {
				anchor = "middle"
			}
			lx := p[0] + (graphNodeR+4)*math.Cos(a)
			ly := p[1] + (graphNodeR+4)*math.Sin(a) + 3.5
			if math.Sin(a) < -0.9 {
				ly -= 4
			} else if math.Sin(a) > 0.9 {
				ly += 6
			}
			s.text(lx, ly, `class="nm" text-anchor="`+anchor+`"`, m.Name)
		}
		s.raw("</g>\n")
	}
	return s.finish(w)
}

// graphCircleOrder returns members in the order of a depth-first walk of the maximum
// spanning forest of edges (edges as returned by SelectGraphEdges: strongest first, so
// Kruskal's algorithm over them finds the same forest), each tree entered at its first member
// in name order and neighbours visited strongest edge first; members are in name order.
func graphCircleOrder(members []cluster.Member, edges []GraphEdge) []cluster.Member {
	pos := make(map[int]int, len(members))
	for k, m := range members {
		pos[m.Index] = k
	}
	parent := make([]int, len(members))
	for k := range parent {
		parent[k] = k
	}
	find := func(x int) int {
		for parent[x] != x {
			x = parent[x]
		}
		return x
	}
	adj := make([][]int, len(members)) // neighbours in the tree, strongest edge first
	for _, e := range edges {
		a, b := pos[e.A], pos[e.B]
		if ra, rb := find(a), find(b); ra != rb {
			parent[ra] = rb
			adj[a] = append(adj[a], b)
			adj[b] = append(adj[b], a)
		}
	}
	out := make([]cluster.Member, 0, len(members))
	seen := make([]bool, len(members))
	var walk func(k int)
	walk = func(k int) {
		seen[k] = true
		out = append(out, members[k])
		for _, nb := range adj[k] {
			if !seen[nb] {
				walk(nb)
			}
		}
	}
	for k := range members {
		if !seen[k] {
			walk(k)
		}
	}
	return out
}

// clSVG accumulates an SVG document; the helpers below are shared by this file and the
// heatmap and dendrogram renderers.
type clSVG struct {
	buf bytes.Buffer
}

// newClSVG starts an SVG document of the given size in pixels.
func newClSVG(width, height float64) *clSVG {
	s := &clSVG{}
	fmt.Fprintf(&s.buf, `<svg xmlns="http://www.w3.org/2000/svg" width="%s" height="%s" viewBox="0 0 %s %s">`+"\n",
		clNum(width), clNum(height), clNum(width), clNum(height))
	s.buf.WriteString(`<rect width="100%" height="100%" fill="#FFFFFF"/>` + "\n")
	return s
}

func (s *clSVG) raw(str string)                    { s.buf.WriteString(str) }
func (s *clSVG) printf(format string, args ...any) { fmt.Fprintf(&s.buf, format, args...) }

// text writes a <text> element at (x, y) with extra attributes attrs and escaped content.
func (s *clSVG) text(x, y float64, attrs, content string) {
	fmt.Fprintf(&s.buf, `<text x="%s" y="%s" %s>%s</text>`+"\n", clNum(x), clNum(y), attrs, clEscape(content))
}

// finish closes the document and writes it to w.
func (s *clSVG) finish(w io.Writer) error {
	s.buf.WriteString("</svg>\n")
	_, err := w.Write(s.buf.Bytes())
	return err
}

// clNum formats a coordinate with at most two decimals and no trailing zeros.
func clNum(x float64) string {
	if x == 0 || math.Abs(x) < 0.005 {
		return "0"
	}
	s := strconv.FormatFloat(x, 'f', 2, 64)
	s = strings.TrimRight(s, "0")
	return strings.TrimSuffix(s, ".")
}

// clEscape escapes text for SVG character data and attribute values.
func clEscape(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '&':
			b.WriteString("&amp;")
		case '<':
			b.WriteString("&lt;")
		case '>':
			b.WriteString("&gt;")
		case '"':
			b.WriteString("&quot;")
		case '\'':
			b.WriteString("&#39;")
		default:
			if (r < 0x20 && r != '\t' && r != '\n' && r != '\r') || r == 0xFFFE || r == 0xFFFF {
				// Not allowed in XML 1.0 (§2.2 Char).
				b.WriteRune('\uFFFD')
				continue
			}
			b.WriteRune(r)
		}
	}
	return b.String()
}
