package signals

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/crossform/crossform/dataset"
)

// DefaultExclude are the variables left out of subject profiles by default:
// the planned and actual arm, which can reveal allocation in a blinded study
// (EDIT-CHECKS.md §6) and differ between copies that keep their own
// randomisation, with and without the "DM." prefix of joined variables.
var DefaultExclude = []string{"ARM", "ARMCD", "ACTARM", "ACTARMCD", "DM.ARM", "DM.ARMCD", "DM.ACTARM", "DM.ACTARMCD"}

// ProfileOf builds the subject profile of table t for the Gower distance: one
// row per table row, one variable per column that can describe a subject.
// Left out: the key and site columns, identifiers, free text, dates (they
// place a subject in calendar time, which says when, not who), the names in
// exclude, and variables with fewer than two distinct non-missing values.
// Kinds follow the column types: Continuous → Numeric; Ordinal → Ordinal on
// the level position for coded storage, Numeric on the value for a numeric
// scale (grades, counts); Nominal → Nominal; Binary → SymmetricBinary (a
// "N"/"N" pair is agreement as much as "Y"/"Y" is, in a profile of flags and
// sex). weights gives a variable's weight by name (default 1); a weight for a
// variable that is not in the profile is an error naming it.
func ProfileOf(t *dataset.Table, exclude []string, weights map[string]float64) (*Mixed, error) {
	m := &Mixed{}
	used := map[string]bool{}
	for _, c := range t.Cols {
		if t.IsKey(c.Name) || slices.Contains(exclude, c.Name) {
			continue
		}
		var kind Kind
		col := make([]float64, t.NRows)
		switch c.Type {
		case dataset.Continuous:
			kind = Numeric
		case dataset.Ordinal:
			kind = Ordinal
			if c.Storage == dataset.StoreFloat {
				kind = Numeric
			}
		case dataset.Nominal:
			kind = Nominal
		case dataset.Binary:
			kind = SymmetricBinary
		default:
			continue
		}
		switch c.Storage {
		case dataset.StoreFloat:
			copy(col, c.Floats)
			if kind == SymmetricBinary || kind == Nominal {
				// Numeric codes of a categorical variable: code them by distinct value.
				levels := dataset.Distinct(c.Floats)
				for i, v := range c.Floats {
					if !math.IsNaN(v) {
						idx, _ := slices.BinarySearch(levels, v)
						col[i] = float64(idx)
					}
				}
			}
		case dataset.StoreCode:
			if kind == Numeric {
				continue
			}
			for i, code := range c.Codes {
				col[i] = math.NaN()
				if code >= 0 {
					col[i] = float64(code)
				}
			}
		default:
			continue
		}
		if kind == SymmetricBinary && distinctCount(col) > 2 {
			kind = Nominal
		}
		if distinctCount(col) < 2 {
			continue
		}
		m.Names = append(m.Names, c.Name)
		m.Kinds = append(m.Kinds, kind)
		m.Cols = append(m.Cols, col)
		used[c.Name] = true
	}
	if len(weights) > 0 {
		var unknown []string
		for name := range weights {
			if !used[name] {
				unknown = append(unknown, name)
			}
		}
		if len(unknown) > 0 {
			slices.Sort(unknown)
			return nil, fmt.Errorf("signals: weight for variable(s) not in the subject profile of %q: %s", t.Name, strings.Join(unknown, ", "))
		}
		m.Weights = make([]float64, len(m.Names))
		for k, name := range m.Names {
			m.Weights[k] = 1
			if w, ok := weights[name]; ok {
				m.Weights[k] = w
			}
		}
	}
	if len(m.Names) == 0 {
		return nil, fmt.Errorf("signals: table %q has no variable to describe subjects by", t.Name)
	}
	return m, m.Validate()
}

func distinctCount(col []float64) int {
	seen := map[float64]bool{}
	for _, v := range col {
		if !math.IsNaN(v) {
			seen[v] = true
			if len(seen) > 2 {
				return len(seen)
			}
		}
	}
	return len(seen)
}
