package cluster

import (
	"fmt"
	"math"
)

// Input is the association matrix to cluster: one row and column per variable.
type Input struct {
	// Names holds the variable names; p = len(Names). Names should be unique: outputs sort
	// and label by them.
	Names []string
	// Labels holds a descriptive label per variable (e.g. "Age in years"); empty or length p.
	Labels []string
	// Groups holds the domain or form of each variable (e.g. "DM", "VS"); empty or length p.
	Groups []string
	// Strength is the p×p matrix of association strengths, row-major (Strength[i*p+j] for
	// variables i and j, 0-based). It must be symmetric with values in [0, 1]; NaN means the
	// strength of that pair is unknown. The diagonal is ignored.
	Strength []float64
}

// Len returns the number of variables, len(in.Names).
func (in Input) Len() int { return len(in.Names) }

// At returns the strength of variables i and j (0-based), NaN when unknown. At panics with
// "cluster: index out of range" when i or j is not in [0, p).
func (in Input) At(i, j int) float64 {
	p := len(in.Names)
	if i < 0 || j < 0 || i >= p || j >= p {
		panic("cluster: index out of range")
	}
	return in.Strength[i*p+j]
}

// Distance returns 1 − strength for variables i and j (0-based), 0 when i == j, and 1 when
// the strength is unknown (NaN): see the package documentation for why unknown pairs count as
// unrelated. Distance panics like [Input.At].
func (in Input) Distance(i, j int) float64 {
	s := in.At(i, j)
	switch {
	case i == j:
		return 0
	case math.IsNaN(s):
		return 1
	}
	return 1 - s
}

// Group returns the group of variable i, or "" when in.Groups is empty.
func (in Input) Group(i int) string {
	if len(in.Groups) == 0 {
		return ""
	}
	return in.Groups[i]
}

// Label returns the descriptive label of variable i, or "" when in.Labels is empty.
func (in Input) Label(i int) string {
	if len(in.Labels) == 0 {
		return ""
	}
	return in.Labels[i]
}

// symmetryTol is how far Strength[i][j] and Strength[j][i] may differ (absolute) and still be
// accepted as symmetric: room for a matrix that went through a text round trip.
const symmetryTol = 1e-9

// An InputError reports a malformed [Input]. Row and Col are 0-based indexes into the
// strength matrix, or −1 when the error is about the shape.
type InputError struct {
	Row, Col int
	A, B     string // variable names of Row and Col, when known
	Msg      string
}

func (e *InputError) Error() string {
	if e.Row < 0 {
		return "cluster input: " + e.Msg
	}
	return fmt.Sprintf("cluster input: pair (%q, %q) [%d,%d]: %s", e.A, e.B, e.Row, e.Col, e.Msg)
}

// Validate reports the first problem with in: lengths that disagree with p = len(Names), an
// empty or repeated name, a strength outside [0, 1], or an asymmetric pair (values differing
// by more than 1e-9, or known on one side and NaN on the other). Infinite values are outside
// [0, 1]. The error is an *[InputError].
func (in Input) Validate() error {
	p := len(in.Names)
	if p == 0 {
		return &InputError{Row: -1, Col: -1, Msg: "no variables"}
	}
	if len(in.Strength) != p*p {
		return &InputError{Row: -1, Col: -1,
			Msg: fmt.Sprintf("strength matrix has %d values, want %d×%d = %d", len(in.Strength), p, p, p*p)}
	}
	if len(in.Groups) != 0 && len(in.Groups) != p {
		return &InputError{Row: -1, Col: -1, Msg: fmt.Sprintf("%d groups for %d variables", len(in.Groups), p)}
	}
	if len(in.Labels) != 0 && len(in.Labels) != p {
		return &InputError{Row: -1, Col: -1, Msg: fmt.Sprintf("%d labels for %d variables", len(in.Labels), p)}
	}
	seen := make(map[string]int, p)
	for i, n := range in.Names {
		if n == "" {
			return &InputError{Row: -1, Col: -1, Msg: fmt.Sprintf("variable %d has an empty name", i)}
		}
		if j, ok := seen[n]; ok {
			return &InputError{Row: -1, Col: -1, Msg: fmt.Sprintf("variable name %q repeated (indexes %d and %d)", n, j, i)}
		}
		seen[n] = i
	}
	for i := 0; i < p; i++ {
		for j := i + 1; j < p; j++ {
			a, b := in.Strength[i*p+j], in.Strength[j*p+i]
			bad := func(msg string) error {
				return &InputError{Row: i, Col: j, A: in.Names[i], B: in.Names[j], Msg: msg}
			}
			switch {
			case math.IsNaN(a) != math.IsNaN(b):
				return bad(fmt.Sprintf("not symmetric: %g and %g", a, b))
			case math.IsNaN(a):
				continue
			case !(a >= 0 && a <= 1):
				return bad(fmt.Sprintf("strength %g not in [0, 1]", a))
			case !(b >= 0 && b <= 1):
				return bad(fmt.Sprintf("strength %g (transposed) not in [0, 1]", b))
			case math.Abs(a-b) > symmetryTol:
				return bad(fmt.Sprintf("not symmetric: %g and %g", a, b))
			}
		}
	}
	return nil
}

// condensedIndex returns the position of pair (i, j), i < j, in a condensed upper-triangle
// matrix of n items: row by row, (0,1), (0,2), …, (0,n−1), (1,2), … (the layout of scipy's
// squareform).
func condensedIndex(n, i, j int) int {
	if i > j {
		i, j = j, i
	}
	return n*i - i*(i+1)/2 + (j - i - 1)
}

// condensed returns the distances of in as a condensed matrix (see condensedIndex), using the
// strength at (i, j), i < j, for each pair.
func (in Input) condensed() []float64 {
	p := len(in.Names)
	d := make([]float64, 0, p*(p-1)/2)
	for i := 0; i < p; i++ {
		for j := i + 1; j < p; j++ {
			d = append(d, in.Distance(i, j))
		}
	}
	return d
}
