package rules

import (
	"fmt"
	"maps"
	"math"
	"slices"

	"github.com/expr-lang/expr/ast"
	"gopkg.in/yaml.v3"
)

// lintContradictions returns warnings for rules that no record can pass:
//
//   - two active order rules on the same level with X ≤ Y + a and Y ≤ X + b
//     where a + b < 0 (say DBP ≤ SBP − 1 and SBP ≤ DBP): no pair of values
//     satisfies both, so every record with both values fails one of them; a
//     single order rule X ≤ X + a with a < 0 likewise;
//   - an expr rule whose when and require, read as conjunctions of
//     comparisons of one variable with a number, leave that variable no
//     value ("when: SBP > 180, require: SBP < 120"): every record the rule
//     applies to fails; or whose when alone leaves none: the rule never
//     applies.
//
// Each is a warning, not an error: the rule set is still usable, and a
// reviewer may have a reason (a deliberately failing rule to test a listing),
// but the rules almost certainly say something other than what was meant.
// Rejected and retired rules are not considered. Expressions the analysis
// does not understand (or, functions, two variables) are never flagged.
func lintContradictions(rs *RuleSet) []LintIssue {
	var out []LintIssue
	warn := func(r *Rule, n *yaml.Node, format string, a ...any) {
		iss := LintIssue{File: rs.Path, RuleID: r.ID, Warning: true, Msg: fmt.Sprintf(format, a...)}
		if n == nil {
			n = r.node
		}
		if n != nil {
			iss.Line, iss.Column = n.Line, n.Column
		} else {
			iss.Line = r.Line
		}
		out = append(out, iss)
	}
	active := func(r *Rule) bool { return r.Status == StatusProposed || r.Status == StatusAccepted }
	var orders []*Rule
	for _, r := range rs.Rules {
		if !active(r) {
			continue
		}
		switch r.Kind {
		case KindOrder:
			if _, ok := orderSlack(r); ok && len(r.Vars) == 2 {
				orders = append(orders, r)
			}
		case KindExpr:
			lintExprContradiction(r, warn)
		}
	}
	for j, b := range orders {
		tb, _ := orderSlack(b)
		if b.Vars[0] == b.Vars[1] && tb < 0 {
			warn(b, nil, "%s ≤ %s%s never holds: every record with a value fails", b.Vars[0], b.Vars[1], tolText(b))
			continue
		}
		for _, a := range orders[:j] {
			ta, _ := orderSlack(a)
			if a.Level == b.Level && a.Vars[0] == b.Vars[1] && a.Vars[1] == b.Vars[0] && ta+tb < 0 {
				warn(b, nil, "contradicts rule %s (line %d): %s ≤ %s%s and %s ≤ %s%s cannot both hold, so every record with both values fails one of them",
					a.ID, a.Line, a.Vars[0], a.Vars[1], tolText(a), b.Vars[0], b.Vars[1], tolText(b))
			}
		}
	}
	return out
}

// orderSlack returns an order rule's tolerance in seconds for a date unit
// (so that rules written in different units compare), or as given for the
// default unit (days, or the variables' own unit for numbers).
func orderSlack(r *Rule) (float64, bool) {
	tol, err := paramFloat(r, "tolerance", 0)
	if err != nil {
		return 0, false
	}
	u, err := paramString(r, "unit", "day")
	if err != nil {
		return 0, false
	}
	scale, ok := map[string]float64{"day": 1, "hour": 1.0 / 24, "minute": 1.0 / 1440, "second": 1.0 / 86400}[u]
	return tol * scale, ok
}

func tolText(r *Rule) string {
	tol, _ := paramFloat(r, "tolerance", 0)
	switch {
	case tol > 0:
		return fmt.Sprintf(" + %g", tol)
	case tol < 0:
		return fmt.Sprintf(" − %g", -tol)
	}
	return ""
}

// interval is the set of values comparisons leave a variable: lo..hi, each
// end open or closed.
type interval struct {
	lo, hi         float64
	loOpen, hiOpen bool
}

func (v *interval) empty() bool { return v.lo > v.hi || v.lo == v.hi && (v.loOpen || v.hiOpen) }

// limit narrows v by "x op c".
func (v *interval) limit(op string, c float64) {
	switch op {
	case ">":
		if c > v.lo || c == v.lo && !v.loOpen {
			v.lo, v.loOpen = c, true
		}
	case ">=":
		if c > v.lo {
			v.lo, v.loOpen = c, false
		}
	case "<":
		if c < v.hi || c == v.hi && !v.hiOpen {
			v.hi, v.hiOpen = c, true
		}
	case "<=":
		if c < v.hi {
			v.hi, v.hiOpen = c, false
		}
	case "==":
		v.limit(">=", c)
		v.limit("<=", c)
	}
}

// constraints adds to m the limits the conjunction n puts on single
// variables; parts it does not understand add nothing.
func constraints(n ast.Node, m map[string]*interval) {
	b, ok := n.(*ast.BinaryNode)
	if !ok {
		return
	}
	if b.Operator == "&&" || b.Operator == "and" {
		constraints(b.Left, m)
		constraints(b.Right, m)
		return
	}
	flip := map[string]string{"<": ">", "<=": ">=", ">": "<", ">=": "<=", "==": "=="}
	if _, ok := flip[b.Operator]; !ok {
		return
	}
	id, isID := b.Left.(*ast.IdentifierNode)
	c, isNum := number(b.Right)
	op := b.Operator
	if !isID || !isNum {
		id, isID = b.Right.(*ast.IdentifierNode)
		c, isNum = number(b.Left)
		op = flip[op]
	}
	if !isID || !isNum {
		return
	}
	v := m[id.Value]
	if v == nil {
		v = &interval{lo: math.Inf(-1), hi: math.Inf(1)}
		m[id.Value] = v
	}
	v.limit(op, c)
}

func number(n ast.Node) (float64, bool) {
	switch x := n.(type) {
	case *ast.IntegerNode:
		return float64(x.Value), true
	case *ast.FloatNode:
		return x.Value, true
	case *ast.UnaryNode:
		if f, ok := number(x.Node); ok && x.Operator == "-" {
			return -f, true
		}
	}
	return 0, false
}

// lintExprContradiction flags an expr rule whose when cannot hold, or whose
// require cannot hold when its when does.
func lintExprContradiction(r *Rule, warn func(*Rule, *yaml.Node, string, ...any)) {
	when, _ := paramString(r, "when", "")
	req, _ := paramString(r, "require", "")
	m := map[string]*interval{}
	if when != "" {
		tree, _, err := parseExpr(when)
		if err != nil {
			return // Lint reports it
		}
		constraints(tree.Node, m)
		for _, name := range slices.Sorted(maps.Keys(m)) {
			if m[name].empty() {
				warn(r, paramNode(r.node, "when"), "when never holds (no value of %s satisfies it): the rule never applies", name)
				return
			}
		}
	}
	if req == "" {
		return
	}
	tree, _, err := parseExpr(req)
	if err != nil {
		return
	}
	constraints(tree.Node, m)
	for _, name := range slices.Sorted(maps.Keys(m)) {
		if m[name].empty() {
			if when != "" {
				warn(r, paramNode(r.node, "require"), "require never holds when when holds (no value of %s satisfies both): every record the rule applies to fails", name)
			} else {
				warn(r, paramNode(r.node, "require"), "require never holds (no value of %s satisfies it): every record fails", name)
			}
			return
		}
	}
}
