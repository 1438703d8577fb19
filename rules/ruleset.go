package rules

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

type yamlNode = yaml.Node

// SchemaVersion is the rule-set file schema this package reads and writes
// (the top-level "schema" key).
const SchemaVersion = 1

// ErrConflict is returned by Save when the file changed on disk since it was
// read: saving would lose someone else's edits.
var ErrConflict = errors.New("rule set changed on disk since it was read")

// A ParseError reports a malformed rule-set file. Line and Column are 1-based;
// they are 0 when the position is unknown.
type ParseError struct {
	File         string
	Line, Column int
	Err          error
}

func (e *ParseError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Column > 0 {
			fmt.Fprintf(&b, ":%d", e.Column)
		}
	}
	b.WriteString(": ")
	b.WriteString(e.Err.Error())
	return b.String()
}

func (e *ParseError) Unwrap() error { return e.Err }

// A RuleSet is a reviewed set of rules read from (and saved to) one YAML file.
// The file is kept as a YAML node tree: Save edits the tree in place, so
// comments, key order, unknown keys and hand-written rules survive a rewrite.
type RuleSet struct {
	Path   string
	Schema int
	Rules  []*Rule

	doc   *yaml.Node // document node
	rules *yaml.Node // the "rules" sequence
	hash  string     // SHA-256 of the content as read, "" for a new file
	raw   []byte
}

// New returns an empty rule set to be saved at path.
func New(path string) *RuleSet {
	rs := &RuleSet{Path: path, Schema: SchemaVersion}
	root := &yaml.Node{Kind: yaml.MappingNode, Tag: "!!map"}
	rs.doc = &yaml.Node{Kind: yaml.DocumentNode, Content: []*yaml.Node{root},
		HeadComment: "crossform rule set: review each rule, then accept, reject or retire it.\nComments and hand-written rules are kept when the file is rewritten."}
	rs.rules = &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
	root.Content = append(root.Content, scalar("schema"), scalar(strconv.Itoa(SchemaVersion)), scalar("rules"), rs.rules)
	return rs
}

// Load reads the rule set at path. Errors are *ParseError values with the
// line and column of the problem.
func Load(path string) (*RuleSet, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return Parse(path, b)
}

// LoadOrNew reads the rule set at path, or returns New(path) when no file
// exists there.
func LoadOrNew(path string) (*RuleSet, error) {
	rs, err := Load(path)
	if errors.Is(err, fs.ErrNotExist) {
		return New(path), nil
	}
	return rs, err
}

var yamlLineRE = regexp.MustCompile(`^line (\d+)`)

// Parse reads a rule set from b; name is used in errors and as Path.
func Parse(name string, b []byte) (*RuleSet, error) {
	perr := func(n *yaml.Node, format string, a ...any) error {
		e := &ParseError{File: name, Err: fmt.Errorf(format, a...)}
		if n != nil {
			e.Line, e.Column = n.Line, n.Column
		}
		return e
	}
	sum := sha256.Sum256(b)
	rs := &RuleSet{Path: name, hash: hex.EncodeToString(sum[:]), raw: b}
	var doc yaml.Node
	if err := yaml.Unmarshal(b, &doc); err != nil {
		msg := strings.TrimPrefix(err.Error(), "yaml: ")
		e := &ParseError{File: name}
		if m := yamlLineRE.FindStringSubmatch(msg); m != nil {
			e.Line, _ = strconv.Atoi(m[1])
			msg = strings.TrimPrefix(msg[len(m[0]):], ": ")
		}
		e.Err = errors.New(msg)
		return nil, e
	}
	if doc.Kind != yaml.DocumentNode || len(doc.Content) != 1 {
		return nil, &ParseError{File: name, Line: 1, Err: errors.New("empty rule set (want a mapping with keys schema and rules)")}
	}
	root := doc.Content[0]
	if root.Kind != yaml.MappingNode {
		return nil, perr(root, "rule set is not a mapping (want keys schema and rules)")
	}
	rs.doc = &doc
	if err := noDuplicateKeys(root); err != nil {
		err.File = name
		return nil, err
	}
	var schemaNode *yaml.Node
	for i := 0; i+1 < len(root.Content); i += 2 {
		k, v := root.Content[i], root.Content[i+1]
		switch k.Value {
		case "schema":
			schemaNode = v
			n, err := strconv.Atoi(v.Value)
			if v.Kind != yaml.ScalarNode || err != nil {
				return nil, perr(v, "schema: %q is not a version number", v.Value)
			}
			if n != SchemaVersion {
				return nil, perr(v, "schema %d is not supported (want %d)", n, SchemaVersion)
			}
			rs.Schema = n
		case "rules":
			if v.Kind == yaml.ScalarNode && v.Tag == "!!null" {
				v.Kind, v.Tag, v.Value = yaml.SequenceNode, "!!seq", ""
			}
			if v.Kind != yaml.SequenceNode {
				return nil, perr(v, "rules: not a list")
			}
			rs.rules = v
		}
	}
	if schemaNode == nil {
		return nil, perr(root, "missing key \"schema\" (want schema: %d)", SchemaVersion)
	}
	if rs.rules == nil {
		rs.rules = &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
		root.Content = append(root.Content, scalar("rules"), rs.rules)
	}
	for _, rn := range rs.rules.Content {
		r, err := decodeRule(rn)
		if err != nil {
			var pe *ParseError
			if errors.As(err, &pe) {
				pe.File = name
				return nil, pe
			}
			return nil, perr(rn, "%v", err)
		}
		rs.Rules = append(rs.Rules, r)
	}
	return rs, nil
}

// Hash returns the SHA-256 (hex) of the file content as last read or saved,
// "" for a rule set never read nor saved.
func (rs *RuleSet) Hash() string { return rs.hash }

// Accepted returns the accepted rules in file order.
func (rs *RuleSet) Accepted() []*Rule {
	var out []*Rule
	for _, r := range rs.Rules {
		if r.Status == StatusAccepted {
			out = append(out, r)
		}
	}
	return out
}

// Rule returns the first rule with the given id, or nil.
func (rs *RuleSet) Rule(id string) *Rule {
	for _, r := range rs.Rules {
		if r.ID == id {
			return r
		}
	}
	return nil
}

// ruleKeys are the keys of a rule mapping, in the order a new rule is written.
var ruleKeys = []string{"id", "kind", "level", "origin", "status", "severity", "variables", "params",
	"statement", "query", "evidence", "history"}

func decodeRule(n *yaml.Node) (*Rule, error) {
	pos := func(at *yaml.Node, format string, a ...any) error {
		return &ParseError{Line: at.Line, Column: at.Column, Err: fmt.Errorf(format, a...)}
	}
	if n.Kind != yaml.MappingNode {
		return nil, pos(n, "rule is not a mapping (want keys id, kind, level, variables, …)")
	}
	if err := noDuplicateKeys(n); err != nil {
		return nil, err
	}
	r := &Rule{Line: n.Line, node: n, Origin: OriginHand}
	str := func(k, v *yaml.Node) (string, error) {
		if v.Kind != yaml.ScalarNode {
			return "", pos(v, "%s: want a single value", k.Value)
		}
		if v.Tag == "!!null" {
			return "", nil
		}
		return v.Value, nil
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		var err error
		switch k.Value {
		case "id":
			r.ID, err = str(k, v)
		case "kind":
			r.Kind, err = str(k, v)
		case "level":
			r.Level, err = str(k, v)
		case "origin":
			r.Origin, err = str(k, v)
			if err == nil && r.Origin != OriginHand && r.Origin != OriginProposer {
				err = pos(v, "origin: unknown origin %q (want hand or proposer)", r.Origin)
			}
		case "statement":
			r.Statement, err = str(k, v)
		case "query":
			r.Query, err = str(k, v)
		case "status":
			var s string
			if s, err = str(k, v); err == nil {
				if r.Status, err = ParseStatus(s); err != nil {
					err = pos(v, "status: %v", err)
				}
			}
		case "severity":
			var s string
			if s, err = str(k, v); err == nil && s != "" {
				if r.Severity, err = ParseSeverity(s); err != nil {
					err = pos(v, "severity: %v", err)
				}
			}
		case "variables":
			if v.Kind != yaml.SequenceNode {
				return nil, pos(v, "variables: not a list")
			}
			for _, e := range v.Content {
				if e.Kind != yaml.ScalarNode || e.Value == "" {
					return nil, pos(e, "variables: want variable names")
				}
				r.Vars = append(r.Vars, e.Value)
			}
		case "params":
			if v.Kind == yaml.ScalarNode && v.Tag == "!!null" {
				break
			}
			if v.Kind != yaml.MappingNode {
				return nil, pos(v, "params: not a mapping")
			}
			if err := v.Decode(&r.Params); err != nil {
				return nil, pos(v, "params: %s", strings.ReplaceAll(cleanYAMLErr(err), "\n", "; "))
			}
		case "evidence":
			r.Evidence, err = decodeEvidence(v)
		case "history":
			r.History, err = decodeHistory(v)
		}
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				err = pos(v, "%s: %v", k.Value, err)
			}
			return nil, err
		}
	}
	if r.Status == "" {
		r.Status = StatusProposed
	}
	if r.Kind == KindExpr && len(r.Vars) == 0 {
		r.Vars, r.varsImplicit = exprVarsOf(r), true
	}
	return r, nil
}

// noDuplicateKeys reports the second occurrence of a key in mapping m. yaml.v3
// keeps both in a node tree, and the last would silently win: a rule written
// "status: rejected" and later "status: accepted" must not load as accepted.
func noDuplicateKeys(m *yaml.Node) *ParseError {
	first := map[string]int{}
	for i := 0; i+1 < len(m.Content); i += 2 {
		k := m.Content[i]
		if line, dup := first[k.Value]; dup {
			return &ParseError{Line: k.Line, Column: k.Column, Err: fmt.Errorf("key %q given twice (first at line %d)", k.Value, line)}
		}
		first[k.Value] = k.Line
	}
	return nil
}

func decodeEvidence(v *yaml.Node) (*Evidence, error) {
	if v.Kind == yaml.ScalarNode && v.Tag == "!!null" {
		return nil, nil
	}
	if v.Kind != yaml.MappingNode {
		return nil, &ParseError{Line: v.Line, Column: v.Column, Err: errors.New("evidence: not a mapping")}
	}
	var w evidenceYAML
	if err := v.Decode(&w); err != nil {
		return nil, &ParseError{Line: v.Line, Column: v.Column, Err: fmt.Errorf("evidence: %v", cleanYAMLErr(err))}
	}
	return w.evidence(), nil
}

func decodeHistory(v *yaml.Node) ([]Event, error) {
	if v.Kind == yaml.ScalarNode && v.Tag == "!!null" {
		return nil, nil
	}
	if v.Kind != yaml.SequenceNode {
		return nil, &ParseError{Line: v.Line, Column: v.Column, Err: errors.New("history: not a list")}
	}
	var out []Event
	for _, e := range v.Content {
		var w eventYAML
		if e.Kind != yaml.MappingNode {
			return nil, &ParseError{Line: e.Line, Column: e.Column, Err: errors.New("history: entry is not a mapping (want at, by, action, note)")}
		}
		if err := e.Decode(&w); err != nil {
			return nil, &ParseError{Line: e.Line, Column: e.Column, Err: fmt.Errorf("history: %v", cleanYAMLErr(err))}
		}
		at, err := time.Parse(time.RFC3339, w.At)
		if err != nil {
			return nil, &ParseError{Line: e.Line, Column: e.Column, Err: fmt.Errorf("history: at: %q is not an RFC 3339 time (want e.g. 2026-01-31T14:05:00Z)", w.At)}
		}
		if w.Action == "" {
			return nil, &ParseError{Line: e.Line, Column: e.Column, Err: errors.New("history: entry without action")}
		}
		out = append(out, Event{At: at.UTC(), By: w.By, Action: w.Action, Note: w.Note})
	}
	return out, nil
}

func cleanYAMLErr(err error) string {
	s := strings.TrimPrefix(err.Error(), "yaml: ")
	s = strings.TrimPrefix(s, "unmarshal errors:\n")
	return strings.TrimSpace(s)
}

type eventYAML struct {
	At     string `yaml:"at"`
	By     string `yaml:"by"`
	Action string `yaml:"action"`
	Note   string `yaml:"note,omitempty"`
}

type evidenceYAML struct {
	Extract    string     `yaml:"extract"`
	N          int        `yaml:"judged"`
	NotEval    int        `yaml:"not_evaluable"`
	Support    int        `yaml:"support"`
	Violations int        `yaml:"violations"`
	Confidence float64    `yaml:"confidence"`
	Score      float64    `yaml:"score"`
	Suggested  string     `yaml:"suggested_by,omitempty"`
	Examples   [][]string `yaml:"examples,omitempty"`
}

func (w evidenceYAML) evidence() *Evidence {
	return &Evidence{Fingerprint: w.Extract, N: w.N, NotEval: w.NotEval, Support: w.Support,
		Violations: w.Violations, Confidence: w.Confidence, Score: w.Score, Suggested: w.Suggested, Examples: w.Examples}
}

func evidenceToYAML(e *Evidence) evidenceYAML {
	return evidenceYAML{Extract: e.Fingerprint, N: e.N, NotEval: e.NotEval, Support: e.Support,
		Violations: e.Violations, Confidence: round(e.Confidence, 4), Score: round(e.Score, 4),
		Suggested: e.Suggested, Examples: e.Examples}
}

func round(x float64, digits int) float64 {
	p := math.Pow(10, float64(digits))
	return math.Round(x*p) / p
}

func scalar(s string) *yaml.Node {
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: s}
}

// encodeNode encodes v as a node; sequences of scalars are written in flow
// style ([a, b]) to keep the file short.
func encodeNode(v any) *yaml.Node {
	n := &yaml.Node{}
	if err := n.Encode(v); err != nil {
		panic("rules: encoding a node: " + err.Error()) // only our own plain values reach here
	}
	flowLeaves(n)
	return n
}

func flowLeaves(n *yaml.Node) {
	if n.Kind == yaml.SequenceNode {
		leaf := true
		for _, c := range n.Content {
			if c.Kind != yaml.ScalarNode {
				leaf = false
			}
		}
		if leaf && len(n.Content) > 0 {
			n.Style = yaml.FlowStyle
		}
	}
	for _, c := range n.Content {
		flowLeaves(c)
	}
}

// mapGet returns the value node of key k in mapping m, or nil.
func mapGet(m *yaml.Node, k string) *yaml.Node {
	for i := 0; i+1 < len(m.Content); i += 2 {
		if m.Content[i].Value == k {
			return m.Content[i+1]
		}
	}
	return nil
}

// mapSet replaces the value of key k in m (keeping the key's comments) or
// inserts the pair at the position ruleKeys gives it.
func mapSet(m *yaml.Node, k string, v *yaml.Node) {
	for i := 0; i+1 < len(m.Content); i += 2 {
		if m.Content[i].Value == k {
			old := m.Content[i+1]
			v.LineComment, v.HeadComment, v.FootComment = old.LineComment, old.HeadComment, old.FootComment
			m.Content[i+1] = v
			return
		}
	}
	// Insert before the first existing key that comes later in ruleKeys.
	rank := func(key string) int {
		for i, x := range ruleKeys {
			if x == key {
				return i
			}
		}
		return len(ruleKeys)
	}
	at := len(m.Content)
	for i := 0; i+1 < len(m.Content); i += 2 {
		if rank(m.Content[i].Value) > rank(k) {
			at = i
			break
		}
	}
	m.Content = append(m.Content[:at], append([]*yaml.Node{scalar(k), v}, m.Content[at:]...)...)
}

// setScalar sets key k of m to s when its value differs; an empty s removes
// nothing and adds nothing.
func setScalar(m *yaml.Node, k, s string) {
	old := mapGet(m, k)
	if old != nil && old.Kind == yaml.ScalarNode && old.Value == s {
		return
	}
	if old == nil && s == "" {
		return
	}
	if old != nil && old.Kind == yaml.ScalarNode {
		old.Value, old.Tag, old.Style = s, "!!str", 0
		if s == "" {
			old.Style = yaml.DoubleQuotedStyle
		}
		return
	}
	mapSet(m, k, encodeNode(s))
}

// setValue sets key k of m to v when the decoded value differs.
func setValue(m *yaml.Node, k string, v any) {
	old := mapGet(m, k)
	fresh := encodeNode(v)
	if old != nil && sameValue(old, fresh) {
		return
	}
	mapSet(m, k, fresh)
}

func sameValue(a, b *yaml.Node) bool {
	var x, y any
	if a.Decode(&x) != nil || b.Decode(&y) != nil {
		return false
	}
	return reflect.DeepEqual(x, y)
}

// sync writes r's fields into its mapping node, creating the node for a new
// rule. Unchanged values keep their node (and comments).
func (rs *RuleSet) sync(r *Rule) error {
	if r.node == nil {
		r.node = &yaml.Node{Kind: yaml.MappingNode, Tag: "!!map"}
		rs.rules.Content = append(rs.rules.Content, r.node)
	}
	m := r.node
	setScalar(m, "id", r.ID)
	setScalar(m, "kind", r.Kind)
	setScalar(m, "level", r.Level)
	if r.Origin == OriginProposer || mapGet(m, "origin") != nil {
		setScalar(m, "origin", r.Origin)
	}
	setScalar(m, "status", string(r.Status))
	setScalar(m, "severity", string(r.Severity))
	if (len(r.Vars) > 0 && !r.varsImplicit) || mapGet(m, "variables") != nil {
		vars := r.Vars
		if vars == nil {
			vars = []string{}
		}
		setValue(m, "variables", vars)
	}
	if len(r.Params) > 0 || mapGet(m, "params") != nil {
		p := r.Params
		if p == nil {
			p = map[string]any{}
		}
		setValue(m, "params", p)
	}
	setScalar(m, "statement", r.Statement)
	setScalar(m, "query", r.Query)
	if r.Evidence != nil {
		setValue(m, "evidence", evidenceToYAML(r.Evidence))
	}
	// History is append-only: the node's entries must be a prefix of r.History.
	hn := mapGet(m, "history")
	var have []Event
	if hn != nil {
		var err error
		if have, err = decodeHistory(hn); err != nil {
			return err
		}
	}
	if len(have) > len(r.History) {
		return fmt.Errorf("rule %s: history is append-only: %d entries in the file, %d in memory", r.ID, len(have), len(r.History))
	}
	for i := range have {
		if !have[i].At.Equal(r.History[i].At) || have[i].By != r.History[i].By || have[i].Action != r.History[i].Action || have[i].Note != r.History[i].Note {
			return fmt.Errorf("rule %s: history is append-only: entry %d was changed", r.ID, i+1)
		}
	}
	if len(r.History) > len(have) {
		if hn == nil || hn.Kind != yaml.SequenceNode {
			hn = &yaml.Node{Kind: yaml.SequenceNode, Tag: "!!seq"}
			mapSet(m, "history", hn)
		}
		for _, e := range r.History[len(have):] {
			hn.Content = append(hn.Content, encodeNode(eventYAML{At: e.At.UTC().Format(time.RFC3339), By: e.By, Action: e.Action, Note: e.Note}))
		}
	}
	return nil
}

// Bytes returns the rule set as it would be saved.
func (rs *RuleSet) Bytes() ([]byte, error) {
	for _, r := range rs.Rules {
		if err := rs.sync(r); err != nil {
			return nil, err
		}
	}
	var buf bytes.Buffer
	enc := yaml.NewEncoder(&buf)
	enc.SetIndent(2)
	defer encodeFixups(rs.doc)()
	if err := enc.Encode(rs.doc); err != nil {
		return nil, err
	}
	if err := enc.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// encodeFixups works around two yaml.v3 encoder faults that would make a
// saved rule set unreadable, and returns a function that undoes its changes
// to the tree (both found by FuzzParse):
//
//   - a mapping key's line comment followed by an empty sequence or mapping
//     is written after the key, with "[]" or "{}" on the next line, which does
//     not parse ("rules: #c" then "[]"): the comment is moved onto the value
//     for the encoding;
//   - an empty null inside a flow collection ("{id: a, history}") is written
//     as a quoted empty string and reads back as a string, not null ("history: not a
//     list"): it is written as null.
func encodeFixups(n *yaml.Node) (restore func()) {
	var undo []func()
	var walk func(n *yaml.Node, flow bool)
	walk = func(n *yaml.Node, flow bool) {
		flow = flow || n.Style&yaml.FlowStyle != 0
		if n.Kind == yaml.MappingNode {
			for i := 0; i+1 < len(n.Content); i += 2 {
				k, v := n.Content[i], n.Content[i+1]
				if k.LineComment != "" && v.LineComment == "" && len(v.Content) == 0 &&
					(v.Kind == yaml.SequenceNode || v.Kind == yaml.MappingNode) {
					v.LineComment, k.LineComment = k.LineComment, ""
					undo = append(undo, func() { k.LineComment, v.LineComment = v.LineComment, "" })
				}
			}
		}
		if flow && n.Kind == yaml.ScalarNode && n.Tag == "!!null" && n.Value == "" {
			n.Value = "null"
			undo = append(undo, func() { n.Value = "" })
		}
		for _, c := range n.Content {
			walk(c, flow)
		}
	}
	walk(n, false)
	return func() {
		for _, f := range undo {
			f()
		}
	}
}

// Save writes the rule set to rs.Path atomically: a temporary file in the
// same directory is written, synced and renamed over the old file, and the
// directory is synced. If the file on disk is not the one read (its SHA-256
// differs from Hash, or it appeared or vanished since), Save writes nothing
// and returns an error wrapping ErrConflict. Saves of one path are serialised
// across processes by an advisory lock on ".NAME.lock" beside the file, so
// the check and the rename are one step; a crash leaves at most a
// ".NAME.tmp*" file, never a partial rule set.
func (rs *RuleSet) Save() error {
	b, err := rs.Bytes()
	if err != nil {
		return fmt.Errorf("saving %s: %w", rs.Path, err)
	}
	// The conflict check and the rename happen under one lock
	// (savelock.go): without it two processes could both pass the check and
	// the second rename would silently drop the first one's decisions.
	err = withSaveLock(rs.Path, func() error {
		cur, err := os.ReadFile(rs.Path)
		switch {
		case errors.Is(err, fs.ErrNotExist):
			if rs.hash != "" {
				return fmt.Errorf("saving %s: %w (the file was removed; reload and merge again)", rs.Path, ErrConflict)
			}
		case err != nil:
			return fmt.Errorf("saving %s: %w", rs.Path, err)
		default:
			sum := sha256.Sum256(cur)
			if h := hex.EncodeToString(sum[:]); h != rs.hash {
				return fmt.Errorf("saving %s: %w (reload the file and repeat the change)", rs.Path, ErrConflict)
			}
		}
		if err := writeAtomic(rs.Path, b); err != nil {
			return fmt.Errorf("saving %s: %w", rs.Path, err)
		}
		return nil
	})
	if err != nil {
		return err
	}
	sum := sha256.Sum256(b)
	rs.hash, rs.raw = hex.EncodeToString(sum[:]), b
	return nil
}

func writeAtomic(path string, b []byte) error {
	dir := filepath.Dir(path)
	perm := fs.FileMode(0o644)
	if fi, err := os.Stat(path); err == nil {
		perm = fi.Mode().Perm()
	}
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	fail := func(err error) error {
		f.Close()
		os.Remove(tmp)
		return err
	}
	if _, err := f.Write(b); err != nil {
		return fail(err)
	}
	if err := f.Chmod(perm); err != nil {
		return fail(err)
	}
	if err := f.Sync(); err != nil {
		return fail(err)
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return err
	}
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	return d.Sync()
}
