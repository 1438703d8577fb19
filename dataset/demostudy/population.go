package demostudy

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"time"
)

// Calendar. Days are whole days counted from baseDate (day 0), which is the first
// possible informed-consent date. All values invented.
var baseDate = time.Date(2025, time.February, 3, 0, 0, 0, 0, time.UTC)

const (
	enrolDays    = 300 // first-cut subjects consent on days 0..299, evenly spread by index
	cut1Day      = 330 // first data cut: 2025-12-30
	newEnrolFrom = 331 // second-cut new subjects consent on days 331..390
	newEnrolDays = 60
	cut2Day      = 450 // second data cut: 2026-04-29
)

// Random stream identifiers (second PCG word); the first word is Config.Seed.
const (
	streamStudy    = 0x5354_5544_5900_0000
	streamSite     = 0x5349_5445_0000_0000 // + site index
	streamScreen   = 0x5343_5245_0000_0000 // + subject index: demography, screening visit
	streamFollowUp = 0x464f_4c4c_0000_0000 // + subject index: randomised period
	streamFab      = 0x4641_4252_0000_0000 // + subject index: noise of a fabricated copy
)

// Visit schedule (protocol, invented). Study day 1 is the first dose (V2); V1 is the
// screening visit 1 to 14 days before it.
type plannedVisit struct {
	num    int
	name   string
	day    int // planned study day (first dose = day 1)
	window int // ± days allowed around day
}

var schedule = [...]plannedVisit{
	{1, "SCREENING", -7, 7}, // day -14..-1, drawn separately
	{2, "RANDOMISATION", 1, 0},
	{3, "WEEK 2", 15, 3},
	{4, "WEEK 4", 29, 3},
	{5, "WEEK 8", 57, 5},
	{6, "FOLLOW-UP", 71, 7},
}

// labVisits are the visits with a blood draw.
func labVisit(num int) bool { return num == 1 || num == 4 || num == 6 }

// Arms. Placebo, 10 mg and 20 mg of the invented oral drug CFX-17, 1:1:1 in permuted
// blocks of 6 within site (common practice for a multicentre trial).
var arms = [...]struct {
	code, name, trt string
	dose            float64
}{
	{"PBO", "Placebo", "PLACEBO", 0},
	{"CFX10", "CFX-17 10 mg", "CFX-17", 10},
	{"CFX20", "CFX-17 20 mg", "CFX-17", 20},
}

// Countries: sites are split into four countries in order. Race and ethnicity mixes
// are invented, loosely shaped from memory on each country's population.
var countries = [...]struct {
	code     string
	race     []string
	raceW    []float64
	hispanic float64 // P(HISPANIC OR LATINO)
	notRep   float64 // P(ETHNIC = NOT REPORTED)
	yearOnly bool    // sites record birth year only (invented national practice)
}{
	{"USA", []string{"WHITE", "BLACK OR AFRICAN AMERICAN", "ASIAN", "AMERICAN INDIAN OR ALASKA NATIVE", "MULTIPLE"},
		[]float64{0.66, 0.22, 0.07, 0.02, 0.03}, 0.15, 0.01, false},
	{"CAN", []string{"WHITE", "ASIAN", "BLACK OR AFRICAN AMERICAN", "AMERICAN INDIAN OR ALASKA NATIVE", "MULTIPLE"},
		[]float64{0.75, 0.15, 0.05, 0.03, 0.02}, 0.02, 0.02, false},
	{"GBR", []string{"WHITE", "ASIAN", "BLACK OR AFRICAN AMERICAN", "MULTIPLE"},
		[]float64{0.84, 0.09, 0.05, 0.02}, 0.01, 0.03, false},
	{"DEU", []string{"WHITE", "ASIAN", "BLACK OR AFRICAN AMERICAN", "MULTIPLE"},
		[]float64{0.93, 0.03, 0.02, 0.02}, 0.01, 0.30, true},
}

// Disposition decodes (CDISC CT NCOMPLT values, from memory).
const (
	dsCompleted  = "COMPLETED"
	dsAE         = "ADVERSE EVENT"
	dsWithdrawal = "WITHDRAWAL BY SUBJECT"
	dsLost       = "LOST TO FOLLOW-UP"
	dsScreenFail = "SCREEN FAILURE"
)

type subject struct {
	idx                     int // 0-based enrolment index
	site                    int // 0-based
	siteID, subjID, usubjid string
	country                 int
	consent                 int // day of informed consent
	birth                   int // day of birth (negative)
	age                     int // whole years at consent
	sex                     string
	race, ethnic            string
	wocbp                   bool // woman of childbearing potential: serum HCG at screening
	diabetic                bool
	height                  float64 // cm, as recorded at V1
	arm                     int     // index into arms; -1 for screen failures
	screenFail              bool
	sfTerm                  string
	v2                      int // day of first dose (V2); 0 when not randomised
	lastDose, lastContact   int // days; 0 when not randomised
	disp                    string
	dispTerm                string
	dispDay                 int
	visits                  []*visit // attended visits, increasing VISITNUM
	aes                     []*ae    // sorted by start, AESEQ = position + 1
	cms                     []*cm    // sorted by (visible day, start), CMSEQ = position + 1
	fabricatedFrom          string   // donor USUBJID when this subject is a planted copy

	// latent subject-level parameters
	sbp0, dbp0, pulse0, resp float64
	w0, wDrift               float64
	logALT0, creat0, gluc0   float64
	k0, hgb0                 float64
	hepatic                  bool
}

type visit struct {
	num      int
	day      int
	minute   int  // time of vital signs, minutes after midnight
	dateOnly bool // VSDTC recorded without time
	vs       vsVals
	lab      *labVals // nil when no blood draw
}

// vsVals are the recorded vital signs of one visit, already rounded as collected.
type vsVals struct {
	sys, dia, pulse, temp, weight, bmi float64
}

type labVals struct {
	val    [nLab]float64
	hcg    string // "", "NEGATIVE" or "POSITIVE"
	minute int    // time of the blood draw
}

type ae struct {
	term, decod  string
	start, end   int  // days; end unused when ongoing
	ongoing      bool // not resolved by the subject's last contact
	partialStart bool // AESTDTC recorded as YYYY-MM
	sev          string
	grade        int
	ser, rel     string
	withdrawn    bool // led to treatment discontinuation
	sequelae     bool // resolved with sequelae
	recovering   bool // unresolved outcome is RECOVERING/RESOLVING rather than NOT RECOVERED
}

type cm struct {
	trt, decod, indc  string
	dose              float64
	dosu, freq, route string
	start, end        int
	ongoing           bool
	startPrec         int // 0 full date, 1 year-month, 2 year only
	visible           int // day the record is first in the database (max(start, V1))
}

type population struct {
	cfg       Config
	nCut1     int
	nTotal    int
	subjects  []*subject // by idx
	siteIDs   []string
	poundSite int // 0-based, -1 when clean
	fabSite   int
	fabDonor  *subject
}

func newPopulation(cfg Config) (*population, error) {
	p := &population{cfg: cfg, nCut1: cfg.Subjects, nTotal: cfg.Subjects + cfg.Subjects/5,
		poundSite: -1, fabSite: -1}
	r := rand.New(rand.NewPCG(cfg.Seed, streamStudy))
	// Site sizes vary about 3-fold between the 10th and 90th centile: lognormal weights
	// with sdlog 0.45 (invented; recruitment is uneven in practice, common practice).
	siteW := make([]float64, cfg.Sites)
	for i := range siteW {
		siteW[i] = math.Exp(0.45 * r.NormFloat64())
		p.siteIDs = append(p.siteIDs, fmt.Sprintf("%02d", i+1))
	}
	for i := range p.nTotal {
		p.subjects = append(p.subjects, p.screen(i, siteW))
	}
	// Subject numbers within site follow enrolment order.
	perSite := make([]int, cfg.Sites)
	for _, s := range p.subjects {
		perSite[s.site]++
		s.siteID = p.siteIDs[s.site]
		s.subjID = fmt.Sprintf("%s-%03d", s.siteID, perSite[s.site])
		s.usubjid = StudyID + "-" + s.subjID
	}
	p.randomise()
	for _, s := range p.subjects {
		if !s.screenFail {
			p.followUp(s)
		}
	}
	if !cfg.Clean {
		if err := p.chooseSites(r); err != nil {
			return nil, err
		}
	}
	return p, nil
}

// consentDay spreads first-cut subjects evenly over enrolDays and second-cut subjects
// over newEnrolDays after the first cut.
func (p *population) consentDay(idx int) int {
	if idx < p.nCut1 {
		return idx * enrolDays / p.nCut1
	}
	n2 := max(1, p.nTotal-p.nCut1)
	return newEnrolFrom + (idx-p.nCut1)*newEnrolDays/n2
}

// screen draws the subject's demography, latent parameters and screening visit.
func (p *population) screen(idx int, siteW []float64) *subject {
	r := rand.New(rand.NewPCG(p.cfg.Seed, streamScreen+uint64(idx)))
	s := &subject{idx: idx, arm: -1, consent: p.consentDay(idx)}
	s.site = choose(r, siteW)
	s.country = s.site * len(countries) / p.cfg.Sites
	c := countries[s.country]

	// Sex: 54% men (invented; hypertension trials enrol somewhat more men, from memory).
	s.sex = "F"
	if r.Float64() < 0.54 {
		s.sex = "M"
	}
	// Age 18–75 (inclusion), mean 56, SD 10 (from memory, typical of stage 1–2
	// hypertension trials), redrawn when outside the range.
	a := 0
	for a < 18 || a > 75 {
		a = int(math.Round(56 + 10*r.NormFloat64()))
	}
	ct := dateOf(s.consent)
	bt := ct.AddDate(-a, 0, -r.IntN(365))
	s.birth = dayOf(bt)
	s.age = ageAt(bt, ct)
	s.race = c.race[choose(r, c.raceW)]
	switch u := r.Float64(); {
	case u < c.notRep:
		s.ethnic = "NOT REPORTED"
	case u < c.notRep+c.hispanic:
		s.ethnic = "HISPANIC OR LATINO"
	default:
		s.ethnic = "NOT HISPANIC OR LATINO"
	}
	// Women of childbearing potential approximated as women aged 55 or less (invented
	// protocol rule; menopause at about 51 on average, from memory).
	s.wocbp = s.sex == "F" && s.age <= 55

	// Height by sex: men mean 176 cm SD 7, women 163 cm SD 6.5 (from memory, adults in
	// North America and Western Europe). Recorded to the whole centimetre (common practice).
	if s.sex == "M" {
		s.height = math.Round(176 + 7*r.NormFloat64())
	} else {
		s.height = math.Round(163 + 6.5*r.NormFloat64())
	}
	// BMI mean 29.5 SD 4.5, 19–45 (from memory: hypertensive adults are on average
	// overweight). Weight follows from BMI and height, so weight correlates with height.
	bmi := clamp(29.5+4.5*r.NormFloat64(), 19, 45)
	h := s.height / 100
	s.w0 = bmi * h * h
	s.wDrift = 0.8 * r.NormFloat64() // kg change over 8 weeks (invented)
	// Type 2 diabetes in 12% (invented; common comorbidity of hypertension).
	s.diabetic = r.Float64() < 0.12

	// Blood pressure: subject-level seated office SBP mean 150, SD 10, rising 0.5 mmHg per
	// BMI unit and 0.25 per year of age; DBP mean 91, SD 7, correlated 0.7 with SBP at
	// subject level, which with the visit noise below gives about 0.6 over all records
	// (coefficients from memory; an SBP–DBP correlation near 0.6 is common practice).
	z1, z2 := r.NormFloat64(), r.NormFloat64()
	s.sbp0 = 150 + 0.5*(bmi-29.5) + 0.25*float64(s.age-56) + 10*z1
	s.dbp0 = 91 - 0.1*float64(s.age-56) + 7*(0.7*z1+0.714*z2)
	// Individual drug response multiplier (invented).
	s.resp = clamp(1+0.3*r.NormFloat64(), 0, 2)
	// Pulse mean 72 SD 8, +0.3 per BMI unit (from memory).
	s.pulse0 = 72 + 0.3*(bmi-29.5) + 8*r.NormFloat64()

	// Laboratory subject-level means (from memory, adult reference populations):
	// ALT lognormal median 22 U/L, sdlog 0.3 between subjects, higher in men and with BMI.
	s.logALT0 = math.Log(22) + 0.3*r.NormFloat64() + 0.02*(bmi-29.5)
	if s.sex == "M" {
		s.logALT0 += 0.12
	}
	// Creatinine higher in men (muscle mass): men 86, women 66 umol/L, SD 11 / 9, + 0.25
	// per year of age (from memory).
	if s.sex == "M" {
		s.creat0 = 86 + 11*r.NormFloat64()
	} else {
		s.creat0 = 66 + 9*r.NormFloat64()
	}
	s.creat0 += 0.25 * float64(s.age-56)
	// Fasting glucose 5.3 mmol/L SD 0.4, +0.06 per BMI unit, +2.2 in diabetes (from memory).
	s.gluc0 = 5.3 + 0.4*r.NormFloat64() + 0.06*(bmi-29.5)
	if s.diabetic {
		s.gluc0 += 2.2
	}
	// Potassium 4.2 mmol/L SD 0.25 (from memory).
	s.k0 = 4.2 + 0.25*r.NormFloat64()
	// Haemoglobin by sex: men 148 g/L SD 9, women 133 SD 8 (from memory).
	if s.sex == "M" {
		s.hgb0 = 148 + 9*r.NormFloat64()
	} else {
		s.hgb0 = 133 + 8*r.NormFloat64()
	}
	// 2% show a transaminase rise at later visits, ALT and AST together (invented).
	s.hepatic = r.Float64() < 0.02

	// Screening visit: same day as consent in 60%, else 1 or 2 days later (invented).
	v1 := &visit{num: 1, day: s.consent + choose(r, []float64{0.6, 0.25, 0.15})}
	s.fillVisit(r, v1)
	if s.wocbp {
		v1.lab.hcg = "NEGATIVE"
		if r.Float64() < 0.004 { // invented
			v1.lab.hcg = "POSITIVE"
		}
	}
	s.visits = []*visit{v1}
	p.chronicMeds(r, s)

	// Screening outcome: inclusion SBP 135–179 mmHg at V1 (invented protocol), negative
	// pregnancy test, and 2% failing some other criterion (invented).
	switch {
	case v1.vs.sys < 135 || v1.vs.sys > 179:
		s.sfTerm = "SCREEN FAILURE: SYSTOLIC BLOOD PRESSURE OUTSIDE INCLUSION RANGE"
	case v1.lab.hcg == "POSITIVE":
		s.sfTerm = "SCREEN FAILURE: POSITIVE PREGNANCY TEST"
	case r.Float64() < 0.02:
		s.sfTerm = "SCREEN FAILURE: OTHER ELIGIBILITY CRITERION NOT MET"
	}
	if s.sfTerm != "" {
		s.screenFail = true
		s.disp, s.dispTerm = dsScreenFail, s.sfTerm
		s.dispDay = v1.day + 2 + r.IntN(9)
	} else {
		// Day of first dose: V1 is on study day -14..-1.
		s.v2 = v1.day + 1 + r.IntN(14)
	}
	return s
}

// randomise assigns arms per site in enrolment order from permuted blocks of 6.
func (p *population) randomise() {
	for site := range p.cfg.Sites {
		r := rand.New(rand.NewPCG(p.cfg.Seed, streamSite+uint64(site)))
		var block []int
		for _, s := range p.subjects {
			if s.site != site || s.screenFail {
				continue
			}
			if len(block) == 0 {
				block = []int{0, 0, 1, 1, 2, 2}
				r.Shuffle(len(block), func(i, j int) { block[i], block[j] = block[j], block[i] })
			}
			s.arm, block = block[0], block[1:]
		}
	}
}

// followUp draws the randomised period: disposition, visits, adverse events, acute
// medications.
func (p *population) followUp(s *subject) {
	r := rand.New(rand.NewPCG(p.cfg.Seed, streamFollowUp+uint64(s.idx)))
	// Disposition: 88% complete, 5% stop for an adverse event, 4% withdraw, 3% are lost
	// to follow-up, on study day 4–64 (invented, typical of an 8-week phase II trial).
	s.disp = []string{dsCompleted, dsAE, dsWithdrawal, dsLost}[choose(r, []float64{0.88, 0.05, 0.04, 0.03})]
	stop := 0
	if s.disp != dsCompleted {
		stop = s.v2 + 3 + r.IntN(61)
	}
	for _, pv := range schedule[1:] {
		day := s.v2 + pv.day - 1
		if pv.window > 0 {
			day += r.IntN(2*pv.window+1) - pv.window
		}
		missed := (pv.num == 3 || pv.num == 4) && r.Float64() < 0.02 // invented
		if stop > 0 && day > stop {
			break
		}
		if missed {
			continue
		}
		s.visits = append(s.visits, &visit{num: pv.num, day: day})
	}
	last := s.visits[len(s.visits)-1]
	switch s.disp {
	case dsCompleted:
		s.lastDose = s.visitDay(5)
		s.lastContact = last.day
		s.dispDay, s.dispTerm = last.day, "COMPLETED STUDY"
	default:
		s.lastDose, s.lastContact, s.dispDay = stop, stop, stop
		s.dispTerm = map[string]string{dsAE: "DISCONTINUED DUE TO ADVERSE EVENT",
			dsWithdrawal: "SUBJECT WITHDREW CONSENT", dsLost: "LOST TO FOLLOW-UP"}[s.disp]
	}
	for _, v := range s.visits[1:] {
		s.fillVisit(r, v)
	}
	p.adverseEvents(r, s)
	p.acuteMeds(r, s)
}

func (s *subject) visitDay(num int) int {
	for _, v := range s.visits {
		if v.num == num {
			return v.day
		}
	}
	panic("demostudy: internal error: missing visit")
}

// sbpEffect is the change in SBP from the subject's mean on a given day: placebo −3
// mmHg, CFX-17 10 mg a further −5 and 20 mg −9, reached over three weeks and fading
// with a 7-day half-life after the last dose (all invented; DBP changes by half as
// much, from memory of antihypertensive trials).
func (s *subject) sbpEffect(day int) float64 {
	if s.arm < 0 || day <= s.v2 {
		return 0
	}
	ramp := math.Min(1, float64(day-s.v2)/21)
	drug := []float64{0, -5, -9}[s.arm] * s.resp * ramp
	if day > s.lastDose {
		drug *= math.Pow(0.5, float64(day-s.lastDose)/7)
	}
	return -3*ramp + drug
}

// fillVisit draws the vital signs (and labs on lab visits) of v.
func (s *subject) fillVisit(r *rand.Rand, v *visit) {
	// Clinic hours 08:00–16:59 (invented); 4% of VS records lack a time (invented).
	v.minute = 8*60 + r.IntN(9*60)
	v.dateOnly = r.Float64() < 0.04
	eff := s.sbpEffect(v.day)
	// Visit-level BP noise SD 7 / 5 mmHg, correlated 0.6 (from memory of office BP
	// repeatability).
	zs, zd := r.NormFloat64(), r.NormFloat64()
	sys := math.Round(clamp(s.sbp0+eff+7*zs, 95, 220))
	dia := math.Round(clamp(s.dbp0+0.5*eff+5*(0.6*zs+0.8*zd), 50, 130))
	dia = math.Min(dia, sys-15) // pulse pressure at least 15 mmHg (common practice)
	pulse := math.Round(clamp(s.pulse0+5*r.NormFloat64(), 45, 120))
	temp := round1(clamp(36.6+0.2*r.NormFloat64(), 35.9, 37.4)) // °C (from memory)
	frac := clamp(float64(v.day-s.visits0())/60, 0, 1.5)
	w := round1(s.w0 + s.wDrift*frac + 0.6*r.NormFloat64()) // visit SD 0.6 kg (from memory)
	v.vs = vsVals{sys: sys, dia: dia, pulse: pulse, temp: temp, weight: w, bmi: bmiOf(w, s.height)}
	if !labVisit(v.num) {
		return
	}
	l := &labVals{minute: v.minute + 5 + r.IntN(40)}
	// ALT visit noise sdlog 0.15; AST on the log scale follows ALT with slope 0.75 and
	// residual SD 0.17, truncated at ±0.45 (invented coefficients; ALT and AST are
	// strongly correlated on the log scale, common practice).
	logALT := s.logALT0 + 0.15*r.NormFloat64()
	if s.hepatic && v.num > 1 {
		logALT += 1.2
	}
	res := clamp(0.17*r.NormFloat64(), -0.45, 0.45)
	l.val[labALT] = math.Round(math.Exp(logALT))
	l.val[labAST] = math.Round(math.Exp(math.Log(24) + 0.75*(logALT-math.Log(22)) + res))
	l.val[labCREAT] = math.Round(clamp(s.creat0+4*r.NormFloat64(), 35, 200))
	l.val[labGLUC] = round1(clamp(s.gluc0+0.45*r.NormFloat64(), 3.0, 20))
	l.val[labK] = round1(clamp(s.k0+0.2*r.NormFloat64(), 3.0, 6.0))
	l.val[labHGB] = math.Round(clamp(s.hgb0+4*r.NormFloat64(), 80, 200))
	v.lab = l
}

// visits0 is the screening day (the first visit), used as the origin of weight drift.
func (s *subject) visits0() int {
	if len(s.visits) == 0 {
		return s.consent
	}
	return s.visits[0].day
}

// bmiOf returns BMI = weight / height², kg/m², rounded to 0.1 (WHO definition, common
// practice), from the recorded weight (kg) and height (cm).
func bmiOf(weightKg, heightCm float64) float64 {
	h := heightCm / 100
	return round1(weightKg / (h * h))
}

// Adverse-event dictionary (invented verbatim terms; decoded terms are common
// MedDRA-style preferred terms). doseFactor scales the weight per dose step: dizziness
// and hypotension are dose-related, as expected of a blood-pressure drug (invented).
var aeTerms = []struct {
	decod      string
	verbatim   []string
	w          float64
	doseFactor float64
}{
	{"Headache", []string{"HEADACHE", "headache", "Tension headache"}, 10, 0},
	{"Dizziness", []string{"Dizziness", "dizzy", "light-headed"}, 6, 0.6},
	{"Hypotension", []string{"Low blood pressure", "HYPOTENSION"}, 2, 1.2},
	{"Fatigue", []string{"Fatigue", "tiredness"}, 6, 0.2},
	{"Nausea", []string{"Nausea", "feeling sick"}, 4, 0},
	{"Nasopharyngitis", []string{"Common cold", "cold"}, 8, 0},
	{"Cough", []string{"Dry cough", "cough"}, 4, 0.2},
	{"Oedema peripheral", []string{"Ankle swelling", "swollen ankles"}, 3, 0.4},
	{"Diarrhoea", []string{"Diarrhoea", "diarrhea"}, 3, 0},
	{"Back pain", []string{"Back pain", "lower back pain"}, 4, 0},
	{"Arthralgia", []string{"Joint pain", "Arthralgia"}, 3, 0},
	{"Hyperkalaemia", []string{"High potassium", "Hyperkalaemia"}, 1, 0.3},
}

// gradeFor maps severity to a CTCAE-style toxicity grade: MILD→1, MODERATE→2,
// SEVERE→3 (80%) or 4 (invented split; the severity–grade correspondence is common
// practice). No fatal (grade 5) events are generated.
func gradeFor(r *rand.Rand, sev string) int {
	switch sev {
	case "MILD":
		return 1
	case "MODERATE":
		return 2
	}
	if r.Float64() < 0.8 {
		return 3
	}
	return 4
}

func (p *population) adverseEvents(r *rand.Rand, s *subject) {
	span := s.lastContact - s.v2
	// About 40% of randomised subjects have an AE: 33% on placebo, 38% / 43% on 10 / 20 mg
	// (invented); 1, 2 or 3 events with probability 0.6 / 0.28 / 0.12 (invented).
	n := 0
	if span > 0 && r.Float64() < 0.33+0.05*float64(s.arm) {
		n = 1 + choose(r, []float64{0.6, 0.28, 0.12})
	}
	w := make([]float64, len(aeTerms))
	for i, t := range aeTerms {
		w[i] = t.w * (1 + t.doseFactor*float64(s.arm))
	}
	for range n {
		a := &ae{start: s.v2 + 1 + r.IntN(span)}
		t := aeTerms[choose(r, w)]
		a.decod, a.term = t.decod, t.verbatim[r.IntN(len(t.verbatim))]
		a.sev = []string{"MILD", "MODERATE", "SEVERE"}[choose(r, []float64{0.6, 0.3, 0.1})]
		p.finishAE(r, s, a, t.doseFactor)
		s.aes = append(s.aes, a)
	}
	if s.disp == dsAE {
		// The event that stopped treatment: a dose-related term, moderate or severe,
		// starting 0–3 days before discontinuation.
		a := &ae{start: max(s.v2+1, s.dispDay-r.IntN(4)), withdrawn: true}
		t := aeTerms[[]int{1, 2, 3, 7}[r.IntN(4)]]
		a.decod, a.term = t.decod, t.verbatim[r.IntN(len(t.verbatim))]
		a.sev = []string{"MODERATE", "SEVERE"}[choose(r, []float64{0.6, 0.4})]
		p.finishAE(r, s, a, 1)
		s.aes = append(s.aes, a)
	}
	slices.SortStableFunc(s.aes, func(a, b *ae) int { return a.start - b.start })
}

func (p *population) finishAE(r *rand.Rand, s *subject, a *ae, doseFactor float64) {
	a.grade = gradeFor(r, a.sev)
	a.ser = "N"
	if a.sev == "SEVERE" && r.Float64() < 0.3 { // invented
		a.ser = "Y"
	}
	// Causality: sponsor values; dose-related terms on active drug more often related.
	pRel := 0.15
	if doseFactor > 0 && s.arm > 0 {
		pRel = 0.45
	}
	switch u := r.Float64(); {
	case u < pRel:
		a.rel = "RELATED"
	case u < pRel+0.2:
		a.rel = "POSSIBLY RELATED"
	default:
		a.rel = "NOT RELATED"
	}
	// Duration lognormal, median 5 days (invented); 8% never resolve.
	dur := 1 + int(math.Exp(math.Log(5)+0.8*r.NormFloat64()))
	a.end = a.start + dur
	a.ongoing = r.Float64() < 0.08 || a.end > s.lastContact
	a.partialStart = r.Float64() < 0.03 // partial AESTDTC YYYY-MM (invented rate)
	a.sequelae = r.Float64() < 0.04
	a.recovering = r.Float64() < 0.5
}

// aeAction is AEACN, derived from the event and the subject's dosing.
func (s *subject) aeAction(a *ae) string {
	switch {
	case a.withdrawn:
		return "DRUG WITHDRAWN"
	case a.start > s.lastDose:
		return "NOT APPLICABLE"
	}
	return "DOSE NOT CHANGED"
}

// Medication dictionaries (invented verbatim; decoded names are generic drug names).
var chronicMedList = []struct {
	trt, decod, indc  string
	dose              float64
	dosu, freq, route string
	w                 float64
}{
	{"Atorvastatin", "ATORVASTATIN", "HYPERCHOLESTEROLAEMIA", 20, "mg", "QD", "ORAL", 8},
	{"Omeprazole", "OMEPRAZOLE", "GASTROOESOPHAGEAL REFLUX DISEASE", 20, "mg", "QD", "ORAL", 5},
	{"Aspirin", "ACETYLSALICYLIC ACID", "CARDIOVASCULAR RISK REDUCTION", 75, "mg", "QD", "ORAL", 5},
	{"Levothyroxine", "LEVOTHYROXINE", "HYPOTHYROIDISM", 50, "ug", "QD", "ORAL", 3},
	{"Cetirizine", "CETIRIZINE", "SEASONAL ALLERGY", 10, "mg", "QD", "ORAL", 3},
	{"Vitamin D3", "COLECALCIFEROL", "VITAMIN D DEFICIENCY", 1000, "IU", "QD", "ORAL", 4},
	{"Metformin", "METFORMIN", "TYPE 2 DIABETES MELLITUS", 1000, "mg", "BID", "ORAL", 0},
}

// acuteMed gives the medication a subject may take for an adverse event (invented).
var acuteMed = map[string]struct {
	trt, decod string
	dose       float64
	dosu       string
}{
	"Headache":        {"Paracetamol", "PARACETAMOL", 1000, "mg"},
	"Back pain":       {"Ibuprofen", "IBUPROFEN", 400, "mg"},
	"Arthralgia":      {"Ibuprofen", "IBUPROFEN", 400, "mg"},
	"Nasopharyngitis": {"Paracetamol", "PARACETAMOL", 500, "mg"},
	"Cough":           {"Cough syrup", "DEXTROMETHORPHAN", 15, "mg"},
	"Diarrhoea":       {"Loperamide", "LOPERAMIDE", 2, "mg"},
}

const maxMeds = 4

// chronicMeds draws long-term medications recorded at screening: none for half the
// subjects, else 1–3 (invented); diabetics take metformin; women take levothyroxine 3
// times as often (from memory).
func (p *population) chronicMeds(r *rand.Rand, s *subject) {
	n := choose(r, []float64{0.5, 0.25, 0.15, 0.10})
	w := make([]float64, len(chronicMedList))
	for i, m := range chronicMedList {
		w[i] = m.w
		if m.decod == "LEVOTHYROXINE" && s.sex == "F" {
			w[i] *= 3
		}
	}
	var picks []int
	if s.diabetic {
		picks = append(picks, len(chronicMedList)-1)
	}
	for len(picks) < n+boolInt(s.diabetic) {
		i := choose(r, w)
		w[i] = 0
		picks = append(picks, i)
	}
	v1 := s.visits[0].day
	for _, i := range picks {
		m := chronicMedList[i]
		c := &cm{trt: m.trt, decod: m.decod, indc: m.indc, dose: m.dose, dosu: m.dosu,
			freq: m.freq, route: m.route, start: s.consent - 60 - r.IntN(3000), ongoing: true, visible: v1}
		c.startPrec = choose(r, []float64{0.7, 0.25, 0.05}) // partial start dates (invented)
		if r.Float64() < 0.15 {
			c.ongoing = false
			c.end = s.consent + 10 + r.IntN(70)
		}
		s.cms = append(s.cms, c)
	}
	slices.SortStableFunc(s.cms, func(a, b *cm) int { return a.start - b.start })
}

// acuteMeds adds, for half of the AEs with a usual remedy, a short course starting on
// the AE start day (invented), keeping at most maxMeds records per subject.
func (p *population) acuteMeds(r *rand.Rand, s *subject) {
	for _, a := range s.aes {
		m, ok := acuteMed[a.decod]
		if !ok || r.Float64() >= 0.5 || len(s.cms) >= maxMeds {
			continue
		}
		c := &cm{trt: m.trt, decod: m.decod, indc: a.decod, dose: m.dose, dosu: m.dosu,
			freq: "PRN", route: "ORAL", start: a.start, end: a.start + 1 + r.IntN(7), visible: a.start}
		s.cms = append(s.cms, c)
	}
}

// chooseSites picks the site whose weights are later recorded in pounds and, among the
// others, the site with the fabricated subjects, then builds the fabricated copies.
func (p *population) chooseSites(r *rand.Rand) error {
	order := r.Perm(p.cfg.Sites)
	counts := make([]int, p.cfg.Sites)
	for _, s := range p.subjects[:p.nCut1] {
		counts[s.site]++
	}
	for _, site := range order {
		if counts[site] >= 10 {
			p.poundSite = site
			break
		}
	}
	for _, site := range order {
		if site == p.poundSite {
			continue
		}
		if donor, slots := p.fabricationSlots(site); donor != nil {
			p.fabSite = site
			p.fabDonor = donor
			for _, slot := range slots {
				p.fabricate(donor, slot)
			}
			return nil
		}
	}
	return errNoFabricationSite
}

// fabricationSlots finds, at site, a completer who consented in the middle of
// enrolment (25–60% of the enrolment period) and the next 5 randomised subjects there.
func (p *population) fabricationSlots(site int) (*subject, []*subject) {
	var donor *subject
	var slots []*subject
	for _, s := range p.subjects[:p.nCut1] {
		if s.site != site || s.screenFail {
			continue
		}
		switch {
		case donor == nil:
			if s.disp == dsCompleted && len(s.visits) == 6 &&
				s.consent >= enrolDays/4 && s.consent <= enrolDays*6/10 {
				donor = s
			}
		case len(slots) < 5:
			slots = append(slots, s)
		}
	}
	if len(slots) < 5 {
		return nil, nil
	}
	return donor, slots
}

// fabricate overwrites slot's clinical data with a copy of donor's, shifted to the
// slot's consent date, with tiny noise in the measured values. The slot keeps its
// identity, site and randomised arm.
func (p *population) fabricate(donor, slot *subject) {
	r := rand.New(rand.NewPCG(p.cfg.Seed, streamFab+uint64(slot.idx)))
	d := slot.consent - donor.consent
	c := *donor
	c.idx, c.site, c.siteID, c.subjID, c.usubjid = slot.idx, slot.site, slot.siteID, slot.subjID, slot.usubjid
	c.arm = slot.arm
	c.fabricatedFrom = donor.usubjid
	c.consent = slot.consent
	// Birth date within ±20 days of the donor's.
	c.birth = donor.birth - 20 + r.IntN(41)
	c.age = ageAt(dateOf(c.birth), dateOf(c.consent))
	c.v2, c.lastDose, c.lastContact, c.dispDay = donor.v2+d, donor.lastDose+d, donor.lastContact+d, donor.dispDay+d
	c.height = donor.height + float64(r.IntN(3)-1)
	c.visits = nil
	for _, v := range donor.visits {
		nv := *v
		nv.day += d
		nv.minute = clampInt(v.minute+r.IntN(31)-15, 8*60, 17*60-1)
		vs := v.vs
		vs.sys += float64(r.IntN(5) - 2)
		vs.dia = math.Min(vs.dia+float64(r.IntN(5)-2), vs.sys-15)
		vs.pulse += float64(r.IntN(5) - 2)
		vs.temp = round1(vs.temp + 0.1*float64(r.IntN(3)-1))
		vs.weight = round1(vs.weight + 0.1*float64(r.IntN(7)-3))
		vs.bmi = bmiOf(vs.weight, c.height)
		nv.vs = vs
		if v.lab != nil {
			l := *v.lab
			l.minute = nv.minute + 5 + r.IntN(40)
			l.val[labALT] += float64(r.IntN(3) - 1)
			l.val[labAST] += float64(r.IntN(3) - 1)
			l.val[labCREAT] += float64(r.IntN(5) - 2)
			l.val[labGLUC] = round1(l.val[labGLUC] + 0.1*float64(r.IntN(3)-1))
			l.val[labK] = round1(l.val[labK] + 0.1*float64(r.IntN(3)-1))
			l.val[labHGB] += float64(r.IntN(5) - 2)
			nv.lab = &l
		}
		c.visits = append(c.visits, &nv)
	}
	c.aes = nil
	for _, a := range donor.aes {
		na := *a
		na.start += d
		na.end += d
		c.aes = append(c.aes, &na)
	}
	c.cms = nil
	for _, m := range donor.cms {
		nm := *m
		nm.start += d
		nm.end += d
		nm.visible += d
		c.cms = append(c.cms, &nm)
	}
	*slot = c
}

// exInterval is one constant-dosing interval between dispensing visits.
type exInterval struct {
	visit      int
	start, end int
}

// exposure derives the EX intervals: study drug is dispensed at V2, V3 and V4 and taken
// once daily up to the day before the next dispensing visit, the last interval ending
// at the last dose (V5 for completers).
func (s *subject) exposure() []exInterval {
	if s.screenFail {
		return nil
	}
	var disp []*visit
	for _, v := range s.visits {
		if v.num >= 2 && v.num <= 4 && v.day <= s.lastDose {
			disp = append(disp, v)
		}
	}
	var out []exInterval
	for i, v := range disp {
		end := s.lastDose
		if i+1 < len(disp) {
			end = disp[i+1].day - 1
		}
		out = append(out, exInterval{visit: v.num, start: v.day, end: end})
	}
	return out
}

// Helpers.

func choose(r *rand.Rand, w []float64) int {
	total := 0.0
	for _, x := range w {
		total += x
	}
	u := r.Float64() * total
	for i, x := range w {
		if u < x {
			return i
		}
		u -= x
	}
	return len(w) - 1
}

func clamp(x, lo, hi float64) float64 { return math.Max(lo, math.Min(hi, x)) }

func clampInt(x, lo, hi int) int { return max(lo, min(hi, x)) }

func round1(x float64) float64 { return math.Round(x*10) / 10 }

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

func dateOf(day int) time.Time { return baseDate.AddDate(0, 0, day) }

func dayOf(t time.Time) int { return int(t.Sub(baseDate).Hours() / 24) }

func dateStr(day int) string { return dateOf(day).Format("2006-01-02") }

// ageAt returns completed years from birth to t.
func ageAt(birth, t time.Time) int {
	a := t.Year() - birth.Year()
	if t.Month() < birth.Month() || (t.Month() == birth.Month() && t.Day() < birth.Day()) {
		a--
	}
	return a
}
