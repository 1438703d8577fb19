// Package review owns the reviewer's view of a study and a rule set: Build computes
// everything the HTML report shows (render.ReportData: profiles, associations and
// clusters per level, each rule's verdicts, figure data and example records, the
// checker's discrepancies and their classes against a previous listing, and with
// Input.Signals the site and subject signals of package signals), and Server
// serves that report on the local machine with forms to accept, reject or retire each
// rule, writing every decision to the YAML rule set at once through rules.Decide and
// RuleSet.Save.
//
// The server binds loopback addresses only and answers only loopback Host headers (a
// defence against DNS rebinding: a page on another domain resolved to 127.0.0.1 still
// sends its own name as Host); every POST carries a random per-start token compared in
// constant time; bodies are limited to MaxBody; the only file it ever writes is the rule
// set it was started with. A decision is applied only when the rule is still in the state
// the page showed (RuleState), so two reviewers never overwrite each other silently.
//
// Figures (plots.go) are computed from what each rule sees in each record
// (rules.Check.Values) and its verdicts: band rules as a scatter plot with the fitted
// band (Theil–Sen line ± k robust scales, as the rule defines it), order rules with the
// limit line, implies and presence rules as a contingency table with the cells the rule
// forbids, visit_change rules as per-subject trajectories, group_range and cutoff rules
// as strips per level with their limits. A flagged site's figures show why: a
// distribution shift as the variable's quartiles per visit at the site beside the other
// sites' (type 7 quantiles, as R's quantile computes them), a relationship as a scatter of
// the pair with the site's records over the other sites'; near-identical subjects as a
// table of their values on the variables that agree.
package review
