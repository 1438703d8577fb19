// Package demo scores crossform against the ground truth of the invented demo
// study (dataset/demostudy): for each planted problem class, how many of the
// planted records the accepted rules or the site and subject signals catch,
// and, on a study generated without problems, how many records are flagged
// all the same (false alarms).
package demo

import (
	"sort"
	"strconv"
	"strings"

	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/rules/check"
	"github.com/crossform/crossform/signals"
)

// classVars names, for each planted class, the variables a rule must read
// for its finding to count as catching the planted record: a finding of an
// unrelated rule on the same record is a coincidence, not a catch.
var classVars = map[string][]string{
	demostudy.ClassWeightInPounds:        {"WEIGHT"},
	demostudy.ClassBPTransposed:          {"SYSBP", "DIABP"},
	demostudy.ClassAEEndBeforeStart:      {"AESTDTC", "AEENDTC"},
	demostudy.ClassPregnancyMale:         {"HCG"},
	demostudy.ClassBMIMismatch:           {"BMI"},
	demostudy.ClassCMGateContradiction:   {"CMYN"},
	demostudy.ClassSeverityGradeMismatch: {"AESEV", "AETOXGR"},
	demostudy.ClassLiverEnzymeOutlier:    {"ALT", "AST"},
	demostudy.ClassVisitBeforeConsent:    {"RFICDTC", "SV.STDTC"},
	demostudy.ClassFabricatedSubjects:    nil, // a subject-level signal, not a rule
}

// A ClassRecall is how many planted records of one class were caught.
type ClassRecall struct {
	Class   string
	Planted int
	ByRules int // caught by a finding of a rule reading the class's variables
	BySigs  int // caught by a site or subject signal
	Caught  int // caught by either
}

// Rate returns Caught / Planted (1 when nothing was planted).
func (c ClassRecall) Rate() float64 {
	if c.Planted == 0 {
		return 1
	}
	return float64(c.Caught) / float64(c.Planted)
}

// Recall scores the findings of a checker run and a signals report against
// the planted problems. A planted record is caught by a rule when a finding
// names the same subject, reads one of the class's variables (classVars), and
// points to the same record: the same AESEQ for AE problems, the same visit
// for visit-level problems (or any visit for a subject-level rule). It is
// caught by a signal when its site is flagged for a shift of the class's
// variable in the same visit stratum (weights in pounds), or when its subject
// belongs to a group of near-identical subjects (fabricated subjects).
// Classes are returned in demostudy.ProblemClasses order.
func Recall(truth []demostudy.Problem, findings []check.Finding, sig *signals.Report) []ClassRecall {
	type rec struct{ subject, visit, seq string }
	bySubject := map[string][]*check.Finding{}
	for i := range findings {
		f := &findings[i]
		bySubject[f.Subject] = append(bySubject[f.Subject], f)
	}
	shiftFlag := map[string]bool{} // site|var|stratum
	inGroup := map[string]bool{}
	if sig != nil {
		for _, s := range sig.Shifts {
			if s.Flag {
				shiftFlag[s.Site+"|"+s.Var+"|"+s.Stratum] = true
			}
		}
		if sig.Duplicates != nil {
			for _, g := range sig.Duplicates.Groups {
				for _, r := range g.Rows {
					inGroup[sig.SubjectIDs[r]] = true
				}
			}
		}
	}
	out := map[string]*ClassRecall{}
	for _, c := range demostudy.ProblemClasses() {
		out[c] = &ClassRecall{Class: c}
	}
	for _, p := range truth {
		cr := out[p.Class]
		if cr == nil {
			cr = &ClassRecall{Class: p.Class}
			out[p.Class] = cr
		}
		cr.Planted++
		visit := ""
		if p.VisitNum != 0 {
			visit = strconv.FormatFloat(p.VisitNum, 'f', -1, 64)
		}
		byRule := false
		for _, f := range bySubject[p.USUBJID] {
			if !readsAny(f.Vars, classVars[p.Class]) {
				continue
			}
			switch {
			case p.Domain == "AE":
				byRule = f.Seq == p.Key || f.Level != "record:AE"
			case f.Level == "subject" || visit == "":
				byRule = true
			default:
				byRule = f.Visit == visit
			}
			if byRule {
				break
			}
		}
		bySig := false
		switch p.Class {
		case demostudy.ClassFabricatedSubjects:
			bySig = inGroup[p.USUBJID]
		case demostudy.ClassWeightInPounds:
			bySig = shiftFlag[p.SiteID+"|VS.WEIGHT|VISITNUM="+visit]
		}
		if byRule {
			cr.ByRules++
		}
		if bySig {
			cr.BySigs++
		}
		if byRule || bySig {
			cr.Caught++
		}
	}
	res := make([]ClassRecall, 0, len(out))
	for _, c := range demostudy.ProblemClasses() {
		res = append(res, *out[c])
		delete(out, c)
	}
	var rest []string
	for c := range out {
		rest = append(rest, c)
	}
	sort.Strings(rest)
	for _, c := range rest {
		res = append(res, *out[c])
	}
	return res
}

func readsAny(vars, marks []string) bool {
	for _, v := range vars {
		for _, m := range marks {
			if strings.Contains(v, m) {
				return true
			}
		}
	}
	return false
}

// FalseAlarmRate returns the share of records flagged: distinct (level,
// record) pairs with a finding, over the records of the tables the rules ran
// on. On a study with nothing planted every flag is a false alarm.
func FalseAlarmRate(res *check.Result) (flagged, records int) {
	seen := map[string]bool{}
	for _, f := range res.Findings {
		seen[f.Level+"|"+f.RecordKey] = true
	}
	for _, t := range res.Tables {
		records += t.Rows
	}
	return len(seen), records
}
