package check

import (
	"context"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
)

// tcol is a column of a hand-built table: kind "num" (float; "" missing),
// "date" (ISO 8601; "" missing), "cat" (coded nominal; "" missing) or "id"
// (coded identifier).
type tcol struct {
	name, kind string
	vals       []string
}

func num(name string, v ...string) tcol  { return tcol{name, "num", v} }
func date(name string, v ...string) tcol { return tcol{name, "date", v} }
func cat(name string, v ...string) tcol  { return tcol{name, "cat", v} }
func id(name string, v ...string) tcol   { return tcol{name, "id", v} }

// buildTable makes a table from columns; keys and site name key columns.
func buildTable(t testing.TB, name, level string, keys []string, site string, cols ...tcol) *dataset.Table {
	t.Helper()
	n := len(cols[0].vals)
	tb := dataset.NewTable(name, n)
	tb.Level, tb.Keys, tb.Site = level, keys, site
	for _, c := range cols {
		if len(c.vals) != n {
			t.Fatalf("column %s: %d values, want %d", c.name, len(c.vals), n)
		}
		var col *dataset.Column
		switch c.kind {
		case "num":
			v := make([]float64, n)
			for i, s := range c.vals {
				v[i] = math.NaN()
				if s != "" {
					x, err := strconv.ParseFloat(s, 64)
					if err != nil {
						t.Fatal(err)
					}
					v[i] = x
				}
			}
			col = dataset.NewFloatColumn(c.name, dataset.Continuous, v)
		case "date":
			d := make([]dataset.Date, n)
			for i, s := range c.vals {
				x, err := dataset.ParseISO8601(s)
				if err != nil {
					t.Fatal(err)
				}
				d[i] = x
			}
			col = dataset.NewDateColumn(c.name, d)
		case "cat", "id":
			var levels []string
			for _, s := range c.vals {
				if s != "" && !slices.Contains(levels, s) {
					levels = append(levels, s)
				}
			}
			slices.Sort(levels)
			codes := make([]int32, n)
			for i, s := range c.vals {
				codes[i] = int32(slices.Index(levels, s))
			}
			typ := dataset.Nominal
			if c.kind == "id" {
				typ = dataset.Identifier
			}
			col = dataset.NewCodeColumn(c.name, typ, codes, levels)
		}
		col.Prov.Domain = strings.SplitN(name, ".", 2)[0]
		if err := tb.Add(col); err != nil {
			t.Fatal(err)
		}
	}
	if err := tb.Validate(); err != nil {
		t.Fatal(err)
	}
	return tb
}

// ruleSet parses a rule set from YAML text.
func ruleSet(t testing.TB, yaml string) *rules.RuleSet {
	t.Helper()
	rs, err := rules.Parse("test.yaml", []byte(yaml))
	if err != nil {
		t.Fatalf("rule set: %v", err)
	}
	return rs
}

// runTables runs rs on tables by level.
func runTables(t testing.TB, rs *rules.RuleSet, tables map[string]*dataset.Table, o Options) *Result {
	t.Helper()
	o.Table = func(level string) (*dataset.Table, error) {
		if tb, ok := tables[level]; ok {
			return tb, nil
		}
		return nil, errNoTable(level)
	}
	res, err := Run(context.Background(), rs, nil, o)
	if err != nil {
		t.Fatalf("Run: %v", err)
	}
	return res
}

type errNoTable string

func (e errNoTable) Error() string { return "no table for level " + string(e) }
