package dataset

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

// A Study is the set of tables read from one extract: a folder holds one
// table per file (one per SDTM domain or collection form), a single file is a
// study of one table.
type Study struct {
	Path     string
	Tables   []*Table // sorted by name
	Warnings []string
}

// Table returns the table named name (case-insensitive), or nil.
func (s *Study) Table(name string) *Table {
	for _, t := range s.Tables {
		if strings.EqualFold(t.Name, name) {
			return t
		}
	}
	return nil
}

// Options control Open.
type Options struct {
	CSV CSVOptions
	// Define is a Define-XML file whose variable definitions override type
	// inference (see Define.VarSpecs); "" uses define.xml in the study folder
	// when there is one.
	Define string
}

// readers maps a file extension to its reader. Formats register here.
var readers = map[string]func(path string, o Options) ([]*Table, error){
	".csv": func(path string, o Options) ([]*Table, error) {
		t, err := ReadCSVFile(path, o.CSV)
		if err != nil {
			return nil, err
		}
		return []*Table{t}, nil
	},
	".tsv": func(path string, o Options) ([]*Table, error) {
		c := o.CSV
		if c.Delimiter == 0 {
			c.Delimiter = '\t'
		}
		t, err := ReadCSVFile(path, c)
		if err != nil {
			return nil, err
		}
		return []*Table{t}, nil
	},
}

// Open reads a study: every data file in the folder path (by extension; names
// starting with "_" or "." are skipped as side files), or the single file path.
func Open(path string, o Options) (*Study, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	s := &Study{Path: path}
	var files []string
	if fi.IsDir() {
		ents, err := os.ReadDir(path)
		if err != nil {
			return nil, err
		}
		for _, e := range ents {
			if e.IsDir() || strings.HasPrefix(e.Name(), "_") || strings.HasPrefix(e.Name(), ".") {
				continue // not data: hidden files and side files such as a ground truth
			}
			if _, ok := readers[strings.ToLower(filepath.Ext(e.Name()))]; ok {
				files = append(files, filepath.Join(path, e.Name()))
			}
		}
		if len(files) == 0 {
			return nil, fmt.Errorf("%s: no data files (want %s)", path, strings.Join(knownExts(), ", "))
		}
	} else {
		if _, ok := readers[strings.ToLower(filepath.Ext(path))]; !ok {
			return nil, fmt.Errorf("%s: unknown file type %q (want %s)", path, filepath.Ext(path), strings.Join(knownExts(), ", "))
		}
		files = []string{path}
	}
	sort.Strings(files)
	def, err := studyDefine(path, fi.IsDir(), o)
	if err != nil {
		return nil, err
	}
	s.Warnings = append(s.Warnings, def.warnings()...)
	for _, f := range files {
		ts, warns, err := readStudyFile(f, o, def)
		s.Warnings = append(s.Warnings, warns...)
		if err != nil {
			return nil, err
		}
		for _, t := range ts {
			if s.Table(t.Name) != nil {
				return nil, fmt.Errorf("%s: table %q read twice (from %s and %s)", path, t.Name, s.Table(t.Name).Source, f)
			}
			s.Tables = append(s.Tables, t)
		}
	}
	sort.Slice(s.Tables, func(i, j int) bool { return s.Tables[i].Name < s.Tables[j].Name })
	return s, nil
}

func knownExts() []string {
	var out []string
	for e := range readers {
		out = append(out, e)
	}
	sort.Strings(out)
	return out
}
