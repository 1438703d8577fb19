package signals

import (
	"cmp"
	"math"
	"slices"
)

// A CheckRecord is one result of the rule checker that the quality scores
// count: a discrepancy, or a record a rule could not evaluate. Variable is
// the variable the finding is about ("" when none).
type CheckRecord struct {
	Site, Subject, Variable string
	NotEvaluable            bool
}

// The score components, in the order of Score.Components.
const (
	CompDiscrepancy  = "discrepancy_rate"
	CompNotEvaluable = "not_evaluable_rate"
	CompMissing      = "missing_rate"
	CompSignals      = "signal_count"
)

// Components lists the score components in order.
var Components = []string{CompDiscrepancy, CompNotEvaluable, CompMissing, CompSignals}

// The units a Score is about.
const (
	UnitSite     = "site"
	UnitSubject  = "subject"
	UnitVariable = "variable"
)

// ZCap bounds the robust z of a component, so that one extreme component
// cannot outweigh all others in the total.
const ZCap = 10.0

// A Component is one ingredient of a quality score: its raw value and its
// robust z against the study median of the units of the same kind.
type Component struct {
	Name  string
	Value float64
	Z     float64
}

// A Score is the data-quality score of one site, subject or variable: higher
// is worse.
type Score struct {
	Unit       string // UnitSite, UnitSubject or UnitVariable
	ID         string
	Site       string // the subject's site (subjects only)
	Rank       int    // 1 = worst among the units of its kind
	Total      float64
	Components []Component // in the order of Components
}

// A Reference is the study median of each component for one kind of unit,
// the yardstick of the robust z values.
type Reference struct {
	Unit    string
	Medians []float64 // in the order of Components
	Spreads []float64 // the scale used by the z values (see ScoreUnits)
}

// ScoreInput is one unit's raw component values, in the order of Components
// (NaN when a component does not apply).
type ScoreInput struct {
	ID, Site string
	Values   []float64
}

// ScoreUnits turns raw component values of units of one kind into scores.
// Each component becomes a robust z against the median of the units:
//
//	z = (x − median) / s,  s = 1.4826 · MAD, or 1.2533 · mean |x − median| when
//	the MAD is 0 (√(π/2) makes the mean absolute deviation estimate σ of a
//	normal distribution), and z = 0 when that is 0 too (all units equal);
//
// capped at ±ZCap. Most units of a clean study have no discrepancy, so the MAD
// of a count is often 0 and the fallback decides. The total is the mean of
// the components' z (NaN components left out); scores are ranked by
// decreasing total, then ID.
func ScoreUnits(unit string, in []ScoreInput) ([]Score, Reference) {
	ref := Reference{Unit: unit, Medians: make([]float64, len(Components)), Spreads: make([]float64, len(Components))}
	out := make([]Score, len(in))
	for i, u := range in {
		out[i] = Score{Unit: unit, ID: u.ID, Site: u.Site, Components: make([]Component, len(Components))}
	}
	for c := range Components {
		var vals []float64
		for _, u := range in {
			if !math.IsNaN(u.Values[c]) {
				vals = append(vals, u.Values[c])
			}
		}
		med, s := medianMAD(vals)
		if s == 0 {
			var sum float64
			for _, v := range vals {
				sum += math.Abs(v - med)
			}
			s = math.Sqrt(math.Pi/2) * sum / float64(len(vals))
		}
		ref.Medians[c], ref.Spreads[c] = med, s
		for i, u := range in {
			x := u.Values[c]
			z := math.NaN()
			switch {
			case math.IsNaN(x):
			case s == 0:
				z = 0
			default:
				z = max(-ZCap, min(ZCap, (x-med)/s))
			}
			out[i].Components[c] = Component{Name: Components[c], Value: x, Z: z}
		}
	}
	for i := range out {
		var sum float64
		var k int
		for _, c := range out[i].Components {
			if !math.IsNaN(c.Z) {
				sum += c.Z
				k++
			}
		}
		out[i].Total = math.NaN()
		if k > 0 {
			out[i].Total = sum / float64(k)
		}
	}
	slices.SortStableFunc(out, func(a, b Score) int {
		an, bn := math.IsNaN(a.Total), math.IsNaN(b.Total)
		switch {
		case an && !bn:
			return 1
		case bn && !an:
			return -1
		case !an && a.Total != b.Total:
			return cmp.Compare(b.Total, a.Total)
		}
		return cmp.Compare(a.ID, b.ID)
	})
	for i := range out {
		out[i].Rank = i + 1
	}
	return out, ref
}
