package demostudy

import (
	"cmp"
	"errors"
	"fmt"
	"slices"
	"strconv"
)

// StudyID is the STUDYID of the invented study CFX-201.
const StudyID = "CFX-201"

// Problem classes planted when Config.Clean is false. The names are the values of
// Problem.Class and of the class column of _truth.csv.
const (
	ClassWeightInPounds        = "weight_in_pounds"
	ClassBPTransposed          = "bp_transposed"
	ClassAEEndBeforeStart      = "ae_end_before_start"
	ClassPregnancyMale         = "pregnancy_male"
	ClassBMIMismatch           = "bmi_mismatch"
	ClassCMGateContradiction   = "cm_gate_contradiction"
	ClassSeverityGradeMismatch = "severity_grade_mismatch"
	ClassLiverEnzymeOutlier    = "liver_enzyme_outlier"
	ClassFabricatedSubjects    = "fabricated_subjects"
	ClassVisitBeforeConsent    = "visit_before_consent"
)

// ProblemClasses returns the names of the planted problem classes in the order in which
// the package documentation describes them. The slice is new on every call.
func ProblemClasses() []string {
	return []string{
		ClassWeightInPounds,
		ClassBPTransposed,
		ClassAEEndBeforeStart,
		ClassPregnancyMale,
		ClassBMIMismatch,
		ClassCMGateContradiction,
		ClassSeverityGradeMismatch,
		ClassLiverEnzymeOutlier,
		ClassFabricatedSubjects,
		ClassVisitBeforeConsent,
	}
}

// Config selects what Generate produces. The same Config always gives byte-identical
// output.
type Config struct {
	// Seed seeds every random stream (math/rand/v2 PCG). Subjects are drawn from
	// per-subject streams, so a subject's clean data depend on Seed, Subjects and Sites
	// only, not on Clean or Cut.
	Seed uint64
	// Subjects is the number of subjects (screened, including screen failures) in the
	// first data cut. The second cut adds Subjects/5 more. At least 10 per site.
	Subjects int
	// Sites is the number of investigational sites, 2 to 99. Sites are "01", "02", ….
	Sites int
	// Clean, when true, plants no problems: Study.Truth is empty and every relationship
	// the package documents holds for every record.
	Clean bool
	// Cut is the data cut: 1 for the first extract, 2 for the later one (see the package
	// documentation for exactly what changes). Other values are an error.
	Cut int
}

// DefaultConfig returns the configuration of the shipped demo: seed 20261202, 600
// subjects at 14 sites, problems planted, first data cut.
func DefaultConfig() Config {
	return Config{Seed: 20261202, Subjects: 600, Sites: 14, Clean: false, Cut: 1}
}

// Study is one generated extract.
type Study struct {
	// Forms holds one form per domain, keyed by the lower-case domain code: "dm",
	// "vs", "lb", "ae", "cm", "ex", "ds" and "sv".
	Forms map[string]*Form
	// Truth lists every planted problem, sorted by class, USUBJID, visit and key. It is
	// empty when Config.Clean is true.
	Truth []Problem
	// DataCut is the ISO 8601 date of the data cut: nothing in the extract is dated
	// after it.
	DataCut string
}

// Form is one extract file: a header row and data rows of text, missing values empty.
// Rows are sorted by USUBJID, then VISITNUM, then the domain's sequence number.
type Form struct {
	Name   string // lower-case domain code, also the file name without ".csv"
	Header []string
	Rows   [][]string
}

// Col returns the index of the named column in f.Header, or -1 when absent.
func (f *Form) Col(name string) int {
	return slices.Index(f.Header, name)
}

// Problem is one planted problem: one row of _truth.csv.
type Problem struct {
	Class    string  // one of ProblemClasses
	Domain   string  // upper-case SDTM domain code of the record holding the problem, e.g. "VS"
	USUBJID  string  // subject
	SiteID   string  // SITEID of the subject (from DM)
	VisitNum float64 // VISITNUM of the record, 0 when the record has none (DM, AE)
	// Key is the record's natural key within its domain and visit: the test code
	// (VSTESTCD, LBTESTCD), AESEQ for AE, "CMYN" for the DM gate question, and empty
	// when the subject (DM) or the visit (SV) is itself the record.
	Key    string
	Detail string // human-readable description with the values involved
}

// Generate builds the invented study for cfg. It returns an error, and no study, when
// cfg is out of range or when the sites are too small to hold the planted site-level
// problems.
func Generate(cfg Config) (*Study, error) {
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	pop, err := newPopulation(cfg)
	if err != nil {
		return nil, err
	}
	v := pop.view(cfg.Cut)
	var truth []Problem
	if !cfg.Clean {
		var prev *view
		if cfg.Cut == 2 {
			prev = pop.view(1)
		}
		truth = pop.plant(v, prev)
	}
	sortProblems(truth)
	st := &Study{Forms: v.forms(), Truth: truth, DataCut: dateStr(v.cutDay)}
	return st, nil
}

func (c Config) validate() error {
	switch {
	case c.Cut != 1 && c.Cut != 2:
		return fmt.Errorf("demostudy: config: Cut = %d, want 1 or 2", c.Cut)
	case c.Sites < 2 || c.Sites > 99:
		return fmt.Errorf("demostudy: config: Sites = %d, want 2 to 99", c.Sites)
	case c.Subjects < 10*c.Sites:
		return fmt.Errorf("demostudy: config: Subjects = %d, want at least 10 per site (%d)", c.Subjects, 10*c.Sites)
	case c.Subjects > 100000:
		return fmt.Errorf("demostudy: config: Subjects = %d, want at most 100000", c.Subjects)
	}
	return nil
}

// errNoFabricationSite is returned when no site can hold the fabricated subjects.
var errNoFabricationSite = errors.New("demostudy: no site has a completed subject followed by 5 randomised subjects in the first cut; use more subjects per site")

func sortProblems(ps []Problem) {
	slices.SortFunc(ps, func(a, b Problem) int {
		if c := cmp.Compare(a.Class, b.Class); c != 0 {
			return c
		}
		if c := cmp.Compare(a.USUBJID, b.USUBJID); c != 0 {
			return c
		}
		if c := cmp.Compare(a.VisitNum, b.VisitNum); c != 0 {
			return c
		}
		return compareKeys(a.Key, b.Key)
	})
}

// compareKeys orders keys numerically when both are integers (AESEQ), else as text.
func compareKeys(a, b string) int {
	x, errX := strconv.Atoi(a)
	y, errY := strconv.Atoi(b)
	if errX == nil && errY == nil {
		return cmp.Compare(x, y)
	}
	return cmp.Compare(a, b)
}
