package rules

import (
	"math"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// nan is a missing number in hand-built tables.
var nan = math.NaN()

// tcol describes one column of a hand-built table.
type tcol struct {
	name  string
	nums  []float64 // float column (NaN missing)
	codes []string  // coded column ("" missing)
	dates []string  // date column (ISO 8601, "" missing)
	typ   dataset.Type
}

// buildTable makes a table from columns; keys name its key columns.
func buildTable(t testing.TB, level string, keys []string, cols ...tcol) *dataset.Table {
	t.Helper()
	n := 0
	for _, c := range cols {
		n = max(n, len(c.nums), len(c.codes), len(c.dates))
	}
	tb := dataset.NewTable("T", n)
	tb.Level = level
	for _, c := range cols {
		var col *dataset.Column
		switch {
		case c.nums != nil:
			typ := c.typ
			if typ == 0 {
				typ = dataset.Continuous
			}
			col = dataset.NewFloatColumn(c.name, typ, c.nums)
		case c.codes != nil:
			idx := map[string]int32{}
			var levels []string
			codes := make([]int32, len(c.codes))
			for i, s := range c.codes {
				if s == "" {
					codes[i] = -1
					continue
				}
				k, ok := idx[s]
				if !ok {
					k = int32(len(levels))
					idx[s] = k
					levels = append(levels, s)
				}
				codes[i] = k
			}
			typ := c.typ
			if typ == 0 {
				typ = dataset.Nominal
			}
			col = dataset.NewCodeColumn(c.name, typ, codes, levels)
		default:
			ds := make([]dataset.Date, len(c.dates))
			for i, s := range c.dates {
				d, err := dataset.ParseISO8601(s)
				if err != nil {
					t.Fatalf("column %s row %d: %v", c.name, i, err)
				}
				ds[i] = d
			}
			col = dataset.NewDateColumn(c.name, ds)
		}
		if err := tb.Add(col); err != nil {
			t.Fatal(err)
		}
	}
	if keys != nil {
		if err := tb.SetKeys(keys, ""); err != nil {
			t.Fatal(err)
		}
	}
	if err := tb.Validate(); err != nil {
		t.Fatal(err)
	}
	return tb
}

// verdicts binds r to tb and returns the verdict of every row.
func verdicts(t testing.TB, r *Rule, tb *dataset.Table) []Verdict {
	t.Helper()
	c, err := Bind(r, tb)
	if err != nil {
		t.Fatalf("Bind(%s): %v", r.Kind, err)
	}
	out := make([]Verdict, tb.NRows)
	for i := range out {
		out[i] = c.Eval(i)
	}
	return out
}

const (
	P = Pass
	F = Fail
	N = NotEvaluable
)
