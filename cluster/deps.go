package cluster

import (
	"math"
	"sort"
	"strings"
)

// A VarInfo describes where a variable came from, for Dependencies.
type VarInfo struct {
	Name     string
	Domain   string // SDTM domain or form ("VS", "DM"); "" when unknown
	TestCode string // findings test code, "" otherwise
	Source   string // source column (VSSTRESN, CMYN, ...)
	Derived  string // how it was derived ("baseline", "count", ...), "" if read as is
	IsDate   bool
}

// A PairInfo is one estimated association between variables A and B
// (indexes into the VarInfo slice).
type PairInfo struct {
	A, B     int
	Measure  string
	Strength float64 // 0–1
	Q        float64 // Benjamini–Hochberg q-value
}

// DepOptions tunes Dependencies. Zero fields use the defaults.
type DepOptions struct {
	MinStrength float64 // default 0.3
	MaxQ        float64 // default 0.01
}

// A Dependency is a strong, significant association between variables of
// different forms. Trivial is "" for an unexpected one, else the reason it is
// expected and ranked down.
type Dependency struct {
	PairInfo
	Trivial string
}

// Dependencies returns the strong (Strength ≥ MinStrength), significant
// (Q ≤ MaxQ) associations between variables of different domains — the
// statistician's "why does this lab track that questionnaire item?" list.
// Pairs whose relation is known from provenance alone are kept but ranked
// after the others, each with its reason:
//
//   - "same test": both variables hold the same findings test code (a test
//     and its baseline, or the same test at another level);
//   - "same source variable": both come from the same source column;
//   - "gate question and its records": one is a collection gate question
//     (name ending in YN, e.g. CMYN) and the other summarises the domain it
//     gates (CM.ANY, CM.N);
//   - "both calendar dates": two dates track each other through enrolment
//     time.
//
// Within each group pairs are ordered by strength, then by names.
func Dependencies(vars []VarInfo, pairs []PairInfo, o DepOptions) []Dependency {
	if o.MinStrength == 0 {
		o.MinStrength = 0.3
	}
	if o.MaxQ == 0 {
		o.MaxQ = 0.01
	}
	var out []Dependency
	for _, p := range pairs {
		if math.IsNaN(p.Strength) || p.Strength < o.MinStrength || !(p.Q <= o.MaxQ) {
			continue
		}
		a, b := vars[p.A], vars[p.B]
		if a.Domain == b.Domain && a.Domain != "" {
			continue
		}
		out = append(out, Dependency{PairInfo: p, Trivial: trivialReason(a, b)})
	}
	sort.SliceStable(out, func(i, j int) bool {
		x, y := out[i], out[j]
		if (x.Trivial == "") != (y.Trivial == "") {
			return x.Trivial == ""
		}
		if x.Strength != y.Strength {
			return x.Strength > y.Strength
		}
		if vars[x.A].Name != vars[y.A].Name {
			return vars[x.A].Name < vars[y.A].Name
		}
		return vars[x.B].Name < vars[y.B].Name
	})
	return out
}

func trivialReason(a, b VarInfo) string {
	switch {
	case a.TestCode != "" && a.TestCode == b.TestCode:
		return "same test"
	case a.Source != "" && a.Source == b.Source && a.Derived == "" && b.Derived == "":
		return "same source variable"
	case gates(a, b) || gates(b, a):
		return "gate question and its records"
	case a.IsDate && b.IsDate:
		return "both calendar dates"
	}
	return ""
}

// gates reports whether g is a gate question (a source column XXYN) for the
// domain XX of v.
func gates(g, v VarInfo) bool {
	src := g.Source
	if src == "" {
		src = g.Name
	}
	if i := strings.LastIndexByte(src, '.'); i >= 0 {
		src = src[i+1:]
	}
	return len(src) == 4 && strings.HasSuffix(src, "YN") && v.Domain != "" && src[:2] == v.Domain
}
