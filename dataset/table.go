package dataset

import (
	"errors"
	"fmt"
	"math"
	"math/bits"
	"sort"
	"strconv"
)

// Type is a variable's statistical type. It decides which association measure
// and which rule kinds apply to the variable.
type Type uint8

// The variable types. The zero value is TypeUnknown.
const (
	TypeUnknown Type = iota
	Continuous
	Ordinal
	Nominal
	Binary
	DateTime // a date or date-time (ISO 8601, possibly partial)
	FreeText
	Identifier
)

var typeNames = [...]string{"unknown", "continuous", "ordinal", "nominal", "binary", "date", "text", "identifier"}

func (t Type) String() string {
	if int(t) < len(typeNames) {
		return typeNames[t]
	}
	return "type(" + strconv.Itoa(int(t)) + ")"
}

// ParseType returns the Type named s, as written by Type.String ("datetime" is
// accepted for "date", "freetext" for "text", "id" for "identifier").
func ParseType(s string) (Type, error) {
	switch s {
	case "datetime":
		return DateTime, nil
	case "freetext", "free_text":
		return FreeText, nil
	case "id":
		return Identifier, nil
	}
	for i, n := range typeNames {
		if n == s && i > 0 {
			return Type(i), nil
		}
	}
	return TypeUnknown, fmt.Errorf("unknown type %q (want continuous, ordinal, nominal, binary, date, text or identifier)", s)
}

// Analysable reports whether variables of type t enter association analysis.
// Identifiers and free text never do.
func (t Type) Analysable() bool {
	return t == Continuous || t == Ordinal || t == Nominal || t == Binary || t == DateTime
}

// Storage says which slice of a Column holds its values.
type Storage uint8

// The storages.
const (
	StoreFloat Storage = iota + 1 // Column.Floats
	StoreCode                     // Column.Codes indexing Column.Levels
	StoreDate                     // Column.DateLo, DateHi, DatePrec
)

// Provenance says where an analysis variable came from, so that a finding can
// point back to the source records.
type Provenance struct {
	Domain   string // SDTM domain or form name, e.g. "VS"; for a generic table its name
	TestCode string // --TESTCD for a pivoted findings variable, else ""
	Source   string // source column, e.g. "VSSTRESN"
	File     string // file the values were read from
	Derived  string // how the variable was derived (e.g. "baseline", "count"), "" if read as is
}

// An InvalidValue is a value that could not be read as its column's type (a
// date that is not ISO 8601, say). It is kept for the listing and the value is
// missing for analysis.
type InvalidValue struct {
	Row int    // 0-based row
	Raw string // the text as read
	Err error
}

// A Column is one variable stored by type: exactly one of the storages is used,
// as Storage says. Missing values are marked in the missing bitmap whatever the
// storage (a missing code is also -1, a missing float also NaN).
type Column struct {
	Name   string
	Label  string
	Unit   string
	Format string // SAS display format or Define-XML display format, "" if none
	Type   Type
	Why    string // why Type was chosen: the inference rule, or the override that set it
	Prov   Provenance

	Storage Storage
	// Floats holds numeric values (Storage == StoreFloat), NaN where missing.
	Floats []float64
	// Codes index Levels (Storage == StoreCode), -1 where missing. For an
	// ordinal column Levels are in ascending order.
	Codes  []int32
	Levels []string
	// DateLo and DateHi bound each date value in days since 1970-01-01
	// (fractional for times): the value lies in [DateLo, DateHi). DatePrec is
	// the precision of the value as written (Storage == StoreDate).
	DateLo, DateHi []float64
	DatePrec       []Precision

	// Special holds SAS special missing codes ('.', '_', 'A'..'Z') by 0-based
	// row, for numeric columns read from transport files; nil when none.
	Special map[int]byte
	// Invalid lists values that did not parse as the column's type.
	Invalid []InvalidValue

	missing Bitmap
}

// Len returns the number of rows.
func (c *Column) Len() int {
	switch c.Storage {
	case StoreFloat:
		return len(c.Floats)
	case StoreCode:
		return len(c.Codes)
	case StoreDate:
		return len(c.DateLo)
	}
	return 0
}

// Missing reports whether row i is missing.
func (c *Column) Missing(i int) bool { return c.missing.Get(i) }

// MissingBits returns the column's missing bitmap (shared, do not modify).
func (c *Column) MissingBits() Bitmap { return c.missing }

// SetMissingBits replaces the missing bitmap; used by readers and tests.
func (c *Column) SetMissingBits(b Bitmap) { c.missing = b }

// NMissing returns the number of missing rows.
func (c *Column) NMissing() int { return c.missing.Count() }

// Float returns a numeric view of row i: the value for float storage, the
// level index for coded storage (meaningful for ordinal and binary columns),
// and for a date known to the day or finer its earliest point in days since
// 1970-01-01 (fractional for times). It returns NaN when the value is missing,
// and for a partial date or a window ("a/b") longer than a day, which have no
// single position.
func (c *Column) Float(i int) float64 {
	if c.missing.Get(i) {
		return math.NaN()
	}
	switch c.Storage {
	case StoreFloat:
		return c.Floats[i]
	case StoreCode:
		return float64(c.Codes[i])
	case StoreDate:
		if c.DatePrec[i] >= PrecDay && c.DateHi[i]-c.DateLo[i] <= 1+1e-9 {
			return c.DateLo[i]
		}
		return math.NaN() // a partial date has no single position
	}
	return math.NaN()
}

// String returns row i as display text, "" when missing.
func (c *Column) String(i int) string {
	if c.missing.Get(i) {
		return ""
	}
	switch c.Storage {
	case StoreFloat:
		return FormatFloat(c.Floats[i])
	case StoreCode:
		return c.Levels[c.Codes[i]]
	case StoreDate:
		return FormatDays(c.DateLo[i], c.DatePrec[i])
	}
	return ""
}

// Date returns the interval of a date column's row i and its precision; ok is
// false when missing or when the column is not a date.
func (c *Column) Date(i int) (lo, hi float64, p Precision, ok bool) {
	if c.Storage != StoreDate || c.missing.Get(i) {
		return 0, 0, PrecNone, false
	}
	return c.DateLo[i], c.DateHi[i], c.DatePrec[i], true
}

// FormatFloat formats v with the fewest digits that read back to v.
func FormatFloat(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }

// NewFloatColumn returns a float column; NaN values are missing.
func NewFloatColumn(name string, t Type, v []float64) *Column {
	c := &Column{Name: name, Type: t, Storage: StoreFloat, Floats: v, missing: NewBitmap(len(v))}
	for i, x := range v {
		if math.IsNaN(x) {
			c.missing.Set(i)
		}
	}
	return c
}

// NewCodeColumn returns a coded column; code -1 is missing.
func NewCodeColumn(name string, t Type, codes []int32, levels []string) *Column {
	c := &Column{Name: name, Type: t, Storage: StoreCode, Codes: codes, Levels: levels, missing: NewBitmap(len(codes))}
	for i, x := range codes {
		if x < 0 {
			c.missing.Set(i)
		}
	}
	return c
}

// NewDateColumn returns a date column from parsed dates; a zero Date is missing.
func NewDateColumn(name string, d []Date) *Column {
	c := &Column{Name: name, Type: DateTime, Storage: StoreDate,
		DateLo: make([]float64, len(d)), DateHi: make([]float64, len(d)), DatePrec: make([]Precision, len(d)),
		missing: NewBitmap(len(d))}
	for i, x := range d {
		if x.Prec == PrecNone {
			c.missing.Set(i)
			c.DateLo[i], c.DateHi[i] = math.NaN(), math.NaN()
			continue
		}
		c.DateLo[i], c.DateHi[i] = x.Interval()
		c.DatePrec[i] = x.Prec
	}
	return c
}

// A Skip records an input row that was not loaded.
type Skip struct {
	File   string
	Line   int // 1-based line (text formats) or record/row number
	Reason string
}

// A Table is a set of named, typed columns of equal length. Keys name the
// columns that identify a row (subject, visit, sequence), Site the site column.
type Table struct {
	Name   string // domain or file stem
	Source string // file or folder read
	Level  string // "table", "subject", "visit" or "record:DOMAIN"
	NRows  int
	Cols   []*Column
	Keys   []string
	Site   string

	Skipped  []Skip
	Warnings []string

	byName map[string]int
}

// NewTable returns an empty table with n rows.
func NewTable(name string, n int) *Table {
	return &Table{Name: name, NRows: n, Level: "table", byName: map[string]int{}}
}

// Add appends a column. It fails if the name is taken or the length differs.
func (t *Table) Add(c *Column) error {
	if t.byName == nil {
		t.byName = map[string]int{}
	}
	if _, dup := t.byName[c.Name]; dup {
		return fmt.Errorf("column %q: %w", c.Name, ErrDuplicateColumn)
	}
	if c.Len() != t.NRows {
		return fmt.Errorf("column %q has %d rows, table %q has %d", c.Name, c.Len(), t.Name, t.NRows)
	}
	t.byName[c.Name] = len(t.Cols)
	t.Cols = append(t.Cols, c)
	return nil
}

// Col returns the column named name, or nil.
func (t *Table) Col(name string) *Column {
	if i, ok := t.byName[name]; ok {
		return t.Cols[i]
	}
	return nil
}

// Index returns the position of column name, or -1.
func (t *Table) Index(name string) int {
	if i, ok := t.byName[name]; ok {
		return i
	}
	return -1
}

// Names returns the column names in table order.
func (t *Table) Names() []string {
	out := make([]string, len(t.Cols))
	for i, c := range t.Cols {
		out[i] = c.Name
	}
	return out
}

// IsKey reports whether name is one of the table's key or site columns.
func (t *Table) IsKey(name string) bool {
	if name == t.Site && name != "" {
		return true
	}
	for _, k := range t.Keys {
		if k == name {
			return true
		}
	}
	return false
}

// RowKey returns the display values of the key columns for row i.
func (t *Table) RowKey(i int) []string {
	out := make([]string, len(t.Keys))
	for j, k := range t.Keys {
		if c := t.Col(k); c != nil {
			out[j] = c.String(i)
		}
	}
	return out
}

// SiteOf returns the site of row i, "" when the table has no site column.
func (t *Table) SiteOf(i int) string {
	if c := t.Col(t.Site); c != nil {
		return c.String(i)
	}
	return ""
}

// Validate checks the table's internal consistency: equal lengths, one
// storage per column, codes within levels, missing marks agreeing with
// values, key columns present. Readers' outputs always validate.
func (t *Table) Validate() error {
	var errs []error
	seen := map[string]bool{}
	for _, c := range t.Cols {
		if seen[c.Name] {
			errs = append(errs, fmt.Errorf("column %q: %w", c.Name, ErrDuplicateColumn))
		}
		seen[c.Name] = true
		if c.Len() != t.NRows {
			errs = append(errs, fmt.Errorf("column %q: %d rows, want %d", c.Name, c.Len(), t.NRows))
			continue
		}
		if c.missing.Len() < t.NRows {
			errs = append(errs, fmt.Errorf("column %q: missing bitmap too short", c.Name))
			continue
		}
		for i := 0; i < t.NRows; i++ {
			m := c.missing.Get(i)
			switch c.Storage {
			case StoreFloat:
				if m != math.IsNaN(c.Floats[i]) {
					errs = append(errs, fmt.Errorf("column %q row %d: missing mark disagrees with value", c.Name, i))
				}
			case StoreCode:
				if m != (c.Codes[i] < 0) || int(c.Codes[i]) >= len(c.Levels) {
					errs = append(errs, fmt.Errorf("column %q row %d: bad code %d", c.Name, i, c.Codes[i]))
				}
			case StoreDate:
				if !m && (c.DatePrec[i] == PrecNone || !(c.DateLo[i] < c.DateHi[i])) {
					errs = append(errs, fmt.Errorf("column %q row %d: bad date interval", c.Name, i))
				}
			default:
				errs = append(errs, fmt.Errorf("column %q: no storage", c.Name))
			}
			if len(errs) > 10 {
				return errors.Join(errs...)
			}
		}
	}
	for _, k := range t.Keys {
		if t.Col(k) == nil {
			errs = append(errs, fmt.Errorf("key column %q not in table", k))
		}
	}
	if t.Site != "" && t.Col(t.Site) == nil {
		errs = append(errs, fmt.Errorf("site column %q not in table", t.Site))
	}
	return errors.Join(errs...)
}

// Distinct returns the sorted distinct non-missing values of a float column.
func Distinct(v []float64) []float64 {
	out := make([]float64, 0, 16)
	for _, x := range v {
		if !math.IsNaN(x) {
			out = append(out, x)
		}
	}
	sort.Float64s(out)
	k := 0
	for i, x := range out {
		if i == 0 || x != out[k-1] {
			out[k] = x
			k++
		}
	}
	return out[:k]
}

// Bitmap is a fixed-size set of row indices.
type Bitmap struct {
	w []uint64
	n int
}

// NewBitmap returns an empty bitmap for n rows.
func NewBitmap(n int) Bitmap { return Bitmap{w: make([]uint64, (n+63)/64), n: n} }

// Len returns the number of rows the bitmap covers.
func (b Bitmap) Len() int { return b.n }

// Set marks row i.
func (b Bitmap) Set(i int) { b.w[i>>6] |= 1 << (uint(i) & 63) }

// Clear unmarks row i.
func (b Bitmap) Clear(i int) { b.w[i>>6] &^= 1 << (uint(i) & 63) }

// Get reports whether row i is marked; rows beyond Len are unmarked.
func (b Bitmap) Get(i int) bool {
	if i >= b.n || i < 0 {
		return false
	}
	return b.w[i>>6]&(1<<(uint(i)&63)) != 0
}

// Words returns the bitmap's 64-bit words (shared).
func (b Bitmap) Words() []uint64 { return b.w }

// Count returns the number of marked rows.
func (b Bitmap) Count() int {
	n := 0
	for _, w := range b.w {
		n += popcount(w)
	}
	return n
}

func popcount(x uint64) int { return bits.OnesCount64(x) }
