package render

// SVG heatmap of a strength matrix, ordered by the dendrogram, with cluster blocks marked.

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/crossform/crossform/cluster"
)

// HeatmapStops are the colour stops of the heatmap's sequential ramp, from strength 0 to 1
// at equal spacing (0, 0.25, 0.5, 0.75, 1), interpolated linearly in sRGB between stops. It
// is our own ramp, cream through green and teal to indigo, chosen so that CIE L*
// falls steadily (97, 83, 63, 44, 21: computed from the sRGB definition, IEC 61966-2-1, and
// CIE 1976 L*) while the hue moves along the yellow–blue axis that the common colour-vision
// deficiencies keep, so order is readable from lightness alone, in grey print too.
var HeatmapStops = []string{"#FFF8D6", "#B0DA98", "#4FA98E", "#256F94", "#2E2A6B"}

// heatmapLevels is the number of colours the ramp is drawn with; cells of one colour share a
// path, which keeps a few-hundred-variable heatmap to a few megabytes.
const heatmapLevels = 64

// HeatmapOptions controls HeatmapSVG and ClusterHeatmapSVG.
type HeatmapOptions struct {
	Title string
	// Cell is the side of one cell in pixels; 0 chooses 16 up to 40 variables, 12 up to 100,
	// else 9. Labels are drawn at 80% of the cell, at most 11 px.
	Cell float64
}

// HeatmapColor returns the colour of strength s ∈ [0, 1] on the HeatmapStops ramp as
// "#RRGGBB"; s is clamped to [0, 1]. It panics with "render: NaN strength" on NaN.
func HeatmapColor(s float64) string {
	if math.IsNaN(s) {
		panic("render: NaN strength")
	}
	s = min(max(s, 0), 1)
	seg := s * float64(len(HeatmapStops)-1)
	k := min(int(seg), len(HeatmapStops)-2)
	f := seg - float64(k)
	a, b := heatmapRGB(HeatmapStops[k]), heatmapRGB(HeatmapStops[k+1])
	var out [3]int
	for i := range out {
		out[i] = int(math.Round(float64(a[i]) + f*float64(b[i]-a[i])))
	}
	return fmt.Sprintf("#%02X%02X%02X", out[0], out[1], out[2])
}

func heatmapRGB(hex string) [3]int {
	var c [3]int
	for i := range c {
		v, _ := strconv.ParseUint(hex[1+2*i:3+2*i], 16, 8)
		c[i] = int(v)
	}
	return c
}

// heatmapBlock is a run of consecutive variables in one cluster.
type heatmapBlock struct {
	from, to int // positions in the drawn order, to exclusive
	id       int // cluster ID (1-based)
	title    string
}

// HeatmapSVG draws the strength matrix of in as an SVG heatmap, rows and columns in order
// (variable indexes, typically tree.Leaves(); any subset in any order), with each run of
// consecutive variables of one cluster of part outlined and labelled "C<ID>" (part may be
// nil). The diagonal is drawn as strength 1 and unknown strengths with a grey hatch. A
// legend shows the ramp (HeatmapStops). It returns an error when order is empty or holds an
// index outside [0, p) or a repeated one.
func HeatmapSVG(w io.Writer, in cluster.Input, order []int, part *cluster.Partition, opts HeatmapOptions) error {
	if err := heatmapCheckOrder(in, order); err != nil {
		return err
	}
	var blocks []heatmapBlock
	if part != nil {
		if len(part.Of) != in.Len() {
			return fmt.Errorf("render: partition has %d variables, input %d", len(part.Of), in.Len())
		}
		for k := 0; k < len(order); {
			c := part.Of[order[k]]
			end := k + 1
			for end < len(order) && part.Of[order[end]] == c {
				end++
			}
			if c >= 0 {
				cl := part.Clusters[c]
				blocks = append(blocks, heatmapBlock{from: k, to: end, id: cl.ID, title: graphClusterTitle(cl)})
			}
			k = end
		}
	}
	return heatmapDraw(w, in, order, blocks, opts)
}

// ClusterHeatmapSVG draws the heatmap of one cluster's members, in the order they appear in
// order (typically tree.Leaves()), members missing from order last in name order, outlined
// and labelled as one block; the title defaults to the cluster's caption.
func ClusterHeatmapSVG(w io.Writer, in cluster.Input, order []int, c cluster.Cluster, opts HeatmapOptions) error {
	member := map[int]bool{}
	for _, m := range c.Members {
		member[m.Index] = true
	}
	var sub []int
	for _, i := range order {
		if member[i] {
			sub = append(sub, i)
			delete(member, i)
		}
	}
	for _, m := range c.Members { // already in name order
		if member[m.Index] {
			sub = append(sub, m.Index)
		}
	}
	if opts.Title == "" {
		opts.Title = graphClusterTitle(c)
	}
	if err := heatmapCheckOrder(in, sub); err != nil {
		return err
	}
	return heatmapDraw(w, in, sub, []heatmapBlock{{from: 0, to: len(sub), id: c.ID, title: graphClusterTitle(c)}}, opts)
}

func heatmapCheckOrder(in cluster.Input, order []int) error {
	if len(order) == 0 {
		return fmt.Errorf("render: heatmap of no variables")
	}
	seen := make([]bool, in.Len())
	for k, i := range order {
		if i < 0 || i >= in.Len() {
			return fmt.Errorf("render: heatmap order[%d] = %d, want an index in [0, %d)", k, i, in.Len())
		}
		if seen[i] {
			return fmt.Errorf("render: heatmap order[%d]: variable %q repeated", k, in.Names[i])
		}
		seen[i] = true
	}
	return nil
}

func heatmapDraw(w io.Writer, in cluster.Input, order []int, blocks []heatmapBlock, opts HeatmapOptions) error {
	n := len(order)
	cell := opts.Cell
	if cell <= 0 {
		switch {
		case n <= 40:
			cell = 16
		case n <= 100:
			cell = 12
		default:
			cell = 9
		}
	}
	font := math.Min(11, 0.8*cell)
	maxName := 0
	for _, i := range order {
		maxName = max(maxName, len([]rune(in.Names[i])))
	}
	labelW := 0.62*font*float64(maxName) + 8
	titleH := 0.0
	if opts.Title != "" {
		titleH = 24
	}
	x0 := 12 + labelW
	y0 := 12 + titleH + labelW
	grid := cell * float64(n)
	legendX := x0 + grid + 48
	width := math.Max(legendX+80, 24+8*float64(len([]rune(opts.Title)))) // room for the title
	legendH := math.Min(200, math.Max(grid, 120))
	height := y0 + math.Max(grid, legendH+30) + 12

	s := newClSVG(width, height)
	s.printf(`<style>text{font-family:Helvetica,Arial,sans-serif}.lb{font-size:%spx}.cl{font-size:11px;font-weight:bold}.lg{font-size:10px}</style>`+"\n", clNum(font))
	s.raw(`<defs><pattern id="hm-unknown" width="4" height="4" patternUnits="userSpaceOnUse"><rect width="4" height="4" fill="#D4D4D4"/><path d="M0 4L4 0" stroke="#FFFFFF" stroke-width="1"/></pattern>`)
	s.raw(`<linearGradient id="hm-ramp" x1="0" y1="1" x2="0" y2="0">`)
	for k, c := range HeatmapStops {
		s.printf(`<stop offset="%s" stop-color="%s"/>`, clNum(float64(k)/float64(len(HeatmapStops)-1)), c)
	}
	s.raw("</linearGradient></defs>\n")
	if opts.Title != "" {
		s.text(12, 12+14, `font-size="14" font-weight="bold"`, opts.Title)
	}
	// Cells, one path per colour level; unknowns in their own path.
	paths := make([]strings.Builder, heatmapLevels+1)
	for r, i := range order {
		for c, j := range order {
			v := 1.0
			if i != j {
				v = in.At(i, j)
			}
			lvl := heatmapLevels // unknown
			if !math.IsNaN(v) {
				lvl = int(math.Round(min(max(v, 0), 1) * (heatmapLevels - 1)))
			}
			fmt.Fprintf(&paths[lvl], "M%s %sh%sv%sh-%sz", clNum(x0+cell*float64(c)), clNum(y0+cell*float64(r)),
				clNum(cell), clNum(cell), clNum(cell))
		}
	}
	s.raw(`<g class="cells" shape-rendering="crispEdges">` + "\n")
	for lvl := range paths {
		if paths[lvl].Len() == 0 {
			continue
		}
		fill := `url(#hm-unknown)`
		if lvl < heatmapLevels {
			fill = HeatmapColor(float64(lvl) / (heatmapLevels - 1))
		}
		s.printf(`<path fill="%s" d="%s"/>`+"\n", fill, paths[lvl].String())
	}
	s.raw("</g>\n")
	// Labels: rows on the left, columns on top, rotated.
	for k, i := range order {
		mid := cell*float64(k) + cell/2 + font*0.35
		s.text(x0-4, y0+mid, `class="lb" text-anchor="end"`, in.Names[i])
		cx, cy := x0+cell*float64(k)+cell/2+font*0.35, y0-4
		s.printf(`<text x="%s" y="%s" class="lb" transform="rotate(-90 %s %s)">%s</text>`+"\n",
			clNum(cx), clNum(cy), clNum(cx), clNum(cy), clEscape(in.Names[i]))
	}
	// Cluster blocks: a white halo under a dark outline stays visible on both ends of the ramp.
	for _, b := range blocks {
		x, side := x0+cell*float64(b.from), cell*float64(b.to-b.from)
		y := y0 + cell*float64(b.from)
		s.printf(`<g class="cluster"><title>%s</title>`, clEscape(b.title))
		s.printf(`<rect x="%s" y="%s" width="%s" height="%s" fill="none" stroke="#FFFFFF" stroke-width="3"/>`,
			clNum(x), clNum(y), clNum(side), clNum(side))
		s.printf(`<rect x="%s" y="%s" width="%s" height="%s" fill="none" stroke="#111111" stroke-width="1.2"/>`,
			clNum(x), clNum(y), clNum(side), clNum(side))
		s.printf(`<text x="%s" y="%s" class="cl">C%d</text></g>`+"\n", clNum(x0+grid+6), clNum(y+side/2+4), b.id)
	}
	// Legend: the ramp from 0 (bottom) to 1 (top), and the unknown swatch.
	ly := y0
	s.printf(`<g class="legend"><rect x="%s" y="%s" width="14" height="%s" fill="url(#hm-ramp)" stroke="#7F7F7F" stroke-width="0.5"/>`+"\n",
		clNum(legendX), clNum(ly), clNum(legendH))
	for _, t := range []float64{0, 0.25, 0.5, 0.75, 1} {
		y := ly + legendH*(1-t)
		s.printf(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#404040"/>`, clNum(legendX+14), clNum(y), clNum(legendX+18), clNum(y))
		s.text(legendX+20, y+3.5, `class="lg"`, strconv.FormatFloat(t, 'f', 2, 64))
	}
	s.text(legendX-2, ly-10, `class="lg"`, "strength")
	s.printf(`<rect x="%s" y="%s" width="14" height="10" fill="url(#hm-unknown)" stroke="#7F7F7F" stroke-width="0.5"/>`,
		clNum(legendX), clNum(ly+legendH+10))
	s.text(legendX+20, ly+legendH+19, `class="lg"`, "unknown")
	s.raw("</g>\n")
	return s.finish(w)
}
