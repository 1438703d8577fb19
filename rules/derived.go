package rules

import (
	"errors"
	"fmt"
	"math"
	"time"

	"github.com/crossform/crossform/dataset"
)

// The derived formulas (params.formula of a derived rule). Vars[0] is always
// the derived (observed) variable.
const (
	// FormulaBMI: Vars [BMI, WEIGHT, HEIGHT]; BMI = weight / (height/100)² with
	// weight in kg and height in cm (params.height_unit "m" for metres).
	FormulaBMI = "bmi"
	// FormulaMAP: Vars [MAP, SYSBP, DIABP]; MAP = DIABP + (SYSBP − DIABP) / 3.
	FormulaMAP = "map"
	// FormulaScale: Vars [Y, X]; Y = factor × X (params.factor), e.g. weight
	// in lb = 2.20462 × kg, creatinine µmol/L = 88.4 × mg/dL.
	FormulaScale = "scale"
	// FormulaLinear: Vars [Y, X1, …, Xk]; Y = c0 + c1·X1 + … + ck·Xk
	// (params.coef [c0, c1, …, ck]).
	FormulaLinear = "linear"
	// FormulaAge: Vars [AGE, birth date, reference date]; AGE = whole years
	// completed from birth to reference date. With partial dates AGE must lie
	// between the least and the greatest age the date intervals allow, so a
	// year-only birth date allows one year either way and never raises a
	// false alarm.
	FormulaAge = "age"
)

// derivedKind: params formula (above), tolerance (absolute, default 0),
// rel_tolerance (fraction of the expected value, default 0), carry (variables
// filled with the subject's first recorded value, e.g. height at screening).
// Pass when |observed − expected| ≤ tolerance + rel_tolerance·|expected|; any
// input missing: NotEvaluable.
type derivedKind struct{}

func (derivedKind) validate(r *Rule) error {
	f, err := paramString(r, "formula", "")
	if err != nil {
		return err
	}
	switch f {
	case FormulaBMI:
		if err := needVars(r, 3, "BMI, weight, height"); err != nil {
			return err
		}
		u, err := paramString(r, "height_unit", "cm")
		if err != nil {
			return err
		}
		if u != "cm" && u != "m" {
			return fmt.Errorf("params.height_unit: unknown unit %q (want cm or m)", u)
		}
	case FormulaMAP:
		if err := needVars(r, 3, "MAP, systolic, diastolic"); err != nil {
			return err
		}
	case FormulaScale:
		if err := needVars(r, 2, "Y, X with Y = factor × X"); err != nil {
			return err
		}
		if _, err := needFloat(r, "factor"); err != nil {
			return err
		}
	case FormulaLinear:
		if len(r.Vars) < 2 {
			return errors.New("derived linear needs Y and at least one X")
		}
		c, err := paramFloats(r, "coef")
		if err != nil {
			return err
		}
		if len(c) != len(r.Vars) {
			return fmt.Errorf("params.coef: want %d numbers (intercept and one per X), got %d", len(r.Vars), len(c))
		}
	case FormulaAge:
		if err := needVars(r, 3, "age, birth date, reference date"); err != nil {
			return err
		}
	case "":
		return errors.New("params.formula: missing (want bmi, map, scale, linear or age)")
	default:
		return fmt.Errorf("params.formula: unknown formula %q (want bmi, map, scale, linear or age)", f)
	}
	for _, k := range []string{"tolerance", "rel_tolerance"} {
		v, err := paramFloat(r, k, 0)
		if err != nil {
			return err
		}
		if v < 0 {
			return fmt.Errorf("params.%s: %v is negative", k, v)
		}
	}
	_, err = paramStrings(r, "carry")
	return err
}

func (derivedKind) key(r *Rule) string {
	f, _ := paramString(r, "formula", "")
	return f
}

type derivedCheck struct {
	boundBase
	in       []func(int) float64
	birth    *dataset.Column
	ref      *dataset.Column
	expected func(x []float64) float64
	tol, rel float64
}

func (derivedKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	f, _ := paramString(r, "formula", "")
	c := &derivedCheck{}
	c.r = r
	c.tol, _ = paramFloat(r, "tolerance", 0)
	c.rel, _ = paramFloat(r, "rel_tolerance", 0)
	nIn := len(r.Vars)
	if f == FormulaAge {
		nIn = 1
	}
	for _, v := range r.Vars[:nIn] {
		g, d, err := numeric(r, t, v)
		if err != nil {
			return nil, err
		}
		c.in = append(c.in, g)
		c.disp = append(c.disp, d)
	}
	switch f {
	case FormulaBMI:
		div := 100.0
		if u, _ := paramString(r, "height_unit", "cm"); u == "m" {
			div = 1
		}
		c.expected = func(x []float64) float64 { h := x[2] / div; return x[1] / (h * h) }
	case FormulaMAP:
		c.expected = func(x []float64) float64 { return x[2] + (x[1]-x[2])/3 }
	case FormulaScale:
		k, _ := needFloat(r, "factor")
		c.expected = func(x []float64) float64 { return k * x[1] }
	case FormulaLinear:
		coef, _ := paramFloats(r, "coef")
		c.expected = func(x []float64) float64 {
			s := coef[0]
			for j := 1; j < len(coef); j++ {
				s += coef[j] * x[j]
			}
			return s
		}
	case FormulaAge:
		var err error
		if c.birth, err = column(r, t, r.Vars[1]); err != nil {
			return nil, err
		}
		if c.ref, err = column(r, t, r.Vars[2]); err != nil {
			return nil, err
		}
		for _, d := range []*dataset.Column{c.birth, c.ref} {
			if d.Storage != dataset.StoreDate {
				return nil, unevaluable(r, "variable %q is %s, not a date", d.Name, d.Type)
			}
		}
		c.disp = append(c.disp, c.birth.String, c.ref.String)
	}
	return c, nil
}

// ageRange returns the least and greatest whole-year age from birth dates in
// [blo, bhi) to reference dates in [rlo, rhi) (days since 1970-01-01).
func ageRange(blo, bhi, rlo, rhi float64) (lo, hi int) {
	day := func(d float64) time.Time { return time.Unix(int64(math.Floor(d))*86400, 0).UTC() }
	years := func(b, r time.Time) int {
		a := r.Year() - b.Year()
		if r.Month() < b.Month() || (r.Month() == b.Month() && r.Day() < b.Day()) {
			a--
		}
		return a
	}
	last := func(hi float64) float64 { return math.Ceil(hi-1e-9) - 1 }
	return years(day(last(bhi)), day(rlo)), years(day(blo), day(last(rhi)))
}

func (c *derivedCheck) Eval(i int) Verdict {
	obs, exp, ok := c.values(i)
	if !ok {
		return NotEvaluable
	}
	if c.birth != nil {
		if leq(exp[0]-c.tol, obs) && leq(obs, exp[1]+c.tol) {
			return Pass
		}
		return Fail
	}
	if leq(math.Abs(obs-exp[0]), c.tol+c.rel*math.Abs(exp[0])) {
		return Pass
	}
	return Fail
}

// values returns the observed value and the expected value (for age, the
// least and greatest possible ages).
func (c *derivedCheck) values(i int) (obs float64, exp [2]float64, ok bool) {
	obs = c.in[0](i)
	if math.IsNaN(obs) {
		return 0, exp, false
	}
	if c.birth != nil {
		blo, bhi, _, ok1 := c.birth.Date(i)
		rlo, rhi, _, ok2 := c.ref.Date(i)
		if !ok1 || !ok2 {
			return 0, exp, false
		}
		lo, hi := ageRange(blo, bhi, rlo, rhi)
		return obs, [2]float64{float64(lo), float64(hi)}, true
	}
	x := make([]float64, len(c.in))
	for j, g := range c.in {
		x[j] = g(i)
		if math.IsNaN(x[j]) {
			return 0, exp, false
		}
	}
	e := c.expected(x)
	if math.IsNaN(e) || math.IsInf(e, 0) {
		return 0, exp, false
	}
	return obs, [2]float64{e, e}, true
}

// Explain gives the expected value.
func (c *derivedCheck) Explain(i int) string {
	_, exp, ok := c.values(i)
	switch {
	case !ok:
		return "not evaluable"
	case c.birth != nil && exp[0] != exp[1]:
		return fmt.Sprintf("expected %s between %g and %g", c.r.Vars[0], exp[0], exp[1])
	}
	return fmt.Sprintf("expected %s about %s", c.r.Vars[0], dataset.FormatFloat(round(exp[0], 2)))
}
