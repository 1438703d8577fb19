package dataset

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"sort"
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
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	perr := func(n *yaml.Node, f string, a ...any) error {
		return &ParseError{File: name, Line: n.Line, Column: n.Column, Err: fmt.Errorf(f, a...)}
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
		spec := VarSpec{Source: fmt.Sprintf("%s:%d", name, k.Line)}
		for j := 0; j+1 < len(v.Content); j += 2 {
			fk, fv := v.Content[j], v.Content[j+1]
			switch fk.Value {
			case "type":
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
			case "unit":
				spec.Unit = fv.Value
			case "label":
				spec.Label = fv.Value
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

// CheckVars reports variables named in vars that no table of the study has,
// as one error naming them all.
func (s *Study) CheckVars(vars map[string]VarSpec) error {
	var unknown []string
	for name, spec := range vars {
		found := false
		for _, t := range s.Tables {
			if t.Col(name) != nil {
				found = true
				break
			}
		}
		if !found {
			unknown = append(unknown, fmt.Sprintf("%q (%s)", name, spec.Source))
		}
	}
	if len(unknown) == 0 {
		return nil
	}
	sort.Strings(unknown)
	return fmt.Errorf("variables file names %s: %w", strings.Join(unknown, ", "), ErrUnknownVariable)
}
