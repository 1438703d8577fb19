package dataset

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// ReadVarsFile reads a variables file: a YAML mapping from variable name to
// its overrides, under a top-level "variables" key:
//
//	variables:
//	  AETOXGR:
//	    type: ordinal
//	    levels: ["1", "2", "3", "4", "5"]
//	    label: Toxicity grade
//	  WEIGHT:
//	    type: continuous
//	    unit: kg
//
// Allowed fields: type, levels, unit, label. Errors name the file and line.
func ReadVarsFile(path string) (map[string]VarSpec, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseVars(path, b)
}

// ParseVars parses a variables file held in b; name is used in errors.
func ParseVars(name string, b []byte) (map[string]VarSpec, error) {
	var doc yaml.Node
	dec := yaml.NewDecoder(bytes.NewReader(b))
	if err := dec.Decode(&doc); err != nil {
		if err == io.EOF {
			return nil, &ParseError{File: name, Line: 1, Err: errors.New("empty variables file")}
		}
		return nil, yamlErr(name, b, err)
	}
	perr := func(n *yaml.Node, f string, a ...any) error {
		return &ParseError{File: name, Line: max(n.Line, 1), Column: n.Column, Err: fmt.Errorf(f, a...)}
	}
	if len(doc.Content) == 0 {
		return nil, &ParseError{File: name, Line: 1, Err: errors.New("empty variables file")}
	}
	root := doc.Content[0]
	if root.Kind != yaml.MappingNode {
		return nil, perr(root, "want a mapping with a \"variables\" key")
	}
	var vars *yaml.Node
	for i := 0; i+1 < len(root.Content); i += 2 {
		switch k := root.Content[i]; k.Value {
		case "variables":
			vars = root.Content[i+1]
		default:
			return nil, perr(k, "unknown key %q (want variables)", k.Value)
		}
	}
	if vars == nil || vars.Kind != yaml.MappingNode {
		return nil, perr(root, "want \"variables\": a mapping from variable name to settings")
	}
	out := map[string]VarSpec{}
	for i := 0; i+1 < len(vars.Content); i += 2 {
		k, v := vars.Content[i], vars.Content[i+1]
		if _, dup := out[k.Value]; dup {
			return nil, perr(k, "variable %q listed twice", k.Value)
		}
		if v.Kind != yaml.MappingNode {
			return nil, perr(v, "variable %q: want a mapping of settings", k.Value)
		}
		spec := VarSpec{Source: fmt.Sprintf("%s:%d", name, k.Line), file: name, line: k.Line, col: k.Column}
		for j := 0; j+1 < len(v.Content); j += 2 {
			fk, fv := v.Content[j], v.Content[j+1]
			switch fk.Value {
			case "type":
				if fv.Kind != yaml.ScalarNode {
					return nil, perr(fv, "variable %q: type must be a plain value", k.Value)
				}
				t, err := ParseType(fv.Value)
				if err != nil {
					return nil, perr(fv, "variable %q: %v", k.Value, err)
				}
				spec.Type = t
			case "levels":
				if fv.Kind != yaml.SequenceNode {
					return nil, perr(fv, "variable %q: levels must be a list", k.Value)
				}
				seen := map[string]bool{}
				for _, l := range fv.Content {
					if l.Kind != yaml.ScalarNode {
						return nil, perr(l, "variable %q: a level must be a plain value", k.Value)
					}
					if seen[l.Value] {
						return nil, perr(l, "variable %q: level %q listed twice", k.Value, l.Value)
					}
					seen[l.Value] = true
					spec.Levels = append(spec.Levels, l.Value)
				}
			case "unit", "label":
				if fv.Kind != yaml.ScalarNode {
					return nil, perr(fv, "variable %q: %s must be a plain value", k.Value, fk.Value)
				}
				if fk.Value == "unit" {
					spec.Unit = fv.Value
				} else {
					spec.Label = fv.Value
				}
			default:
				return nil, perr(fk, "variable %q: unknown setting %q (want type, levels, unit or label)", k.Value, fk.Value)
			}
		}
		if len(spec.Levels) > 0 && spec.Type != Ordinal && spec.Type != Nominal && spec.Type != Binary && spec.Type != TypeUnknown {
			return nil, perr(v, "variable %q: levels apply to ordinal, nominal or binary variables, not %s", k.Value, spec.Type)
		}
		if len(spec.Levels) > 0 && spec.Type == TypeUnknown {
			spec.Type = Ordinal
		}
		out[k.Value] = spec
	}
	return out, nil
}

// yamlLine splits a YAML syntax error message ("yaml: line 3: ...").
var yamlLine = regexp.MustCompile(`^yaml: (?:line (\d+): )?(.*)$`)

// yamlErr turns a YAML decoding error into a ParseError. yaml.v3 gives some
// errors no line and places others where the enclosing block starts, so the
// line is the first whose prefix of the file fails with the same message
// (for files up to 1,000 lines), else the line yaml.v3 gives, else 1.
func yamlErr(name string, b []byte, err error) error {
	m := yamlLine.FindStringSubmatch(err.Error())
	if m == nil {
		return &ParseError{File: name, Line: 1, Err: err}
	}
	line, _ := strconv.Atoi(m[1])
	if n := bytes.Count(b, []byte{'\n'}); n <= 1000 {
		end := 0
		for k := 1; end < len(b); k++ {
			if i := bytes.IndexByte(b[end:], '\n'); i >= 0 {
				end += i + 1
			} else {
				end = len(b)
			}
			var doc yaml.Node
			perr := yaml.NewDecoder(bytes.NewReader(b[:end])).Decode(&doc)
			if pm := yamlLine.FindStringSubmatch(fmt.Sprint(perr)); perr != nil && pm != nil && pm[2] == m[2] {
				line = k
				break
			}
		}
	}
	return &ParseError{File: name, Line: max(line, 1), Err: errors.New(m[2])}
}

// CheckVars reports variables named in vars that no table of the study has.
// The error is a *ParseError at the first such variable's entry in the
// variables file, listing the others; it wraps ErrUnknownVariable.
func (s *Study) CheckVars(vars map[string]VarSpec) error {
	var unknown []string
	for name := range vars {
		found := false
		for _, t := range s.Tables {
			if t.Col(name) != nil {
				found = true
				break
			}
		}
		if !found {
			unknown = append(unknown, name)
		}
	}
	if len(unknown) == 0 {
		return nil
	}
	sort.Slice(unknown, func(i, j int) bool {
		a, b := vars[unknown[i]], vars[unknown[j]]
		if a.file != b.file {
			return a.file < b.file
		}
		if a.line != b.line {
			return a.line < b.line
		}
		return unknown[i] < unknown[j]
	})
	first := vars[unknown[0]]
	more := ""
	if len(unknown) > 1 {
		q := make([]string, len(unknown)-1)
		for i, n := range unknown[1:] {
			q[i] = strconv.Quote(n)
		}
		more = "; also unknown: " + strings.Join(q, ", ")
	}
	cause := fmt.Errorf("%w: no table has it%s", ErrUnknownVariable, more)
	if first.file == "" {
		return fmt.Errorf("variable %q (%s): %w", unknown[0], orDefault(first.Source, "override"), cause)
	}
	return &ParseError{File: first.file, Line: first.line, Column: first.col, Var: unknown[0], Err: cause}
}
