package check

import (
	"strconv"
	"strings"

	"github.com/crossform/crossform/dataset"
)

// Column names the checker looks for by SDTM convention.
const (
	colSubject = "USUBJID"
	colVisit   = "VISITNUM"
	colVisitLb = "VISIT"
	colSite    = "SITEID"
)

// NaturalKey returns the columns of t that identify a record across extracts
// for rules defined at level, in key order. Only columns present in t are
// returned.
//
//   - "subject": USUBJID.
//   - "visit": USUBJID, VISITNUM.
//   - "record:DOMAIN": USUBJID plus, by the domain's class (SDTM.md §1,
//     EDIT-CHECKS.md §4): findings (a --TESTCD column) --TESTCD, VISITNUM,
//     --TPTNUM, --REPNUM, --DTC; events (--TERM) --TERM, --STDTC (AE uses
//     AETERM, the verbatim term, not AEDECOD, so that re-coding between
//     extracts does not look like a new discrepancy; AEDECOD stands in when
//     AETERM is absent); interventions (--TRT) --TRT, --STDTC; SV VISITNUM.
//   - "table" and any other level: the table's own Keys.
//
// When none of these columns exists the table's Keys are used, and --SEQ
// only as the last resort (it is renumbered between extracts, so a key built
// on it may make a persisting discrepancy look resolved and new).
func NaturalKey(t *dataset.Table, level string) []string {
	var want []string
	switch {
	case level == "subject":
		want = []string{colSubject}
	case level == "visit":
		want = []string{colSubject, colVisit}
	case strings.HasPrefix(level, "record:"):
		d := strings.ToUpper(strings.TrimPrefix(level, "record:"))
		want = []string{colSubject}
		switch {
		case d == "SV":
			want = append(want, colVisit)
		case t.Col(d+"TESTCD") != nil:
			want = append(want, d+"TESTCD", colVisit, d+"TPTNUM", d+"REPNUM", d+"DTC")
		case t.Col(d+"TERM") != nil || t.Col(d+"DECOD") != nil:
			term := d + "TERM"
			if t.Col(term) == nil {
				term = d + "DECOD"
			}
			want = append(want, term, d+"STDTC")
		case t.Col(d+"TRT") != nil:
			want = append(want, d+"TRT", d+"STDTC")
		}
	}
	var out []string
	for _, c := range want {
		if t.Col(c) != nil {
			out = append(out, c)
		}
	}
	if len(out) > 1 || (len(out) == 1 && (level == "subject")) {
		return out
	}
	// Fall back on the table's keys, --SEQ last.
	var seq []string
	for _, k := range t.Keys {
		if isSeq(k) {
			seq = append(seq, k)
			continue
		}
		if !contains(out, k) {
			out = append(out, k)
		}
	}
	if len(out) <= 1 {
		out = append(out, seq...)
	}
	return out
}

func isSeq(name string) bool {
	return len(name) == 5 && strings.HasSuffix(name, "SEQ")
}

func contains(s []string, x string) bool {
	for _, v := range s {
		if v == x {
			return true
		}
	}
	return false
}

// escapeKey escapes the separators of a key component: '\', ';', '=', '|'
// and '#'.
func escapeKey(s string) string {
	if !strings.ContainsAny(s, `\;=|#`) {
		return s
	}
	var b strings.Builder
	for _, r := range s {
		if r == '\\' || r == ';' || r == '=' || r == '|' || r == '#' {
			b.WriteByte('\\')
		}
		b.WriteRune(r)
	}
	return b.String()
}

// recordKeys returns the natural key text of every row of t, written
// "VAR=value;VAR=value" with separators escaped. A key that repeats within
// the table gets "#2", "#3", … on its second and later occurrences in row
// order, so that every discrepancy key is unique in a listing. With no key
// columns at all the key is "row=N" (1-based), which is stable only while
// the extract's row order is.
func recordKeys(t *dataset.Table, cols []string) []string {
	keys := make([]string, t.NRows)
	cs := make([]*dataset.Column, len(cols))
	for j, c := range cols {
		cs[j] = t.Col(c)
	}
	seen := make(map[string]int, t.NRows)
	var b strings.Builder
	for i := range keys {
		b.Reset()
		if len(cs) == 0 {
			b.WriteString("row=")
			b.WriteString(strconv.Itoa(i + 1))
		}
		for j, c := range cs {
			if j > 0 {
				b.WriteByte(';')
			}
			b.WriteString(cols[j])
			b.WriteByte('=')
			b.WriteString(escapeKey(c.String(i)))
		}
		k := b.String()
		seen[k]++
		if n := seen[k]; n > 1 {
			k += "#" + strconv.Itoa(n)
		}
		keys[i] = k
	}
	return keys
}
