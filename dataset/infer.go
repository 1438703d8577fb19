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

	file      string // variables file, set by ParseVars
	line, col int    // 1-based position of the variable's entry in file
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

// A Builder collects one column's text values while a file is read without
// holding one string per cell. While every value so far is a number it keeps
// the numbers and their text packed in one byte buffer (no map, no
// per-cell allocation: most columns of a wide extract are numeric); at the
// first value that is not a number, and when a numeric column needs its text
// levels, it interns the values in a dictionary of distinct strings.
type Builder struct {
	Name string
	// Dictionary mode: codes index lev, -1 is missing. A Builder built as a
	// literal with lev and codes set is in dictionary mode.
	dict  map[string]int32
	lev   []string
	codes []int32
	// Numeric mode (num true, set by NewBuilder): nums holds each value, NaN
	// where missing; the text of value i is text[offs[i]:offs[i+1]].
	num  bool
	nums []float64
	text []byte
	offs []uint32
}

// NewBuilder returns a Builder for the named column.
func NewBuilder(name string) *Builder {
	return &Builder{Name: name, num: true, offs: []uint32{0}}
}

// Append adds one value; missing marks it missing whatever its text.
func (b *Builder) Append(s string, missing bool) {
	if b.num {
		if missing {
			b.nums = append(b.nums, math.NaN())
			b.offs = append(b.offs, uint32(len(b.text)))
			return
		}
		if v, err := parseNumber(s); err == nil && len(b.text)+len(s) < math.MaxUint32 {
			b.nums = append(b.nums, v)
			b.text = append(b.text, s...)
			b.offs = append(b.offs, uint32(len(b.text)))
			return
		}
		b.intern()
	}
	if b.dict == nil {
		b.dict = make(map[string]int32, len(b.lev))
		for i, l := range b.lev {
			b.dict[l] = int32(i)
		}
	}
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

// intern switches a numeric-mode Builder to dictionary mode.
func (b *Builder) intern() {
	if !b.num {
		return
	}
	b.num = false
	b.dict = map[string]int32{}
	b.codes = make([]int32, len(b.nums), max(len(b.nums), 16))
	for i, v := range b.nums {
		if math.IsNaN(v) {
			b.codes[i] = -1
			continue
		}
		s := b.text[b.offs[i]:b.offs[i+1]]
		c, ok := b.dict[string(s)]
		if !ok {
			c = int32(len(b.lev))
			b.dict[string(s)] = c
			b.lev = append(b.lev, string(s))
		}
		b.codes[i] = c
	}
	b.nums, b.text, b.offs = nil, nil, nil
}

// Len returns the number of values appended.
func (b *Builder) Len() int {
	if b.num {
		return len(b.nums)
	}
	return len(b.codes)
}

// A rowError is an inference error about a value first seen on row (0-based);
// readers turn the row into a line. Its message names the variable.
type rowError struct {
	row int
	err error
}

func (e *rowError) Error() string { return e.err.Error() }
func (e *rowError) Unwrap() error { return e.err }

// firstRow returns the first row holding level code c (dictionary mode).
func (b *Builder) firstRow(c int32) int {
	for i, x := range b.codes {
		if x == c {
			return i
		}
	}
	return 0
}

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
// first that applies wins; a VarSpec override of the type replaces them):
//
//  1. SDTM identifier names (STUDYID, USUBJID, SITEID, --SEQ, ...) → identifier.
//  2. name ending in DTC (SDTM --DTC variables) → date, even when every value
//     is a year such as "1961"; values that do not parse are kept in
//     Column.Invalid and are missing.
//  3. --TERM and --TEST names (SDTM verbatim text) → free text.
//  4. every non-missing value a number: two distinct values → binary; at most
//     OrdinalMaxLevels distinct integers (|v| ≤ 1e9) → ordinal (an integer
//     scale with few levels: grades, scores); else continuous. Values are
//     distinct by their float64 bits, so "1.5" and "1.50" are one value.
//  5. at least DateShare of non-missing values ISO 8601 dates → date, the
//     others kept in Column.Invalid.
//  6. text with exactly two distinct values → binary (Y/N, M/F).
//  7. text whose levels are a subset of a known ordered vocabulary (MILD <
//     MODERATE < SEVERE; LOW < NORMAL < HIGH) → ordinal.
//  8. text unique on every row with at least IdentifierMinRows values → identifier.
//  9. more than FreeTextMinLevels distinct values making up at least
//     FreeTextShare of the values → free text.
//  10. otherwise → nominal.
//
// A column with no values, or a single distinct value, keeps the type its
// values suggest and is left for the analysis to skip as constant.
//
// A VarSpec sets the type, unit and label; its Levels give an ordinal its
// order (ascending) or list a nominal's allowed values. Column fails when a
// value is not one of the declared levels, when a variable declared
// continuous holds a value that is not a number, when one declared ordinal
// without levels has text levels outside the known vocabularies, or when one
// declared binary has more than two distinct values; the error names the
// variable and the value.
func (b *Builder) Column(o InferOptions) (*Column, error) {
	o = o.withDefaults()
	spec, hasSpec := o.Vars[b.Name]
	t, why := TypeUnknown, ""
	switch {
	case hasSpec && spec.Type != TypeUnknown:
		t, why = spec.Type, "set by "+orDefault(spec.Source, "override")
	case identifierName(b.Name):
		t, why = Identifier, "SDTM identifier variable name"
	case strings.HasSuffix(b.Name, "DTC"):
		t = DateTime // why is set below, with the count of values that parse
	case freeTextName(b.Name):
		t, why = FreeText, "SDTM verbatim text variable name"
	}
	// Numbers are stored as floats for continuous variables and for ordinal
	// and binary ones without declared levels.
	floatStored := func(t Type, allNum bool) bool {
		return t == Continuous || allNum && (t == Ordinal || t == Binary) && len(spec.Levels) == 0
	}
	if b.num && (t == TypeUnknown || floatStored(t, true)) && hasValue(b.nums) {
		nt, nwhy, tooMany := numericType(b.nums, o)
		if t == TypeUnknown {
			t, why = nt, nwhy
		}
		if t == Binary && tooMany >= 0 {
			return nil, &rowError{tooMany, fmt.Errorf("variable %q: declared binary but has more than two distinct values", b.Name)}
		}
		c := NewFloatColumn(b.Name, t, append([]float64(nil), b.nums...))
		c.Why = why
		spec.apply(c, hasSpec)
		return c, nil
	}
	b.intern()
	nonMissing := 0
	for _, c := range b.codes {
		if c >= 0 {
			nonMissing++
		}
	}
	// Parse the dictionary once.
	nums := make([]float64, len(b.lev))
	allNum := len(b.lev) > 0
	for i, s := range b.lev {
		v, err := parseNumber(s)
		if err != nil {
			allNum = false
			break
		}
		nums[i] = v
	}
	if t == TypeUnknown {
		switch {
		case allNum:
			t, why, _ = numericType(nums, o)
		case len(b.lev) == 0:
			t, why = Nominal, "no values"
		}
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
		switch {
		case t == DateTime && why == "":
			why = fmt.Sprintf("SDTM date variable name (--DTC); %d of %d values parse", good, nonMissing)
		case t == TypeUnknown && nonMissing > 0 && float64(good) >= o.DateShare*float64(nonMissing):
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
		case len(b.lev) > o.FreeTextMinLevels && float64(len(b.lev)) >= o.FreeTextShare*float64(nonMissing):
			t, why = FreeText, fmt.Sprintf("%d distinct values in %d", len(b.lev), nonMissing)
		default:
			t, why = Nominal, fmt.Sprintf("text with %d levels", len(b.lev))
		}
	}
	c, err := b.build(t, floatStored(t, allNum), nums, dates, dateErrs, spec)
	if err != nil {
		return nil, err
	}
	c.Why = why
	spec.apply(c, hasSpec)
	return c, nil
}

// apply copies the override's unit and label to c.
func (spec VarSpec) apply(c *Column, has bool) {
	if !has {
		return
	}
	if spec.Unit != "" {
		c.Unit = spec.Unit
	}
	if spec.Label != "" {
		c.Label = spec.Label
	}
}

func hasValue(v []float64) bool {
	for _, x := range v {
		if !math.IsNaN(x) {
			return true
		}
	}
	return false
}

// numericType applies rule 3 of Builder.Column to v (NaN is missing). Values
// are distinct by their float64 bits; counting stops past max(OrdinalMaxLevels,
// 2). thirdAt is the index of the first value that makes a third distinct
// value, -1 when there are at most two.
func numericType(v []float64, o InferOptions) (t Type, why string, thirdAt int) {
	limit := max(o.OrdinalMaxLevels, 2)
	distinct := make([]uint64, 0, limit+1)
	allInt := true
	thirdAt = -1
scan:
	for i, x := range v {
		if math.IsNaN(x) {
			continue
		}
		bits := math.Float64bits(x)
		for _, d := range distinct {
			if d == bits {
				continue scan
			}
		}
		distinct = append(distinct, bits)
		if len(distinct) == 3 {
			thirdAt = i
		}
		if x != math.Trunc(x) || math.Abs(x) > 1e9 {
			allInt = false
		}
		if len(distinct) > limit {
			break
		}
	}
	switch n := len(distinct); {
	case n == 2:
		return Binary, "numeric with two distinct values", thirdAt
	case allInt && n <= o.OrdinalMaxLevels:
		return Ordinal, fmt.Sprintf("integer scale with %d levels (≤ %d)", n, o.OrdinalMaxLevels), thirdAt
	case n > limit:
		return Continuous, fmt.Sprintf("numeric with more than %d distinct values", limit), thirdAt
	default:
		return Continuous, fmt.Sprintf("numeric with %d distinct values", n), thirdAt
	}
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

// build stores a dictionary-mode Builder's values as type t; floatStored
// says whether t keeps numbers (nums holds each level's value when every
// level is a number).
func (b *Builder) build(t Type, floatStored bool, nums []float64, dates []Date, dateErrs map[int32]error, spec VarSpec) (*Column, error) {
	n := len(b.codes)
	if t == DateTime {
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
	}
	tooMany := fmt.Errorf("variable %q: declared binary but has more than two distinct values", b.Name)
	if t == Binary && !floatStored && len(b.lev) > 2 && len(spec.Levels) == 0 {
		return nil, &rowError{b.firstRow(2), tooMany}
	}
	if floatStored {
		for i, s := range b.lev {
			v, err := parseNumber(s)
			if err != nil {
				return nil, &rowError{b.firstRow(int32(i)), fmt.Errorf("variable %q: declared %s but value %q is not a number", b.Name, t, s)}
			}
			nums[i] = v
		}
		v := make([]float64, n)
		for i, c := range b.codes {
			if c < 0 {
				v[i] = math.NaN()
			} else {
				v[i] = nums[c]
			}
		}
		if t == Binary {
			if _, _, third := numericType(v, InferOptions{}); third >= 0 {
				return nil, &rowError{third, tooMany}
			}
		}
		return NewFloatColumn(b.Name, t, v), nil
	}
	// Coded storage. Ordinal levels are put in order; others sorted for a
	// deterministic dictionary (numerically when every level is a number).
	order := spec.Levels
	if t == Ordinal && len(order) == 0 && len(b.lev) > 0 {
		if order = orderOf(b.lev); order == nil {
			return nil, &rowError{b.firstRow(0), fmt.Errorf("variable %q: declared ordinal but its levels are not numbers or a known order; list them in order under levels", b.Name)}
		}
	}
	var levels []string
	if len(order) > 0 {
		pos := map[string]int{}
		for i, s := range order {
			pos[s] = i
		}
		for i, s := range b.lev {
			if _, ok := pos[s]; !ok {
				return nil, &rowError{b.firstRow(int32(i)), fmt.Errorf("variable %q: value %q is not one of the declared levels %q", b.Name, s, order)}
			}
		}
		levels = append([]string(nil), order...)
	} else {
		levels = append([]string(nil), b.lev...)
		allNum := len(levels) > 0
		for _, s := range levels {
			if _, err := parseNumber(s); err != nil {
				allNum = false
				break
			}
		}
		if allNum {
			sort.SliceStable(levels, func(i, j int) bool {
				x, _ := parseNumber(levels[i])
				y, _ := parseNumber(levels[j])
				return x < y || x == y && levels[i] < levels[j]
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
