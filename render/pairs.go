package render

import (
	"io"
	"math"
	"strconv"

	"github.com/crossform/crossform/assoc"
)

var pairHeader = []string{"var_a", "var_b", "type_a", "type_b", "domain_a", "domain_b", "measure", "estimate", "estimate2",
	"strength", "se", "ci_lo", "ci_hi", "p", "q", "n", "skipped", "miss_phi", "miss_q"}

// num formats x with the fewest digits that read back to x; NaN is empty.
func num(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

func pairRow(m *assoc.Matrix, p *assoc.Pair) []string {
	skip := ""
	if p.Skip != assoc.NotSkipped {
		skip = p.Skip.String()
	}
	return []string{m.Names[p.I], m.Names[p.J], p.TI.String(), p.TJ.String(), m.Domains[p.I], m.Domains[p.J],
		p.Measure.String(), num(p.Estimate), num(p.Estimate2), num(p.Strength), num(p.SE), num(p.Lo), num(p.Hi),
		num(p.P), num(p.Q), strconv.Itoa(int(p.N)), skip, num(p.MissPhi), num(p.MissQ)}
}

// PairsCSV writes the given pairs of m as CSV, one row per pair.
func PairsCSV(w io.Writer, m *assoc.Matrix, pairs []*assoc.Pair) error {
	rows := make([][]string, len(pairs))
	for i, p := range pairs {
		rows[i] = pairRow(m, p)
	}
	return CSV(w, pairHeader, rows)
}

// PairsText writes the given pairs as a plain-text table of the main columns.
func PairsText(w io.Writer, m *assoc.Matrix, pairs []*assoc.Pair) error {
	rows := make([][]string, len(pairs))
	for i, p := range pairs {
		rows[i] = []string{m.Names[p.I], m.Names[p.J], p.Measure.String(), fixed(p.Estimate), fixed(p.Strength),
			sci(p.Q), strconv.Itoa(int(p.N))}
	}
	return TextTable(w, []string{"var_a", "var_b", "measure", "estimate", "strength", "q", "n"}, rows, 40)
}

func fixed(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'f', 3, 64)
}

func sci(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 2, 64)
}

// PairJSON is one pair in the JSON pair table. Absent numbers are null.
type PairJSON struct {
	A         string   `json:"a"`
	B         string   `json:"b"`
	TypeA     string   `json:"type_a"`
	TypeB     string   `json:"type_b"`
	DomainA   string   `json:"domain_a"`
	DomainB   string   `json:"domain_b"`
	Measure   string   `json:"measure"`
	Estimate  *float64 `json:"estimate"`
	Estimate2 *float64 `json:"estimate2"`
	Strength  *float64 `json:"strength"`
	SE        *float64 `json:"se"`
	Lo        *float64 `json:"ci_lo"`
	Hi        *float64 `json:"ci_hi"`
	P         *float64 `json:"p"`
	Q         *float64 `json:"q"`
	N         int      `json:"n"`
	Skipped   string   `json:"skipped,omitempty"`
	MissPhi   *float64 `json:"miss_phi"`
	MissQ     *float64 `json:"miss_q"`
}

func ptr(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

// PairsJSON writes {"rows": r, "variables": p, "pairs": [...], "excluded": [...]}.
func PairsJSON(w io.Writer, m *assoc.Matrix, pairs []*assoc.Pair) error {
	out := make([]PairJSON, len(pairs))
	for i, p := range pairs {
		skip := ""
		if p.Skip != assoc.NotSkipped {
			skip = p.Skip.String()
		}
		out[i] = PairJSON{A: m.Names[p.I], B: m.Names[p.J], TypeA: p.TI.String(), TypeB: p.TJ.String(),
			DomainA: m.Domains[p.I], DomainB: m.Domains[p.J], Measure: p.Measure.String(),
			Estimate: ptr(p.Estimate), Estimate2: ptr(p.Estimate2), Strength: ptr(p.Strength), SE: ptr(p.SE),
			Lo: ptr(p.Lo), Hi: ptr(p.Hi), P: ptr(p.P), Q: ptr(p.Q), N: int(p.N), Skipped: skip,
			MissPhi: ptr(p.MissPhi), MissQ: ptr(p.MissQ)}
	}
	type excl struct {
		Name   string `json:"name"`
		Type   string `json:"type"`
		Reason string `json:"reason"`
	}
	ex := make([]excl, len(m.Excluded))
	for i, e := range m.Excluded {
		ex[i] = excl{e.Name, e.Type.String(), e.Reason.String()}
	}
	return JSON(w, struct {
		Rows      int        `json:"rows"`
		Variables int        `json:"variables"`
		Pairs     []PairJSON `json:"pairs"`
		Excluded  []excl     `json:"excluded"`
	}{m.Rows, m.Len(), out, ex})
}
