package signals

import (
	"encoding/json"
	"math"
	"strconv"
	"strings"
)

// Render-ready tables: each function returns a header row followed by one row
// per record, numbers formatted with up to 6 significant digits (p- and
// q-values with 4 in %g form), NaN as the empty string, in the Report's
// deterministic order.

func num(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 6, 64)
}

func pv(v float64) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 4, 64)
}

func yn(b bool) string {
	if b {
		return "Y"
	}
	return "N"
}

// SitesCSV returns the site tests: one row per relationship test (test
// "relationship": site and others' Spearman ρ, Fisher-z statistic) and per
// distribution test (test "distribution": site and others' medians, their
// ratio, Brunner–Munzel relative effect and statistic), flagged rows first
// within each site.
func SitesCSV(r *Report) [][]string {
	out := [][]string{{"site", "test", "table", "variables", "stratum", "n", "n_others",
		"site_value", "others_value", "ratio", "effect", "median_z", "statistic", "p", "q", "flag"}}
	for _, s := range r.Sites {
		var flagged, rest [][]string
		for _, x := range r.Relations {
			if x.Site != s {
				continue
			}
			row := []string{s, "relationship", x.Table, x.X + " ~ " + x.Y, "", strconv.Itoa(x.N), strconv.Itoa(x.NOthers),
				num(x.Rho), num(x.RhoOthers), "", num(x.Rho - x.RhoOthers), "", num(x.Z), pv(x.P), pv(x.Q), yn(x.Flag)}
			if x.Flag {
				flagged = append(flagged, row)
			} else {
				rest = append(rest, row)
			}
		}
		for _, x := range r.Shifts {
			if x.Site != s {
				continue
			}
			row := []string{s, "distribution", x.Table, x.Var, x.Stratum, strconv.Itoa(x.N), strconv.Itoa(x.NOthers),
				num(x.Median), num(x.OthersMedian), num(x.Ratio), num(x.Effect), num(x.MedianZ), num(x.Stat), pv(x.P), pv(x.Q), yn(x.Flag)}
			if x.Flag {
				flagged = append(flagged, row)
			} else {
				rest = append(rest, row)
			}
		}
		out = append(out, flagged...)
		out = append(out, rest...)
	}
	return out
}

// SiteSummaryCSV returns one row per site: subjects, tests and flags.
func SiteSummaryCSV(r *Report) [][]string {
	out := [][]string{{"site", "subjects", "relationship_tests", "relationship_flags", "distribution_tests",
		"distribution_flags", "duplicate_subjects", "max_ratio", "max_ratio_variable", "flag"}}
	for _, s := range r.SiteSignals {
		out = append(out, []string{s.Site, strconv.Itoa(s.Subjects), strconv.Itoa(s.RelationTests), strconv.Itoa(s.RelationFlags),
			strconv.Itoa(s.ShiftTests), strconv.Itoa(s.ShiftFlags), strconv.Itoa(s.DuplicateSubjects), num(s.MaxRatio), s.MaxRatioVar, yn(s.Flagged)})
	}
	return out
}

// SubjectsCSV returns one row per subject: nearest neighbour, its distance and
// robust z, duplicate group and cluster.
func SubjectsCSV(r *Report) [][]string {
	out := [][]string{{"subject", "site", "nearest", "nearest_distance", "nearest_z", "duplicate_group", "duplicate_pairs", "cluster"}}
	for _, s := range r.SubjectSigs {
		out = append(out, []string{s.Subject, s.Site, s.Nearest, num(s.NearestDist), num(s.NearestZ),
			itoa0(s.Group), strconv.Itoa(s.DuplicatePairs), itoa0(s.Cluster)})
	}
	return out
}

func itoa0(i int) string {
	if i == 0 {
		return ""
	}
	return strconv.Itoa(i)
}

// DuplicatesCSV returns one row per flagged pair: group, site(s), subjects,
// distance, z, empirical p, variables compared, and the agreeing variables as
// "VAR (chance)" joined by "; ".
func DuplicatesCSV(r *Report) [][]string {
	out := [][]string{{"group", "site", "subject_a", "subject_b", "distance", "z", "p", "compared", "agreeing", "agreeing_variables"}}
	for _, p := range r.Duplicates.Pairs {
		site := p.SiteA
		if p.SiteB != p.SiteA {
			site = p.SiteA + "/" + p.SiteB
		}
		var ag []string
		for _, a := range p.Agree {
			ag = append(ag, a.Var+" ("+strconv.FormatFloat(a.Chance, 'f', 3, 64)+")")
		}
		out = append(out, []string{strconv.Itoa(p.Group), site, r.SubjectIDs[p.A], r.SubjectIDs[p.B], num(p.Dist), num(p.Z), pv(p.P),
			strconv.Itoa(p.Compared), strconv.Itoa(len(p.Agree)), strings.Join(ag, "; ")})
	}
	return out
}

// ScoresCSV returns one row per scored unit (sites, then subjects, then
// variables, each by rank): every component's value and z, and the total.
// A final row per unit kind, with rank "median", gives the study medians.
func ScoresCSV(r *Report) [][]string {
	head := []string{"unit", "id", "site", "rank", "total"}
	for _, c := range Components {
		head = append(head, c, c+"_z")
	}
	out := [][]string{head}
	for _, s := range r.Scores {
		row := []string{s.Unit, s.ID, s.Site, strconv.Itoa(s.Rank), num(s.Total)}
		for _, c := range s.Components {
			row = append(row, num(c.Value), num(c.Z))
		}
		out = append(out, row)
	}
	for _, ref := range r.References {
		row := []string{ref.Unit, "", "", "median", "0"}
		for _, m := range ref.Medians {
			row = append(row, num(m), "0")
		}
		out = append(out, row)
	}
	return out
}

// JSONSchema names the document JSON writes.
const JSONSchema = "crossform.signals/1"

// JSON returns the report as one JSON document: {"schema", "scaling",
// "profile", "sites", "site_tests", "subjects", "duplicates", "scores"}, each
// table an array of objects keyed by the CSV headers above, numbers as JSON
// numbers, empty cells as null.
func JSON(r *Report) ([]byte, error) {
	conv := func(t [][]string) []map[string]any {
		rows := make([]map[string]any, 0, len(t)-1)
		for _, rec := range t[1:] {
			obj := map[string]any{}
			for i, h := range t[0] {
				v := rec[i]
				switch {
				case v == "":
					obj[h] = nil
				case isNumber(v):
					obj[h] = json.Number(v)
				default:
					obj[h] = v
				}
			}
			rows = append(rows, obj)
		}
		return rows
	}
	doc := map[string]any{
		"schema":     JSONSchema,
		"scaling":    r.Scaling.String(),
		"profile":    r.Profile,
		"sites":      conv(SiteSummaryCSV(r)),
		"site_tests": conv(SitesCSV(r)),
		"subjects":   conv(SubjectsCSV(r)),
		"duplicates": conv(DuplicatesCSV(r)),
		"scores":     conv(ScoresCSV(r)),
	}
	return json.MarshalIndent(doc, "", "  ")
}

// isNumber reports whether s is a JSON number as FormatFloat writes it.
func isNumber(s string) bool {
	if _, err := strconv.ParseFloat(s, 64); err != nil {
		return false
	}
	return json.Valid([]byte(s))
}
