package dataset

import (
	"errors"
	"fmt"
	"sort"
	"strings"
)

// The level kinds of Level.Kind.
const (
	LevelSubject = "subject" // one row per subject (USUBJID)
	LevelVisit   = "visit"   // one row per subject and scheduled visit (USUBJID, VISITNUM)
	LevelRecord  = "record"  // one row per record of one domain (USUBJID, --SEQ)
	LevelTable   = "table"   // a table as read, unchanged
)

// A Level is a unit of analysis: what one row of a shaped table stands for.
type Level struct {
	Kind   string // LevelSubject, LevelVisit, LevelRecord or LevelTable
	Domain string // the domain for LevelRecord ("AE"), the table name for LevelTable, else ""
}

// String returns the level as ParseLevel reads it: "subject", "visit",
// "record:AE", "table:NAME".
func (l Level) String() string {
	if l.Kind == LevelRecord || l.Kind == LevelTable {
		return l.Kind + ":" + l.Domain
	}
	return l.Kind
}

// ParseLevel reads a level: "subject", "visit", "record:DOMAIN" (the domain
// code, e.g. "record:AE"; upper-cased) or "table:NAME" (a table of the study
// by name, compared case-insensitively, e.g. "table:labs"). The kind is
// case-insensitive.
func ParseLevel(s string) (Level, error) {
	kind, arg, hasArg := strings.Cut(strings.TrimSpace(s), ":")
	kind, arg = strings.ToLower(strings.TrimSpace(kind)), strings.TrimSpace(arg)
	switch kind {
	case LevelSubject, LevelVisit:
		if hasArg {
			return Level{}, fmt.Errorf("level %q: %q takes no domain (want %s)", s, kind, kind)
		}
		return Level{Kind: kind}, nil
	case LevelRecord:
		if arg == "" {
			return Level{}, fmt.Errorf("level %q: record level needs a domain, e.g. record:AE", s)
		}
		return Level{Kind: kind, Domain: strings.ToUpper(arg)}, nil
	case LevelTable:
		if arg == "" {
			return Level{}, fmt.Errorf("level %q: table level needs a table name, e.g. table:DM", s)
		}
		return Level{Kind: kind, Domain: arg}, nil
	}
	return Level{}, fmt.Errorf("unknown level %q (want subject, visit, record:DOMAIN or table:NAME)", s)
}

// ShapeOptions control Study.Shape. The zero value uses the defaults.
type ShapeOptions struct {
	// Infer types the variables made from findings results (pivoted values and
	// baselines) by the rules of Builder.Column; its Vars override types by the
	// made names (e.g. "VS.SYSBP"), and also the type, label and unit of the
	// derived summaries (e.g. "AE.N") when the storage allows.
	Infer InferOptions
	// IncludeUnscheduled keeps findings and SV rows at non-integer VISITNUM
	// (unscheduled visits) as visits of their own. By default they are
	// excluded and counted in ShapeReport.Dropped.
	IncludeUnscheduled bool
	// Qualifiers are the findings qualifier suffixes that are added to a
	// test's key when they vary within subject × visit × test code. nil means
	// DefaultQualifiers; an empty non-nil slice adds none. At most 8.
	Qualifiers []string
	// DMVars are the DM variables joined, prefixed "DM.", at visit and record
	// level. nil means DefaultDMVars; an empty non-nil slice joins none.
	// Variables missing from DM are skipped.
	DMVars []string
	// Domains restricts the findings, events and interventions domains used
	// at visit and subject level (codes, e.g. "VS", "AE"); nil uses all.
	Domains []string
}

// DefaultQualifiers are the findings qualifier suffixes considered for a
// test's key, in key order: category, subcategory, specimen, position,
// location, laterality, method and time point number (SDTM.md §3 step 2).
var DefaultQualifiers = []string{"CAT", "SCAT", "SPEC", "POS", "LOC", "LAT", "METHOD", "TPTNUM"}

// DefaultDMVars are the DM variables joined at visit and record level when
// present. ARM and ACTARM can reveal allocation in a blinded study; callers
// that must stay blind remove them (EDIT-CHECKS.md §6).
var DefaultDMVars = []string{"SEX", "AGE", "RACE", "ETHNIC", "COUNTRY", "ARM", "ACTARM",
	"BRTHDTC", "RFICDTC", "RFSTDTC", "RFENDTC", "RFXSTDTC", "RFXENDTC", "DTHFL", "DTHDTC"}

const maxQual = 8

// The values of Provenance.Derived set by Study.Shape.
const (
	DerivedPivot    = "pivot"     // a findings result moved to a column (mean of numeric repeats, else last by --SEQ)
	DerivedBaseline = "baseline"  // a subject's baseline findings result
	DerivedAny      = "any"       // whether the subject has any record (N/Y)
	DerivedCount    = "count"     // number of records of the subject
	DerivedMax      = "max"       // worst severity or grade over the subject's records
	DerivedFirst    = "first"     // earliest start date over the subject's records
	DerivedJoin     = "join"      // a DM variable joined by USUBJID
	DerivedStudyDay = "study day" // visit date as study day from DM.RFSTDTC
	DerivedVisit    = "visit"     // a visit attribute from SV (earliest SVSTDTC of the visit)
)

// The reasons of a Drop.
const (
	DropNoSubject   = "no USUBJID"
	DropNotInDM     = "subject not in DM"
	DropDuplicateDM = "duplicate DM record (first kept)"
	DropNoVisit     = "no numeric VISITNUM"
	DropUnscheduled = "unscheduled visit (non-integer VISITNUM)"
	DropNoTestCode  = "no test code"
	DropMixedUnits  = "test with mixed units (variable not made)"
	DropNoResult    = "test without any result (variable not made)"
	DropNotOccurred = "pre-specified event or intervention did not occur (--OCCUR = N)"
)

// A ShapeReport accounts for everything Study.Shape did to the source rows:
// nothing is dropped, merged or skipped without being counted here. Slices
// are in a deterministic order (by domain, variable, site).
type ShapeReport struct {
	Level    Level
	Rows     int // rows of the shaped table
	Subjects int // distinct subjects in the shaped table

	// Vars lists the variables made, in table order, keys and site excluded.
	Vars []ShapedVar
	// Qualifiers lists the qualifiers added to tests' keys.
	Qualifiers []AddedQualifier
	// MixedUnits lists tests with more than one --STRESU; no variable is
	// made for them (their rows are counted under DropMixedUnits).
	MixedUnits []MixedUnit
	// Collisions counts, per variable and site, the cells that several
	// source rows fill (resolved by the policy of Study.Shape).
	Collisions []Collision
	// Dropped counts the source rows not used, by domain and reason.
	Dropped []Drop
	// SubjectsWithoutDM lists the USUBJIDs found in other domains but not in
	// DM, sorted; their rows are counted under DropNotInDM.
	SubjectsWithoutDM []string
	Warnings          []string
}

// A ShapedVar describes one variable made by Study.Shape.
type ShapedVar struct {
	Name       string
	Type       Type
	Unit       string
	Label      string
	Prov       Provenance
	Qualifiers []string // qualifier values in the variable's key, e.g. "VSPOS=SITTING"
	N          int      // non-missing values in the shaped table
	Rows       int      // source rows assigned to the variable (0 for joins)
	NotDone    int      // rows with --STAT = NOT DONE: no value taken from them
	NoResult   int      // rows with neither a result nor NOT DONE
	Unused     int      // results not used: text results of a numeric test, unrecognised severities, non-numeric grades
	NoUnit     int      // results without --STRESU
	// Baseline counts the subjects by the rule that gave their baseline
	// value (subject level findings only), else nil.
	Baseline *BaselineCount
}

// A BaselineCount counts subjects by the baseline rule that applied (see
// Study.Shape, subject level).
type BaselineCount struct {
	Flag            int // --LOBXFL or --BLFL = Y
	BeforeReference int // last result on or before the first dose date
	FirstVisit      int // first visit, the subject having no reference date or the test no dates
	None            int // no baseline: results exist, all after the reference date
}

// An AddedQualifier is a qualifier made part of a test's key because its
// value varies within subject × visit × test code.
type AddedQualifier struct {
	Domain, TestCode string
	Qualifier        string // the variable, e.g. "VSPOS"
	Cells            int    // subject × visit cells in which it varied
}

// A MixedUnit is a test whose results carry several standard units.
type MixedUnit struct {
	Domain, TestCode string
	Var              string // the variable that was not made
	Units            []UnitCount
}

// A UnitCount is how many results of a test carry one unit, and at which sites.
type UnitCount struct {
	Unit  string
	Rows  int
	Sites []string // sorted
}

// A Collision counts the cells of one variable, at one site, that several
// source rows with a value fill.
type Collision struct {
	Var       string
	Site      string
	Cells     int // cells filled by two or more rows
	Rows      int // rows in those cells
	Differing int // cells whose rows do not all hold the same value
}

// A Drop counts source rows of a domain not used, for one reason.
type Drop struct {
	Domain   string
	Reason   string // one of the Drop* constants
	Rows     int
	Subjects int // distinct subjects among them (USUBJID as written)
}

// DroppedRows returns the rows dropped for reason, summed over domains.
func (r *ShapeReport) DroppedRows(reason string) int {
	n := 0
	for _, d := range r.Dropped {
		if d.Reason == reason {
			n += d.Rows
		}
	}
	return n
}

// Var returns the report of the variable named name, or nil.
func (r *ShapeReport) Var(name string) *ShapedVar {
	for i := range r.Vars {
		if r.Vars[i].Name == name {
			return &r.Vars[i]
		}
	}
	return nil
}

// A SiteCollisions sums Collision counts over the variables of one site.
type SiteCollisions struct {
	Site              string
	Cells, Rows, Diff int
}

// CollisionsBySite sums the collisions per site, sorted by site.
func (r *ShapeReport) CollisionsBySite() []SiteCollisions {
	m := map[string]*SiteCollisions{}
	for _, c := range r.Collisions {
		s := m[c.Site]
		if s == nil {
			s = &SiteCollisions{Site: c.Site}
			m[c.Site] = s
		}
		s.Cells += c.Cells
		s.Rows += c.Rows
		s.Diff += c.Differing
	}
	out := make([]SiteCollisions, 0, len(m))
	for _, s := range m {
		out = append(out, *s)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Site < out[j].Site })
	return out
}

// ErrNotSDTM is returned by Study.Shape at subject, visit and record level
// when the study has no DM table with a USUBJID column.
var ErrNotSDTM = errors.New("not an SDTM study: no DM table with USUBJID (use table:NAME for a generic table)")

// IsSDTM reports whether the study looks like an SDTM study: it has a DM
// table with a USUBJID column.
func (s *Study) IsSDTM() bool {
	dm := s.Table("DM")
	return dm != nil && dm.Col("USUBJID") != nil
}

// Shape returns the study's data as one table at level l, with a report of
// what was done. Subjects are sorted by USUBJID, visits by VISITNUM, and
// variables by domain, then test code (then qualifier values), so the result
// never depends on map order. Rows of subjects that are not in DM are
// dropped and counted. SDTM names and roles follow SDTM.md §1–§3.
//
// Visit level (keys USUBJID, VISITNUM; site SITEID from DM): every findings
// domain (a table with --TESTCD and --STRESN or --STRESC; split tables with
// one DOMAIN value are read together) is pivoted to one variable per test,
// named DOMAIN.TESTCD ("VS.SYSBP", "LB.ALT"). A qualifier among
// o.Qualifiers (--POS, --SPEC, --TPTNUM, ...) whose value varies within one
// subject × visit × test code is added to that test's key and name:
// "VS.SYSBP.SITTING", "VS.SYSBP.STANDING" (a numbered qualifier such as
// --TPTNUM gives "TPT2"; a missing value gives "NA"; other characters than
// letters, digits and _ become _). The value is --STRESN when the test has
// any numeric result, else --STRESC, typed by Builder.Column with o.Infer.
// A test whose results carry more than one --STRESU is not pivoted: no
// variable is made, the test is listed in MixedUnits and its rows counted as
// dropped (results without a unit do not count as a unit). Rows with --STAT
// = NOT DONE give no value. When several rows fill one cell (repeats,
// re-tests, duplicates) the value is the mean of their numeric results, or
// for a text test the result of the row with the largest --SEQ (file order
// among equal ones); such cells are counted per variable and site in
// Collisions (rows without --SEQ sort first). Non-integer VISITNUM (unscheduled visits) are excluded unless
// o.IncludeUnscheduled. Visits come from the findings rows and SV; when SV
// has SVSTDTC the table adds SV.STDTC (earliest start date of the visit) and
// SV.STDY (its study day from DM.RFSTDTC, no day 0, full dates only). The DM
// variables o.DMVars are joined as "DM.SEX", "DM.AGE", ....
//
// Subject level (key USUBJID, site SITEID): all DM variables as read (dates
// stay dates), then for each findings test (keyed as at visit level) its
// baseline value "VS.SYSBP.BL", chosen by the first rule that applies: (1)
// the results flagged --LOBXFL = Y, else --BLFL = Y; (2) the results of the
// last day on or before the reference date (DM.RFXSTDTC, else DM.RFSTDTC;
// compared at day unit with partial-date semantics, see LessEq), only full
// dates; (3) when the subject has no reference date, or none of its results
// for the test has a full --DTC, the results of its first visit. Otherwise
// (all results after the reference date) the baseline is missing. Several
// results are combined as at visit level (mean, else the last by VISITNUM,
// then --SEQ). Subject level reads findings rows through the same filters as
// visit level (scheduled visits with a VISITNUM only, by default). Then
// for each events or interventions domain (a domain with --TERM, --DECOD,
// --TRT or --STDTC and no --TESTCD, e.g. AE, CM, EX, MH, DS): "AE.ANY" (N/Y,
// binary), "AE.N" (record count), "AE.FIRSTSTDTC" (earliest --STDTC by the
// start of its interval), and where the variables exist "AE.MAXSEV"
// (ordinal MILD < MODERATE < SEVERE), "AE.MAXTOXGR" (numeric grade, ordinal)
// and "AE.ANYSER" (Y if any --SER = Y, N if the subject has no record or all
// N, missing otherwise). Records with --OCCUR = N are not counted.
//
// Record level "record:XX" (keys USUBJID and --SEQ when present): the rows
// of domain XX (split tables concatenated) with all its variables, sorted by
// USUBJID then --SEQ, with SITEID from DM as the site column and the DM
// variables o.DMVars joined as "DM.SEX", ... (not for record:DM). A single
// table's columns keep their storage; split tables are re-typed from their
// text values (an interval date keeps only its start).
//
// Table level "table:NAME" returns the study's table as read (shared, not a
// copy) and a report listing its columns; it needs no DM.
//
// Every variable carries Provenance: the domain, the test code for findings,
// the source column (VSSTRESN, AESEV, ...), the file(s), and Derived (one of
// the Derived* constants). Shape only reads the study, so it may run
// concurrently on one Study. Errors: ErrNotSDTM, an unknown domain or table, a
// type override that the values contradict.
func (s *Study) Shape(l Level, o ShapeOptions) (*Table, *ShapeReport, error) {
	if l.Kind == LevelTable {
		return s.shapeTable(l)
	}
	switch l.Kind {
	case LevelSubject, LevelVisit, LevelRecord:
	default:
		return nil, nil, fmt.Errorf("unknown level %q (want subject, visit, record:DOMAIN or table:NAME)", l.Kind)
	}
	if l.Kind == LevelRecord && l.Domain == "" {
		return nil, nil, fmt.Errorf("record level needs a domain, e.g. record:AE")
	}
	sh, err := newShaper(s, o, l)
	if err != nil {
		return nil, nil, err
	}
	var t *Table
	switch l.Kind {
	case LevelVisit:
		t, err = sh.visitLevel()
	case LevelSubject:
		t, err = sh.subjectLevel()
	case LevelRecord:
		t, err = sh.recordLevel(l.Domain)
	}
	if err != nil {
		return nil, nil, err
	}
	sh.finish(t)
	return t, sh.rep, nil
}

func (s *Study) shapeTable(l Level) (*Table, *ShapeReport, error) {
	t := s.Table(l.Domain)
	if t == nil {
		names := make([]string, len(s.Tables))
		for i, t := range s.Tables {
			names[i] = t.Name
		}
		return nil, nil, fmt.Errorf("level %s: no table %q in %s (tables: %s)", l, l.Domain, s.Path, strings.Join(names, ", "))
	}
	rep := &ShapeReport{Level: l, Rows: t.NRows}
	for _, c := range t.Cols {
		if t.IsKey(c.Name) {
			continue
		}
		rep.Vars = append(rep.Vars, varInfo(c))
	}
	if k := t.Col("USUBJID"); k != nil {
		_, lev := texts(k)
		rep.Subjects = len(lev)
	}
	return t, rep, nil
}

func varInfo(c *Column) ShapedVar {
	return ShapedVar{Name: c.Name, Type: c.Type, Unit: c.Unit, Label: c.Label, Prov: c.Prov, N: c.Len() - c.NMissing()}
}
