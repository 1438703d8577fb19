package render

import (
	"io"
	"strconv"

	"github.com/crossform/crossform/rules"
)

func ruleRow(r *rules.Rule) []string {
	n, v, conf := "", "", ""
	if e := r.Evidence; e != nil {
		n, v, conf = strconv.Itoa(e.N), strconv.Itoa(e.Violations), strconv.FormatFloat(e.Confidence, 'f', 2, 64)
	}
	return []string{r.ID, string(r.Status), r.Kind, r.Level, string(r.Severity), n, v, conf, r.Statement}
}

// RulesText writes rules as a plain-text table in the order given.
func RulesText(w io.Writer, rs []*rules.Rule) error {
	rows := make([][]string, len(rs))
	for i, r := range rs {
		rows[i] = ruleRow(r)
	}
	return TextTable(w, []string{"id", "status", "kind", "level", "severity", "n", "violations", "confidence", "statement"}, rows, 90)
}

// RuleJSON is one rule in JSON output.
type RuleJSON struct {
	ID         string         `json:"id"`
	Status     string         `json:"status"`
	Kind       string         `json:"kind"`
	Level      string         `json:"level"`
	Vars       []string       `json:"variables"`
	Params     map[string]any `json:"parameters,omitempty"`
	Severity   string         `json:"severity"`
	Statement  string         `json:"statement"`
	Query      string         `json:"query"`
	N          int            `json:"n"`
	Support    int            `json:"support"`
	Violations int            `json:"violations"`
	Examples   [][]string     `json:"examples"`
	Suggested  string         `json:"suggested_by,omitempty"`
	Confidence float64        `json:"confidence"`
}

// RulesJSON writes {"rules": [...]} in the order given.
func RulesJSON(w io.Writer, rs []*rules.Rule) error {
	out := make([]RuleJSON, len(rs))
	for i, r := range rs {
		j := RuleJSON{ID: r.ID, Status: string(r.Status), Kind: r.Kind, Level: r.Level, Vars: r.Vars, Params: r.Params,
			Severity: string(r.Severity), Statement: r.Statement, Query: r.Query, Examples: [][]string{}}
		if e := r.Evidence; e != nil {
			j.N, j.Support, j.Violations, j.Suggested, j.Confidence = e.N, e.Support, e.Violations, e.Suggested, e.Confidence
			if e.Examples != nil {
				j.Examples = e.Examples
			}
		}
		out[i] = j
	}
	return JSON(w, struct {
		Rules []RuleJSON `json:"rules"`
	}{out})
}

// LintJSON writes {"issues": [{"file", "line", "column", "rule", "warning", "message"}]}.
func LintJSON(w io.Writer, issues []rules.LintIssue) error {
	type issue struct {
		File    string `json:"file"`
		Line    int    `json:"line"`
		Column  int    `json:"column"`
		Rule    string `json:"rule,omitempty"`
		Warning bool   `json:"warning"`
		Message string `json:"message"`
	}
	out := make([]issue, len(issues))
	for i, is := range issues {
		out[i] = issue{is.File, is.Line, is.Column, is.RuleID, is.Warning, is.Msg}
	}
	return JSON(w, struct {
		Issues []issue `json:"issues"`
	}{out})
}
