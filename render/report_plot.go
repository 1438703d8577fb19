package render

// The proposal plots of the reviewer's report, drawn as SVG by hand. Generated SVG keeps
// the report free of a plotting dependency, makes the bytes depend only on the data (no
// fonts measured, no clock, no map order), and stays small: a plot is a few hundred
// elements, inline in the page, styled by presentation attributes only so that the page's
// Content-Security-Policy needs no style exception.

import (
	"fmt"
	"html"
	"math"
	"strconv"
	"strings"

	"github.com/crossform/crossform/dataset"
)

// The report's plot palette, our own: a dusty blue for records that pass, a burnt orange
// for records a rule flags (always also drawn as a cross, so the difference does not rest
// on colour), a deep teal for what a rule allows and a muted violet for diagonals. Blue
// against orange stays distinct under the common colour-vision deficiencies.
const (
	plotInk     = "#24303B"
	plotAxis    = "#7D858C"
	plotGrid    = "#E6E2DA"
	plotPass    = "#4C6A88"
	plotFail    = "#C4501A"
	plotAllowed = "#17706E"
	plotArea    = "#CFE5E0"
	plotDiag    = "#6B5B95"
	plotOther   = "#AEB6BD"
	plotFont    = `ui-sans-serif, system-ui, "Segoe UI", "Noto Sans", "DejaVu Sans", sans-serif`
)

const (
	plotW, plotH                   = 460.0, 320.0
	padL, padR, padT, padB         = 62.0, 16.0, 14.0, 64.0
	innerW, innerH                 = plotW - padL - padR, plotH - padT - padB
	legendY                        = plotH - 8
	crossR                         = 3.2
	pointR                         = 2.3
	maxTicks                       = 6
	stripJitter                    = 0.32
	crossTableMaxW, crossTableCell = 440.0, 34.0
)

type svgDoc struct {
	b  strings.Builder
	id string
}

func (s *svgDoc) f(format string, a ...any) { fmt.Fprintf(&s.b, format, a...) }

func esc(s string) string { return html.EscapeString(s) }

func pn(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "0"
	}
	x = math.Round(x*10) / 10
	if x == 0 {
		return "0"
	}
	return strconv.FormatFloat(x, 'f', -1, 64)
}

// open starts an SVG of the given size with a title and description for screen readers.
func (s *svgDoc) open(w, h float64, title, desc string) {
	s.f(`<svg xmlns="http://www.w3.org/2000/svg" class="plot" viewBox="0 0 %s %s" width="%s" height="%s" role="img" aria-labelledby="%s-t %s-d" font-family="%s" font-size="11" fill="%s">`,
		pn(w), pn(h), pn(w), pn(h), s.id, s.id, esc(plotFont), plotInk)
	s.f(`<title id="%s-t">%s</title><desc id="%s-d">%s</desc>`, s.id, esc(title), s.id, esc(desc))
}

func (s *svgDoc) text(x, y float64, anchor, attrs, t string) {
	s.f(`<text x="%s" y="%s" text-anchor="%s"%s>%s</text>`, pn(x), pn(y), anchor, attrs, esc(t))
}

func (s *svgDoc) cross(x, y float64) {
	s.f(`<path d="M%s %sl%s %sM%s %sl%s %s" stroke="%s" stroke-width="1.8"/>`,
		pn(x-crossR), pn(y-crossR), pn(2*crossR), pn(2*crossR), pn(x-crossR), pn(y+crossR), pn(2*crossR), pn(-2*crossR), plotFail)
}

// plotSVG returns the SVG of p, with element ids prefixed by id, or "" when p has no figure.
func plotSVG(p Plot, id string) string {
	s := &svgDoc{id: id}
	switch {
	case p.Scatter != nil:
		scatterSVG(s, p.Scatter)
	case p.Cross != nil:
		crossSVG(s, p.Cross)
	case p.Trajectories != nil:
		trajectorySVG(s, p.Trajectories)
	case p.Strip != nil:
		stripSVG(s, p.Strip)
	case p.Shift != nil:
		shiftSVG(s, p.Shift)
	default:
		return ""
	}
	s.b.WriteString("</svg>")
	return s.b.String()
}

// axis maps data values to pixels along one side of the plot area.
type axis struct {
	lo, hi   float64 // data range
	p0, p1   float64 // pixel range
	date     bool
	ticks    []float64
	labelFor func(float64) string
}

func newAxis(vals []float64, p0, p1 float64, date bool) axis {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range vals {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if lo > hi {
		lo, hi = 0, 1
	}
	if hi-lo < 1e-9*math.Max(1, math.Abs(hi)) {
		lo, hi = lo-1, hi+1
	}
	pad := 0.04 * (hi - lo)
	a := axis{lo: lo - pad, hi: hi + pad, p0: p0, p1: p1, date: date}
	a.ticks = niceTicks(a.lo, a.hi, maxTicks)
	a.labelFor = func(v float64) string { return tickLabel(v, a.ticks) }
	if date {
		a.labelFor = func(v float64) string { return dataset.FormatDays(v, dataset.PrecDay) }
	}
	return a
}

func (a axis) at(v float64) float64 {
	return a.p0 + (v-a.lo)/(a.hi-a.lo)*(a.p1-a.p0)
}

// niceTicks returns about n round values (1, 2 or 5 times a power of ten) within [lo, hi].
func niceTicks(lo, hi float64, n int) []float64 {
	span := hi - lo
	if !(span > 0) || n < 2 {
		return []float64{lo}
	}
	raw := span / float64(n-1)
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := mag
	for _, m := range []float64{1, 2, 5, 10} {
		if m*mag >= raw {
			step = m * mag
			break
		}
	}
	var out []float64
	for v := math.Ceil(lo/step) * step; v <= hi+step*1e-9; v += step {
		if math.Abs(v) < step*1e-9 {
			v = 0
		}
		out = append(out, v)
	}
	return out
}

func tickLabel(v float64, ticks []float64) string {
	step := 1.0
	if len(ticks) > 1 {
		step = ticks[1] - ticks[0]
	}
	dec := 0
	if step < 1 {
		dec = int(math.Ceil(-math.Log10(step) - 1e-9))
	}
	return strconv.FormatFloat(v, 'f', dec, 64)
}

// frame draws the grid, the axes with their ticks and the axis titles.
func (s *svgDoc) frame(ax, ay axis, xTitle, yTitle string) {
	x0, x1, y0, y1 := padL, padL+innerW, padT+innerH, padT
	for _, t := range ay.ticks {
		y := ay.at(t)
		s.f(`<path d="M%s %sH%s" stroke="%s"/>`, pn(x0), pn(y), pn(x1), plotGrid)
		s.text(x0-6, y+3.5, "end", "", ay.labelFor(t))
	}
	for i, t := range ax.ticks {
		x := ax.at(t)
		s.f(`<path d="M%s %sV%s" stroke="%s"/>`, pn(x), pn(y0), pn(y1), plotGrid)
		if ax.date && len(ax.ticks) > 4 && i%2 == 1 {
			continue // date labels are wide: every other one
		}
		s.text(x, y0+15, "middle", "", ax.labelFor(t))
	}
	s.f(`<path d="M%s %sV%sH%s" fill="none" stroke="%s"/>`, pn(x0), pn(y1), pn(y0), pn(x1), plotAxis)
	s.text(padL+innerW/2, y0+32, "middle", ` font-weight="600"`, xTitle)
	s.f(`<text transform="translate(14 %s) rotate(-90)" text-anchor="middle" font-weight="600">%s</text>`, pn(padT+innerH/2), esc(yTitle))
}

// legend draws swatches along the bottom edge: each entry a marker kind and its text.
func (s *svgDoc) legend(entries ...[2]string) {
	x := padL
	for _, e := range entries {
		switch e[0] {
		case "pass":
			s.f(`<circle cx="%s" cy="%s" r="3" fill="%s" fill-opacity="0.6"/>`, pn(x+4), pn(legendY-4), plotPass)
		case "fail":
			s.cross(x+4, legendY-4)
		case "area":
			s.f(`<rect x="%s" y="%s" width="12" height="9" fill="%s" stroke="%s" stroke-dasharray="3 2"/>`, pn(x-2), pn(legendY-9), plotArea, plotAllowed)
		case "centre":
			s.f(`<path d="M%s %sh12" stroke="%s" stroke-width="1.6"/>`, pn(x-2), pn(legendY-4), plotAllowed)
		case "limit":
			s.f(`<path d="M%s %sh12" stroke="%s" stroke-width="1.6" stroke-dasharray="4 3"/>`, pn(x-2), pn(legendY-4), plotAllowed)
		case "diagonal":
			s.f(`<path d="M%s %sh12" stroke="%s" stroke-width="1.6" stroke-dasharray="6 3"/>`, pn(x-2), pn(legendY-4), plotDiag)
		case "other":
			s.f(`<path d="M%s %sh12" stroke="%s" stroke-width="1.2"/>`, pn(x-2), pn(legendY-4), plotOther)
		case "flagged":
			s.f(`<path d="M%s %sh12" stroke="%s" stroke-width="1.6"/>`, pn(x-2), pn(legendY-4), plotPass)
		case "grey":
			s.f(`<circle cx="%s" cy="%s" r="3" fill="%s" fill-opacity="0.8"/>`, pn(x+4), pn(legendY-4), plotOther)
		case "dark":
			s.f(`<circle cx="%s" cy="%s" r="3" fill="%s" fill-opacity="0.85"/>`, pn(x+4), pn(legendY-4), plotPass)
		case "otherbox":
			s.f(`<rect x="%s" y="%s" width="12" height="9" fill="%s" fill-opacity="0.55" stroke="%s"/>`, pn(x-2), pn(legendY-9), plotOther, plotAxis)
		case "sitebox":
			s.f(`<rect x="%s" y="%s" width="12" height="9" fill="%s" fill-opacity="0.25" stroke="%s" stroke-width="1.5"/>`, pn(x-2), pn(legendY-9), plotPass, plotPass)
		}
		s.text(x+14, legendY, "start", "", e[1])
		x += 22 + 6.2*float64(len([]rune(e[1])))
	}
}

func (s *svgDoc) clip() {
	s.f(`<clipPath id="%s-c"><rect x="%s" y="%s" width="%s" height="%s"/></clipPath>`, s.id, pn(padL), pn(padT), pn(innerW), pn(innerH))
}

func polyPath(ax, ay axis, pts []XY, close bool) string {
	var b strings.Builder
	for i, p := range pts {
		if math.IsNaN(p.X) || math.IsNaN(p.Y) {
			continue
		}
		if i == 0 || b.Len() == 0 {
			b.WriteString("M")
		} else {
			b.WriteString("L")
		}
		b.WriteString(pn(ax.at(p.X)) + " " + pn(ay.at(p.Y)))
	}
	if close && b.Len() > 0 {
		b.WriteString("Z")
	}
	return b.String()
}

func scatterSVG(s *svgDoc, p *ScatterPlot) {
	nFail := 0
	xs := make([]float64, 0, len(p.Points))
	ys := make([]float64, 0, len(p.Points))
	for _, pt := range p.Points {
		xs, ys = append(xs, pt.X), append(ys, pt.Y)
		if pt.Fail {
			nFail++
		}
	}
	ax := newAxis(xs, padL, padL+innerW, p.XDate)
	ay := newAxis(ys, padT+innerH, padT, p.YDate)
	desc := fmt.Sprintf("Scatter plot of %s against %s: %d records drawn of %d, %d flagged by the rule (crosses).",
		p.YName, p.XName, len(p.Points), p.Total, nFail)
	if p.Groups[0] != "" {
		desc = fmt.Sprintf("Scatter plot of %s against %s: %d records drawn of %d, %d of them %s (dark, on top), the others %s (grey).",
			p.YName, p.XName, len(p.Points), p.Total, nFail, p.Groups[1], p.Groups[0])
	}
	s.open(plotW, plotH, p.YName+" against "+p.XName, desc)
	s.clip()
	s.frame(ax, ay, p.XName, p.YName)
	s.f(`<g clip-path="url(#%s-c)">`, s.id)
	if len(p.Area) > 0 {
		s.f(`<path d="%s" fill="%s" fill-opacity="0.7"/>`, polyPath(ax, ay, p.Area, true), plotArea)
	}
	if p.Groups[0] != "" {
		groupPoints(s, ax, ay, p.Points)
	}
	for _, pt := range p.Points {
		if !pt.Fail && p.Groups[0] == "" {
			s.f(`<circle cx="%s" cy="%s" r="%s" fill="%s" fill-opacity="0.45"/>`, pn(ax.at(pt.X)), pn(ay.at(pt.Y)), pn(pointR), plotPass)
		}
	}
	roles := map[string]bool{}
	for _, l := range p.Lines {
		roles[l.Role] = true
		switch l.Role {
		case "centre":
			s.f(`<path d="%s" fill="none" stroke="%s" stroke-width="1.6"/>`, polyPath(ax, ay, l.Points, false), plotAllowed)
		case "limit":
			s.f(`<path d="%s" fill="none" stroke="%s" stroke-width="1.4" stroke-dasharray="4 3"/>`, polyPath(ax, ay, l.Points, false), plotAllowed)
		default:
			s.f(`<path d="%s" fill="none" stroke="%s" stroke-width="1.6" stroke-dasharray="6 3"/>`, polyPath(ax, ay, l.Points, false), plotDiag)
		}
	}
	for _, pt := range p.Points {
		if pt.Fail && p.Groups[0] == "" {
			s.cross(ax.at(pt.X), ay.at(pt.Y))
		}
	}
	s.b.WriteString("</g>")
	leg := [][2]string{{"pass", "passes"}, {"fail", "flagged"}}
	if p.Groups[0] != "" {
		leg = [][2]string{{"grey", p.Groups[0]}, {"dark", p.Groups[1]}}
	}
	if len(p.Area) > 0 {
		leg = append(leg, [2]string{"area", "allowed band"})
	}
	if roles["centre"] {
		leg = append(leg, [2]string{"centre", "fitted line"})
	}
	if roles["diagonal"] {
		leg = append(leg, [2]string{"diagonal", "limit X = Y"})
	} else if roles["limit"] {
		leg = append(leg, [2]string{"limit", "limit"})
	}
	s.legend(leg...)
}

func crossSVG(s *svgDoc, c *CrossTable) {
	labelW := 8.0
	for _, r := range c.Rows {
		labelW = math.Max(labelW, 6.4*float64(len([]rune(r))))
	}
	labelW = math.Min(labelW+10, 150)
	cellW := crossTableCell * 1.6
	if len(c.Cols) > 0 {
		cellW = math.Min(cellW, (crossTableMaxW-labelW)/float64(len(c.Cols)))
	}
	cellW = math.Max(cellW, 34)
	top := 52.0
	w := labelW + cellW*float64(len(c.Cols)) + 8
	h := top + crossTableCell*float64(len(c.Rows)) + 30
	total, forbidden, nForb := 0, 0, 0
	maxN := 1
	for i := range c.Counts {
		for j, n := range c.Counts[i] {
			total += n
			maxN = max(maxN, n)
			if c.Forbidden[i][j] {
				forbidden += n
				nForb++
			}
		}
	}
	desc := fmt.Sprintf("Contingency table of %s (rows) by %s (columns), %d records; %d cells the rule does not allow hold %d records.",
		c.RowVar, c.ColVar, total, nForb, forbidden)
	s.open(w, h, c.RowVar+" by "+c.ColVar, desc)
	s.f(`<defs><pattern id="%s-h" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><rect width="6" height="6" fill="#FBE4D6"/><path d="M0 0V6" stroke="%s" stroke-width="1.2" stroke-opacity="0.55"/></pattern></defs>`, s.id, plotFail)
	s.text(labelW+cellW*float64(len(c.Cols))/2, 14, "middle", ` font-weight="600"`, c.ColVar)
	s.text(4, top-8, "start", ` font-weight="600"`, c.RowVar)
	for j, col := range c.Cols {
		x := labelW + cellW*(float64(j)+0.5)
		s.text(x, top-8, "middle", "", clipText(col, int(cellW/6.2)))
	}
	for i, row := range c.Rows {
		y := top + crossTableCell*float64(i)
		s.text(labelW-6, y+crossTableCell/2+4, "end", "", clipText(row, 24))
		for j := range c.Cols {
			x := labelW + cellW*float64(j)
			n := c.Counts[i][j]
			fill := "#FFFFFF"
			if n > 0 {
				// lightness by count, on the pass colour, so the table reads like a heatmap
				fill = blend("#FFFFFF", "#9DB3C8", math.Sqrt(float64(n)/float64(maxN)))
			}
			if c.Forbidden[i][j] {
				s.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="url(#%s-h)" stroke="%s" stroke-width="2"/>`,
					pn(x+1.5), pn(y+1.5), pn(cellW-3), pn(crossTableCell-3), s.id, plotFail)
			} else {
				s.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="%s" stroke="%s"/>`,
					pn(x+1.5), pn(y+1.5), pn(cellW-3), pn(crossTableCell-3), fill, plotGrid)
			}
			attrs := ""
			if c.Forbidden[i][j] && n > 0 {
				attrs = ` font-weight="700" fill="` + plotFail + `"`
			}
			s.text(x+cellW/2, y+crossTableCell/2+4, "middle", attrs, strconv.Itoa(n))
		}
	}
	ly := h - 10
	s.f(`<rect x="4" y="%s" width="14" height="10" fill="url(#%s-h)" stroke="%s" stroke-width="1.5"/>`, pn(ly-9), s.id, plotFail)
	s.text(24, ly, "start", "", "not allowed by the rule (count of records)")
}

func clipText(s string, n int) string {
	r := []rune(s)
	if n < 2 {
		n = 2
	}
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// blend mixes colours a and b ("#RRGGBB") with weight f of b.
func blend(a, b string, f float64) string {
	ca, cb := heatmapRGB(a), heatmapRGB(b)
	var out [3]int
	for i := range out {
		out[i] = int(math.Round(float64(ca[i]) + f*float64(cb[i]-ca[i])))
	}
	return fmt.Sprintf("#%02X%02X%02X", out[0], out[1], out[2])
}

func trajectorySVG(s *svgDoc, t *TrajectoryPlot) {
	pos := map[float64]float64{}
	for i, v := range t.Visits {
		pos[v] = float64(i)
	}
	var ys []float64
	nFlag := 0
	for _, se := range t.Series {
		ys = append(ys, se.Y...)
		if se.Flagged {
			nFlag++
		}
	}
	ax := axis{lo: -0.4, hi: float64(len(t.Visits)) - 0.6, p0: padL, p1: padL + innerW}
	for i := range t.Visits {
		ax.ticks = append(ax.ticks, float64(i))
	}
	ax.labelFor = func(v float64) string {
		i := int(v)
		if i >= 0 && i < len(t.Labels) && t.Labels[i] != "" {
			return clipText(t.Labels[i], int(innerW/float64(max(1, len(t.Visits)))/5.8))
		}
		return dataset.FormatFloat(t.Visits[i])
	}
	ay := newAxis(ys, padT+innerH, padT, false)
	desc := fmt.Sprintf("%s by visit for %d subjects (%d with a flagged change, drawn darker; flagged visits marked with crosses); %d other subjects not drawn.",
		t.YName, len(t.Series), nFlag, t.Others)
	s.open(plotW, plotH, t.YName+" by visit", desc)
	s.clip()
	s.frame(ax, ay, "visit", t.YName)
	s.f(`<g clip-path="url(#%s-c)" fill="none">`, s.id)
	for pass := 0; pass < 2; pass++ {
		for _, se := range t.Series {
			if se.Flagged != (pass == 1) {
				continue
			}
			var pts []XY
			for k := range se.X {
				if !math.IsNaN(se.Y[k]) {
					pts = append(pts, XY{pos[se.X[k]], se.Y[k]})
				}
			}
			colour, width := plotOther, "1"
			if se.Flagged {
				colour, width = plotPass, "1.5"
			}
			s.f(`<path d="%s" stroke="%s" stroke-width="%s"/>`, polyPath(ax, ay, pts, false), colour, width)
			if se.Flagged {
				prev := -1
				for k := range se.X {
					if math.IsNaN(se.Y[k]) {
						continue
					}
					if se.Fail[k] && prev >= 0 {
						s.f(`<path d="M%s %sL%s %s" stroke="%s" stroke-width="2.4"/>`,
							pn(ax.at(pos[se.X[prev]])), pn(ay.at(se.Y[prev])), pn(ax.at(pos[se.X[k]])), pn(ay.at(se.Y[k])), plotFail)
					}
					prev = k
				}
			}
		}
	}
	for _, se := range t.Series {
		for k := range se.X {
			if se.Fail[k] && !math.IsNaN(se.Y[k]) {
				s.cross(ax.at(pos[se.X[k]]), ay.at(se.Y[k]))
			}
		}
	}
	s.b.WriteString("</g>")
	s.legend([2]string{"other", "other subjects"}, [2]string{"flagged", "subjects with a flag"}, [2]string{"fail", "flagged change"})
}

func stripSVG(s *svgDoc, p *StripPlot) {
	var ys []float64
	nFail := 0
	for _, g := range p.Groups {
		ys = append(ys, g.Values...)
		for _, v := range []float64{g.Lo, g.Hi} {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				ys = append(ys, v)
			}
		}
		for _, f := range g.Fail {
			if f {
				nFail++
			}
		}
	}
	ax := axis{lo: -0.5, hi: float64(len(p.Groups)) - 0.5, p0: padL, p1: padL + innerW}
	for i := range p.Groups {
		ax.ticks = append(ax.ticks, float64(i))
	}
	ax.labelFor = func(v float64) string {
		return clipText(p.Groups[int(v)].Level, int(innerW/float64(max(1, len(p.Groups)))/5.8))
	}
	ay := newAxis(ys, padT+innerH, padT, false)
	desc := fmt.Sprintf("%s by %s: values of %d groups with each group's limits (dashed); %d values flagged (crosses).",
		p.YName, p.GroupVar, len(p.Groups), nFail)
	s.open(plotW, plotH, p.YName+" by "+p.GroupVar, desc)
	s.clip()
	s.frame(ax, ay, p.GroupVar, p.YName)
	s.f(`<g clip-path="url(#%s-c)">`, s.id)
	half := (ax.at(1) - ax.at(0)) * stripJitter
	for gi, g := range p.Groups {
		cx := ax.at(float64(gi))
		for _, v := range []float64{g.Lo, g.Hi} {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				s.f(`<path d="M%s %sh%s" stroke="%s" stroke-width="1.6" stroke-dasharray="4 3"/>`, pn(cx-half*1.3), pn(ay.at(v)), pn(2.6*half), plotAllowed)
			}
		}
		for k, v := range g.Values {
			if g.Fail[k] {
				continue
			}
			s.f(`<circle cx="%s" cy="%s" r="%s" fill="%s" fill-opacity="0.45"/>`, pn(cx+jitter(k)*half), pn(ay.at(v)), pn(pointR), plotPass)
		}
		for k, v := range g.Values {
			if g.Fail[k] {
				s.cross(cx+jitter(k)*half, ay.at(v))
			}
		}
	}
	s.b.WriteString("</g>")
	s.legend([2]string{"pass", "passes"}, [2]string{"fail", "flagged"}, [2]string{"limit", "group limits"})
}

// groupPoints draws the points of a two-group scatter: the first group (Fail false) grey
// underneath, the second dark on top.
func groupPoints(s *svgDoc, ax, ay axis, pts []ScatterPoint) {
	for _, second := range []bool{false, true} {
		colour, op := plotOther, "0.55"
		if second {
			colour, op = plotPass, "0.8"
		}
		for _, pt := range pts {
			if pt.Fail == second {
				s.f(`<circle cx="%s" cy="%s" r="%s" fill="%s" fill-opacity="%s"/>`, pn(ax.at(pt.X)), pn(ay.at(pt.Y)), pn(pointR), colour, op)
			}
		}
	}
}

// shiftSVG draws a ShiftPlot: per stratum, the other sites' box (grey, left) and the
// site's box (blue outline, right), each from the 25th to the 75th percentile with a bar
// at the median; the medians joined across strata; a cross on the site's median where its
// test is flagged.
func shiftSVG(s *svgDoc, p *ShiftPlot) {
	var ys []float64
	nFlag := 0
	for k := range p.Strata {
		ys = append(ys, p.SiteQ[k][:]...)
		ys = append(ys, p.OthersQ[k][:]...)
		if p.Flag[k] {
			nFlag++
		}
	}
	ax := axis{lo: -0.5, hi: float64(len(p.Strata)) - 0.5, p0: padL, p1: padL + innerW}
	for i := range p.Strata {
		ax.ticks = append(ax.ticks, float64(i))
	}
	ax.labelFor = func(v float64) string {
		return clipText(p.Strata[int(v)], int(innerW/float64(max(1, len(p.Strata)))/5.8))
	}
	ay := newAxis(ys, padT+innerH, padT, false)
	desc := fmt.Sprintf("%s at site %s and at the other sites, by %d strata: quartile boxes and medians; %d strata flagged (crosses).",
		p.YName, p.Site, len(p.Strata), nFlag)
	s.open(plotW, plotH, p.YName+" at site "+p.Site+" and the other sites", desc)
	s.clip()
	xTitle := "visit"
	if len(p.Strata) == 1 {
		xTitle = ""
	}
	s.frame(ax, ay, xTitle, p.YName)
	s.f(`<g clip-path="url(#%s-c)">`, s.id)
	step := ax.at(1) - ax.at(0)
	off, half := 0.17*step, math.Min(0.13*step, 22)
	box := func(cx float64, q [3]float64, fill, op, stroke, width string) {
		if math.IsNaN(q[1]) {
			return
		}
		y0, y1 := ay.at(q[2]), ay.at(q[0])
		s.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="%s" fill-opacity="%s" stroke="%s" stroke-width="%s"/>`,
			pn(cx-half), pn(y0), pn(2*half), pn(math.Max(y1-y0, 1)), fill, op, stroke, width)
		s.f(`<path d="M%s %sh%s" stroke="%s" stroke-width="2.4"/>`, pn(cx-half), pn(ay.at(q[1])), pn(2*half), stroke)
	}
	line := func(dx float64, qs [][3]float64, colour, width string) {
		var b strings.Builder
		n := 0
		for k, q := range qs {
			if math.IsNaN(q[1]) {
				continue
			}
			if n == 0 {
				b.WriteString("M")
			} else {
				b.WriteString("L")
			}
			b.WriteString(pn(ax.at(float64(k))+dx) + " " + pn(ay.at(q[1])))
			n++
		}
		if n > 1 {
			s.f(`<path d="%s" fill="none" stroke="%s" stroke-width="%s"/>`, b.String(), colour, width)
		}
	}
	line(-off, p.OthersQ, plotAxis, "1.4")
	line(off, p.SiteQ, plotPass, "1.8")
	for k := range p.Strata {
		cx := ax.at(float64(k))
		box(cx-off, p.OthersQ[k], plotOther, "0.55", plotAxis, "1")
		box(cx+off, p.SiteQ[k], plotPass, "0.25", plotPass, "1.5")
	}
	for k := range p.Strata {
		if p.Flag[k] && !math.IsNaN(p.SiteQ[k][1]) {
			s.cross(ax.at(float64(k))+off, ay.at(p.SiteQ[k][1]))
		}
	}
	s.b.WriteString("</g>")
	s.legend([2]string{"otherbox", "other sites"}, [2]string{"sitebox", "site " + p.Site}, [2]string{"fail", "flagged"})
}

// jitter spreads the k-th point of a strip over [−1, 1) by the golden-ratio sequence:
// deterministic, and even for any number of points.
func jitter(k int) float64 {
	f := math.Mod(float64(k)*0.6180339887498949, 1)
	return 2*f - 1
}
