package dataset

import (
	"math"
	"sort"
)

// A VarProfile summarises one variable.
type VarProfile struct {
	Table    string      `json:"table"`
	Name     string      `json:"name"`
	Label    string      `json:"label,omitempty"`
	Type     string      `json:"type"`
	Why      string      `json:"why"`
	N        int         `json:"n"`       // non-missing values
	Missing  int         `json:"missing"` // missing values
	Rows     int         `json:"rows"`
	Distinct int         `json:"distinct"`
	Invalid  int         `json:"invalid,omitempty"` // values that did not parse as the type
	Min      string      `json:"min,omitempty"`
	Median   string      `json:"median,omitempty"`
	Max      string      `json:"max,omitempty"`
	Top      []LevelFreq `json:"top,omitempty"` // most frequent levels, coded variables
	Unit     string      `json:"unit,omitempty"`
}

// MissingPct returns the percentage of rows missing.
func (p VarProfile) MissingPct() float64 {
	if p.Rows == 0 {
		return 0
	}
	return 100 * float64(p.Missing) / float64(p.Rows)
}

// A LevelFreq is a level and how many rows hold it.
type LevelFreq struct {
	Level string `json:"level"`
	Count int    `json:"count"`
}

// Profile summarises every column of t, in table order. Medians of an even
// count are the lower middle value for dates and the mean of the two middle
// values for numbers.
func Profile(t *Table) []VarProfile {
	out := make([]VarProfile, 0, len(t.Cols))
	for _, c := range t.Cols {
		p := VarProfile{Table: t.Name, Name: c.Name, Label: c.Label, Type: c.Type.String(), Why: c.Why,
			Rows: t.NRows, Missing: c.NMissing(), Invalid: len(c.Invalid), Unit: c.Unit}
		p.N = p.Rows - p.Missing
		switch c.Storage {
		case StoreFloat:
			v := make([]float64, 0, p.N)
			for i, x := range c.Floats {
				if !c.Missing(i) {
					v = append(v, x)
				}
			}
			sort.Float64s(v)
			p.Distinct = countDistinctSorted(v)
			if len(v) > 0 {
				p.Min, p.Max = FormatFloat(v[0]), FormatFloat(v[len(v)-1])
				p.Median = FormatFloat(roundSig(median(v), 12))
			}
			if c.Type != Continuous {
				p.Top = topFloats(v, 5)
			}
		case StoreCode:
			counts := make([]int, len(c.Levels))
			for _, k := range c.Codes {
				if k >= 0 {
					counts[k]++
				}
			}
			for _, n := range counts {
				if n > 0 {
					p.Distinct++
				}
			}
			idx := make([]int, len(counts))
			for i := range idx {
				idx[i] = i
			}
			sort.SliceStable(idx, func(a, b int) bool { return counts[idx[a]] > counts[idx[b]] })
			for _, i := range idx {
				if len(p.Top) == 5 || counts[i] == 0 {
					break
				}
				p.Top = append(p.Top, LevelFreq{c.Levels[i], counts[i]})
			}
			if c.Type == Ordinal && p.N > 0 {
				lo, hi := -1, -1
				for i, n := range counts {
					if n > 0 {
						if lo < 0 {
							lo = i
						}
						hi = i
					}
				}
				p.Min, p.Max = c.Levels[lo], c.Levels[hi]
				half, acc := (p.N+1)/2, 0
				for i, n := range counts {
					acc += n
					if acc >= half {
						p.Median = c.Levels[i]
						break
					}
				}
			}
		case StoreDate:
			type dv struct {
				lo float64
				p  Precision
			}
			v := make([]dv, 0, p.N)
			for i := range c.DateLo {
				if !c.Missing(i) {
					v = append(v, dv{c.DateLo[i], c.DatePrec[i]})
				}
			}
			sort.Slice(v, func(a, b int) bool { return v[a].lo < v[b].lo || v[a].lo == v[b].lo && v[a].p < v[b].p })
			for i := range v {
				if i == 0 || v[i] != v[i-1] {
					p.Distinct++
				}
			}
			if len(v) > 0 {
				m := v[(len(v)-1)/2]
				p.Min, p.Median, p.Max = FormatDays(v[0].lo, v[0].p), FormatDays(m.lo, m.p), FormatDays(v[len(v)-1].lo, v[len(v)-1].p)
			}
		}
		out = append(out, p)
	}
	return out
}

func countDistinctSorted(v []float64) int {
	n := 0
	for i := range v {
		if i == 0 || v[i] != v[i-1] {
			n++
		}
	}
	return n
}

func median(sorted []float64) float64 {
	n := len(sorted)
	if n%2 == 1 {
		return sorted[n/2]
	}
	return (sorted[n/2-1] + sorted[n/2]) / 2
}

func roundSig(x float64, sig int) float64 {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	p := math.Pow(10, float64(sig)-math.Ceil(math.Log10(math.Abs(x))))
	return math.Round(x*p) / p
}

func topFloats(sorted []float64, k int) []LevelFreq {
	var out []LevelFreq
	for i := 0; i < len(sorted); {
		j := i
		for j < len(sorted) && sorted[j] == sorted[i] {
			j++
		}
		out = append(out, LevelFreq{FormatFloat(sorted[i]), j - i})
		i = j
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].Count > out[b].Count })
	if len(out) > k {
		out = out[:k]
	}
	return out
}
