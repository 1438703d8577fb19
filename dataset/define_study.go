package dataset

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// The submission formats register with Open: SAS transport, Dataset-JSON
// (JSON, NDJSON and compressed NDJSON). They take the encoding (XPT only
// when set), keys, site and inference options from Options.CSV.
func init() {
	readers[".xpt"] = func(path string, o Options) ([]*Table, error) {
		return ReadXPTFile(path, XPTOptions{Encoding: o.CSV.Encoding, Keys: o.CSV.Keys, Site: o.CSV.Site, Infer: o.CSV.Infer})
	}
	dsj := func(path string, o Options) ([]*Table, error) {
		t, err := ReadDatasetJSONFile(path, DatasetJSONOptions{Keys: o.CSV.Keys, Site: o.CSV.Site, Infer: o.CSV.Infer})
		if err != nil {
			return nil, err
		}
		return []*Table{t}, nil
	}
	readers[".json"] = dsj
	readers[".ndjson"] = dsj
	readers[".dsjc"] = dsj
}

// studyDefine reads the Define-XML that applies to a study: o.Define when
// set, else a file named define.xml (any case) in the study folder; nil when
// there is none.
func studyDefine(path string, isDir bool, o Options) (*Define, error) {
	p := o.Define
	if p == "" && isDir {
		ents, err := os.ReadDir(path)
		if err != nil {
			return nil, err
		}
		for _, e := range ents {
			if !e.IsDir() && strings.EqualFold(e.Name(), "define.xml") {
				p = filepath.Join(path, e.Name())
				break
			}
		}
	}
	if p == "" {
		return nil, nil
	}
	return ReadDefineFile(p)
}

// readStudyFile reads one file of a study with the Define-XML overrides of
// its dataset (found by the file's upper-case stem), returning warnings for
// Study.Warnings. Overrides combine with o.CSV.Infer.Vars, which win. When
// the values of a variable do not fit its definition (a value outside an
// ordered codelist, say), the definition is dropped with a warning and the
// file read again; variables declared text without a codelist whose values
// all look numeric are read again as nominal, so that a code like "01" is
// not a number.
func readStudyFile(path string, o Options, def *Define) ([]*Table, []string, error) {
	read := readers[strings.ToLower(filepath.Ext(path))]
	if def == nil {
		ts, err := read(path, o)
		return ts, nil, err
	}
	stem := tableName(path)
	if def.Dataset(stem) == nil {
		ts, err := read(path, o)
		return ts, []string{fmt.Sprintf("%s: define %s has no ItemGroupDef for dataset %q; types inferred", path, def.File, stem)}, err
	}
	specs, warns := def.VarSpecs(stem)
	vars := make(map[string]VarSpec, len(specs)+len(o.CSV.Infer.Vars))
	fromDefine := map[string]bool{}
	for k, v := range specs {
		vars[k] = v
		fromDefine[k] = true
	}
	for k, v := range o.CSV.Infer.Vars {
		vars[k] = v
		delete(fromDefine, k)
	}
	readFit := func() ([]*Table, error) {
		for {
			o2 := o
			o2.CSV.Infer.Vars = vars
			ts, err := read(path, o2)
			if name := defineVarIn(err, fromDefine); name != "" {
				warns = append(warns, fmt.Sprintf("%s: values do not fit %s: %v; type inferred instead", path, vars[name].Source, err))
				spec := vars[name] // keep the label, drop the type and levels
				spec.Type, spec.Levels = TypeUnknown, nil
				vars[name] = spec
				delete(fromDefine, name) // at most one read per definition
				continue
			}
			return ts, err
		}
	}
	ts, err := readFit()
	if err != nil {
		return nil, warns, err
	}
	again := false
	for _, name := range def.TextVars(stem) {
		if _, user := o.CSV.Infer.Vars[name]; user {
			continue
		}
		for _, t := range ts {
			if c := t.Col(name); c != nil && c.Storage == StoreFloat && (c.Type == Continuous || c.Type == Ordinal) {
				spec := vars[name]
				spec.Type = Nominal
				spec.Source += ", declared text"
				vars[name], fromDefine[name], again = spec, true, true
			}
		}
	}
	if again {
		ts, err = readFit()
	}
	return ts, warns, err
}

// warnings returns d.Warnings; nil for a nil Define.
func (d *Define) warnings() []string {
	if d == nil {
		return nil
	}
	return d.Warnings
}

// defineVarIn returns the variable of names that the typing error err is
// about (ParseError.Var, or the variable its message names), or "".
func defineVarIn(err error, names map[string]bool) string {
	var pe *ParseError
	if err == nil || !errors.As(err, &pe) {
		return ""
	}
	if names[pe.Var] {
		return pe.Var
	}
	msg := pe.Err.Error()
	for n := range names {
		if strings.HasPrefix(msg, fmt.Sprintf("variable %q:", n)) {
			return n
		}
	}
	return ""
}
