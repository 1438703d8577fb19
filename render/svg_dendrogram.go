package render

// SVG dendrogram of a cluster.Tree.

import (
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/crossform/crossform/cluster"
)

// dendrogramColors are the Okabe–Ito colours (see graphGroupColors) dark enough for thin
// lines and text on white: the yellow is left out.
var dendrogramColors = []string{"#E69F00", "#56B4E9", "#009E73", "#0072B2", "#D55E00", "#CC79A7"}

// DendrogramOptions controls DendrogramSVG.
type DendrogramOptions struct {
	Title string
	// ShowCut draws a vertical line at distance Cut (e.g. 1 − cluster.DefaultMinStrength).
	ShowCut bool
	Cut     float64
	Row     float64 // pixels per variable; 0 means 14
	Width   float64 // pixels for the tree, distance 0 to 1; 0 means 420
}

// DendrogramSVG draws t as a horizontal dendrogram: the variables on the right in
// t.Leaves() order with their names, the root on the left, the horizontal axis the merge
// distance from 0 (right) to 1 (left) — always [0, 1], so that trees of different studies
// compare — with the matching strength 1 − distance under it. Each link lies at its merge
// height (the elbow layout of scipy's dendrogram). When part is not nil every link whose
// variables all belong to one cluster of part is drawn in that cluster's colour (the Okabe–Ito
// palette without its yellow, cycled) and the cluster is labelled "C<ID>" beside its first variable; other
// links are grey.
func DendrogramSVG(w io.Writer, in cluster.Input, t *cluster.Tree, part *cluster.Partition, opts DendrogramOptions) error {
	p := t.Len()
	if p != in.Len() {
		return fmt.Errorf("render: tree has %d variables, input %d", p, in.Len())
	}
	if part != nil && len(part.Of) != p {
		return fmt.Errorf("render: partition has %d variables, input %d", len(part.Of), p)
	}
	row := opts.Row
	if row <= 0 {
		row = 14
	}
	treeW := opts.Width
	if treeW <= 0 {
		treeW = 420
	}
	maxName := 0
	for _, n := range in.Names {
		maxName = max(maxName, len([]rune(n)))
	}
	top := 16.0
	if opts.Title != "" {
		top += 24
	}
	left := 24.0
	right := left + treeW // x of distance 0
	width := right + 8 + 6.5*float64(maxName) + 48
	height := top + row*float64(p) + 56

	leaves := t.Leaves()
	y := make([]float64, 2*p-1) // y of each node; leaves by rank, merges at their children's mean
	x := make([]float64, 2*p-1)
	for k, leaf := range leaves {
		y[leaf] = top + row*float64(k) + row/2
		x[leaf] = right
	}
	// cl[id] is the cluster index shared by all leaves of node id, or −1.
	cl := make([]int, 2*p-1)
	for i := 0; i < p; i++ {
		cl[i] = -1
		if part != nil {
			cl[i] = part.Of[i]
		}
	}
	xOf := func(h float64) float64 { return right - treeW*min(max(h, 0), 1) }
	for k, m := range t.Merges {
		id := p + k
		y[id] = (y[m.A] + y[m.B]) / 2
		x[id] = xOf(m.Height)
		cl[id] = -1
		if cl[m.A] >= 0 && cl[m.A] == cl[m.B] {
			cl[id] = cl[m.A]
		}
	}
	color := func(id int) string {
		if cl[id] < 0 {
			return "#8C8C8C"
		}
		return dendrogramColors[cl[id]%len(dendrogramColors)]
	}

	s := newClSVG(width, height)
	s.raw(`<style>text{font-family:Helvetica,Arial,sans-serif}.nm{font-size:10px}.ax{font-size:10px;fill:#404040}.cl{font-size:10px;font-weight:bold}</style>` + "\n")
	if opts.Title != "" {
		s.text(left, 16+14, `font-size="14" font-weight="bold"`, opts.Title)
	}
	s.raw(`<g class="links" fill="none" stroke-width="1.4">` + "\n")
	for k, m := range t.Merges {
		id := p + k
		// Elbow: from each child across to the merge height, then the vertical joining them;
		// all three in the colour of the merge (scipy's dendrogram colours a link the same way).
		for _, c := range []int{m.A, m.B} {
			s.printf(`<path d="M%s %sH%s" stroke="%s"/>`+"\n", clNum(x[c]), clNum(y[c]), clNum(x[id]), color(id))
		}
		s.printf(`<path d="M%s %sV%s" stroke="%s"><title>%s</title></path>`+"\n",
			clNum(x[id]), clNum(y[m.A]), clNum(y[m.B]), color(id),
			clEscape(fmt.Sprintf("distance %.3f, strength %.3f, %d variables", m.Height, 1-m.Height, m.Size)))
	}
	s.raw("</g>\n")
	// Leaf names, and each cluster's label beside its first leaf.
	labelled := map[int]bool{}
	for _, leaf := range leaves {
		s.text(right+6, y[leaf]+3.5, `class="nm"`, in.Names[leaf])
	}
	if part != nil {
		for _, leaf := range leaves {
			c := part.Of[leaf]
			if c < 0 || labelled[c] {
				continue
			}
			labelled[c] = true
			cx := right + 8 + 6.5*float64(maxName) + 6
			s.printf(`<g class="cluster"><title>%s</title>`, clEscape(graphClusterTitle(part.Clusters[c])))
			s.text(cx, y[leaf]+3.5, `class="cl" fill="`+color(leaf)+`"`, "C"+strconv.Itoa(part.Clusters[c].ID))
			s.raw("</g>\n")
		}
	}
	// Axis: distance ticks, with the strength they correspond to.
	ay := top + row*float64(p) + 8
	s.printf(`<g class="axis"><path d="M%s %sH%s" stroke="#404040"/>`+"\n", clNum(xOf(1)), clNum(ay), clNum(xOf(0)))
	for _, d := range []float64{0, 0.25, 0.5, 0.75, 1} {
		tx := xOf(d)
		s.printf(`<path d="M%s %sv4" stroke="#404040"/>`, clNum(tx), clNum(ay))
		s.text(tx, ay+15, `class="ax" text-anchor="middle"`, strconv.FormatFloat(d, 'f', 2, 64))
		s.text(tx, ay+27, `class="ax" text-anchor="middle"`, "("+strconv.FormatFloat(1-d, 'f', 2, 64)+")")
	}
	s.text(xOf(0.5), ay+41, `class="ax" text-anchor="middle"`, "distance = 1 − strength (strength in brackets), "+t.Method.String()+" linkage")
	s.raw("</g>\n")
	if opts.ShowCut && !math.IsNaN(opts.Cut) {
		cx := xOf(opts.Cut)
		s.printf(`<path class="cut" d="M%s %sV%s" stroke="#262626" stroke-width="1" stroke-dasharray="4 3"><title>%s</title></path>`+"\n",
			clNum(cx), clNum(top), clNum(ay), clEscape(fmt.Sprintf("cut at distance %.3f (strength %.3f)", opts.Cut, 1-opts.Cut)))
	}
	return s.finish(w)
}
