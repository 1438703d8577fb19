package check

import "slices"

// Class is a discrepancy's state against the previous listing.
type Class string

// The classes (EDIT-CHECKS.md §4). A persisting discrepancy whose values
// differ from the previous listing also has Finding.Changed set.
const (
	New        Class = "new"        // key not in the previous listing
	Persisting Class = "persisting" // key in both listings
	Resolved   Class = "resolved"   // key in the previous listing only: data corrected or record gone
)

// ClassCounts counts discrepancies by class. Changed is the number of
// persisting discrepancies whose values changed (a subset of Persisting).
type ClassCounts struct {
	New        int `json:"new"`
	Persisting int `json:"persisting"`
	Changed    int `json:"changed"`
	Resolved   int `json:"resolved"`
}

// A Classification is the result of Classify.
type Classification struct {
	// Current holds the current findings, in the order given, with Class,
	// Changed and Previous set.
	Current []Finding
	// Resolved holds the previous findings no longer firing, with Class
	// Resolved, sorted like a listing (SortFindings).
	Resolved []Finding
	Counts   ClassCounts
}

// Classify compares the current findings with a previous listing by Key:
// a key only in current is New, one in both Persisting (Changed when its
// values differ, with the previous values kept in Previous), one only in
// previous Resolved. Should a key repeat within a listing (only a hand-edited
// listing can), occurrences pair up in order. Neither input is modified.
func Classify(current, previous []Finding) *Classification {
	prev := make(map[string][]int, len(previous))
	for i, f := range previous {
		prev[f.Key] = append(prev[f.Key], i)
	}
	used := make([]bool, len(previous))
	c := &Classification{Current: make([]Finding, len(current))}
	for i, f := range current {
		f.Changed, f.Previous = false, nil
		if idx := prev[f.Key]; len(idx) > 0 {
			j := idx[0]
			prev[f.Key] = idx[1:]
			used[j] = true
			f.Class = Persisting
			c.Counts.Persisting++
			if !slices.Equal(f.Values, previous[j].Values) || !slices.Equal(f.Vars, previous[j].Vars) {
				f.Changed = true
				f.Previous = slices.Clone(previous[j].Values)
				c.Counts.Changed++
			}
		} else {
			f.Class = New
			c.Counts.New++
		}
		c.Current[i] = f
	}
	for j, f := range previous {
		if used[j] {
			continue
		}
		f.Class, f.Changed, f.Previous = Resolved, false, nil
		c.Resolved = append(c.Resolved, f)
	}
	c.Counts.Resolved = len(c.Resolved)
	SortFindings(c.Resolved)
	return c
}

// Compare classifies r's findings against a previous listing (Classify):
// r.Findings get their Class, Changed and Previous, r.Resolved and
// r.Classes are set, each site's New and Persisting are counted, and the
// manifest records the counts and the previous listing's path and hash
// (previousPath may be "" when the findings did not come from a file).
func (r *Result) Compare(previous []Finding, previousPath string) (*Classification, error) {
	c := Classify(r.Findings, previous)
	r.Findings, r.Resolved = c.Current, c.Resolved
	if r.Resolved == nil {
		r.Resolved = []Finding{}
	}
	counts := c.Counts
	r.Classes = &counts
	at := make(map[string]int, len(r.Sites))
	for i := range r.Sites {
		at[r.Sites[i].Site] = i
		r.Sites[i].New, r.Sites[i].Persisting = 0, 0
	}
	for i := range r.Findings {
		k, ok := at[r.Findings[i].Site]
		if !ok {
			continue
		}
		if r.Findings[i].Class == New {
			r.Sites[k].New++
		} else {
			r.Sites[k].Persisting++
		}
	}
	if r.Manifest != nil {
		if err := r.Manifest.SetClasses(counts, previousPath); err != nil {
			return c, err
		}
	}
	return c, nil
}
