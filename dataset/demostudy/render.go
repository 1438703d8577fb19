package demostudy

import (
	"cmp"
	"fmt"
	"slices"
	"strconv"
)

// Laboratory tests, in output order. Reference ranges are typical adult ranges from
// memory (laboratories differ); creatinine and haemoglobin ranges depend on sex.
const (
	labALT = iota
	labAST
	labCREAT
	labGLUC
	labK
	labHGB
	nLab
)

var labTests = [nLab]struct {
	code, name, cat, unit string
	dec                   int
	loM, hiM, loF, hiF    float64
}{
	{"ALT", "Alanine Aminotransferase", "CHEMISTRY", "U/L", 0, 7, 55, 7, 55},
	{"AST", "Aspartate Aminotransferase", "CHEMISTRY", "U/L", 0, 8, 48, 8, 48},
	{"CREAT", "Creatinine", "CHEMISTRY", "umol/L", 0, 62, 106, 44, 80},
	{"GLUC", "Glucose", "CHEMISTRY", "mmol/L", 1, 3.9, 6.1, 3.9, 6.1},
	{"K", "Potassium", "CHEMISTRY", "mmol/L", 1, 3.5, 5.1, 3.5, 5.1},
	{"HGB", "Hemoglobin", "HEMATOLOGY", "g/L", 0, 130, 170, 120, 155},
}

// refRange returns the reference range of lab test i for a subject of the given sex.
func refRange(i int, sex string) (lo, hi float64) {
	t := labTests[i]
	if sex == "F" {
		return t.loF, t.hiF
	}
	return t.loM, t.hiM
}

// view is the extract as of one data cut: the visible part of each subject, as mutable
// copies on which problems are planted.
type view struct {
	cut      int
	cutDay   int
	subjects []*vSubj // sorted by USUBJID
}

type vSubj struct {
	s       *subject
	cmyn    string
	aeyn    string
	visits  []*vVisit
	aes     []*vAE
	cms     []*cm
	hcgMale bool // planted: an HCG row at V1 for a male subject
}

type vVisit struct {
	num    int
	day    int
	v      *visit // source
	vs     vsVals
	lab    labVals
	hasLab bool
}

type vAE struct {
	seq int
	a   ae
	// endShown tells whether AEENDTC is filled: the event resolved by the cut.
	endShown bool
}

// view renders the population as of cut 1 or 2.
func (p *population) view(cut int) *view {
	v := &view{cut: cut, cutDay: cut1Day}
	n := p.nCut1
	if cut == 2 {
		v.cutDay, n = cut2Day, p.nTotal
	}
	for _, s := range p.subjects[:n] {
		vs := &vSubj{s: s}
		for _, sv := range s.visits {
			if sv.day > v.cutDay {
				break
			}
			vv := &vVisit{num: sv.num, day: sv.day, v: sv, vs: sv.vs}
			if sv.lab != nil {
				vv.hasLab, vv.lab = true, *sv.lab
			}
			vs.visits = append(vs.visits, vv)
		}
		for i, a := range s.aes {
			if a.start > v.cutDay {
				break
			}
			vs.aes = append(vs.aes, &vAE{seq: i + 1, a: *a, endShown: !a.ongoing && a.end <= v.cutDay})
		}
		for _, c := range s.cms {
			if c.visible > v.cutDay {
				break
			}
			vs.cms = append(vs.cms, c)
		}
		vs.cmyn, vs.aeyn = yn(len(vs.cms) > 0), yn(len(vs.aes) > 0)
		v.subjects = append(v.subjects, vs)
	}
	slices.SortFunc(v.subjects, func(a, b *vSubj) int { return cmp.Compare(a.s.usubjid, b.s.usubjid) })
	return v
}

func yn(b bool) string {
	if b {
		return "Y"
	}
	return "N"
}

func visitName(num int) string { return schedule[num-1].name }

func f0(x float64) string { return strconv.FormatFloat(x, 'f', 0, 64) }

func fdec(x float64, dec int) string { return strconv.FormatFloat(x, 'f', dec, 64) }

func dtc(day, minute int, dateOnly bool) string {
	if dateOnly {
		return dateStr(day)
	}
	return fmt.Sprintf("%sT%02d:%02d", dateStr(day), minute/60, minute%60)
}

// forms formats the view as the eight extract forms.
func (v *view) forms() map[string]*Form {
	m := map[string]*Form{}
	add := func(name string, header ...string) *Form {
		f := &Form{Name: name, Header: header}
		m[name] = f
		return f
	}
	dm := add("dm", "STUDYID", "DOMAIN", "USUBJID", "SUBJID", "RFSTDTC", "RFENDTC", "RFICDTC",
		"SITEID", "BRTHDTC", "AGE", "AGEU", "SEX", "RACE", "ETHNIC", "ARMCD", "ARM", "ARMNRS",
		"COUNTRY", "AEYN", "CMYN")
	vsf := add("vs", "STUDYID", "DOMAIN", "USUBJID", "VSSEQ", "VSTESTCD", "VSTEST", "VSPOS",
		"VSORRES", "VSORRESU", "VSSTRESC", "VSSTRESN", "VSSTRESU", "VISITNUM", "VISIT", "VSDTC")
	lb := add("lb", "STUDYID", "DOMAIN", "USUBJID", "LBSEQ", "LBTESTCD", "LBTEST", "LBCAT",
		"LBORRES", "LBORRESU", "LBSTRESC", "LBSTRESN", "LBSTRESU", "LBSTNRLO", "LBSTNRHI",
		"LBNRIND", "VISITNUM", "VISIT", "LBDTC")
	aef := add("ae", "STUDYID", "DOMAIN", "USUBJID", "AESEQ", "AETERM", "AEDECOD", "AESTDTC",
		"AEENDTC", "AESEV", "AETOXGR", "AESER", "AEREL", "AEACN", "AEOUT")
	cmf := add("cm", "STUDYID", "DOMAIN", "USUBJID", "CMSEQ", "CMTRT", "CMDECOD", "CMINDC",
		"CMDOSE", "CMDOSU", "CMDOSFRQ", "CMROUTE", "CMSTDTC", "CMENDTC")
	ex := add("ex", "STUDYID", "DOMAIN", "USUBJID", "EXSEQ", "EXTRT", "EXDOSE", "EXDOSU",
		"EXDOSFRQ", "EXROUTE", "VISITNUM", "VISIT", "EXSTDTC", "EXENDTC")
	ds := add("ds", "STUDYID", "DOMAIN", "USUBJID", "DSSEQ", "DSTERM", "DSDECOD", "DSCAT", "DSSTDTC")
	sv := add("sv", "STUDYID", "DOMAIN", "USUBJID", "VISITNUM", "VISIT", "SVSTDTC", "SVENDTC")

	cut := v.cutDay
	shown := func(day int) string {
		if day > cut {
			return ""
		}
		return dateStr(day)
	}
	for _, vs := range v.subjects {
		s := vs.s
		randomised := !s.screenFail && s.v2 <= cut
		var rfst, rfen, armcd, arm, armnrs string
		if randomised {
			rfst, rfen = dateStr(s.v2), shown(s.lastDose)
			armcd, arm = arms[s.arm].code, arms[s.arm].name
		}
		if s.screenFail && s.dispDay <= cut {
			armnrs = "SCREEN FAILURE"
		}
		brth := dateStr(s.birth)
		if countries[s.country].yearOnly {
			brth = brth[:4]
		}
		dm.Rows = append(dm.Rows, []string{StudyID, "DM", s.usubjid, s.subjID, rfst, rfen,
			dateStr(s.consent), s.siteID, brth, strconv.Itoa(s.age), "YEARS", s.sex, s.race,
			s.ethnic, armcd, arm, armnrs, countries[s.country].code, vs.aeyn, vs.cmyn})

		seq := 0
		for _, vv := range vs.visits {
			vn, vname := strconv.Itoa(vv.num), visitName(vv.num)
			d := dtc(vv.day, vv.v.minute, vv.v.dateOnly)
			row := func(code, name, pos string, x float64, dec int, unit string) {
				seq++
				val := fdec(x, dec)
				vsf.Rows = append(vsf.Rows, []string{StudyID, "VS", s.usubjid, strconv.Itoa(seq),
					code, name, pos, val, unit, val, val, unit, vn, vname, d})
			}
			row("SYSBP", "Systolic Blood Pressure", "SITTING", vv.vs.sys, 0, "mmHg")
			row("DIABP", "Diastolic Blood Pressure", "SITTING", vv.vs.dia, 0, "mmHg")
			row("PULSE", "Pulse Rate", "SITTING", vv.vs.pulse, 0, "beats/min")
			row("TEMP", "Temperature", "", vv.vs.temp, 1, "C")
			if vv.num == 1 {
				row("HEIGHT", "Height", "", s.height, 0, "cm")
			}
			row("WEIGHT", "Weight", "", vv.vs.weight, 1, "kg")
			row("BMI", "Body Mass Index", "", vv.vs.bmi, 1, "kg/m2")
		}

		seq = 0
		for _, vv := range vs.visits {
			if !vv.hasLab {
				continue
			}
			vn, vname := strconv.Itoa(vv.num), visitName(vv.num)
			d := dtc(vv.day, vv.lab.minute, false)
			for i, t := range labTests {
				seq++
				x := vv.lab.val[i]
				lo, hi := refRange(i, s.sex)
				ind := "NORMAL"
				if x < lo {
					ind = "LOW"
				} else if x > hi {
					ind = "HIGH"
				}
				val := fdec(x, t.dec)
				lb.Rows = append(lb.Rows, []string{StudyID, "LB", s.usubjid, strconv.Itoa(seq),
					t.code, t.name, t.cat, val, t.unit, val, val, t.unit, fdec(lo, t.dec),
					fdec(hi, t.dec), ind, vn, vname, d})
			}
			hcg := vv.lab.hcg
			if vv.num == 1 && vs.hcgMale {
				hcg = "NEGATIVE"
			}
			if hcg != "" {
				seq++
				ind := "NORMAL"
				if hcg == "POSITIVE" {
					ind = "ABNORMAL"
				}
				lb.Rows = append(lb.Rows, []string{StudyID, "LB", s.usubjid, strconv.Itoa(seq),
					"HCG", "Choriogonadotropin Beta", "CHEMISTRY", hcg, "", hcg, "", "", "", "",
					ind, vn, vname, d})
			}
		}

		for _, a := range vs.aes {
			st := dateStr(a.a.start)
			if a.a.partialStart {
				st = st[:7]
			}
			var en, out string
			switch {
			case a.endShown && a.a.sequelae:
				en, out = dateStr(a.a.end), "RECOVERED/RESOLVED WITH SEQUELAE"
			case a.endShown:
				en, out = dateStr(a.a.end), "RECOVERED/RESOLVED"
			case a.a.recovering:
				out = "RECOVERING/RESOLVING"
			default:
				out = "NOT RECOVERED/NOT RESOLVED"
			}
			aef.Rows = append(aef.Rows, []string{StudyID, "AE", s.usubjid, strconv.Itoa(a.seq),
				a.a.term, a.a.decod, st, en, a.a.sev, strconv.Itoa(a.a.grade), a.a.ser, a.a.rel,
				s.aeAction(&a.a), out})
		}

		for i, c := range vs.cms {
			st := dateStr(c.start)
			switch c.startPrec {
			case 1:
				st = st[:7]
			case 2:
				st = st[:4]
			}
			en := ""
			if !c.ongoing {
				en = shown(c.end)
			}
			cmf.Rows = append(cmf.Rows, []string{StudyID, "CM", s.usubjid, strconv.Itoa(i + 1),
				c.trt, c.decod, c.indc, strconv.FormatFloat(c.dose, 'f', -1, 64), c.dosu, c.freq,
				c.route, st, en})
		}

		if randomised {
			for i, e := range s.exposure() {
				if e.start > cut {
					break
				}
				a := arms[s.arm]
				ex.Rows = append(ex.Rows, []string{StudyID, "EX", s.usubjid, strconv.Itoa(i + 1),
					a.trt, f0(a.dose), "mg", "QD", "ORAL", strconv.Itoa(e.visit), visitName(e.visit),
					dateStr(e.start), shown(e.end)})
			}
		}

		type dsRec struct {
			term, decod, cat string
			day              int
		}
		recs := []dsRec{{"INFORMED CONSENT OBTAINED", "INFORMED CONSENT OBTAINED", "PROTOCOL MILESTONE", s.consent}}
		if !s.screenFail {
			recs = append(recs, dsRec{"RANDOMIZED", "RANDOMIZED", "PROTOCOL MILESTONE", s.v2})
		}
		recs = append(recs, dsRec{s.dispTerm, s.disp, "DISPOSITION EVENT", s.dispDay})
		seq = 0
		for _, d := range recs {
			if d.day > cut {
				continue
			}
			seq++
			ds.Rows = append(ds.Rows, []string{StudyID, "DS", s.usubjid, strconv.Itoa(seq),
				d.term, d.decod, d.cat, dateStr(d.day)})
		}

		for _, vv := range vs.visits {
			d := dateStr(vv.day)
			sv.Rows = append(sv.Rows, []string{StudyID, "SV", s.usubjid, strconv.Itoa(vv.num),
				visitName(vv.num), d, d})
		}
	}
	return m
}
