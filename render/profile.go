package render

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/crossform/crossform/dataset"
)

var profileHeader = []string{"table", "variable", "type", "n", "missing_pct", "distinct", "min", "median", "max", "top_levels", "why"}

func profileRows(ps []dataset.VarProfile) [][]string {
	rows := make([][]string, len(ps))
	for i, p := range ps {
		var top []string
		for _, l := range p.Top {
			top = append(top, fmt.Sprintf("%s (%d)", l.Level, l.Count))
		}
		rows[i] = []string{p.Table, p.Name, p.Type, strconv.Itoa(p.N), strconv.FormatFloat(p.MissingPct(), 'f', 1, 64),
			strconv.Itoa(p.Distinct), p.Min, p.Median, p.Max, strings.Join(top, "; "), p.Why}
	}
	return rows
}

// ProfileText writes variable profiles as a plain-text table.
func ProfileText(w io.Writer, ps []dataset.VarProfile) error {
	return TextTable(w, profileHeader, profileRows(ps), 48)
}

// ProfileCSV writes variable profiles as CSV.
func ProfileCSV(w io.Writer, ps []dataset.VarProfile) error {
	return CSV(w, profileHeader, profileRows(ps))
}

// ProfileJSON writes variable profiles as one JSON document:
// {"variables": [VarProfile...]}.
func ProfileJSON(w io.Writer, ps []dataset.VarProfile) error {
	if ps == nil {
		ps = []dataset.VarProfile{}
	}
	return JSON(w, struct {
		Variables []dataset.VarProfile `json:"variables"`
	}{ps})
}
