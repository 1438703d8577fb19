// Package check reruns a rule set's accepted rules on a study extract and
// reports every violation as a discrepancy (a Finding) with a key that stays
// the same from one extract to the next.
//
// Run refuses a rule set that fails rules.Lint (errors only; warnings are
// passed on in Result.Warnings). It shapes the study once per level the
// rules were defined on ("subject", "visit", "record:AE", "table:NAME";
// dataset.ParseLevel and Study.Shape), binds each rule to its table
// (rules.Bind) and evaluates it on every row. Nothing silently passes: a
// rule that cannot be bound (a variable missing from this extract, a type
// that no longer fits) or whose level cannot be shaped is listed in
// Result.NotEvaluable with the reason; a record a rule cannot judge (missing
// value, partial date) counts as not evaluable for that rule.
//
// Discrepancy keys are the rule id, "|", and the natural key of the record
// (EDIT-CHECKS.md §4; never --SEQ alone, which is renumbered between
// extracts): USUBJID for subject-level rules, USUBJID + VISITNUM for
// visit-level rules, and for record-level rules USUBJID plus the domain's
// natural key (NaturalKey: AETERM + AESTDTC, --TESTCD + VISITNUM + --TPTNUM
// + --REPNUM + --DTC, --TRT + --STDTC, …), written "VAR=value;VAR=value". A
// key repeated within one table gets "#2", "#3" in row order. Classify
// compares two listings by key: new, persisting (changed when the values
// differ) and resolved. ReadListing reads back a listing written by package
// render (CSV or JSON) with errors naming the line and field.
//
// Summaries give per rule the records, those evaluated, violations, rate and
// those not evaluable, and per site the subjects, records, rule×record
// evaluations, violations (also by severity) and rate. SiteTest screens the
// sites: the exact one-sided binomial test of a site's violations out of its
// evaluations against the pooled rate of the other sites (gonum's Binomial
// CDF), Benjamini–Hochberg adjustment across the sites tested, a flag at
// Q ≤ 0.05; sites with fewer than 3 subjects or 30 evaluations are not
// tested (SiteTestOptions). The test treats evaluations as independent, which
// they are not (several rules per record, several records per subject): it
// is a screening aid, not a confirmatory test (EDIT-CHECKS.md §6).
//
// A Manifest records each run so that a listing can be reproduced: tool
// version, every input file with its SHA-256, the rule set's path and hash,
// the UTC time, the parameters and the counts; it is written atomically.
//
// The package never prints or exits; listings and summary tables are written
// by package render.
package check
