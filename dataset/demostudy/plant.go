package demostudy

import (
	"encoding/binary"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
)

// poundsPerKg converts kilograms to international avoirdupois pounds: 1 lb is exactly
// 0.45359237 kg (international yard and pound agreement, 1959).
const poundsPerKg = 1 / 0.45359237

// poundsFromVisit is the first visit at which the pound site weighs in pounds.
const poundsFromVisit = 4

// recordClasses are the record-level classes with the share of eligible first-cut
// records that receive the problem (at least 3 records). Rates are invented, chosen in
// the 0.5–2% band typical of real extracts (from memory).
var recordClasses = []struct {
	name string
	rate float64
}{
	{ClassBPTransposed, 0.007},
	{ClassAEEndBeforeStart, 0.015},
	{ClassPregnancyMale, 0.01},
	{ClassBMIMismatch, 0.008},
	{ClassCMGateContradiction, 0.015},
	{ClassSeverityGradeMismatch, 0.015},
	{ClassLiverEnzymeOutlier, 0.006},
	{ClassVisitBeforeConsent, 0.01},
}

// fixShare is the share of each record-level class's first-cut problems that the
// second cut corrects (rounded to the nearest whole record).
const fixShare = 1.0 / 3

// candidate is one record eligible for a planted problem.
type candidate struct {
	id    string  // class|USUBJID|VISITNUM|key: stable across cuts
	prob  Problem // without Detail
	apply func(r *rand.Rand) string
}

// plant plants every problem class into v and returns the truth. When v is the
// second cut, prev is the first-cut view of the same population: it fixes which
// records were planted in the first cut, so that the second cut keeps them (less the
// corrected third) and plants new records at the same rate.
func (p *population) plant(v, prev *view) []Problem {
	truth := p.plantSiteLevel(v)
	for _, rc := range recordClasses {
		cur := p.candidates(rc.name, v)
		first := cur
		if prev != nil {
			first = p.candidates(rc.name, prev)
		}
		us := make([]float64, len(first))
		for i, c := range first {
			us[i] = p.unit("plant", c.id)
		}
		slices.Sort(us)
		k := min(len(us), max(3, int(math.Round(rc.rate*float64(len(us))))))
		thr := -1.0
		if k > 0 {
			thr = us[k-1]
		}
		fixed := map[string]bool{}
		if prev != nil {
			var planted []string
			for _, c := range first {
				if p.unit("plant", c.id) <= thr {
					planted = append(planted, c.id)
				}
			}
			slices.SortFunc(planted, func(a, b string) int {
				return compareFloat(p.unit("fix", a), p.unit("fix", b))
			})
			for _, id := range planted[:int(math.Round(fixShare*float64(len(planted))))] {
				fixed[id] = true
			}
		}
		plant := map[string]bool{}
		for _, c := range cur {
			if p.unit("plant", c.id) <= thr && !fixed[c.id] {
				plant[c.id] = true
			}
		}
		if prev != nil {
			// At least one new problem per class in the second cut: if no record new to
			// this cut fell under the threshold, take the new record with the smallest hash.
			wasEligible := map[string]bool{}
			for _, c := range first {
				wasEligible[c.id] = true
			}
			var best *candidate
			hasNew := false
			for _, c := range cur {
				if wasEligible[c.id] {
					continue
				}
				hasNew = hasNew || plant[c.id]
				if best == nil || p.unit("plant", c.id) < p.unit("plant", best.id) {
					best = c
				}
			}
			if !hasNew && best != nil {
				plant[best.id] = true
			}
		}
		for _, c := range cur {
			if !plant[c.id] {
				continue
			}
			r := rand.New(rand.NewPCG(p.hash("apply", c.id), p.cfg.Seed))
			pr := c.prob
			pr.Class = rc.name
			pr.Detail = c.apply(r)
			truth = append(truth, pr)
		}
	}
	return truth
}

func compareFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// plantSiteLevel plants the two site-level classes: pound weights at the pound site
// from visit 4 on, and the truth rows of the fabricated subjects (built in the
// population, so present in every cut).
func (p *population) plantSiteLevel(v *view) []Problem {
	var truth []Problem
	for _, vs := range v.subjects {
		s := vs.s
		if s.fabricatedFrom != "" {
			truth = append(truth, Problem{Class: ClassFabricatedSubjects, Domain: "DM",
				USUBJID: s.usubjid, SiteID: s.siteID,
				Detail: fmt.Sprintf("near-copy of %s at the same site: same demography and visit pattern, dates shifted %d days, measurements within small noise",
					s.fabricatedFrom, s.consent-p.fabDonor.consent)})
		}
		if s.site != p.poundSite {
			continue
		}
		for _, vv := range vs.visits {
			if vv.num < poundsFromVisit {
				continue
			}
			kg := vv.vs.weight
			vv.vs.weight = round1(kg * poundsPerKg)
			truth = append(truth, Problem{Class: ClassWeightInPounds, Domain: "VS",
				USUBJID: s.usubjid, SiteID: s.siteID, VisitNum: float64(vv.num), Key: "WEIGHT",
				Detail: fmt.Sprintf("WEIGHT %.1f recorded with unit kg is %.1f kg in pounds; BMI %.1f was derived by the site from the true weight",
					vv.vs.weight, kg, vv.vs.bmi)})
		}
	}
	return truth
}

// candidates lists the records of v eligible for class, in view order. Fabricated
// subjects are never eligible, and neither are the pound-site weights (for BMI).
func (p *population) candidates(class string, v *view) []*candidate {
	var out []*candidate
	add := func(s *subject, domain string, visit int, key string, apply func(r *rand.Rand) string) {
		id := class + "|" + s.usubjid + "|" + strconv.Itoa(visit) + "|" + key
		out = append(out, &candidate{id: id, apply: apply, prob: Problem{Domain: domain,
			USUBJID: s.usubjid, SiteID: s.siteID, VisitNum: float64(visit), Key: key}})
	}
	for _, vs := range v.subjects {
		s := vs.s
		if s.fabricatedFrom != "" {
			continue
		}
		switch class {
		case ClassBPTransposed:
			for _, vv := range vs.visits {
				add(s, "VS", vv.num, "SYSBP", func(*rand.Rand) string {
					vv.vs.sys, vv.vs.dia = vv.vs.dia, vv.vs.sys
					return fmt.Sprintf("SYSBP %.0f and DIABP %.0f mmHg: values transposed (true SYSBP %.0f, DIABP %.0f)",
						vv.vs.sys, vv.vs.dia, vv.vs.dia, vv.vs.sys)
				})
			}
		case ClassBMIMismatch:
			for _, vv := range vs.visits {
				if s.site == p.poundSite && vv.num >= poundsFromVisit {
					continue
				}
				add(s, "VS", vv.num, "BMI", func(r *rand.Rand) string {
					want := vv.vs.bmi
					off := 3 + 3*r.Float64()
					if r.IntN(2) == 0 {
						off = -off
					}
					vv.vs.bmi = round1(want + off)
					return fmt.Sprintf("BMI %.1f kg/m2 recorded; WEIGHT %.1f kg and screening HEIGHT %.0f cm give %.1f",
						vv.vs.bmi, vv.vs.weight, s.height, want)
				})
			}
		case ClassAEEndBeforeStart:
			for _, a := range vs.aes {
				if a.a.partialStart || !a.endShown {
					continue
				}
				add(s, "AE", 0, strconv.Itoa(a.seq), func(r *rand.Rand) string {
					a.a.end = a.a.start - 1 - r.IntN(10)
					return fmt.Sprintf("AE %q: AEENDTC %s before AESTDTC %s",
						a.a.term, dateStr(a.a.end), dateStr(a.a.start))
				})
			}
		case ClassSeverityGradeMismatch:
			for _, a := range vs.aes {
				add(s, "AE", 0, strconv.Itoa(a.seq), func(r *rand.Rand) string {
					switch a.a.sev {
					case "MILD":
						a.a.grade = 3 + r.IntN(2)
					case "MODERATE":
						a.a.grade = 4
					default:
						a.a.grade = 1
					}
					return fmt.Sprintf("AE %q: AESEV %s with AETOXGR %d", a.a.term, a.a.sev, a.a.grade)
				})
			}
		case ClassPregnancyMale:
			if s.sex != "M" || len(vs.visits) == 0 || !vs.visits[0].hasLab {
				continue
			}
			add(s, "LB", 1, "HCG", func(*rand.Rand) string {
				vs.hcgMale = true
				return "serum HCG result NEGATIVE recorded at screening for a subject with SEX = M"
			})
		case ClassCMGateContradiction:
			if len(vs.cms) == 0 {
				continue
			}
			add(s, "DM", 0, "CMYN", func(*rand.Rand) string {
				vs.cmyn = "N"
				return fmt.Sprintf("CMYN = N but %d CM records exist for the subject", len(vs.cms))
			})
		case ClassLiverEnzymeOutlier:
			for _, vv := range vs.visits {
				if !vv.hasLab {
					continue
				}
				add(s, "LB", vv.num, "ALT", func(r *rand.Rand) string {
					// Each value inside its reference range (ALT 7–55, AST 8–48 U/L), the
					// pair far off the ALT–AST trend: AST/ALT below 0.27 or above 3.4.
					if r.IntN(2) == 0 {
						vv.lab.val[labALT] = float64(46 + r.IntN(9))
						vv.lab.val[labAST] = float64(9 + r.IntN(4))
					} else {
						vv.lab.val[labALT] = float64(8 + r.IntN(4))
						vv.lab.val[labAST] = float64(38 + r.IntN(9))
					}
					return fmt.Sprintf("ALT %.0f U/L with AST %.0f U/L: each within its reference range, AST/ALT ratio %.2f far from the study's trend",
						vv.lab.val[labALT], vv.lab.val[labAST], vv.lab.val[labAST]/vv.lab.val[labALT])
				})
			}
		case ClassVisitBeforeConsent:
			if len(vs.visits) == 0 {
				continue
			}
			vv := vs.visits[0]
			add(s, "SV", 1, "", func(r *rand.Rand) string {
				vv.day = s.consent - 1 - r.IntN(7)
				return fmt.Sprintf("SVSTDTC %s before RFICDTC %s; the VS and LB records of the visit carry the same date",
					dateStr(vv.day), dateStr(s.consent))
			})
		default:
			panic("demostudy: internal error: unknown class " + class)
		}
	}
	return out
}

// hash returns a 64-bit hash of the seed and parts (FNV-1a, then the SplitMix64
// finaliser to spread the bits).
func (p *population) hash(parts ...string) uint64 {
	h := fnv.New64a()
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], p.cfg.Seed)
	h.Write(b[:])
	for _, s := range parts {
		h.Write([]byte(s))
		h.Write([]byte{0})
	}
	z := h.Sum64() + 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// unit maps hash(parts) to [0, 1).
func (p *population) unit(parts ...string) float64 {
	return float64(p.hash(parts...)>>11) / (1 << 53)
}
