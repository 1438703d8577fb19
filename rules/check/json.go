package check

import (
	"encoding/json"
	"math"
)

// finite returns &x, or nil when x is NaN or infinite (JSON has no such
// numbers; they are written as null).
func finite(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

// MarshalJSON writes the summary with an undefined Rate as null.
func (s RuleSummary) MarshalJSON() ([]byte, error) {
	type plain RuleSummary
	return json.Marshal(struct {
		plain
		Rate *float64 `json:"rate"`
	}{plain(s), finite(s.Rate)})
}

// MarshalJSON writes the summary with an undefined Rate or PerSubject as
// null.
func (s SiteSummary) MarshalJSON() ([]byte, error) {
	type plain SiteSummary
	return json.Marshal(struct {
		plain
		Rate       *float64 `json:"rate"`
		PerSubject *float64 `json:"per_subject"`
	}{plain(s), finite(s.Rate), finite(s.PerSubject)})
}

// MarshalJSON writes the result with undefined figures (untested site,
// others' rate 0) as null.
func (r SiteTestResult) MarshalJSON() ([]byte, error) {
	type plain SiteTestResult
	return json.Marshal(struct {
		plain
		OthersRate *float64 `json:"others_rate"`
		Ratio      *float64 `json:"ratio"`
		P          *float64 `json:"p"`
		Q          *float64 `json:"q"`
	}{plain(r), finite(r.OthersRate), finite(r.Ratio), finite(r.P), finite(r.Q)})
}
