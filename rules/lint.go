package rules

import (
	"errors"
	"fmt"
	"sort"
	"strings"

	"github.com/crossform/crossform/dataset"
	"gopkg.in/yaml.v3"
)

// A LintIssue is one problem Lint found in a rule set. Line and Column are
// 1-based positions in the YAML file (0 when unknown). A warning does not make
// the rule set unusable; anything else does.
type LintIssue struct {
	File         string
	Line, Column int
	RuleID       string // "" for file-level issues
	Warning      bool
	Msg          string
}

func (i LintIssue) Error() string {
	var b strings.Builder
	b.WriteString(i.File)
	if i.Line > 0 {
		fmt.Fprintf(&b, ":%d", i.Line)
		if i.Column > 0 {
			fmt.Fprintf(&b, ":%d", i.Column)
		}
	}
	b.WriteString(": ")
	if i.Warning {
		b.WriteString("warning: ")
	}
	if i.RuleID != "" {
		fmt.Fprintf(&b, "rule %s: ", i.RuleID)
	}
	b.WriteString(i.Msg)
	return b.String()
}

var knownTopKeys = map[string]bool{"schema": true, "rules": true, "study": true, "title": true, "notes": true}

// Lint checks a rule set: unknown keys (warnings), missing or duplicate ids,
// unknown kinds, missing level or variables, malformed parameters, expressions
// that do not compile, and, for each table given, variables of rules at that
// table's level (Table.Level) that the table lacks; and warns of rules no
// record can pass (contradictory order rules, expr rules whose when and
// require exclude each other; lint_more.go). Issues come in file order, each
// with its YAML line.
func Lint(rs *RuleSet, tables ...*dataset.Table) []LintIssue {
	var out []LintIssue
	add := func(n *yaml.Node, id string, warn bool, format string, a ...any) {
		iss := LintIssue{File: rs.Path, RuleID: id, Warning: warn, Msg: fmt.Sprintf(format, a...)}
		if n != nil {
			iss.Line, iss.Column = n.Line, n.Column
		}
		out = append(out, iss)
	}
	if rs.doc != nil && len(rs.doc.Content) == 1 {
		root := rs.doc.Content[0]
		for i := 0; i+1 < len(root.Content); i += 2 {
			if k := root.Content[i]; !knownTopKeys[k.Value] {
				add(k, "", true, "unknown key %q (known: notes, rules, schema, study, title)", k.Value)
			}
		}
	}
	byLevel := map[string]*dataset.Table{}
	for _, t := range tables {
		if t != nil {
			byLevel[t.Level] = t
		}
	}
	firstAt := map[string]int{}
	known := map[string]bool{}
	for _, k := range ruleKeys {
		known[k] = true
	}
	for _, r := range rs.Rules {
		n := r.node
		at := func(k string) *yaml.Node {
			if n == nil {
				return nil
			}
			for i := 0; i+1 < len(n.Content); i += 2 {
				if n.Content[i].Value == k {
					return n.Content[i]
				}
			}
			return n
		}
		if n != nil {
			for i := 0; i+1 < len(n.Content); i += 2 {
				if k := n.Content[i]; !known[k.Value] {
					add(k, r.ID, true, "unknown key %q (known: %s)", k.Value, strings.Join(ruleKeys, ", "))
				}
			}
		}
		if r.ID == "" {
			add(n, "", false, "rule without id")
		} else if line, dup := firstAt[r.ID]; dup {
			add(at("id"), r.ID, false, "duplicate id (first used at line %d)", line)
		} else {
			firstAt[r.ID] = r.Line
		}
		k, ok := kindTable[r.Kind]
		if !ok {
			if r.Kind == "" {
				add(n, r.ID, false, "rule without kind (want %s)", strings.Join(Kinds(), ", "))
			} else {
				add(at("kind"), r.ID, false, "unknown kind %q (want %s)", r.Kind, strings.Join(Kinds(), ", "))
			}
			continue
		}
		if r.Level == "" {
			add(n, r.ID, false, "rule without level (want subject, visit, record:DOMAIN or table)")
		}
		if r.Severity == "" {
			add(n, r.ID, true, "rule without severity (the checker treats it as minor)")
		}
		if err := k.validate(r); err != nil {
			node := at("params")
			var ee *ExprError
			if errors.As(err, &ee) {
				if pn := paramNode(n, ee.Param); pn != nil {
					node = pn
				}
			}
			if strings.Contains(err.Error(), "variables") {
				node = at("variables")
			}
			add(node, r.ID, false, "%v", err)
			continue
		}
		if t := byLevel[r.Level]; t != nil {
			if _, err := Bind(r, t); err != nil {
				var ue *UnevaluableError
				if errors.As(err, &ue) {
					add(at("variables"), r.ID, false, "%s", ue.Reason)
				} else {
					add(n, r.ID, false, "%v", err)
				}
			}
		}
	}
	out = append(out, lintContradictions(rs)...)
	sort.SliceStable(out, func(i, j int) bool { return out[i].Line < out[j].Line })
	return out
}

// paramNode returns the value node of params.<k> in rule mapping n.
func paramNode(n *yaml.Node, k string) *yaml.Node {
	if n == nil || k == "" {
		return nil
	}
	p := mapGet(n, "params")
	if p == nil || p.Kind != yaml.MappingNode {
		return nil
	}
	return mapGet(p, k)
}
