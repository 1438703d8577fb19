package main

import (
	"fmt"
	"strings"

	"github.com/spf13/cobra"

	"github.com/crossform/crossform/dataset"
)

// dataFlags are the options of every command that reads data.
type dataFlags struct {
	keys      string
	site      string
	vars      string
	encoding  string
	delimiter string
	missing   string
	level     string
	define    string
}

func (d *dataFlags) register(cmd *cobra.Command) {
	f := cmd.Flags()
	f.StringVar(&d.keys, "keys", "", "key columns `COL[,COL...]` identifying a record (default: USUBJID, VISITNUM, --SEQ when present)")
	f.StringVar(&d.site, "site", "", "site column `COL` (default: SITEID when present)")
	f.StringVar(&d.vars, "vars", "", "variables `FILE` (YAML) overriding inferred types, level orders, units, labels")
	f.StringVar(&d.encoding, "encoding", "utf-8", "text encoding of CSV files: utf-8, windows-1252 or latin1")
	f.StringVar(&d.delimiter, "delimiter", "", "CSV delimiter: comma, semicolon or tab (default: detected)")
	f.StringVar(&d.missing, "missing", "", "tokens read as missing, comma-separated (default: empty, NA, .)")
	f.StringVar(&d.define, "define", "", "Define-XML `FILE` whose definitions override inferred types (default: define.xml in the study folder)")
	f.StringVar(&d.level, "level", "", "unit of analysis for an SDTM folder: subject, visit, record:DOMAIN, or table:NAME (default visit)")
}

// options turns the flags into dataset options.
func (d *dataFlags) options() (dataset.Options, error) {
	var o dataset.Options
	o.CSV.Encoding = d.encoding
	switch strings.ToLower(d.delimiter) {
	case "":
	case "comma", ",":
		o.CSV.Delimiter = ','
	case "semicolon", ";":
		o.CSV.Delimiter = ';'
	case "tab", "\\t", "\t":
		o.CSV.Delimiter = '\t'
	default:
		return o, usageError{fmt.Errorf("--delimiter %q: want comma, semicolon or tab", d.delimiter)}
	}
	if d.missing != "" {
		o.CSV.Missing = append([]string{""}, strings.Split(d.missing, ",")...)
	}
	if d.keys != "" {
		for _, k := range strings.Split(d.keys, ",") {
			o.CSV.Keys = append(o.CSV.Keys, strings.TrimSpace(k))
		}
	}
	o.CSV.Site = d.site
	o.Define = d.define
	if d.vars != "" {
		v, err := dataset.ReadVarsFile(d.vars)
		if err != nil {
			return o, err
		}
		o.CSV.Infer.Vars = v
	}
	return o, nil
}

// open reads the study at path with the flags' options, checking that every
// variable named in the variables file exists.
func (d *dataFlags) open(path string) (*dataset.Study, error) {
	o, err := d.options()
	if err != nil {
		return nil, err
	}
	s, err := dataset.Open(path, o)
	if err != nil {
		return nil, err
	}
	if err := s.CheckVars(o.CSV.Infer.Vars); err != nil {
		return nil, err
	}
	return s, nil
}
