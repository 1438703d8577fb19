// Package demostudy generates the demo data of crossform: an extract of CFX-201, an
// INVENTED clinical trial. The study, its drug CFX-17, sites, subjects, values and
// effect sizes are all fictional; any resemblance to a real trial or product is
// coincidental. It exists to exercise readers, association measures, rule proposal and
// rule checking on data of realistic shape, with a known list of planted problems.
//
// The package owns the generator only; it imports nothing but the standard library.
// Everything is drawn from seeded math/rand/v2 PCG streams and a seeded FNV-1a hash, and
// every output list is built in a fixed order, so the same Config gives byte-identical
// files.
//
// # The study
//
// CFX-201 is a phase II, randomised, double-blind, placebo-controlled trial of once-daily
// oral CFX-17 10 mg and 20 mg in adults aged 18–75 with hypertension (screening seated
// SBP 135–179 mmHg). The default configuration screens 600 subjects at 14 sites in four
// countries (USA, CAN, GBR, DEU, in site order); about 15% fail screening, the rest are
// randomised 1:1:1 in permuted blocks of 6 within site. Treatment lasts 8 weeks.
//
//	V1 SCREENING      study day -14..-1 (1–14 days before first dose), 0–2 days after consent
//	V2 RANDOMISATION  day 1, first dose
//	V3 WEEK 2         day 15 ± 3
//	V4 WEEK 4         day 29 ± 3
//	V5 WEEK 8         day 57 ± 5, last dose
//	V6 FOLLOW-UP      day 71 ± 7, off treatment
//
// Vital signs are taken at every visit, blood at V1, V4 and V6. 88% of randomised
// subjects complete; the others stop for an adverse event, withdraw or are lost to
// follow-up between days 4 and 64 and attend no later visit; 2% of V3 and V4 visits are
// missed.
//
// # Files
//
// One CSV file per collection form, as an extract arrives, with SDTM variable names:
//
//	dm.csv  one row per subject: STUDYID DOMAIN USUBJID SUBJID RFSTDTC RFENDTC RFICDTC SITEID
//	        BRTHDTC AGE AGEU SEX RACE ETHNIC ARMCD ARM ARMNRS COUNTRY AEYN CMYN
//	vs.csv  one row per test per visit: VSSEQ VSTESTCD VSTEST VSPOS VSORRES VSORRESU VSSTRESC
//	        VSSTRESN VSSTRESU VISITNUM VISIT VSDTC. Tests SYSBP, DIABP (mmHg), PULSE
//	        (beats/min), TEMP (C), HEIGHT (cm, V1 only), WEIGHT (kg), BMI (kg/m2)
//	lb.csv  one row per test per lab visit: LBSEQ LBTESTCD LBTEST LBCAT LBORRES LBORRESU
//	        LBSTRESC LBSTRESN LBSTRESU LBSTNRLO LBSTNRHI LBNRIND VISITNUM VISIT LBDTC. Tests
//	        ALT, AST (U/L), CREAT (umol/L), GLUC (mmol/L), K (mmol/L), HGB (g/L), and at V1
//	        for women of childbearing potential (aged 55 or less) serum HCG, whose result is
//	        text (LBSTRESC NEGATIVE or POSITIVE, LBSTRESN empty)
//	ae.csv  AESEQ AETERM AEDECOD AESTDTC AEENDTC AESEV AETOXGR AESER AEREL AEACN AEOUT
//	cm.csv  CMSEQ CMTRT CMDECOD CMINDC CMDOSE CMDOSU CMDOSFRQ CMROUTE CMSTDTC CMENDTC
//	ex.csv  one row per dispensing interval: EXSEQ EXTRT EXDOSE (0, 10 or 20) EXDOSU EXDOSFRQ
//	        EXROUTE VISITNUM VISIT EXSTDTC EXENDTC
//	ds.csv  DSSEQ DSTERM DSDECOD DSCAT DSSTDTC: consent and randomisation milestones, and
//	        the disposition event (COMPLETED, ADVERSE EVENT, WITHDRAWAL BY SUBJECT,
//	        LOST TO FOLLOW-UP, SCREEN FAILURE)
//	sv.csv  one row per attended visit: VISITNUM VISIT SVSTDTC SVENDTC
//
// Every file starts with STUDYID, DOMAIN, USUBJID. USUBJID is "CFX-201-<site>-<nnn>",
// SUBJID "<site>-<nnn>" numbered in enrolment order within site. Missing values are
// empty. Dates are ISO 8601 extended: VSDTC and LBDTC carry a time (YYYY-MM-DDThh:mm)
// except 4% of VS visits recorded as a date only; 3% of AESTDTC and 30% of the start
// dates of long-term medications are partial (YYYY-MM, or YYYY for some CM); sites in DEU record BRTHDTC as the
// year only. Screen failures have no ARMCD or ARM, ARMNRS = SCREEN FAILURE, and only
// screening data. Ongoing events and medications, and treatment still running at the
// data cut, have an empty end date; AEOUT is RECOVERED/RESOLVED (rarely WITH SEQUELAE)
// exactly when AEENDTC is filled, else RECOVERING/RESOLVING or NOT RECOVERED/NOT
// RESOLVED.
//
// Gate questions: SDTM has no variable for "Were any adverse events experienced?" or
// "Were any concomitant medications taken?", which collection forms ask (CDASH AEYN,
// CMYN). Raw extracts carry them, and they drive conditional-presence checks, so dm.csv
// carries them as two subject-level questions: AEYN and CMYN are Y exactly when the
// subject has at least one AE or CM row in the same extract (clean data).
//
// # Relationships
//
// Each parameter is commented in the source as common practice, from memory, or
// invented. In clean data, for every record: SYSBP > DIABP (pulse pressure at least 15);
// SBP and DBP correlate about 0.6 over records; BMI = WEIGHT / (V1 HEIGHT / 100)²
// rounded to 0.1 (so within 0.05 of the recomputed value); weight follows height and a
// BMI drawn per subject; height, creatinine and haemoglobin depend on sex; log AST
// follows log ALT (slope 0.75, residual SD 0.17, correlation about 0.8) and a pair with
// both values in range never has |log(AST/ALT)| above 0.95 (hand-derived bound, rounding
// included); LBNRIND agrees with the reference range columns; serum HCG only for women; AESEV and AETOXGR agree (MILD 1, MODERATE 2, SEVERE 3
// or 4; no grade 5); dates are ordered: birth < consent ≤ V1 < first dose (V2) ≤ later
// visits ≤ data cut, AEs start after first dose and end on or after their start; CMYN and
// AEYN agree with the CM and AE rows; EXDOSE matches the arm. SBP falls on treatment
// (placebo −3 mmHg, 10 mg −8, 20 mg −12 at full effect after three weeks; DBP half as
// much), fading at follow-up. Dizziness and hypotension are more frequent with dose,
// and headache, pain, cold, cough and diarrhoea AEs are often treated with a matching
// short-course medication (CMINDC = AEDECOD).
//
// # Data cuts
//
// Cut 1 (Config.Cut = 1) is dated 2025-12-30: Config.Subjects subjects, consent spread
// evenly over 2025-02-03 … 2025-11-29, so about the last fifth are still on study and
// have only their visits up to the cut. Cut 2, dated 2026-04-29, is a later extract of the
// same study and same seed:
//
//   - every cut-1 subject is present with the same identity, demography and values;
//   - Config.Subjects/5 new subjects consent after cut 1 (2025-12-31 … 2026-02-28);
//   - visits, labs, EX intervals, AEs, CMs and DS events dated after cut 1 appear, and
//     end dates, RFENDTC, ARM and ARMNRS fill in as they occur; --SEQ numbers of AE and
//     CM are stable (ordered by start), VSSEQ/LBSEQ/DSSEQ/EXSEQ of a subject may change;
//   - for each record-level class, round(n/3) of the n cut-1 problems are corrected
//     (the record carries its clean value again), chosen by a seeded hash; the others
//     persist unchanged, with the same detail;
//   - new problems are planted in records that are eligible in cut 2 but were not in
//     cut 1, at the cut-1 rate (the same hash threshold), and at least one per class;
//   - the site-level problems are not corrected: the pound site keeps weighing in pounds
//     (its new visits from V4 add truth rows) and the 5 fabricated subjects remain.
//
// # Planted problems
//
// With Config.Clean false, Generate plants ten classes and records each planted record in
// Study.Truth (written as _truth.csv: class, domain, USUBJID, SITEID, VISITNUM, key,
// detail). A record is chosen when a seeded hash of its class and natural key falls under
// a threshold set so that a class gets max(3, round(rate × eligible)) records in cut 1.
// Fabricated subjects are never eligible for the record-level classes, partial dates are
// never part of a planted problem, and classes never create each other, with one
// documented exception (pound weights, below). Counts at DefaultConfig:
//
//	class                    rate of eligible  cut 1  cut 2 (corrected, new)
//	weight_in_pounds         site-level           99    124 (0, 25)
//	bp_transposed            0.7% of VS visits    20     17 (7, 4)
//	ae_end_before_start      1.5% of AEs*          3      3 (1, 1)
//	pregnancy_male           1.0% of males         3      3 (1, 1)
//	bmi_mismatch             0.8% of BMI records   22     25 (7, 10)
//	cm_gate_contradiction    1.5% of CM subjects    5      4 (2, 1)
//	severity_grade_mismatch  1.5% of AEs           5      4 (2, 1)
//	liver_enzyme_outlier     0.6% of lab visits    8      6 (3, 1)
//	fabricated_subjects      site-level            5      5 (0, 0)
//	visit_before_consent     1.0% of V1 visits     6      5 (2, 1)
//
// (*) AEs with a complete start and a recorded end date.
//
//   - weight_in_pounds (VS, key WEIGHT): at one site (site 07 at the default seed, 48
//     subjects in cut 1) every WEIGHT from VISITNUM 4 on is the weight in pounds (kg ×
//     2.20462, 1 lb = 0.45359237 kg exactly) while VSORRESU and VSSTRESU still say kg.
//     One truth row per affected record. The site derives BMI from the true weight, so
//     BMI stays plausible and only the weight looks off; as a consequence these records
//     also fail the BMI = weight / height² check, and they are recorded under
//     weight_in_pounds only, not bmi_mismatch.
//   - bp_transposed (VS, key SYSBP): SYSBP and DIABP values swapped at a visit, so
//     SYSBP < DIABP. One row per visit.
//   - ae_end_before_start (AE, key AESEQ): AEENDTC set 1–10 days before a complete
//     AESTDTC; AEOUT stays resolved.
//   - pregnancy_male (LB, VISITNUM 1, key HCG): a serum HCG row (NEGATIVE) at screening
//     for a male subject.
//   - bmi_mismatch (VS, key BMI): BMI off by 3–6 kg/m² from that visit's weight and the
//     screening height. Pound-site weights from V4 are not eligible.
//   - cm_gate_contradiction (DM, key CMYN): CMYN = N while CM rows exist.
//   - severity_grade_mismatch (AE, key AESEQ): AETOXGR changed to disagree with AESEV
//     (MILD with 3 or 4, MODERATE with 4, SEVERE with 1).
//   - liver_enzyme_outlier (LB, key ALT): the ALT and AST of a lab visit replaced by a
//     pair inside both reference ranges (ALT 7–55, AST 8–48 U/L) but far off the joint
//     trend: ALT 46–54 with AST 9–12, or ALT 8–11 with AST 38–46 (|log(AST/ALT)| ≥ 1.24).
//   - fabricated_subjects (DM, no key): at one site (other than the pound site; site 06
//     at the default seed) the 5 randomised subjects enrolled after a donor subject are
//     replaced by near-copies of that donor (a genuine completer enrolled in the middle
//     of recruitment, not itself in the truth): same sex, race, ethnicity, birth date
//     within 20 days, same visit pattern, AEs and medications, all dates shifted to
//     the copy's consent date, vital signs and labs within 1–2 units (weight 0.3 kg) of
//     the donor, BMI recomputed. Each keeps its own identity and randomised arm. One
//     truth row per fabricated subject.
//   - visit_before_consent (SV, VISITNUM 1, no key): the screening visit dated 1–7 days
//     before RFICDTC; the V1 VS and LB records carry the same date.
//
// Rates are of the eligible records in cut 1 and sit in the 0.5–2% band of real
// extracts; at small Config.Subjects the floor of 3 records can push a rate above 2%.
// Generate returns an error when no site can hold the fabricated subjects (fewer than
// about 15 subjects per site).
package demostudy
