// Package signals looks for site and subject signals in a study, the questions
// of centralised monitoring (ICH E6(R3) §3.11.4.2; EDIT-CHECKS.md §5): which
// site behaves differently, which subjects look fabricated, and where data
// quality is worst. It owns the tests, the subject distance and the scores; it
// never reads files or prints. Render-ready tables come from SitesCSV,
// SiteSummaryCSV, SubjectsCSV, DuplicatesCSV, ScoresCSV and JSON.
//
// Definitions implemented, with sources cited on each function:
//
//   - Relationships: per site and strongly associated pair, Spearman's ρ within
//     the site against the other sites pooled, Z = (atanh ρ_s − atanh ρ_o) /
//     √(1/(n_s−3) + 1/(n_o−3)) (Fisher 1921), n counting subjects;
//     Benjamini–Hochberg over sites × pairs; an effect floor |ρ_s − ρ_o| ≥ 0.2.
//   - Shifts: per site and variable (per visit at visit level), medians and
//     their ratio, 1.4826·MAD spreads, the robust z of the site's median among
//     site medians, and the Brunner–Munzel test (Brunner & Munzel 2000) of the
//     site against the other sites, with Benjamini–Hochberg and an effect floor
//     on the relative effect |Â − 0.5| ≥ 0.21 (Vargha & Delaney 2000, "large").
//   - Gower: the mixed-type distance of Gower (1971) exactly as R's
//     cluster::daisy(metric = "gower") computes it (Range scaling), and a robust
//     variant (Robust, the default): numeric differences scaled by 4 × 1.4826 ×
//     MAD and capped at 1 per variable. Missing values drop the variable from
//     that pair. A branch-free kernel over interleaved (value, present) rows
//     finds every subject's nearest neighbour with each pair evaluated once.
//   - Duplicates: pairs of subjects at one site whose distance lies far below
//     the study's nearest-neighbour distances (robust z of the log distance
//     ≤ −4.5 and empirical tail probability ≤ 0.05), joined into groups, with
//     the variables that agree, least likely by chance first.
//   - ClusterSubjects: average-linkage clustering of subjects (package
//     cluster, strength 1 − distance), cut by the silhouette, counted per site.
//   - Scores: per site, subject and variable, four components (discrepancy
//     rate, not-evaluable rate, missing rate, signal count), each a robust z
//     against the study median, the total their mean.
//
// Everything here lists candidates for review (EDIT-CHECKS.md §6): a flagged
// site or pair of subjects is a question for the data manager, not a finding of
// misconduct; small sites give unstable estimates and are not tested below
// SiteOptions.MinSiteN; the arm variables are left out of subject profiles by
// default (DefaultExclude) because they can reveal allocation.
//
// Reference values for the tests come from R's cluster::daisy and SciPy's
// brunnermunzel on data sets shipped with R (testdata/signals), and from
// hand-derived cases marked as such.
package signals
