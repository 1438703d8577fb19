package assoc

import (
	"fmt"
	"math"
	"strconv"

	"github.com/crossform/crossform/dataset"
)

// Kind is how the engine treats a variable when choosing a pair's measure.
type Kind uint8

// The kinds. A variable's Kind follows from its dataset.Type and its number of
// distinct non-missing values (see AllPairs).
const (
	KindNone    Kind = iota // excluded from analysis (identifier, free text, key)
	KindNumeric             // continuous, full dates (as days), ordinal with many levels
	KindOrdinal             // ordinal with at most Options.ManyLevels distinct values
	KindBinary              // exactly two distinct values
	KindNominal             // unordered, more than two distinct values
)

var kindNames = [...]string{"none", "numeric", "ordinal", "binary", "nominal"}

func (k Kind) String() string {
	if int(k) < len(kindNames) {
		return kindNames[k]
	}
	return "kind(" + strconv.Itoa(int(k)) + ")"
}

// Measure names the association measure of a pair.
type Measure uint8

// The measures.
const (
	MeasureNone     Measure = iota // not computed (see Pair.Skip)
	MeasureSpearman                // Spearman's ρ (Spearman)
	MeasureCramersV                // Cramér's V (CramersV)
	MeasureSomersD                 // Somers' D in both directions (SomersD)
	MeasureKruskal                 // Kruskal–Wallis ε² (KruskalWallis)
)

var measureNames = [...]string{"none", "spearman", "cramers_v", "somers_d", "kruskal_epsilon2"}

// String returns the measure's stable identifier, as used in output files:
// "spearman", "cramers_v", "somers_d", "kruskal_epsilon2" or "none".
func (m Measure) String() string {
	if int(m) < len(measureNames) {
		return measureNames[m]
	}
	return "measure(" + strconv.Itoa(int(m)) + ")"
}

// Skip says why a pair has no association estimate.
type Skip uint8

// The skip reasons.
const (
	NotSkipped        Skip = iota
	SkipFewPairs           // fewer complete pairs than Options.MinPairs
	SkipConstant           // a variable has fewer than two distinct values (over the pair's complete rows)
	SkipNotAnalysable      // a variable is an identifier, free text or of unknown type
	SkipKey                // a variable is a key or site column of the table
)

var skipNames = [...]string{"", "few_pairs", "constant", "not_analysable", "key"}

// String returns the reason's stable identifier ("" when not skipped):
// "few_pairs", "constant", "not_analysable" or "key".
func (s Skip) String() string {
	if int(s) < len(skipNames) {
		return skipNames[s]
	}
	return "skip(" + strconv.Itoa(int(s)) + ")"
}

// A Pair is the association of variables I and J of a Matrix (0-based
// indexes into Matrix.Names, I < J). Which fields are set depends on Measure;
// fields that do not apply are NaN:
//
//	Measure           Estimate  Estimate2    SE, SE2       Lo, Hi                 Stat  DF
//	spearman          ρ         –            –             Fisher-z CI of ρ       t     n−2
//	cramers_v         V         Ṽ (Bergsma)  –             –                      χ²    (r−1)(c−1)
//	somers_d          d(J|I)    d(I|J)       ASE1 of each  d(J|I) ± z·SE (Wald)   z     –
//	kruskal_epsilon2  ε²        –            –             –                      H     k−1
//
// P is the p-value of the test in the Stat column (see Spearman, CramersV,
// SomersD, KruskalWallis). For Somers' D, I is the row (independent)
// variable of Estimate: d(J|I) is the asymmetric association "J given I";
// the Wald interval is not clipped to [−1, 1]. For a numeric–binary pair the
// numeric variable's distinct values are the ordered categories. For a
// Kruskal–Wallis pair the nominal variable defines the groups, whichever of
// I and J it is.
type Pair struct {
	I, J      int32
	TI, TJ    dataset.Type // the variables' types
	Measure   Measure
	Skip      Skip    // NotSkipped when the estimate was computed
	N         int32   // complete pairs (rows where both are present)
	Estimate  float64 // main estimate (see table above)
	Estimate2 float64 // second estimate, or NaN
	SE, SE2   float64 // standard errors of Estimate and Estimate2, or NaN
	Lo, Hi    float64 // ConfLevel confidence interval of Estimate, or NaN
	Stat, DF  float64 // test statistic and its degrees of freedom, or NaN
	P         float64 // two-sided p-value of no association, or NaN
	Q         float64 // Benjamini–Hochberg q-value over all pairs with a P
	// Strength is the association on a common 0–1 scale: |ρ| for Spearman,
	// Ṽ (bias-corrected) for Cramér's V, max(|d(J|I)|, |d(I|J)|) for Somers'
	// D, √ε² for Kruskal–Wallis. NaN when skipped.
	Strength float64
	// MissPhi is φ between the two variables' missingness indicators over all
	// rows (MissingPhi), with its χ² p-value and q-value (BH over all pairs
	// with a MissP); NaN when either variable is never or always missing.
	MissPhi, MissP, MissQ float64
}

// An Excluded variable was left out of the matrix (unless
// Options.KeepExcluded), with the reason.
type Excluded struct {
	Name   string
	Type   dataset.Type
	Reason Skip // SkipNotAnalysable or SkipKey
}

// Matrix holds the associations of p variables: per-variable metadata and
// the p(p−1)/2 pairs in a flat slice in upper-triangle order (0,1), (0,2), …,
// (0,p−1), (1,2), … (the layout of scipy's squareform).
type Matrix struct {
	Rows     int            // rows of the table
	Names    []string       // variable names, in table order
	Labels   []string       // variable labels ("" when none)
	Types    []dataset.Type // variable types
	Kinds    []Kind         // how each variable was treated
	Domains  []string       // Prov.Domain of each variable, or the table name
	Distinct []int          // distinct non-missing values of each variable
	NMissing []int          // missing values of each variable (partial dates count as present)
	Pairs    []Pair         // p(p−1)/2 pairs, see Slot
	Excluded []Excluded     // variables left out, in table order

	MinPairs   int // the Options.MinPairs used
	ManyLevels int // the Options.ManyLevels used
}

// Len returns the number of variables p.
func (m *Matrix) Len() int { return len(m.Names) }

// Index returns the position of the named variable, or −1.
func (m *Matrix) Index(name string) int {
	for i, n := range m.Names {
		if n == name {
			return i
		}
	}
	return -1
}

// Slot returns the position in Pairs of the pair of variables i and j
// (0-based, either order): p·a − a(a+1)/2 + b − a − 1 with a = min(i, j), b =
// max(i, j). Slot panics with "assoc: pair index out of range" unless i ≠ j
// and both are in [0, p).
func (m *Matrix) Slot(i, j int) int {
	p := len(m.Names)
	if i == j || i < 0 || j < 0 || i >= p || j >= p {
		panic("assoc: pair index out of range")
	}
	if i > j {
		i, j = j, i
	}
	return p*i - i*(i+1)/2 + j - i - 1
}

// Pair returns the pair of variables i and j (either order; the record has
// I < J). It panics like Slot.
func (m *Matrix) Pair(i, j int) *Pair { return &m.Pairs[m.Slot(i, j)] }

// Strength returns the strength of variables i and j in [0, 1], NaN when the
// pair was skipped, and 1 when i == j.
func (m *Matrix) Strength(i, j int) float64 {
	if i == j && i >= 0 && i < len(m.Names) {
		return 1
	}
	return m.Pairs[m.Slot(i, j)].Strength
}

// Dense returns the strengths as a symmetric p×p row-major matrix (element
// i*p+j), 1 on the diagonal and NaN for skipped pairs: the form
// cluster.Input.Strength takes.
func (m *Matrix) Dense() []float64 {
	p := len(m.Names)
	out := make([]float64, p*p)
	for i := 0; i < p; i++ {
		out[i*p+i] = 1
	}
	for k := range m.Pairs {
		pr := &m.Pairs[k]
		out[int(pr.I)*p+int(pr.J)] = pr.Strength
		out[int(pr.J)*p+int(pr.I)] = pr.Strength
	}
	return out
}

// Describe returns a one-line account of a pair for messages and summaries,
// such as "AGE × WEIGHT: spearman 0.41 (strength 0.41, p 1.2e-05, n 118)".
func (m *Matrix) Describe(pr *Pair) string {
	s := fmt.Sprintf("%s × %s: %s", m.Names[pr.I], m.Names[pr.J], pr.Measure)
	if pr.Skip != NotSkipped {
		return s + " skipped (" + pr.Skip.String() + ")"
	}
	return s + fmt.Sprintf(" %.4g (strength %.4g, p %.3g, n %d)", pr.Estimate, pr.Strength, pr.P, pr.N)
}

func newPair(i, j int, ti, tj dataset.Type) Pair {
	nan := math.NaN()
	return Pair{I: int32(i), J: int32(j), TI: ti, TJ: tj, Estimate: nan, Estimate2: nan, SE: nan, SE2: nan,
		Lo: nan, Hi: nan, Stat: nan, DF: nan, P: nan, Q: nan, Strength: nan, MissPhi: nan, MissP: nan, MissQ: nan}
}
