package rules

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/crossform/crossform/dataset"
	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/ast"
	"github.com/expr-lang/expr/file"
	"github.com/expr-lang/expr/parser"
	"github.com/expr-lang/expr/vm"
)

// exprKind: hand-written expressions (expr-lang syntax, see
// docs/ruleset.md). Params when (optional condition; default true), require
// (the condition every record meeting when must satisfy) and nullable
// (variables that may be missing). A variable is written as an identifier
// with every character other than letters, digits and "_" replaced by "_"
// (VS.SYSBP → VS_SYSBP), or as v("VS.SYSBP"). Values are numbers (float64),
// text (coded variables) or, for dates of at least day precision, days since
// 1970-01-01; a missing value (or a partial date) is nil. A record with a
// missing variable not listed in nullable is NotEvaluable, as is a record on
// which an expression fails at run time (e.g. nil compared with a number).
type exprKind struct{}

// An ExprError reports an expression that does not compile. Line and Column
// are 1-based positions within the expression text (Column in characters).
type ExprError struct {
	Param        string // "when" or "require", "" when not known
	Line, Column int
	Msg          string
}

func (e *ExprError) Error() string {
	p := e.Param
	if p == "" {
		p = "expression"
	}
	return fmt.Sprintf("params.%s:%d:%d: %s", p, e.Line, e.Column, e.Msg)
}

// maxExprNodes bounds the size of a compiled expression.
const maxExprNodes = 2000

// Ident returns the expression identifier of variable name: every character
// other than an ASCII letter, digit or "_" becomes "_", and a leading digit
// gets a "_" prefix ("VS.SYSBP" → "VS_SYSBP").
func Ident(name string) string {
	var b strings.Builder
	for i, r := range name {
		switch {
		case r == '_' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z':
			b.WriteRune(r)
		case r >= '0' && r <= '9':
			if i == 0 {
				b.WriteByte('_')
			}
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	return b.String()
}

// exprFuncs are the functions an expression may call besides expr-lang's
// built-ins: date("2024-05-01") gives days since 1970-01-01 of a full ISO 8601
// date (an error for partial or invalid dates).
var exprFuncs = []expr.Option{
	expr.Function("date", func(p ...any) (any, error) {
		s, ok := p[0].(string)
		if !ok {
			return nil, errors.New("date: want a text argument")
		}
		d, err := dataset.ParseISO8601(s)
		if err != nil {
			return nil, err
		}
		if d.Prec < dataset.PrecDay {
			return nil, fmt.Errorf("date: %q is not a full date", s)
		}
		lo, _ := d.Interval()
		return lo, nil
	}, new(func(string) float64)),
}

// varCollector walks a parsed expression and records the variables it reads;
// v("NAME") calls are rewritten to identifiers.
type varCollector struct {
	names []string
	seen  map[string]bool
	funcs map[string]bool
	errs  []error
}

func (c *varCollector) add(n string) {
	if !c.seen[n] {
		c.seen[n] = true
		c.names = append(c.names, n)
	}
}

func (c *varCollector) Visit(node *ast.Node) {
	switch n := (*node).(type) {
	case *ast.CallNode:
		id, ok := n.Callee.(*ast.IdentifierNode)
		if !ok {
			return
		}
		if id.Value == "v" {
			var s *ast.StringNode
			ok := len(n.Arguments) == 1
			if ok {
				s, ok = n.Arguments[0].(*ast.StringNode)
			}
			if !ok || s.Value == "" {
				c.errs = append(c.errs, &file.Error{Location: n.Location(), Message: `v() takes one variable name in quotes, e.g. v("VS.SYSBP")`})
				return
			}
			c.add(s.Value)
			ast.Patch(node, &ast.IdentifierNode{Value: Ident(s.Value)})
			return
		}
		c.funcs[id.Value] = true
	}
}

// identCollector collects the identifiers left after v() calls are patched.
type identCollector struct{ ids []*ast.IdentifierNode }

func (c *identCollector) Visit(node *ast.Node) {
	if n, ok := (*node).(*ast.IdentifierNode); ok {
		c.ids = append(c.ids, n)
	}
}

// ExprVars returns the variables the expression src reads, in order of first
// appearance: names in v("…") as written, other identifiers as written (they
// are matched to table columns through Ident). It returns an *ExprError when
// src does not parse.
func ExprVars(src string) ([]string, error) {
	_, names, err := parseExpr(src)
	return names, err
}

func parseExpr(src string) (*parser.Tree, []string, error) {
	if strings.TrimSpace(src) == "" {
		return nil, nil, &ExprError{Line: 1, Column: 1, Msg: "empty expression"}
	}
	tree, err := parser.Parse(src)
	if err != nil {
		return nil, nil, exprErr(src, err)
	}
	vc := &varCollector{seen: map[string]bool{}, funcs: map[string]bool{}}
	ast.Walk(&tree.Node, vc)
	if len(vc.errs) > 0 {
		return nil, nil, exprErr(src, vc.errs[0])
	}
	ic := &identCollector{}
	ast.Walk(&tree.Node, ic)
	for _, id := range ic.ids {
		if vc.funcs[id.Value] || vc.seen[id.Value] {
			continue
		}
		// Identifiers produced by v() were already recorded under their
		// dotted name.
		dup := false
		for _, n := range vc.names {
			if Ident(n) == id.Value {
				dup = true
			}
		}
		if !dup {
			vc.add(id.Value)
		}
	}
	return tree, vc.names, nil
}

func exprErr(src string, err error) error {
	var fe *file.Error
	if errors.As(err, &fe) {
		fe.Bind(file.NewSource(src))
		return &ExprError{Line: fe.Line, Column: fe.Column + 1, Msg: fe.Message}
	}
	return &ExprError{Line: 1, Column: 1, Msg: err.Error()}
}

// vPatcher rewrites v("NAME") to the identifier of NAME before type checking.
type vPatcher struct{}

func (vPatcher) Visit(node *ast.Node) {
	n, ok := (*node).(*ast.CallNode)
	if !ok {
		return
	}
	if id, ok := n.Callee.(*ast.IdentifierNode); ok && id.Value == "v" && len(n.Arguments) == 1 {
		if s, ok := n.Arguments[0].(*ast.StringNode); ok {
			ast.Patch(node, &ast.IdentifierNode{Value: Ident(s.Value)})
		}
	}
}

// CompileExpr compiles src as a boolean expression over the variables it
// reads (any value allowed) and returns them; errors are *ExprError values.
// It checks syntax and names without data.
func CompileExpr(src string) (*vm.Program, []string, error) {
	_, names, err := parseExpr(src)
	if err != nil {
		return nil, nil, err
	}
	env := map[string]any{}
	for _, n := range names {
		env[Ident(n)] = nil
	}
	p, err := compileWithEnv(src, env)
	return p, names, err
}

func compileWithEnv(src string, env map[string]any) (p *vm.Program, err error) {
	defer func() {
		// The compiler is not expected to panic; if it does on odd input,
		// report it as an error rather than crash the caller.
		if e := recover(); e != nil {
			p, err = nil, &ExprError{Line: 1, Column: 1, Msg: fmt.Sprint("cannot compile: ", e)}
		}
	}()
	// Variables are declared without a type (any value, nil when missing):
	// an empty environment with undefined names allowed gives each name the
	// interface type, so comparisons are checked when the record is run.
	// Which names exist is checked against the table by Bind.
	_ = env
	opts := append([]expr.Option{expr.Env(map[string]any{}), expr.AllowUndefinedVariables(), expr.AsBool(),
		expr.Patch(vPatcher{}), expr.MaxNodes(maxExprNodes)}, exprFuncs...)
	p, err = expr.Compile(src, opts...)
	if err != nil {
		return nil, exprErr(src, err)
	}
	return p, nil
}

func (exprKind) validate(r *Rule) error {
	req, err := paramString(r, "require", "")
	if err != nil {
		return err
	}
	if req == "" {
		return errors.New("params.require: missing (want the condition every record must meet)")
	}
	for _, k := range []string{"when", "require"} {
		s, err := paramString(r, k, "")
		if err != nil {
			return err
		}
		if k == "when" && s == "" {
			continue
		}
		if _, _, err := CompileExpr(s); err != nil {
			var ee *ExprError
			if errors.As(err, &ee) {
				ee.Param = k
			}
			return err
		}
	}
	_, err = paramStrings(r, "nullable")
	return err
}

func (exprKind) key(r *Rule) string {
	w, _ := paramString(r, "when", "")
	q, _ := paramString(r, "require", "")
	return w + "\x1d" + q
}

// exprVarsOf returns the variables both expressions of r read.
func exprVarsOf(r *Rule) []string {
	var out []string
	seen := map[string]bool{}
	for _, k := range []string{"when", "require"} {
		s, _ := paramString(r, k, "")
		if s == "" {
			continue
		}
		names, _ := ExprVars(s)
		for _, n := range names {
			if !seen[n] {
				seen[n] = true
				out = append(out, n)
			}
		}
	}
	return out
}

type exprVar struct {
	ident    string
	col      *dataset.Column
	nullable bool
}

type exprCheck struct {
	boundBase
	vars          []exprVar
	whenVars      []int // indexes into vars read by when
	reqVars       []int // … and by require
	when, require *vm.Program
}

// resolveVar finds the column a name in an expression refers to: the column
// of that exact name, else the single column whose Ident is the name.
func resolveVar(r *Rule, t *dataset.Table, name string) (*dataset.Column, error) {
	if c := t.Col(name); c != nil {
		return c, nil
	}
	var found *dataset.Column
	for _, c := range t.Cols {
		if Ident(c.Name) == name {
			if found != nil {
				return nil, unevaluable(r, "%q matches both %q and %q; write v(%q)", name, found.Name, c.Name, found.Name)
			}
			found = c
		}
	}
	if found == nil {
		return nil, unevaluable(r, "variable %q is not in table %q (level %s)", name, t.Name, t.Level)
	}
	return found, nil
}

func (exprKind) bind(r *Rule, t *dataset.Table) (Check, error) {
	nullable, _ := paramStrings(r, "nullable")
	null := map[string]bool{}
	for _, n := range nullable {
		null[n], null[Ident(n)] = true, true
	}
	names := exprVarsOf(r)
	env := map[string]any{}
	c := &exprCheck{}
	c.r = r
	for _, n := range names {
		col, err := resolveVar(r, t, n)
		if err != nil {
			return nil, err
		}
		id := Ident(n)
		env[id] = nil
		c.vars = append(c.vars, exprVar{ident: id, col: col, nullable: null[n] || null[col.Name]})
	}
	// Values follow Rule.Vars (every variable the expressions read, when the
	// file does not list them).
	for _, v := range r.Vars {
		col, err := resolveVar(r, t, v)
		if err != nil {
			return nil, err
		}
		c.disp = append(c.disp, col.String)
	}
	index := func(src string) []int {
		names, _ := ExprVars(src)
		var out []int
		for _, n := range names {
			for j, v := range c.vars {
				if v.ident == Ident(n) {
					out = append(out, j)
					break
				}
			}
		}
		return out
	}
	var err error
	if w, _ := paramString(r, "when", ""); w != "" {
		c.whenVars = index(w)
		if c.when, err = compileWithEnv(w, env); err != nil {
			return nil, &RuleError{RuleID: r.ID, Line: r.Line, Err: err}
		}
	}
	q, _ := paramString(r, "require", "")
	c.reqVars = index(q)
	if c.require, err = compileWithEnv(q, env); err != nil {
		return nil, &RuleError{RuleID: r.ID, Line: r.Line, Err: err}
	}
	return c, nil
}

func exprValue(c *dataset.Column, i int) any {
	if c.Missing(i) {
		return nil
	}
	switch c.Storage {
	case dataset.StoreFloat:
		return c.Floats[i]
	case dataset.StoreCode:
		return c.Levels[c.Codes[i]]
	case dataset.StoreDate:
		lo, _, p, ok := c.Date(i)
		if !ok || p < dataset.PrecDay || math.IsNaN(lo) {
			return nil
		}
		return lo
	}
	return nil
}

func run(p *vm.Program, env map[string]any) (val, ok bool) {
	defer func() {
		if recover() != nil {
			val, ok = false, false
		}
	}()
	out, err := expr.Run(p, env)
	if err != nil {
		return false, false
	}
	b, isBool := out.(bool)
	return b, isBool
}

// Eval evaluates when, then require. A variable an expression reads that is
// missing (and not nullable) makes the record NotEvaluable only when that
// expression has to be evaluated.
func (c *exprCheck) Eval(i int) Verdict {
	env := make(map[string]any, len(c.vars))
	for _, v := range c.vars {
		env[v.ident] = exprValue(v.col, i)
	}
	missing := func(idx []int) bool {
		for _, j := range idx {
			if env[c.vars[j].ident] == nil && !c.vars[j].nullable {
				return true
			}
		}
		return false
	}
	if c.when != nil {
		if missing(c.whenVars) {
			return NotEvaluable
		}
		w, ok := run(c.when, env)
		if !ok {
			return NotEvaluable
		}
		if !w {
			return Pass
		}
	}
	if missing(c.reqVars) {
		return NotEvaluable
	}
	q, ok := run(c.require, env)
	switch {
	case !ok:
		return NotEvaluable
	case q:
		return Pass
	}
	return Fail
}
