package review

// The data behind each proposal's figure: what the rule sees in each record (Check.Values,
// so carried values and derived variables are plotted as the rule judges them), its
// verdict, and the rule's own parameters turned into reference lines and cells.

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/signals"
)

const (
	maxFailPoints  = 400
	maxCrossLevels = 8
	maxFlaggedSubj = 12
	maxOtherSubj   = 30
	maxStripPoints = 250
	lineSteps      = 48
)

// plotFor returns the figure of r on t; verdicts are r's verdicts per row.
func plotFor(r *rules.Rule, t *dataset.Table, c rules.Check, verdicts []rules.Verdict, in Input) render.Plot {
	maxPts := in.MaxPoints
	if maxPts <= 0 {
		maxPts = 1500
	}
	switch r.Kind {
	case rules.KindBand:
		p := scatter(r, t, c, verdicts, maxPts)
		if p.Scatter != nil {
			p.Caption += bandOverlay(r, p.Scatter)
		}
		return p
	case rules.KindOrder:
		p := scatter(r, t, c, verdicts, maxPts)
		if p.Scatter != nil {
			p.Caption += orderOverlay(r, p.Scatter)
		}
		return p
	case rules.KindImplies, rules.KindPresence:
		return crossTable(r, t, c, verdicts)
	case rules.KindVisitChange:
		return trajectories(r, t, c, verdicts)
	case rules.KindGroupRange, rules.KindCutoff:
		return strip(r, t, c, verdicts, maxPts)
	}
	// Other kinds: the first two variables, as a scatter when both are numbers or
	// dates, as a table when both are categories.
	if len(r.Vars) < 2 {
		return render.Plot{Caption: "No figure: the rule reads one variable."}
	}
	if isNumeric(t, r.Vars[0]) && isNumeric(t, r.Vars[1]) {
		p := scatter(r, t, c, verdicts, maxPts)
		if p.Scatter != nil {
			p.Caption = fmt.Sprintf("%s against %s; crosses are the records the rule flags. The rule's formula is in its statement.", r.Vars[1], r.Vars[0])
		}
		return p
	}
	if !isNumeric(t, r.Vars[0]) && !isNumeric(t, r.Vars[1]) {
		return crossTable(r, t, c, verdicts)
	}
	return render.Plot{Caption: "No figure for this kind of rule."}
}

func isNumeric(t *dataset.Table, name string) bool {
	c := t.Col(name)
	return c != nil && (c.Storage == dataset.StoreFloat || c.Storage == dataset.StoreDate)
}

func isDate(t *dataset.Table, name string) bool {
	c := t.Col(name)
	return c != nil && c.Storage == dataset.StoreDate
}

// numberOf reads a display value as a number: a decimal, or an ISO 8601 date as the
// first day it may fall on (days since 1970-01-01). NaN when neither.
func numberOf(s string, date bool) float64 {
	if s == "" {
		return math.NaN()
	}
	if date {
		d, err := dataset.ParseISO8601(s)
		if err != nil {
			return math.NaN()
		}
		lo, _ := d.Interval()
		return lo
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return f
}

// scatter plots Vars[1] (y) against Vars[0] (x): every flagged record (up to
// maxFailPoints) and an even sample of at most maxPts passing ones.
func scatter(r *rules.Rule, t *dataset.Table, c rules.Check, verdicts []rules.Verdict, maxPts int) render.Plot {
	if len(r.Vars) < 2 {
		return render.Plot{Caption: "No figure: the rule reads one variable."}
	}
	xd, yd := isDate(t, r.Vars[0]), isDate(t, r.Vars[1])
	var pass, fail []render.ScatterPoint
	for i, v := range verdicts {
		if v != rules.Pass && v != rules.Fail {
			continue
		}
		vals := c.Values(i)
		x, y := numberOf(vals[0], xd), numberOf(vals[1], yd)
		if math.IsNaN(x) || math.IsNaN(y) {
			continue
		}
		pt := render.ScatterPoint{X: x, Y: y, Fail: v == rules.Fail}
		if pt.Fail {
			fail = append(fail, pt)
		} else {
			pass = append(pass, pt)
		}
	}
	if len(pass)+len(fail) == 0 {
		return render.Plot{Caption: "No figure: no record has both values."}
	}
	s := &render.ScatterPlot{XName: r.Vars[0], YName: r.Vars[1], XDate: xd, YDate: yd, Total: len(pass) + len(fail)}
	s.Points = append(sample(pass, maxPts), sample(fail, maxFailPoints)...)
	cap := fmt.Sprintf("%s against %s, %d records", r.Vars[1], r.Vars[0], s.Total)
	if len(s.Points) < s.Total {
		cap += fmt.Sprintf(" (%d drawn: every flagged record up to %d and an even sample of the others)", len(s.Points), maxFailPoints)
	}
	return render.Plot{Scatter: s, Caption: cap + "."}
}

// sample returns at most n of pts, evenly spaced, in order.
func sample(pts []render.ScatterPoint, n int) []render.ScatterPoint {
	if len(pts) <= n {
		return pts
	}
	out := make([]render.ScatterPoint, 0, n)
	for k := 0; k < n; k++ {
		out = append(out, pts[k*len(pts)/n])
	}
	return out
}

func pnum(m map[string]any, k string) (float64, bool) { return rules.Number(m[k]) }

func pbool(m map[string]any, k string) bool {
	b, _ := m[k].(bool)
	return b
}

func pstr(m map[string]any, k, def string) string {
	if s, ok := m[k].(string); ok && s != "" {
		return s
	}
	return def
}

func pstrings(m map[string]any, k string) []string {
	var out []string
	switch x := m[k].(type) {
	case []any:
		for _, v := range x {
			out = append(out, fmt.Sprint(v))
		}
	case []string:
		out = x
	}
	return out
}

type fitLine struct{ slope, intercept, scale float64 }

func pline(m map[string]any, k string) (fitLine, bool) {
	mm, ok := m[k].(map[string]any)
	if !ok {
		return fitLine{}, false
	}
	var l fitLine
	var ok1, ok2, ok3 bool
	l.slope, ok1 = pnum(mm, "slope")
	l.intercept, ok2 = pnum(mm, "intercept")
	l.scale, ok3 = pnum(mm, "scale")
	return l, ok1 && ok2 && ok3
}

func dataRange(pts []render.ScatterPoint, y bool) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		v := p.X
		if y {
			v = p.Y
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return lo, hi
}

// bandOverlay draws a band rule's allowed region: the band of Y predicted from X as the
// shaded area with its fitted line, and the band of X predicted from Y as dashed limits,
// each back-transformed when the rule fits on logarithms.
func bandOverlay(r *rules.Rule, s *render.ScatterPlot) string {
	m := r.Params
	logx, logy := pbool(m, "log_x"), pbool(m, "log_y")
	k, ok := pnum(m, "k")
	if !ok {
		k = 5
	}
	fwd := func(v float64, lg bool) float64 {
		if lg {
			if !(v > 0) {
				return math.NaN()
			}
			return math.Log(v)
		}
		return v
	}
	back := func(v float64, lg bool) float64 {
		if lg {
			return math.Exp(v)
		}
		return v
	}
	xlo, xhi := dataRange(s.Points, false)
	ylo, yhi := dataRange(s.Points, true)
	grid := func(lo, hi float64, lg bool) []float64 {
		a, b := fwd(lo, lg), fwd(hi, lg)
		if lg && math.IsNaN(a) {
			a = fwd(math.Max(lo, hi*1e-3), lg)
		}
		out := make([]float64, lineSteps+1)
		for i := range out {
			out[i] = a + (b-a)*float64(i)/lineSteps
		}
		return out
	}
	when := pstr(m, "flag_when", "both")
	if l, ok := pline(m, "y_on_x"); ok {
		var centre, upper, lower []render.XY
		for _, tx := range grid(xlo, xhi, logx) {
			x := back(tx, logx)
			yc := l.intercept + l.slope*tx
			centre = append(centre, render.XY{X: x, Y: back(yc, logy)})
			upper = append(upper, render.XY{X: x, Y: back(yc+k*l.scale, logy)})
			lower = append(lower, render.XY{X: x, Y: back(yc-k*l.scale, logy)})
		}
		for i := len(lower) - 1; i >= 0; i-- {
			upper = append(upper, lower[i])
		}
		s.Area = upper
		s.Lines = append(s.Lines, render.PlotLine{Role: "centre", Points: centre})
	}
	if l, ok := pline(m, "x_on_y"); ok && when != "y_on_x" {
		for _, sign := range []float64{1, -1} {
			var pts []render.XY
			for _, ty := range grid(ylo, yhi, logy) {
				xc := l.intercept + l.slope*ty + sign*k*l.scale
				pts = append(pts, render.XY{X: back(xc, logx), Y: back(ty, logy)})
			}
			s.Lines = append(s.Lines, render.PlotLine{Role: "limit", Points: pts})
		}
	}
	how := map[string]string{
		"both":   "a record is flagged only when it lies outside both bands",
		"either": "a record is flagged when it lies outside either band",
		"y_on_x": "a record is flagged when it lies outside the shaded band",
		"x_on_y": "a record is flagged when it lies outside the dashed limits",
	}[when]
	scale := ""
	if logx || logy {
		scale = " (fitted on logarithms)"
	}
	cap := fmt.Sprintf(" Shaded: %s predicted from %s ± %s robust scales%s; dashed: %s predicted from %s ± the same; %s.",
		r.Vars[1], r.Vars[0], strconv.FormatFloat(k, 'g', 3, 64), scale, r.Vars[0], r.Vars[1], how)
	return cap
}

// orderOverlay draws the limit of an order rule X ≤ Y + tolerance: the line
// Y = X − tolerance, on or above which records pass.
func orderOverlay(r *rules.Rule, s *render.ScatterPlot) string {
	tol, _ := pnum(r.Params, "tolerance")
	if s.XDate || s.YDate {
		switch pstr(r.Params, "unit", "day") {
		case "hour":
			tol /= 24
		case "minute":
			tol /= 24 * 60
		case "second":
			tol /= 24 * 3600
		}
	}
	xlo, xhi := dataRange(s.Points, false)
	ylo, yhi := dataRange(s.Points, true)
	lo, hi := math.Min(xlo, ylo+tol), math.Max(xhi, yhi+tol)
	s.Lines = append(s.Lines, render.PlotLine{Role: "diagonal", Points: []render.XY{{X: lo, Y: lo - tol}, {X: hi, Y: hi - tol}}})
	if tol == 0 {
		return fmt.Sprintf(" The dashed diagonal is %s = %s: records on or above it pass.", r.Vars[1], r.Vars[0])
	}
	return fmt.Sprintf(" The dashed line is %s = %s − %s: records on or above it pass.", r.Vars[1], r.Vars[0], fmtG(tol))
}

// crossTable tabulates the first two variables' display values, most frequent levels
// first (the rule's own levels always shown), and marks the cells the rule forbids.
func crossTable(r *rules.Rule, t *dataset.Table, c rules.Check, verdicts []rules.Verdict) render.Plot {
	if len(r.Vars) < 2 {
		return render.Plot{Caption: "No figure: the rule reads one variable."}
	}
	rowOf, colOf := func(v string) string { return blank(v) }, func(v string) string { return blank(v) }
	var forbidden func(row, col string) bool
	var pinRows, pinCols []string
	m := r.Params
	switch r.Kind {
	case rules.KindImplies:
		a, in, out := set(pstrings(m, "when_in")), set(pstrings(m, "then_in")), set(pstrings(m, "then_not_in"))
		pinRows = pstrings(m, "when_in")
		pinCols = append(pstrings(m, "then_in"), pstrings(m, "then_not_in")...)
		forbidden = func(row, col string) bool {
			if !a[row] || col == "(blank)" || col == otherLevel {
				return false
			}
			if len(in) > 0 {
				return !in[col]
			}
			return out[col]
		}
	case rules.KindPresence:
		when, then := pstr(m, "when", "present"), pstr(m, "then", "present")
		vals := set(pstrings(m, "values"))
		rowOf = func(v string) string {
			switch {
			case when == "in" && v == "":
				return "(blank)"
			case when == "in" && vals[v]:
				return v
			case when == "in":
				return "another value"
			case v == "":
				return "absent"
			}
			return "present"
		}
		colOf = func(v string) string {
			if v == "" {
				return "absent"
			}
			return "present"
		}
		premise := func(row string) bool {
			switch when {
			case "present":
				return row == "present"
			case "absent":
				return row == "absent"
			}
			return vals[row]
		}
		forbidden = func(row, col string) bool { return premise(row) && col != then }
		if when == "in" {
			pinRows = pstrings(m, "values")
		} else {
			pinRows = []string{"present", "absent"}
		}
		pinCols = []string{"present", "absent"}
	default:
		failCells := map[[2]string]bool{}
		for i, v := range verdicts {
			if v == rules.Fail {
				vals := c.Values(i)
				failCells[[2]string{blank(vals[0]), blank(vals[1])}] = true
			}
		}
		forbidden = func(row, col string) bool { return failCells[[2]string{row, col}] }
	}
	counts := map[[2]string]int{}
	rowN, colN := map[string]int{}, map[string]int{}
	for i := range verdicts {
		vals := c.Values(i)
		rw, cl := rowOf(vals[0]), colOf(vals[1])
		counts[[2]string{rw, cl}]++
		rowN[rw]++
		colN[cl]++
	}
	rowsKept, rowOther := topLevels(rowN, pinRows)
	colsKept, colOther := topLevels(colN, pinCols)
	ct := &render.CrossTable{RowVar: r.Vars[0], ColVar: r.Vars[1], Rows: rowsKept, Cols: colsKept}
	if rowOther {
		ct.Rows = append(ct.Rows, otherLevel)
	}
	if colOther {
		ct.Cols = append(ct.Cols, otherLevel)
	}
	ri, ci := index(ct.Rows), index(ct.Cols)
	ct.Counts = make([][]int, len(ct.Rows))
	ct.Forbidden = make([][]bool, len(ct.Rows))
	for i := range ct.Rows {
		ct.Counts[i] = make([]int, len(ct.Cols))
		ct.Forbidden[i] = make([]bool, len(ct.Cols))
		for j := range ct.Cols {
			ct.Forbidden[i][j] = ct.Rows[i] != otherLevel && ct.Cols[j] != otherLevel && forbidden(ct.Rows[i], ct.Cols[j])
		}
	}
	for k, n := range counts {
		i, ok := ri[k[0]]
		if !ok {
			i = ri[otherLevel]
		}
		j, ok := ci[k[1]]
		if !ok {
			j = ci[otherLevel]
		}
		ct.Counts[i][j] += n
	}
	caption := fmt.Sprintf("Records by %s (rows) and %s (columns); hatched cells are what the rule does not allow.", r.Vars[0], r.Vars[1])
	if r.Kind == rules.KindPresence {
		caption = fmt.Sprintf("Records by whether %s and %s are recorded; hatched cells are what the rule does not allow.", r.Vars[0], r.Vars[1])
	}
	return render.Plot{Cross: ct, Caption: caption}
}

const otherLevel = "(other)"

// othersKey holds, in limitsOf's result, the limits of every level not named.
const othersKey = "\x00others"

func blank(v string) string {
	if v == "" {
		return "(blank)"
	}
	return v
}

func set(s []string) map[string]bool {
	m := make(map[string]bool, len(s))
	for _, v := range s {
		m[v] = true
	}
	return m
}

func index(s []string) map[string]int {
	m := make(map[string]int, len(s))
	for i, v := range s {
		m[v] = i
	}
	return m
}

// topLevels returns the pinned levels that occur or are pinned, then the most frequent
// others (ties by name), at most maxCrossLevels in all, and whether any level was left
// out.
func topLevels(n map[string]int, pinned []string) ([]string, bool) {
	var out []string
	seen := map[string]bool{}
	for _, p := range pinned {
		if !seen[p] {
			seen[p] = true
			out = append(out, p)
		}
	}
	var rest []string
	for k := range n {
		if !seen[k] {
			rest = append(rest, k)
		}
	}
	sort.Slice(rest, func(a, b int) bool {
		if n[rest[a]] != n[rest[b]] {
			return n[rest[a]] > n[rest[b]]
		}
		return rest[a] < rest[b]
	})
	room := max(0, maxCrossLevels-len(out))
	if len(rest) <= room+1 {
		return append(out, rest...), false
	}
	return append(out, rest[:room]...), true
}

// trajectories draws the rule's variable over visits for the subjects with a flagged
// change (up to maxFlaggedSubj) and, in grey, the first maxOtherSubj other subjects.
func trajectories(r *rules.Rule, t *dataset.Table, c rules.Check, verdicts []rules.Verdict) render.Plot {
	if len(t.Keys) < 2 || len(r.Vars) < 1 {
		return render.Plot{Caption: "No figure: the table is not keyed by subject and visit."}
	}
	subj, visit := t.Col(t.Keys[0]), t.Col(t.Keys[1])
	if subj == nil || visit == nil || visit.Storage != dataset.StoreFloat {
		return render.Plot{Caption: "No figure: the table has no numeric visit key."}
	}
	label := t.Col("VISIT")
	type obs struct {
		v, y float64
		fail bool
	}
	bySubj := map[string][]obs{}
	var order []string
	flagged := map[string]bool{}
	labels := map[float64]string{}
	for i, vd := range verdicts {
		if visit.Missing(i) || subj.Missing(i) {
			continue
		}
		y := numberOf(c.Values(i)[0], false)
		if math.IsNaN(y) {
			continue
		}
		s := subj.String(i)
		if _, ok := bySubj[s]; !ok {
			order = append(order, s)
		}
		bySubj[s] = append(bySubj[s], obs{visit.Floats[i], y, vd == rules.Fail})
		if vd == rules.Fail {
			flagged[s] = true
		}
		if label != nil && !label.Missing(i) {
			if _, ok := labels[visit.Floats[i]]; !ok {
				labels[visit.Floats[i]] = label.String(i)
			}
		}
	}
	sort.Strings(order)
	tp := &render.TrajectoryPlot{YName: r.Vars[0]}
	visits := map[float64]bool{}
	nf, no := 0, 0
	for _, s := range order {
		isF := flagged[s]
		if isF && nf >= maxFlaggedSubj || !isF && no >= maxOtherSubj {
			tp.Others++
			continue
		}
		if isF {
			nf++
		} else {
			no++
		}
		os := bySubj[s]
		sort.SliceStable(os, func(a, b int) bool { return os[a].v < os[b].v })
		se := render.Series{Subject: s, Flagged: isF}
		for _, o := range os {
			se.X, se.Y, se.Fail = append(se.X, o.v), append(se.Y, o.y), append(se.Fail, o.fail)
			visits[o.v] = true
		}
		tp.Series = append(tp.Series, se)
	}
	if len(tp.Series) == 0 {
		return render.Plot{Caption: "No figure: no subject has values."}
	}
	for v := range visits {
		tp.Visits = append(tp.Visits, v)
	}
	sort.Float64s(tp.Visits)
	for _, v := range tp.Visits {
		tp.Labels = append(tp.Labels, labels[v])
	}
	lo, _ := pnum(r.Params, "low")
	hi, _ := pnum(r.Params, "high")
	limits := fmt.Sprintf("a change from %s to %s", fmtG(lo), fmtG(hi))
	if pstr(r.Params, "scale", "log") == "log" {
		limits = fmt.Sprintf("a ratio to the previous value from %s to %s", fmtG(math.Exp(lo)), fmtG(math.Exp(hi)))
	}
	return render.Plot{Trajectories: tp, Caption: fmt.Sprintf("%s by visit: %d subjects with a flagged change and %d others; the rule allows %s. %d subjects not drawn.",
		r.Vars[0], nf, no, limits, tp.Others)}
}

func fmtG(x float64) string { return strconv.FormatFloat(x, 'g', 3, 64) }

// strip draws the numeric variable per level of the categorical one with each level's
// limits: group_range's limits, or cutoff's cut (the flag level must lie below it, the
// others on or above).
func strip(r *rules.Rule, t *dataset.Table, c rules.Check, verdicts []rules.Verdict, maxPts int) render.Plot {
	if len(r.Vars) < 2 {
		return render.Plot{Caption: "No figure: the rule reads one variable."}
	}
	type grp struct {
		vals []float64
		fail []bool
	}
	groups := map[string]*grp{}
	var names []string
	for i, v := range verdicts {
		if v != rules.Pass && v != rules.Fail {
			continue
		}
		vals := c.Values(i)
		y := numberOf(vals[1], false)
		if math.IsNaN(y) || vals[0] == "" {
			continue
		}
		g := groups[vals[0]]
		if g == nil {
			g = &grp{}
			groups[vals[0]] = g
			names = append(names, vals[0])
		}
		g.vals, g.fail = append(g.vals, y), append(g.fail, v == rules.Fail)
	}
	if len(names) == 0 {
		return render.Plot{Caption: "No figure: no record has both values."}
	}
	sort.Strings(names)
	if len(names) > 12 {
		names = names[:12]
	}
	per := max(20, min(maxStripPoints, maxPts/len(names)))
	sp := &render.StripPlot{GroupVar: r.Vars[0], YName: r.Vars[1]}
	lim := limitsOf(r)
	for _, n := range names {
		g := groups[n]
		sg := render.StripGroup{Level: n, N: len(g.vals), Lo: math.NaN(), Hi: math.NaN()}
		if l, ok := lim[n]; ok {
			sg.Lo, sg.Hi = l[0], l[1]
		} else if l, ok := lim[othersKey]; ok {
			sg.Lo, sg.Hi = l[0], l[1]
		}
		// every flagged value, and an even sample of the others
		var passIdx []int
		for k := range g.vals {
			if g.fail[k] {
				sg.Values, sg.Fail = append(sg.Values, g.vals[k]), append(sg.Fail, true)
			} else {
				passIdx = append(passIdx, k)
			}
		}
		step := max(1, (len(passIdx)+per-1)/per)
		for q := 0; q < len(passIdx); q += step {
			sg.Values, sg.Fail = append(sg.Values, g.vals[passIdx[q]]), append(sg.Fail, false)
		}
		sp.Groups = append(sp.Groups, sg)
	}
	caption := fmt.Sprintf("%s by %s; dashed lines are each level's limits, crosses the records the rule flags.", r.Vars[1], r.Vars[0])
	if r.Kind == rules.KindCutoff {
		caption = fmt.Sprintf("%s by %s; the dashed line is the cut %s: records with %s = %s must lie below it, the others on or above it.",
			r.Vars[1], r.Vars[0], fmtG(func() float64 { v, _ := pnum(r.Params, "below"); return v }()), r.Vars[0], pstr(r.Params, "flag", fmt.Sprint(r.Params["flag"])))
	}
	return render.Plot{Strip: sp, Caption: caption}
}

// limitsOf returns a group_range rule's limits per level, or a cutoff rule's cut as
// limits: (−∞, cut) for the flag level, [cut, ∞) for the others, drawn as the cut alone.
func limitsOf(r *rules.Rule) map[string][2]float64 {
	out := map[string][2]float64{}
	switch r.Kind {
	case rules.KindGroupRange:
		m, _ := r.Params["limits"].(map[string]any)
		for k, v := range m {
			l, ok := v.([]any)
			if !ok || len(l) != 2 {
				continue
			}
			lo, ok1 := pnum(map[string]any{"v": l[0]}, "v")
			hi, ok2 := pnum(map[string]any{"v": l[1]}, "v")
			if ok1 && ok2 {
				out[k] = [2]float64{lo, hi}
			}
		}
	case rules.KindCutoff:
		cut, ok := pnum(r.Params, "below")
		if !ok {
			return out
		}
		flag := strings.TrimSpace(fmt.Sprint(r.Params["flag"]))
		out[flag] = [2]float64{math.NaN(), cut}
		out[othersKey] = [2]float64{cut, math.NaN()}
	}
	return out
}

// maxSiteOthers and maxSitePoints bound the points of a site's relationship figure drawn
// from the other sites and from the site.
const (
	maxSiteOthers = 700
	maxSitePoints = 400
)

// quartiles returns the 25th, 50th and 75th percentiles of x by R's default definition
// (quantile type 7, Hyndman & Fan 1996, Am. Stat. 50:361–365): with x sorted and
// h = (n − 1)·p, Q(p) = x[⌊h⌋] + (h − ⌊h⌋)·(x[⌊h⌋+1] − x[⌊h⌋]), 0-based. It sorts x in
// place and returns NaNs when x is empty.
func quartiles(x []float64) [3]float64 {
	if len(x) == 0 {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}
	}
	sort.Float64s(x)
	var q [3]float64
	for k, p := range []float64{0.25, 0.5, 0.75} {
		h := float64(len(x)-1) * p
		lo := int(math.Floor(h))
		q[k] = x[lo]
		if lo+1 < len(x) {
			q[k] += (h - float64(lo)) * (x[lo+1] - x[lo])
		}
	}
	return q
}

// shiftPlot compares variable v of t at site with the other sites pooled, per visit when
// t is keyed by VISITNUM (the strata of signals.Shifts), else in one stratum; the strata
// whose test in shifts is flagged for the site are marked.
func shiftPlot(t *dataset.Table, v, site string, shifts []signals.Shift) render.Plot {
	c := t.Col(v)
	if c == nil || c.Storage != dataset.StoreFloat {
		return render.Plot{}
	}
	vn := t.Col("VISITNUM")
	strata := t.IsKey("VISITNUM") && vn != nil && vn.Storage == dataset.StoreFloat
	type vals struct{ site, others []float64 }
	by := map[float64]*vals{}
	var keys []float64
	for i := range t.NRows {
		y := c.Floats[i]
		if math.IsNaN(y) {
			continue
		}
		k := 0.0
		if strata {
			if k = vn.Floats[i]; math.IsNaN(k) {
				continue
			}
		}
		b := by[k]
		if b == nil {
			b = &vals{}
			by[k] = b
			keys = append(keys, k)
		}
		if t.SiteOf(i) == site {
			b.site = append(b.site, y)
		} else {
			b.others = append(b.others, y)
		}
	}
	if len(keys) == 0 {
		return render.Plot{}
	}
	sort.Float64s(keys)
	flag := map[string]bool{}
	var worst *signals.Shift
	for k := range shifts {
		x := &shifts[k]
		if x.Flag && x.Site == site && x.Var == v && x.Table == signalTableName(t) {
			flag[x.Stratum] = true
			if worst == nil || math.Abs(math.Log(x.Ratio)) > math.Abs(math.Log(worst.Ratio)) {
				worst = x
			}
		}
	}
	labels := visitLabels(t)
	sp := &render.ShiftPlot{YName: v, Site: site}
	for _, k := range keys {
		b := by[k]
		stratum, label := "", "all subjects"
		if strata {
			num := dataset.FormatFloat(k)
			stratum, label = "VISITNUM="+num, num
			if l := labels[num]; l != "" {
				label = l
			}
		}
		sp.Strata = append(sp.Strata, label)
		sp.SiteQ = append(sp.SiteQ, quartiles(b.site))
		sp.OthersQ = append(sp.OthersQ, quartiles(b.others))
		sp.N, sp.NOthers = append(sp.N, len(b.site)), append(sp.NOthers, len(b.others))
		sp.Flag = append(sp.Flag, flag[stratum])
	}
	where := "by visit"
	if !strata {
		where = "over all subjects"
	}
	cap := fmt.Sprintf("%s at site %s (blue, right) and at the other sites pooled (grey, left), %s: boxes span the 25th to 75th percentiles, bars mark the medians", v, site, where)
	if worst != nil {
		in := ""
		if worst.Stratum != "" {
			in = " at " + stratumLabel(t, worst.Stratum)
		}
		cap += fmt.Sprintf("; crosses mark the flagged distribution tests. Largest shift%s: median %s against %s, ratio %s.",
			in, fmtG(worst.Median), fmtG(worst.OthersMedian), fmtRatio(worst.Ratio))
	} else {
		cap += "."
	}
	return render.Plot{Shift: sp, Caption: cap}
}

// relationPlot draws the pair of a relationship test: the site's records (dark, on top,
// up to maxSitePoints) over an even sample of the other sites' (grey, up to
// maxSiteOthers, and never more than maxPts), with each group's Spearman ρ in the caption.
func relationPlot(t *dataset.Table, r signals.Relation, maxPts int) render.Plot {
	cx, cy := t.Col(r.X), t.Col(r.Y)
	if cx == nil || cy == nil || cx.Storage != dataset.StoreFloat || cy.Storage != dataset.StoreFloat {
		return render.Plot{}
	}
	var at, others []render.ScatterPoint
	for i := range t.NRows {
		x, y := cx.Floats[i], cy.Floats[i]
		if math.IsNaN(x) || math.IsNaN(y) {
			continue
		}
		if t.SiteOf(i) == r.Site {
			at = append(at, render.ScatterPoint{X: x, Y: y, Fail: true})
		} else {
			others = append(others, render.ScatterPoint{X: x, Y: y})
		}
	}
	if len(at) == 0 {
		return render.Plot{}
	}
	s := &render.ScatterPlot{XName: r.X, YName: r.Y, Total: len(at) + len(others), Groups: [2]string{"other sites", "site " + r.Site}}
	s.Points = append(sample(others, min(maxSiteOthers, maxPts)), sample(at, maxSitePoints)...)
	unit := "records"
	if len(t.Keys) > 1 {
		unit = "subjects"
	}
	cap := fmt.Sprintf("%s against %s, %s level: site %s (dark) Spearman ρ = %s over %d %s; other sites (grey) ρ = %s over %d %s; q = %s.",
		r.Y, r.X, signalTableName(t), r.Site, strconv.FormatFloat(r.Rho, 'f', 2, 64), r.N, unit,
		strconv.FormatFloat(r.RhoOthers, 'f', 2, 64), r.NOthers, unit, fmtQ(r.Q))
	if len(s.Points) < s.Total {
		cap += fmt.Sprintf(" %d of %d records drawn.", len(s.Points), s.Total)
	}
	return render.Plot{Scatter: s, Caption: cap}
}

func fmtRatio(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "undefined"
	}
	return strconv.FormatFloat(x, 'f', 2, 64)
}

func fmtQ(q float64) string {
	if q < 1e-4 {
		return "< 0.0001"
	}
	return strconv.FormatFloat(q, 'f', 4, 64)
}
