package dataset

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// A VarSpec overrides what inference would decide for one variable. Zero
// fields leave the inferred value.
type VarSpec struct {
	Type   Type
	Levels []string // level order for an ordinal (ascending), or the allowed levels
	Unit   string
	Label  string
	Source string // where the override came from, e.g. "vars.yaml:12" or "define.xml"
}

// InferOptions tunes type inference. The zero value uses the defaults.
type InferOptions struct {
	// OrdinalMaxLevels is the largest number of distinct integer values that
	// makes a numeric variable ordinal rather than continuous (default 10).
	OrdinalMaxLevels int
	// IdentifierMinRows: a text variable whose values are unique on every row
	// is an identifier when it has at least this many values (default 20).
	IdentifierMinRows int
	// FreeTextMinLevels: a text variable with more distinct values than this,
	// and at least FreeTextShare of its values distinct, is free text (default 50, 0.5).
	FreeTextMinLevels int
	FreeTextShare     float64
	// DateShare is the share of non-missing values that must parse as ISO
	// 8601 for a text variable to be a date (default 0.95). The remaining
	// values are kept as Column.Invalid.
	DateShare float64
	// Vars overrides inference by variable name.
	Vars map[string]VarSpec
}

func (o InferOptions) withDefaults() InferOptions {
	if o.OrdinalMaxLevels == 0 {
		o.OrdinalMaxLevels = 10
	}
	if o.IdentifierMinRows == 0 {
		o.IdentifierMinRows = 20
	}
	if o.FreeTextMinLevels == 0 {
		o.FreeTextMinLevels = 50
	}
	if o.FreeTextShare == 0 {
		o.FreeTextShare = 0.5
	}
	if o.DateShare == 0 {
		o.DateShare = 0.95
	}
	return o
}

// A Builder collects one column's text values while a file is read, interning
// them in a dictionary so that a column is never held as one string per cell.
type Builder struct {
	Name  string
	dict  map[string]int32
	lev   []string
	codes []int32
}

// NewBuilder returns a Builder for the named column.
func NewBuilder(name string) *Builder {
	return &Builder{Name: name, dict: map[string]int32{}}
}

// Append adds one value; missing marks it missing whatever its text.
func (b *Builder) Append(s string, missing bool) {
	if missing {
		b.codes = append(b.codes, -1)
		return
	}
	c, ok := b.dict[s]
	if !ok {
		c = int32(len(b.lev))
		s = strings.Clone(s)
		b.dict[s] = c
		b.lev = append(b.lev, s)
	}
	b.codes = append(b.codes, c)
}

// Len returns the number of values appended.
func (b *Builder) Len() int { return len(b.codes) }

// Ordered vocabularies recognised as ordinal, lowest first. Common practice
// in SDTM controlled terminology (AESEV codelist C66769; --NRIND).
var knownOrders = [][]string{
	{"MILD", "MODERATE", "SEVERE"},
	{"LOW", "NORMAL", "HIGH"},
	{"NONE", "MILD", "MODERATE", "SEVERE"},
	{"ABSENT", "PRESENT"},
	{"NEVER", "FORMER", "CURRENT"},
}

// identifierName reports whether an SDTM variable name is an identifier by
// the SDTM model: STUDYID, DOMAIN, USUBJID, SUBJID, --SEQ, --GRPID, --SPID,
// --REFID, --LNKID, RDOMAIN, IDVAR, IDVARVAL (SDTMIG v3.4 §2.4, identifiers).
func identifierName(n string) bool {
	switch n {
	case "STUDYID", "DOMAIN", "USUBJID", "SUBJID", "RDOMAIN", "IDVAR", "IDVARVAL", "SITEID", "POOLID", "SPDEVID":
		return true
	}
	for _, suf := range []string{"SEQ", "GRPID", "SPID", "REFID", "LNKID", "LNKGRP"} {
		if len(n) == len(suf)+2 && strings.HasSuffix(n, suf) {
			return true
		}
	}
	return false
}

// freeTextName: --TERM and verbatim-text variables are free text in SDTM.
func freeTextName(n string) bool {
	return len(n) == 6 && strings.HasSuffix(n, "TERM") || strings.HasSuffix(n, "TEST") && len(n) == 6
}

// Column types the collected values. The inference rules, in order (the
// first that applies wins; a VarSpec override replaces them):
//
//  1. SDTM identifier names (STUDYID, USUBJID, SITEID, --SEQ, ...) → identifier.
//  2. every non-missing value a number: two distinct values → binary; at most
//     OrdinalMaxLevels distinct integers → ordinal (an integer scale with few
//     levels: grades, scores); else continuous.
//  3. name ending in DTC, or at least DateShare of non-missing values ISO
//     8601 dates → date; values that do not parse are kept in Column.Invalid.
//  4. text with exactly two distinct values → binary (Y/N, M/F).
//  5. text whose levels are a subset of a known ordered vocabulary (MILD <
//     MODERATE < SEVERE; LOW < NORMAL < HIGH) → ordinal.
//  6. text unique on every row with at least IdentifierMinRows values → identifier.
//  7. --TERM/--TEST names, or more than FreeTextMinLevels distinct values
//     making up at least FreeTextShare of the values → free text.
//  8. otherwise → nominal.
//
// A column with no values, or a single distinct value, keeps the type its
// values suggest and is left for the analysis to skip as constant.
func (b *Builder) Column(o InferOptions) (*Column, error) {
	o = o.withDefaults()
	spec, hasSpec := o.Vars[b.Name]
	nonMissing := 0
	for _, c := range b.codes {
		if c >= 0 {
			nonMissing++
		}
	}
	// Parse the dictionary once.
	nums := make([]float64, len(b.lev))
	allNum := len(b.lev) > 0
	allInt := true
	for i, s := range b.lev {
		v, err := parseNumber(s)
		if err != nil {
			allNum = false
			break
		}
		nums[i] = v
		if v != math.Trunc(v) || math.Abs(v) > 1e9 {
			allInt = false
		}
	}
	t, why := TypeUnknown, ""
	switch {
	case hasSpec && spec.Type != TypeUnknown:
		t, why = spec.Type, "set by "+orDefault(spec.Source, "override")
	case identifierName(b.Name):
		t, why = Identifier, "SDTM identifier variable name"
	case allNum && len(b.lev) == 2:
		t, why = Binary, "numeric with two distinct values"
	case allNum && allInt && len(b.lev) <= o.OrdinalMaxLevels:
		t, why = Ordinal, fmt.Sprintf("integer scale with %d levels (≤ %d)", len(b.lev), o.OrdinalMaxLevels)
	case allNum:
		t, why = Continuous, fmt.Sprintf("numeric with %d distinct values", len(b.lev))
	case len(b.lev) == 0:
		t, why = Nominal, "no values"
	}
	var dates []Date
	var dateErrs map[int32]error
	if t == TypeUnknown || t == DateTime {
		dates, dateErrs = parseDates(b.lev)
		bad := 0
		for _, c := range b.codes {
			if c >= 0 && dateErrs[c] != nil {
				bad++
			}
		}
		good := nonMissing - bad
		if t == TypeUnknown && (strings.HasSuffix(b.Name, "DTC") || nonMissing > 0 && float64(good) >= o.DateShare*float64(nonMissing)) {
			t, why = DateTime, fmt.Sprintf("ISO 8601 dates (%d of %d values parse)", good, nonMissing)
		}
	}
	if t == TypeUnknown {
		switch {
		case len(b.lev) == 2:
			t, why = Binary, "text with two distinct values"
		case orderOf(b.lev) != nil:
			t, why = Ordinal, "levels of a known ordered vocabulary: "+strings.Join(orderOf(b.lev), " < ")
		case len(b.lev) == nonMissing && nonMissing >= o.IdentifierMinRows:
			t, why = Identifier, "text unique on every row"
		case freeTextName(b.Name):
			t, why = FreeText, "SDTM verbatim text variable name"
		case len(b.lev) > o.FreeTextMinLevels && float64(len(b.lev)) >= o.FreeTextShare*float64(nonMissing):
			t, why = FreeText, fmt.Sprintf("%d distinct values in %d", len(b.lev), nonMissing)
		default:
			t, why = Nominal, fmt.Sprintf("text with %d levels", len(b.lev))
		}
	}
	c, err := b.build(t, allNum, nums, dates, dateErrs, spec)
	if err != nil {
		return nil, err
	}
	c.Why = why
	if hasSpec {
		if spec.Unit != "" {
			c.Unit = spec.Unit
		}
		if spec.Label != "" {
			c.Label = spec.Label
		}
	}
	return c, nil
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

func (b *Builder) build(t Type, allNum bool, nums []float64, dates []Date, dateErrs map[int32]error, spec VarSpec) (*Column, error) {
	n := len(b.codes)
	switch {
	case t == DateTime:
		if dates == nil {
			dates, dateErrs = parseDates(b.lev)
		}
		col := make([]Date, n)
		var invalid []InvalidValue
		for i, c := range b.codes {
			if c < 0 {
				continue
			}
			if err := dateErrs[c]; err != nil {
				invalid = append(invalid, InvalidValue{Row: i, Raw: b.lev[c], Err: err})
				continue
			}
			col[i] = dates[c]
		}
		out := NewDateColumn(b.Name, col)
		out.Invalid = invalid
		return out, nil
	case t == Continuous || (allNum && (t == Ordinal || t == Binary) && len(spec.Levels) == 0):
		if !allNum {
			for _, s := range b.lev {
				if _, err := parseNumber(s); err != nil {
					return nil, fmt.Errorf("variable %q: declared %s but value %q is not a number", b.Name, t, s)
				}
			}
		}
		v := make([]float64, n)
		for i, c := range b.codes {
			if c < 0 {
				v[i] = math.NaN()
			} else {
				v[i] = nums[c]
			}
		}
		return NewFloatColumn(b.Name, t, v), nil
	}
	// Coded storage. Ordinal levels are put in order; others sorted for a
	// deterministic dictionary.
	order := spec.Levels
	if t == Ordinal && len(order) == 0 {
		order = orderOf(b.lev)
	}
	var levels []string
	if len(order) > 0 {
		pos := map[string]int{}
		for i, s := range order {
			pos[s] = i
		}
		for _, s := range b.lev {
			if _, ok := pos[s]; !ok {
				return nil, fmt.Errorf("variable %q: value %q is not one of the declared levels %q", b.Name, s, order)
			}
		}
		levels = append([]string(nil), order...)
	} else {
		levels = append([]string(nil), b.lev...)
		if allNum {
			sort.Slice(levels, func(i, j int) bool {
				x, _ := parseNumber(levels[i])
				y, _ := parseNumber(levels[j])
				return x < y
			})
		} else {
			sort.Strings(levels)
		}
	}
	idx := make(map[string]int32, len(levels))
	for i, s := range levels {
		idx[s] = int32(i)
	}
	remap := make([]int32, len(b.lev))
	for i, s := range b.lev {
		remap[i] = idx[s]
	}
	codes := make([]int32, n)
	for i, c := range b.codes {
		if c < 0 {
			codes[i] = -1
		} else {
			codes[i] = remap[c]
		}
	}
	return NewCodeColumn(b.Name, t, codes, levels), nil
}

func parseDates(lev []string) ([]Date, map[int32]error) {
	d := make([]Date, len(lev))
	var errs map[int32]error
	for i, s := range lev {
		v, err := ParseISO8601(s)
		if err != nil {
			if errs == nil {
				errs = map[int32]error{}
			}
			errs[int32(i)] = err
			continue
		}
		d[i] = v
	}
	return d, errs
}

// orderOf returns the known ordered vocabulary that contains every level, or nil.
func orderOf(lev []string) []string {
	if len(lev) < 2 {
		return nil
	}
	for _, order := range knownOrders {
		in := map[string]bool{}
		for _, s := range order {
			in[s] = true
		}
		ok := true
		for _, s := range lev {
			if !in[s] {
				ok = false
				break
			}
		}
		if ok {
			return order
		}
	}
	return nil
}

// parseNumber parses a decimal number as written in data files. It rejects
// NaN, infinities, hexadecimal and underscores, which strconv would accept.
func parseNumber(s string) (float64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, strconv.ErrSyntax
	}
	for i := 0; i < len(s); i++ {
		c := s[i]
		if !(c >= '0' && c <= '9' || c == '.' || c == '-' || c == '+' || c == 'e' || c == 'E') {
			return 0, strconv.ErrSyntax
		}
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, strconv.ErrSyntax
	}
	return v, nil
}
