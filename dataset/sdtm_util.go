package dataset

import (
	"math"
	"strings"
)

// texts returns, for every row of c, a code into levels (-1 when missing)
// whatever the column's storage. Coded columns are returned as stored.
func texts(c *Column) ([]int32, []string) {
	if c.Storage == StoreCode {
		return c.Codes, c.Levels
	}
	n := c.Len()
	codes := make([]int32, n)
	var in interner
	for i := 0; i < n; i++ {
		if c.Missing(i) {
			codes[i] = -1
			continue
		}
		codes[i] = in.id(c.String(i))
	}
	return codes, in.s
}

// numbers returns the numeric value of every row of c, NaN when missing or
// not a number: float storage as stored, coded storage by parsing its levels.
func numbers(c *Column) []float64 {
	n := c.Len()
	switch c.Storage {
	case StoreFloat:
		return c.Floats
	case StoreCode:
		lv := make([]float64, len(c.Levels))
		for i, s := range c.Levels {
			v, err := parseNumber(s)
			if err != nil {
				v = math.NaN()
			}
			lv[i] = v
		}
		out := make([]float64, n)
		for i, k := range c.Codes {
			if k < 0 {
				out[i] = math.NaN()
			} else {
				out[i] = lv[k]
			}
		}
		return out
	}
	out := make([]float64, n)
	for i := range out {
		out[i] = math.NaN()
	}
	return out
}

// dateBounds returns the interval [lo, hi) in days and the precision of
// every row of c, NaN and PrecNone when missing or not an ISO 8601 date: date
// storage as stored, other storages by parsing their text.
func dateBounds(c *Column) (lo, hi []float64, prec []Precision) {
	if c.Storage == StoreDate {
		return c.DateLo, c.DateHi, c.DatePrec
	}
	codes, lev := texts(c)
	dl, dh := make([]float64, len(lev)), make([]float64, len(lev))
	dp := make([]Precision, len(lev))
	for i, s := range lev {
		d, err := ParseISO8601(s)
		if err != nil || d.Prec == PrecNone {
			dl[i], dh[i] = math.NaN(), math.NaN()
			continue
		}
		dl[i], dh[i] = d.Interval()
		dp[i] = d.Prec
	}
	n := len(codes)
	lo, hi, prec = make([]float64, n), make([]float64, n), make([]Precision, n)
	for i, k := range codes {
		if k < 0 {
			lo[i], hi[i] = math.NaN(), math.NaN()
			continue
		}
		lo[i], hi[i], prec[i] = dl[k], dh[k], dp[k]
	}
	return lo, hi, prec
}

// An interner numbers distinct strings in order of first appearance.
type interner struct {
	m map[string]int32
	s []string
}

func (in *interner) id(s string) int32 {
	if in.m == nil {
		in.m = map[string]int32{}
	}
	if k, ok := in.m[s]; ok {
		return k
	}
	k := int32(len(in.s))
	in.m[s] = k
	in.s = append(in.s, s)
	return k
}

// remap returns the interned id of every level.
func (in *interner) remap(levels []string) []int32 {
	out := make([]int32, len(levels))
	for i, s := range levels {
		out[i] = in.id(s)
	}
	return out
}

// recode maps per-table codes to interned ids through remap (-1 stays -1).
func recode(codes []int32, remap []int32, i int) int32 {
	if k := codes[i]; k >= 0 {
		return remap[k]
	}
	return -1
}

// gather returns a new column holding c's rows idx[0], idx[1], ... (−1 gives
// a missing value), with c's storage, type, levels and metadata. Special
// missing codes and invalid values follow their rows.
func gather(c *Column, idx []int32) *Column {
	n := len(idx)
	out := &Column{Name: c.Name, Label: c.Label, Unit: c.Unit, Format: c.Format, Type: c.Type, Why: c.Why,
		Prov: c.Prov, Storage: c.Storage, missing: NewBitmap(n)}
	miss := func(j int32) bool { return j < 0 || c.Missing(int(j)) }
	switch c.Storage {
	case StoreFloat:
		out.Floats = make([]float64, n)
		for i, j := range idx {
			if miss(j) {
				out.Floats[i] = math.NaN()
				out.missing.Set(i)
			} else {
				out.Floats[i] = c.Floats[j]
			}
		}
	case StoreCode:
		out.Levels = append([]string(nil), c.Levels...)
		out.Codes = make([]int32, n)
		for i, j := range idx {
			if miss(j) {
				out.Codes[i] = -1
				out.missing.Set(i)
			} else {
				out.Codes[i] = c.Codes[j]
			}
		}
	case StoreDate:
		out.DateLo, out.DateHi, out.DatePrec = make([]float64, n), make([]float64, n), make([]Precision, n)
		for i, j := range idx {
			if miss(j) {
				out.DateLo[i], out.DateHi[i] = math.NaN(), math.NaN()
				out.missing.Set(i)
			} else {
				out.DateLo[i], out.DateHi[i], out.DatePrec[i] = c.DateLo[j], c.DateHi[j], c.DatePrec[j]
			}
		}
	default: // a column without storage: all missing, coded
		out.Storage, out.Codes = StoreCode, make([]int32, n)
		for i := range out.Codes {
			out.Codes[i] = -1
			out.missing.Set(i)
		}
	}
	if len(c.Special) > 0 {
		for i, j := range idx {
			if b, ok := c.Special[int(j)]; ok && j >= 0 {
				if out.Special == nil {
					out.Special = map[int]byte{}
				}
				out.Special[i] = b
			}
		}
	}
	if len(c.Invalid) > 0 {
		inv := make(map[int]InvalidValue, len(c.Invalid))
		for _, v := range c.Invalid {
			inv[v.Row] = v
		}
		for i, j := range idx {
			if v, ok := inv[int(j)]; ok && j >= 0 {
				out.Invalid = append(out.Invalid, InvalidValue{Row: i, Raw: v.Raw, Err: v.Err})
			}
		}
	}
	return out
}

// newDateCol returns a date column from intervals; NaN lo is missing.
func newDateCol(name string, lo, hi []float64, prec []Precision) *Column {
	c := &Column{Name: name, Type: DateTime, Storage: StoreDate, DateLo: lo, DateHi: hi, DatePrec: prec,
		missing: NewBitmap(len(lo))}
	for i := range lo {
		if math.IsNaN(lo[i]) || prec[i] == PrecNone {
			c.missing.Set(i)
			lo[i], hi[i], prec[i] = math.NaN(), math.NaN(), PrecNone
		}
	}
	return c
}

// applySpec applies a variables-file override to a derived column when its
// storage allows the type: float storage takes continuous, ordinal or
// binary; coded storage nominal, ordinal or binary. Labels and units always apply.
func applySpec(c *Column, o InferOptions) {
	spec, ok := o.Vars[c.Name]
	if !ok {
		return
	}
	if spec.Label != "" {
		c.Label = spec.Label
	}
	if spec.Unit != "" {
		c.Unit = spec.Unit
	}
	t := spec.Type
	okType := c.Storage == StoreFloat && (t == Continuous || t == Ordinal || t == Binary) ||
		c.Storage == StoreCode && (t == Nominal || t == Ordinal || t == Binary) ||
		t == Identifier || t == FreeText
	if t != TypeUnknown && okType {
		c.Type, c.Why = t, "set by "+orDefault(spec.Source, "override")
	}
}

// nameSegment turns a qualifier value into a part of a variable name:
// upper case, runs of characters other than letters, digits and _ become
// one _, "NA" when empty.
func nameSegment(s string) string {
	var b strings.Builder
	under := false
	for _, r := range strings.ToUpper(strings.TrimSpace(s)) {
		if r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '_' {
			b.WriteRune(r)
			under = false
		} else if !under && b.Len() > 0 {
			b.WriteByte('_')
			under = true
		}
	}
	out := strings.TrimRight(b.String(), "_")
	if out == "" {
		return "NA"
	}
	return out
}

// isYes reports whether a flag value means yes ("Y", "YES", any case).
func isYes(s string) bool {
	s = strings.ToUpper(strings.TrimSpace(s))
	return s == "Y" || s == "YES"
}

// isNo reports whether a flag value means no ("N", "NO", any case).
func isNo(s string) bool {
	s = strings.ToUpper(strings.TrimSpace(s))
	return s == "N" || s == "NO"
}

// isNotDone reports whether a --STAT value is NOT DONE.
func isNotDone(s string) bool { return strings.EqualFold(strings.TrimSpace(s), "NOT DONE") }

// levelFlags evaluates a predicate once per level of a coded column.
func levelFlags(levels []string, f func(string) bool) []bool {
	out := make([]bool, len(levels))
	for i, s := range levels {
		out[i] = f(s)
	}
	return out
}

// compareText orders qualifier values: numerically when both are numbers.
func compareText(a, b string) int {
	x, ex := parseNumber(a)
	y, ey := parseNumber(b)
	if ex == nil && ey == nil {
		switch {
		case x < y:
			return -1
		case x > y:
			return 1
		}
		return 0
	}
	return strings.Compare(a, b)
}
