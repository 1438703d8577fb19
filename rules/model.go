package rules

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"

	"github.com/crossform/crossform/dataset"
)

// Status is a rule's review state. A proposed rule waits for review; only
// accepted rules run in the checker; a rejected rule is never proposed again; a
// retired rule was accepted once and no longer runs.
type Status string

// The statuses.
const (
	StatusProposed Status = "proposed"
	StatusAccepted Status = "accepted"
	StatusRejected Status = "rejected"
	StatusRetired  Status = "retired"
)

// ParseStatus returns the Status named s.
func ParseStatus(s string) (Status, error) {
	switch st := Status(s); st {
	case StatusProposed, StatusAccepted, StatusRejected, StatusRetired:
		return st, nil
	}
	return "", fmt.Errorf("unknown status %q (want proposed, accepted, rejected or retired)", s)
}

// Severity is the impact of a discrepancy a rule raises, ordered critical >
// major > minor (EDIT-CHECKS.md §4: impact axis).
type Severity string

// The severities.
const (
	Critical Severity = "critical"
	Major    Severity = "major"
	Minor    Severity = "minor"
)

// ParseSeverity returns the Severity named s.
func ParseSeverity(s string) (Severity, error) {
	switch sv := Severity(s); sv {
	case Critical, Major, Minor:
		return sv, nil
	}
	return "", fmt.Errorf("unknown severity %q (want critical, major or minor)", s)
}

// Rank orders severities: critical 3, major 2, minor 1, anything else 0.
func (s Severity) Rank() int {
	switch s {
	case Critical:
		return 3
	case Major:
		return 2
	case Minor:
		return 1
	}
	return 0
}

// Verdict is a rule's judgement of one record.
type Verdict int8

// The verdicts. A record the rule cannot judge (a missing input, a partial
// date that cannot be placed, a level the rule has no limits for) is
// NotEvaluable, never Pass. The zero Verdict is not a verdict.
const (
	Pass Verdict = iota + 1
	Fail
	NotEvaluable
)

func (v Verdict) String() string {
	switch v {
	case Pass:
		return "pass"
	case Fail:
		return "fail"
	case NotEvaluable:
		return "not evaluable"
	}
	return fmt.Sprintf("verdict(%d)", int8(v))
}

// The rule kinds. Each is described in kinds.go and in docs/ruleset.md.
const (
	KindOrder       = "order"        // X ≤ Y + tolerance, numbers or dates
	KindImplies     = "implies"      // X ∈ A ⇒ Y ∈ B (or Y ∉ B)
	KindCutoff      = "cutoff"       // flag X = v exactly when numeric Y < c
	KindBand        = "band"         // Y within a robust band predicted from X (and X from Y)
	KindDerived     = "derived"      // Y = f(X, …) within tolerance
	KindPresence    = "presence"     // X present (absent, or X ∈ A) ⇒ Y present (or absent)
	KindGroupRange  = "group_range"  // Y within per-level limits of X
	KindVisitChange = "visit_change" // change of Y from the subject's previous visit within limits
	KindExpr        = "expr"         // hand-written when/require expressions
)

// Kinds returns the known rule kinds, sorted.
func Kinds() []string {
	k := []string{KindOrder, KindImplies, KindCutoff, KindBand, KindDerived, KindPresence,
		KindGroupRange, KindVisitChange, KindExpr}
	sort.Strings(k)
	return k
}

// An Event is one entry of a rule's append-only history.
type Event struct {
	At     time.Time // UTC
	By     string    // who: a user name, or "crossform" for the proposer
	Action string    // "proposed", "accepted", "rejected", "retired", "edited", …
	Note   string
}

// Evidence is what the data said about a rule when it was last proposed or
// refreshed.
type Evidence struct {
	Fingerprint string // fingerprint of the extract the evidence comes from
	// N counts records the rule could judge (Pass or Fail); NotEval those it
	// could not.
	N, NotEval int
	// Support counts records the rule's condition applies to (for a
	// conditional kind, the records meeting the premise; otherwise N).
	Support int
	// Violations counts records that fail.
	Violations int
	// Examples holds the keys (Table.RowKey) of up to 10 failing records.
	Examples [][]string
	// Suggested names the association that suggested the rule, e.g.
	// "spearman(VS.SYSBP, VS.DIABP) = 0.81", or "catalogue" / "scan".
	Suggested string
	// Confidence in [0, 1]: how firmly the data support the rule (see
	// ProposeOptions for how it is computed).
	Confidence float64
	// Score ranks proposals by expected value to a reviewer (higher first).
	Score float64
}

// A Rule is one cross-variable consistency rule.
type Rule struct {
	// ID is stable: derived from kind, level, variables and key parameters by
	// ComputeID; a hand-written rule may carry any id.
	ID string
	// Kind is one of the Kind constants.
	Kind string
	// Level is the table the rule runs on: "subject", "visit", "record:AE",
	// "table".
	Level string
	// Vars are the variables read, in the table named by Level; their order
	// is the kind's (see kinds.go).
	Vars []string
	// Params are the kind's parameters, as decoded from YAML: numbers are
	// float64 or int, lists []any, maps map[string]any.
	Params map[string]any
	// Statement is the rule in plain language.
	Statement string
	// Query is the query text template; {VAR} is replaced by the record's
	// value of VAR (FillQuery).
	Query    string
	Severity Severity
	Status   Status
	// Origin is "proposer" for a rule the proposer wrote and "hand" for one a
	// person wrote; hand-written rules are never removed or rewritten.
	Origin string
	// History is append-only, oldest first.
	History  []Event
	Evidence *Evidence

	// Line is the 1-based line of the rule in its YAML file, 0 when the rule
	// did not come from a file.
	Line int

	node         *yamlNode // the rule's mapping node in the rule set's document, nil if new
	varsImplicit bool      // Vars filled from an expr rule's expressions, not written back
}

// The origins.
const (
	OriginProposer = "proposer"
	OriginHand     = "hand"
)

// Param returns the parameter named k, or nil.
func (r *Rule) Param(k string) any {
	if r.Params == nil {
		return nil
	}
	return r.Params[k]
}

// ComputeID returns the stable id of r: the kind, a hyphen and the first 10
// hex digits of the SHA-256 of the rule's identity (kind, level, variables
// and the kind's key parameters, see identity in kinds.go). Tunable
// parameters (tolerances, fitted limits) are not part of the identity, so the
// same rule proposed on a later extract keeps its id.
func ComputeID(r *Rule) string {
	h := sha256.Sum256([]byte(identity(r)))
	return r.Kind + "-" + hex.EncodeToString(h[:5])
}

// A Check is a rule bound to one table: variables resolved, parameters
// compiled (expressions compiled once). A Check is safe for concurrent use by
// several goroutines.
type Check interface {
	Rule() *Rule
	// Eval judges row (0-based).
	Eval(row int) Verdict
	// Values returns the variables involved in row, in Rule.Vars order, as
	// display text ("" when missing).
	Values(row int) []string
}

// An Explainer is a Check that can say why a row failed in words, e.g. which
// direction of a band flagged or the previous visit's value. The checker may
// append the text to a listing; it never enters query text.
type Explainer interface {
	Explain(row int) string
}

// UnevaluableError reports that a rule cannot run on a table: a variable is
// absent or its type no longer fits the kind. The checker reports the rule as
// not evaluable for the whole table.
type UnevaluableError struct {
	RuleID, Reason string
}

func (e *UnevaluableError) Error() string {
	return fmt.Sprintf("rule %s: not evaluable: %s", e.RuleID, e.Reason)
}

// A RuleError reports a rule whose definition is wrong (unknown kind, bad
// parameter, expression that does not compile). Line is the rule's 1-based
// line in its YAML file, 0 if unknown.
type RuleError struct {
	RuleID string
	Line   int
	Err    error
}

func (e *RuleError) Error() string {
	if e.Line > 0 {
		return fmt.Sprintf("line %d: rule %s: %v", e.Line, e.RuleID, e.Err)
	}
	return fmt.Sprintf("rule %s: %v", e.RuleID, e.Err)
}

func (e *RuleError) Unwrap() error { return e.Err }

// ErrUnknownKind is returned (wrapped) for a rule of an unknown kind.
var ErrUnknownKind = errors.New("unknown rule kind")

// Bind compiles r against t. When a variable is absent from t or its type no
// longer fits the kind it returns an *UnevaluableError; when the rule itself
// is malformed (unknown kind, bad parameter, expression that does not
// compile) a *RuleError.
func Bind(r *Rule, t *dataset.Table) (Check, error) {
	k, ok := kindTable[r.Kind]
	if !ok {
		return nil, &RuleError{RuleID: r.ID, Line: r.Line, Err: fmt.Errorf("%w %q (want %s)", ErrUnknownKind, r.Kind, strings.Join(Kinds(), ", "))}
	}
	if err := k.validate(r); err != nil {
		return nil, &RuleError{RuleID: r.ID, Line: r.Line, Err: err}
	}
	return k.bind(r, t)
}

// FillQuery renders r.Query, replacing each {VAR} by the matching value of
// values (vars and values are parallel). A missing value renders as
// "(blank)"; a placeholder with no value is left as written.
func FillQuery(r *Rule, vars, values []string) string {
	q := r.Query
	if !strings.Contains(q, "{") {
		return q
	}
	var b strings.Builder
	for {
		i := strings.IndexByte(q, '{')
		if i < 0 {
			b.WriteString(q)
			break
		}
		j := strings.IndexByte(q[i:], '}')
		if j < 0 {
			b.WriteString(q)
			break
		}
		name := q[i+1 : i+j]
		b.WriteString(q[:i])
		done := false
		for k, v := range vars {
			if v == name && k < len(values) {
				if values[k] == "" {
					b.WriteString("(blank)")
				} else {
					b.WriteString(values[k])
				}
				done = true
				break
			}
		}
		if !done {
			b.WriteString(q[i : i+j+1])
		}
		q = q[i+j+1:]
	}
	return b.String()
}

// Evaluate runs c over every row of t and returns the failing rows, the rows
// it could not evaluate (both 0-based, ascending) and n, the number of rows
// judged (Pass or Fail).
func Evaluate(c Check, t *dataset.Table) (fails []int, notEval []int, n int) {
	for i := 0; i < t.NRows; i++ {
		switch c.Eval(i) {
		case Pass:
			n++
		case Fail:
			n++
			fails = append(fails, i)
		default:
			notEval = append(notEval, i)
		}
	}
	return fails, notEval, n
}
