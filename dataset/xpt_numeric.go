package dataset

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// numericColumn types a numeric variable read from a binary or JSON format,
// where values arrive as numbers rather than text, exactly as Builder.Column
// types the same values read as text: an override in o.Vars, SDTM
// identifier, --DTC and verbatim-text names, all-missing columns, and
// overrides that store levels (nominal, identifier, free text, date, or
// listed levels) go through a Builder holding the values formatted by
// FormatFloat; otherwise the values are typed by numericType (binary,
// ordinal integer scale, continuous) without formatting them, and v becomes
// the column's storage. NaN marks a missing value.
func numericColumn(name string, v []float64, o InferOptions) (*Column, error) {
	o = o.withDefaults()
	spec, hasSpec := o.Vars[name]
	t, why := TypeUnknown, ""
	viaText := !hasValue(v)
	switch {
	case hasSpec && spec.Type != TypeUnknown:
		t, why = spec.Type, "set by "+orDefault(spec.Source, "override")
		floatStored := t == Continuous || (t == Ordinal || t == Binary) && len(spec.Levels) == 0
		viaText = viaText || !floatStored
	case identifierName(name), strings.HasSuffix(name, "DTC"), freeTextName(name):
		viaText = true
	}
	if viaText {
		b := &Builder{Name: name, dict: map[string]int32{}, codes: make([]int32, 0, len(v))}
		for _, x := range v {
			if math.IsNaN(x) {
				b.Append("", true)
			} else {
				b.Append(FormatFloat(x), false)
			}
		}
		return b.Column(o)
	}
	nt, nwhy, tooMany := numericType(v, o)
	if t == TypeUnknown {
		t, why = nt, nwhy
	}
	if t == Binary && tooMany >= 0 {
		return nil, &rowError{tooMany, fmt.Errorf("variable %q: declared binary but has more than two distinct values", name)}
	}
	c := NewFloatColumn(name, t, v)
	c.Why = why
	spec.apply(c, hasSpec)
	return c, nil
}

// columnErr turns an error from typing column name into a *ParseError for
// file: a rowError gives the 1-based row (its message names the variable),
// other errors name the variable.
func columnErr(file, name string, err error) *ParseError {
	var re *rowError
	if errors.As(err, &re) {
		return &ParseError{File: file, Row: re.row + 1, Err: re.err}
	}
	return &ParseError{File: file, Var: name, Err: err}
}
