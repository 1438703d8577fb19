package rules

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/crossform/crossform/dataset"
)

// A kind implements one rule kind: parameter validation, identity and binding.
type kind interface {
	// validate checks the number of variables and the parameters.
	validate(r *Rule) error
	// key returns the kind's key parameters as canonical text for ComputeID.
	key(r *Rule) string
	bind(r *Rule, t *dataset.Table) (Check, error)
}

var kindTable map[string]kind

func init() {
	kindTable = map[string]kind{
		KindOrder:       orderKind{},
		KindImplies:     impliesKind{},
		KindCutoff:      cutoffKind{},
		KindBand:        bandKind{},
		KindDerived:     derivedKind{},
		KindPresence:    presenceKind{},
		KindGroupRange:  groupRangeKind{},
		KindVisitChange: visitChangeKind{},
		KindExpr:        exprKind{},
	}
}

// identity is the canonical text ComputeID hashes: kind, level, variables and
// key parameters, separated by unit separators.
func identity(r *Rule) string {
	key := ""
	if k, ok := kindTable[r.Kind]; ok {
		key = k.key(r)
	}
	return strings.Join([]string{r.Kind, r.Level, strings.Join(r.Vars, "\x1f"), key}, "\x1e")
}

// epsilon is the relative slack of numeric comparisons: a value equal to a
// limit up to floating-point rounding of the limit's arithmetic (1e-9
// relative) is on the limit, and a value on the limit passes.
const epsilon = 1e-9

func leq(a, b float64) bool {
	return a <= b+epsilon*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// ---- parameter access ----

// Number returns a rule parameter's numeric value as decoded from YAML
// (float64, int, int64 or uint64); ok is false for anything else.
func Number(v any) (float64, bool) { return num(v) }

func num(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case int:
		return float64(x), true
	case int64:
		return float64(x), true
	case uint64:
		return float64(x), true
	}
	return 0, false
}

func paramFloat(r *Rule, k string, def float64) (float64, error) {
	v := r.Param(k)
	if v == nil {
		return def, nil
	}
	f, ok := num(v)
	if !ok || math.IsNaN(f) || math.IsInf(f, 0) {
		return 0, fmt.Errorf("params.%s: %v is not a number", k, v)
	}
	return f, nil
}

func needFloat(r *Rule, k string) (float64, error) {
	if r.Param(k) == nil {
		return 0, fmt.Errorf("params.%s: missing", k)
	}
	return paramFloat(r, k, 0)
}

func paramString(r *Rule, k, def string) (string, error) {
	v := r.Param(k)
	if v == nil {
		return def, nil
	}
	switch x := v.(type) {
	case string:
		return x, nil
	case bool:
		return strconv.FormatBool(x), nil
	}
	if f, ok := num(v); ok {
		return dataset.FormatFloat(f), nil
	}
	return "", fmt.Errorf("params.%s: want a single value, got %v", k, v)
}

func paramBool(r *Rule, k string) (bool, error) {
	v := r.Param(k)
	if v == nil {
		return false, nil
	}
	b, ok := v.(bool)
	if !ok {
		return false, fmt.Errorf("params.%s: want true or false, got %v", k, v)
	}
	return b, nil
}

// paramStrings reads a list of values as text (numbers formatted as the
// dataset package displays them, so 1 matches a numeric column's "1").
func paramStrings(r *Rule, k string) ([]string, error) {
	v := r.Param(k)
	if v == nil {
		return nil, nil
	}
	l, ok := v.([]any)
	if !ok {
		l = []any{v}
	}
	out := make([]string, 0, len(l))
	for _, e := range l {
		switch x := e.(type) {
		case string:
			out = append(out, x)
		case bool:
			out = append(out, strconv.FormatBool(x))
		default:
			f, ok := num(e)
			if !ok {
				return nil, fmt.Errorf("params.%s: want a list of values, got %v", k, e)
			}
			out = append(out, dataset.FormatFloat(f))
		}
	}
	return out, nil
}

func paramFloats(r *Rule, k string) ([]float64, error) {
	v := r.Param(k)
	if v == nil {
		return nil, nil
	}
	l, ok := v.([]any)
	if !ok {
		return nil, fmt.Errorf("params.%s: want a list of numbers", k)
	}
	out := make([]float64, len(l))
	for i, e := range l {
		f, ok := num(e)
		if !ok {
			return nil, fmt.Errorf("params.%s: %v is not a number", k, e)
		}
		out[i] = f
	}
	return out, nil
}

func needVars(r *Rule, n int, names string) error {
	if len(r.Vars) != n {
		return fmt.Errorf("%s needs %d variables (%s), got %d", r.Kind, n, names, len(r.Vars))
	}
	return nil
}

func sortedJoin(s []string) string {
	c := append([]string(nil), s...)
	sort.Strings(c)
	return strings.Join(c, "\x1f")
}

// ---- binding helpers ----

// boundBase holds what every check needs: the rule and a display getter per
// variable.
type boundBase struct {
	r    *Rule
	disp []func(int) string
}

func (b *boundBase) Rule() *Rule { return b.r }

func (b *boundBase) Values(row int) []string {
	out := make([]string, len(b.disp))
	for i, f := range b.disp {
		out[i] = f(row)
	}
	return out
}

func unevaluable(r *Rule, format string, a ...any) error {
	return &UnevaluableError{RuleID: r.ID, Reason: fmt.Sprintf(format, a...)}
}

func column(r *Rule, t *dataset.Table, name string) (*dataset.Column, error) {
	c := t.Col(name)
	if c == nil {
		return nil, unevaluable(r, "variable %q is not in table %q (level %s)", name, t.Name, t.Level)
	}
	return c, nil
}

// numeric returns a float getter for a numeric column (NaN when missing),
// with the subject's carried value filling missing rows when name is listed
// in params.carry.
func numeric(r *Rule, t *dataset.Table, name string) (func(int) float64, func(int) string, error) {
	c, err := column(r, t, name)
	if err != nil {
		return nil, nil, err
	}
	if c.Storage != dataset.StoreFloat {
		return nil, nil, unevaluable(r, "variable %q is %s, not a number", name, c.Type)
	}
	carry, err := paramStrings(r, "carry")
	if err != nil {
		return nil, nil, err
	}
	for _, cv := range carry {
		if cv == name {
			v, err := carried(t, c)
			if err != nil {
				return nil, nil, unevaluable(r, "carry %q: %v", name, err)
			}
			return func(i int) float64 { return v[i] },
				func(i int) string {
					if math.IsNaN(v[i]) {
						return ""
					}
					return dataset.FormatFloat(v[i])
				}, nil
		}
	}
	return func(i int) float64 {
		if c.Missing(i) {
			return math.NaN()
		}
		return c.Floats[i]
	}, c.String, nil
}

// carried returns c's values with missing rows filled by the subject's first
// recorded value: the subject is the table's first key, "first" is by the
// second key when it is numeric (VISITNUM), else by row order.
func carried(t *dataset.Table, c *dataset.Column) ([]float64, error) {
	if len(t.Keys) == 0 {
		return nil, errors.New("the table has no subject key")
	}
	subj := t.Col(t.Keys[0])
	var visit *dataset.Column
	if len(t.Keys) > 1 {
		if v := t.Col(t.Keys[1]); v != nil && v.Storage == dataset.StoreFloat {
			visit = v
		}
	}
	type first struct {
		v, at float64
		row   int
	}
	best := map[string]first{}
	for i := 0; i < t.NRows; i++ {
		if c.Missing(i) {
			continue
		}
		s := subj.String(i)
		at := float64(i)
		if visit != nil && !visit.Missing(i) {
			at = visit.Floats[i]
		}
		if b, ok := best[s]; !ok || at < b.at || (at == b.at && i < b.row) {
			best[s] = first{v: c.Floats[i], at: at, row: i}
		}
	}
	out := make([]float64, t.NRows)
	for i := range out {
		if !c.Missing(i) {
			out[i] = c.Floats[i]
		} else if b, ok := best[subj.String(i)]; ok {
			out[i] = b.v
		} else {
			out[i] = math.NaN()
		}
	}
	return out, nil
}

// ---- order: X ≤ Y + tolerance ----

// orderKind: Vars [X, Y]; params tolerance (number, default 0; in the
// variables' unit, or in date units), unit (date comparison unit: day
// (default), hour, minute, second). Numbers: Pass when X ≤ Y + tolerance.
// Dates: dataset.LessEq(X, Y + tolerance units); an Unknown comparison
// (partial dates) is NotEvaluable, never a discrepancy.
type orderKind struct{}

func (orderKind) validate(r *Rule) error {
	if err := needVars(r, 2, "X, Y with X ≤ Y"); err != nil {
		return err
	}
	if _, err := paramFloat(r, "tolerance", 0); err != nil {
		return err
	}
	u, err := paramString(r, "unit", "day")
	if err != nil {
		return err
	}
	_, err = dataset.ParsePrecision(u)
	return err
}

func (orderKind) key(r *Rule) string { return "" }

type orderCheck struct {
	boundBase
	x, y   *dataset.Column
	fx, fy func(int) float64
	tol    float64
	unit   dataset.Precision
	dates  bool
}

func (orderKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	cx, err := column(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	cy, err := column(r, t, r.Vars[1])
	if err != nil {
		return nil, err
	}
	tol, _ := paramFloat(r, "tolerance", 0)
	us, _ := paramString(r, "unit", "day")
	u, _ := dataset.ParsePrecision(us)
	c := &orderCheck{x: cx, y: cy, tol: tol, unit: u}
	c.r = r
	c.disp = []func(int) string{cx.String, cy.String}
	switch {
	case cx.Storage == dataset.StoreDate && cy.Storage == dataset.StoreDate:
		c.dates = true
	case cx.Storage == dataset.StoreFloat && cy.Storage == dataset.StoreFloat:
		var d1, d2 func(int) string
		if c.fx, d1, err = numeric(r, t, r.Vars[0]); err != nil {
			return nil, err
		}
		if c.fy, d2, err = numeric(r, t, r.Vars[1]); err != nil {
			return nil, err
		}
		c.disp = []func(int) string{d1, d2}
	default:
		return nil, unevaluable(r, "order needs two numbers or two dates; %q is %s and %q is %s", cx.Name, cx.Type, cy.Name, cy.Type)
	}
	return c, nil
}

func unitLen(u dataset.Precision) float64 {
	switch u {
	case dataset.PrecHour:
		return 1.0 / 24
	case dataset.PrecMinute:
		return 1.0 / 1440
	case dataset.PrecSecond:
		return 1.0 / 86400
	}
	return 1
}

func (c *orderCheck) Eval(i int) Verdict {
	if c.dates {
		alo, ahi, _, ok1 := c.x.Date(i)
		blo, bhi, _, ok2 := c.y.Date(i)
		if !ok1 || !ok2 {
			return NotEvaluable
		}
		sh := c.tol * unitLen(c.unit)
		switch dataset.LessEq(alo, ahi, blo+sh, bhi+sh, c.unit) {
		case dataset.True:
			return Pass
		case dataset.False:
			return Fail
		}
		return NotEvaluable
	}
	x, y := c.fx(i), c.fy(i)
	if math.IsNaN(x) || math.IsNaN(y) {
		return NotEvaluable
	}
	if leq(x, y+c.tol) {
		return Pass
	}
	return Fail
}

// ---- implies: X ∈ A ⇒ Y ∈ B (or Y ∉ B) ----

// impliesKind: Vars [X, Y]; params when_in (values of X), then_in or
// then_not_in (values of Y). Values match the display text of the record's
// value (a number 1 matches "1"). X missing: NotEvaluable; X ∉ A: Pass; X ∈ A
// and Y missing: NotEvaluable (use presence for missingness).
type impliesKind struct{}

func (impliesKind) validate(r *Rule) error {
	if err := needVars(r, 2, "X, Y"); err != nil {
		return err
	}
	a, err := paramStrings(r, "when_in")
	if err != nil {
		return err
	}
	if len(a) == 0 {
		return errors.New("params.when_in: missing (want the values of the first variable)")
	}
	in, err := paramStrings(r, "then_in")
	if err != nil {
		return err
	}
	out, err := paramStrings(r, "then_not_in")
	if err != nil {
		return err
	}
	if (len(in) == 0) == (len(out) == 0) {
		return errors.New("params: want exactly one of then_in and then_not_in")
	}
	return nil
}

func (impliesKind) key(r *Rule) string {
	a, _ := paramStrings(r, "when_in")
	in, _ := paramStrings(r, "then_in")
	out, _ := paramStrings(r, "then_not_in")
	return sortedJoin(a) + "\x1d" + sortedJoin(in) + "\x1d" + sortedJoin(out)
}

type impliesCheck struct {
	boundBase
	x, y   *dataset.Column
	a, b   map[string]bool
	negate bool
}

func set(s []string) map[string]bool {
	m := make(map[string]bool, len(s))
	for _, v := range s {
		m[v] = true
	}
	return m
}

func (impliesKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	cx, err := column(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	cy, err := column(r, t, r.Vars[1])
	if err != nil {
		return nil, err
	}
	a, _ := paramStrings(r, "when_in")
	in, _ := paramStrings(r, "then_in")
	out, _ := paramStrings(r, "then_not_in")
	c := &impliesCheck{x: cx, y: cy, a: set(a), b: set(in), negate: len(out) > 0}
	if c.negate {
		c.b = set(out)
	}
	c.r = r
	c.disp = []func(int) string{cx.String, cy.String}
	return c, nil
}

func (c *impliesCheck) Eval(i int) Verdict {
	if c.x.Missing(i) {
		return NotEvaluable
	}
	if !c.a[c.x.String(i)] {
		return Pass
	}
	if c.y.Missing(i) {
		return NotEvaluable
	}
	if c.b[c.y.String(i)] != c.negate {
		return Pass
	}
	return Fail
}

// ---- cutoff: F = flag exactly when Y < c ----

// cutoffKind: Vars [F, Y]; params flag (a value of F), below (number c). Pass
// when (F = flag) equals (Y < c); either missing: NotEvaluable. It expresses a
// threshold definition, e.g. "low birth weight is 1 exactly when the weight
// is below 2500 g".
type cutoffKind struct{}

func (cutoffKind) validate(r *Rule) error {
	if err := needVars(r, 2, "flag F, number Y"); err != nil {
		return err
	}
	if f, err := paramString(r, "flag", ""); err != nil || f == "" {
		return errors.New("params.flag: missing (want the value of the flag variable on the low side)")
	}
	_, err := needFloat(r, "below")
	return err
}

func (cutoffKind) key(r *Rule) string { f, _ := paramString(r, "flag", ""); return f }

type cutoffCheck struct {
	boundBase
	f    *dataset.Column
	y    func(int) float64
	flag string
	cut  float64
}

func (cutoffKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	cf, err := column(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	fy, dy, err := numeric(r, t, r.Vars[1])
	if err != nil {
		return nil, err
	}
	flag, _ := paramString(r, "flag", "")
	cut, _ := needFloat(r, "below")
	c := &cutoffCheck{f: cf, y: fy, flag: flag, cut: cut}
	c.r = r
	c.disp = []func(int) string{cf.String, dy}
	return c, nil
}

func (c *cutoffCheck) Eval(i int) Verdict {
	y := c.y(i)
	if c.f.Missing(i) || math.IsNaN(y) {
		return NotEvaluable
	}
	if (c.f.String(i) == c.flag) == (y < c.cut) {
		return Pass
	}
	return Fail
}

// ---- band: Y within fit ± k·scale of X, and X of Y ----

// bandKind: Vars [X, Y]; params log_x, log_y (bool: fit on natural logs),
// y_on_x and x_on_y (each {slope, intercept, scale}: the line fitted on the
// transformed values and the robust scale of its residuals), k (band half
// width in scales, default 5) and flag_when (both (default), either, y_on_x,
// x_on_y). A direction flags a record when |residual| > k·scale. Either value
// missing, or non-positive under a log: NotEvaluable.
type bandKind struct{}

type line struct{ slope, intercept, scale float64 }

func paramLine(r *Rule, k string) (line, bool, error) {
	v := r.Param(k)
	if v == nil {
		return line{}, false, nil
	}
	m, ok := v.(map[string]any)
	if !ok {
		return line{}, false, fmt.Errorf("params.%s: want slope, intercept and scale", k)
	}
	var l line
	for _, f := range []struct {
		n string
		p *float64
	}{{"slope", &l.slope}, {"intercept", &l.intercept}, {"scale", &l.scale}} {
		x, ok := num(m[f.n])
		if !ok {
			return line{}, false, fmt.Errorf("params.%s.%s: missing or not a number", k, f.n)
		}
		*f.p = x
	}
	if !(l.scale > 0) {
		return line{}, false, fmt.Errorf("params.%s.scale: %v is not positive", k, l.scale)
	}
	return l, true, nil
}

func (bandKind) validate(r *Rule) error {
	if err := needVars(r, 2, "X, Y"); err != nil {
		return err
	}
	for _, k := range []string{"log_x", "log_y"} {
		if _, err := paramBool(r, k); err != nil {
			return err
		}
	}
	_, hy, err := paramLine(r, "y_on_x")
	if err != nil {
		return err
	}
	_, hx, err := paramLine(r, "x_on_y")
	if err != nil {
		return err
	}
	fw, err := paramString(r, "flag_when", "both")
	if err != nil {
		return err
	}
	switch fw {
	case "both", "either":
		if !hy || !hx {
			return fmt.Errorf("params: flag_when %s needs both y_on_x and x_on_y", fw)
		}
	case "y_on_x":
		if !hy {
			return errors.New("params.y_on_x: missing")
		}
	case "x_on_y":
		if !hx {
			return errors.New("params.x_on_y: missing")
		}
	default:
		return fmt.Errorf("params.flag_when: unknown value %q (want both, either, y_on_x or x_on_y)", fw)
	}
	k, err := paramFloat(r, "k", 5)
	if err != nil {
		return err
	}
	if !(k > 0) {
		return fmt.Errorf("params.k: %v is not positive", k)
	}
	return nil
}

func (bandKind) key(r *Rule) string { return "" }

type bandCheck struct {
	boundBase
	fx, fy     func(int) float64
	logx, logy bool
	yx, xy     line
	k          float64
	when       string
}

func (bandKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	fx, dx, err := numeric(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	fy, dy, err := numeric(r, t, r.Vars[1])
	if err != nil {
		return nil, err
	}
	c := &bandCheck{fx: fx, fy: fy}
	c.logx, _ = paramBool(r, "log_x")
	c.logy, _ = paramBool(r, "log_y")
	c.yx, _, _ = paramLine(r, "y_on_x")
	c.xy, _, _ = paramLine(r, "x_on_y")
	c.k, _ = paramFloat(r, "k", 5)
	c.when, _ = paramString(r, "flag_when", "both")
	c.r = r
	c.disp = []func(int) string{dx, dy}
	return c, nil
}

// flags returns whether each direction flags row i; ok is false when the row
// cannot be judged.
func (c *bandCheck) flags(i int) (fy, fx, ok bool) {
	x, y := c.fx(i), c.fy(i)
	if c.logx {
		x = logPos(x)
	}
	if c.logy {
		y = logPos(y)
	}
	if math.IsNaN(x) || math.IsNaN(y) {
		return false, false, false
	}
	fy = !leq(math.Abs(y-(c.yx.intercept+c.yx.slope*x)), c.k*c.yx.scale)
	fx = !leq(math.Abs(x-(c.xy.intercept+c.xy.slope*y)), c.k*c.xy.scale)
	return fy, fx, true
}

func logPos(x float64) float64 {
	if !(x > 0) {
		return math.NaN()
	}
	return math.Log(x)
}

func (c *bandCheck) Eval(i int) Verdict {
	fy, fx, ok := c.flags(i)
	if !ok {
		return NotEvaluable
	}
	var bad bool
	switch c.when {
	case "either":
		bad = fy || fx
	case "y_on_x":
		bad = fy
	case "x_on_y":
		bad = fx
	default:
		bad = fy && fx
	}
	if bad {
		return Fail
	}
	return Pass
}

// Explain says which directions flag row i.
func (c *bandCheck) Explain(i int) string {
	fy, fx, ok := c.flags(i)
	switch {
	case !ok:
		return "not evaluable"
	case fy && fx:
		return fmt.Sprintf("%s is outside the band predicted from %s, and %s outside the band predicted from %s", c.r.Vars[1], c.r.Vars[0], c.r.Vars[0], c.r.Vars[1])
	case fy:
		return fmt.Sprintf("%s is outside the band predicted from %s", c.r.Vars[1], c.r.Vars[0])
	case fx:
		return fmt.Sprintf("%s is outside the band predicted from %s", c.r.Vars[0], c.r.Vars[1])
	}
	return "within both bands"
}

// ---- presence ----

// presenceKind: Vars [X, Y]; params when (present, absent or in; in needs
// values), then (present or absent). The premise holds when X is present
// (absent, or has one of values); then Y must be present (absent). A record
// not meeting the premise passes; with when = in, a missing X is
// NotEvaluable.
type presenceKind struct{}

func (presenceKind) validate(r *Rule) error {
	if err := needVars(r, 2, "X, Y"); err != nil {
		return err
	}
	w, err := paramString(r, "when", "present")
	if err != nil {
		return err
	}
	switch w {
	case "present", "absent":
	case "in":
		v, err := paramStrings(r, "values")
		if err != nil {
			return err
		}
		if len(v) == 0 {
			return errors.New("params.values: missing (when: in needs the values of the first variable)")
		}
	default:
		return fmt.Errorf("params.when: unknown value %q (want present, absent or in)", w)
	}
	th, err := paramString(r, "then", "present")
	if err != nil {
		return err
	}
	if th != "present" && th != "absent" {
		return fmt.Errorf("params.then: unknown value %q (want present or absent)", th)
	}
	return nil
}

func (presenceKind) key(r *Rule) string {
	w, _ := paramString(r, "when", "present")
	v, _ := paramStrings(r, "values")
	th, _ := paramString(r, "then", "present")
	return w + "\x1d" + sortedJoin(v) + "\x1d" + th
}

type presenceCheck struct {
	boundBase
	x, y     *dataset.Column
	when     string
	values   map[string]bool
	wantThen bool
}

func (presenceKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	cx, err := column(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	cy, err := column(r, t, r.Vars[1])
	if err != nil {
		return nil, err
	}
	w, _ := paramString(r, "when", "present")
	v, _ := paramStrings(r, "values")
	th, _ := paramString(r, "then", "present")
	c := &presenceCheck{x: cx, y: cy, when: w, values: set(v), wantThen: th == "present"}
	c.r = r
	c.disp = []func(int) string{cx.String, cy.String}
	return c, nil
}

func (c *presenceCheck) Eval(i int) Verdict {
	var premise bool
	switch c.when {
	case "present":
		premise = !c.x.Missing(i)
	case "absent":
		premise = c.x.Missing(i)
	default:
		if c.x.Missing(i) {
			return NotEvaluable
		}
		premise = c.values[c.x.String(i)]
	}
	if !premise || !c.y.Missing(i) == c.wantThen {
		return Pass
	}
	return Fail
}

// ---- group_range ----

// groupRangeKind: Vars [G, Y]; params limits, a mapping from each level of G
// to [low, high] for Y (inclusive). A level with no limits, or a missing G or
// Y, is NotEvaluable.
type groupRangeKind struct{}

func paramLimits(r *Rule) (map[string][2]float64, error) {
	v := r.Param("limits")
	m, ok := v.(map[string]any)
	if !ok || len(m) == 0 {
		return nil, errors.New("params.limits: missing (want level: [low, high] for each level)")
	}
	out := make(map[string][2]float64, len(m))
	for lev, x := range m {
		l, ok := x.([]any)
		if !ok || len(l) != 2 {
			return nil, fmt.Errorf("params.limits.%s: want [low, high]", lev)
		}
		lo, ok1 := num(l[0])
		hi, ok2 := num(l[1])
		if !ok1 || !ok2 || !(lo <= hi) {
			return nil, fmt.Errorf("params.limits.%s: want [low, high] with low ≤ high", lev)
		}
		out[lev] = [2]float64{lo, hi}
	}
	return out, nil
}

func (groupRangeKind) validate(r *Rule) error {
	if err := needVars(r, 2, "group G, number Y"); err != nil {
		return err
	}
	_, err := paramLimits(r)
	return err
}

func (groupRangeKind) key(r *Rule) string { return "" }

type groupRangeCheck struct {
	boundBase
	g      *dataset.Column
	y      func(int) float64
	limits map[string][2]float64
}

func (groupRangeKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	cg, err := column(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	fy, dy, err := numeric(r, t, r.Vars[1])
	if err != nil {
		return nil, err
	}
	lim, _ := paramLimits(r)
	c := &groupRangeCheck{g: cg, y: fy, limits: lim}
	c.r = r
	c.disp = []func(int) string{cg.String, dy}
	return c, nil
}

func (c *groupRangeCheck) Eval(i int) Verdict {
	y := c.y(i)
	if c.g.Missing(i) || math.IsNaN(y) {
		return NotEvaluable
	}
	l, ok := c.limits[c.g.String(i)]
	if !ok {
		return NotEvaluable
	}
	if leq(l[0], y) && leq(y, l[1]) {
		return Pass
	}
	return Fail
}

// ---- visit_change ----

// visitChangeKind: Vars [Y] at a level keyed by subject then visit; params
// scale (log: change is ln(Y / previous Y); diff: Y − previous Y), low and
// high (inclusive limits of the change). The previous value is the subject's
// latest non-missing Y at an earlier visit (the table's second key, numeric);
// a record with none, or with Y missing, is NotEvaluable.
type visitChangeKind struct{}

func (visitChangeKind) validate(r *Rule) error {
	if err := needVars(r, 1, "Y"); err != nil {
		return err
	}
	s, err := paramString(r, "scale", "log")
	if err != nil {
		return err
	}
	if s != "log" && s != "diff" {
		return fmt.Errorf("params.scale: unknown value %q (want log or diff)", s)
	}
	lo, err := needFloat(r, "low")
	if err != nil {
		return err
	}
	hi, err := needFloat(r, "high")
	if err != nil {
		return err
	}
	if !(lo <= hi) {
		return fmt.Errorf("params: low %v is above high %v", lo, hi)
	}
	return nil
}

func (visitChangeKind) key(r *Rule) string { return "" }

type visitChangeCheck struct {
	boundBase
	y      func(int) float64
	prev   []int // previous row of the same subject with a value, -1 if none
	log    bool
	lo, hi float64
	visit  *dataset.Column
}

func (visitChangeKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	fy, dy, err := numeric(r, t, r.Vars[0])
	if err != nil {
		return nil, err
	}
	if len(t.Keys) < 2 {
		return nil, unevaluable(r, "visit_change needs a table keyed by subject and visit; %q has keys %v", t.Name, t.Keys)
	}
	subj, visit := t.Col(t.Keys[0]), t.Col(t.Keys[1])
	if subj == nil || visit == nil || visit.Storage != dataset.StoreFloat {
		return nil, unevaluable(r, "visit_change needs a numeric visit key; %q has keys %v", t.Name, t.Keys)
	}
	rows := make([]int, 0, t.NRows)
	for i := 0; i < t.NRows; i++ {
		if !math.IsNaN(fy(i)) && !visit.Missing(i) {
			rows = append(rows, i)
		}
	}
	sort.SliceStable(rows, func(a, b int) bool {
		sa, sb := subj.String(rows[a]), subj.String(rows[b])
		if sa != sb {
			return sa < sb
		}
		return visit.Floats[rows[a]] < visit.Floats[rows[b]]
	})
	prev := make([]int, t.NRows)
	for i := range prev {
		prev[i] = -1
	}
	for k := 1; k < len(rows); k++ {
		a, b := rows[k-1], rows[k]
		if subj.String(a) == subj.String(b) && visit.Floats[a] < visit.Floats[b] {
			prev[b] = a
		}
	}
	c := &visitChangeCheck{y: fy, prev: prev, visit: visit}
	s, _ := paramString(r, "scale", "log")
	c.log = s == "log"
	c.lo, _ = needFloat(r, "low")
	c.hi, _ = needFloat(r, "high")
	c.r = r
	c.disp = []func(int) string{dy}
	return c, nil
}

func (c *visitChangeCheck) change(i int) (float64, bool) {
	p := c.prev[i]
	if p < 0 {
		return 0, false
	}
	y, yp := c.y(i), c.y(p)
	if math.IsNaN(y) {
		return 0, false
	}
	if c.log {
		d := logPos(y) - logPos(yp)
		return d, !math.IsNaN(d)
	}
	return y - yp, true
}

func (c *visitChangeCheck) Eval(i int) Verdict {
	d, ok := c.change(i)
	if !ok {
		return NotEvaluable
	}
	if leq(c.lo, d) && leq(d, c.hi) {
		return Pass
	}
	return Fail
}

// Explain gives the previous value and its visit.
func (c *visitChangeCheck) Explain(i int) string {
	p := c.prev[i]
	if p < 0 {
		return "no earlier value for this subject"
	}
	return fmt.Sprintf("previous value %s at visit %s", dataset.FormatFloat(c.y(p)), c.visit.String(p))
}

// Previous returns the row of the subject's previous value for row i, -1 when
// there is none (the checker can cite it in a listing).
func (c *visitChangeCheck) Previous(i int) int { return c.prev[i] }
