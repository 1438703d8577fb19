// Package rules owns the rule model of crossform: cross-variable consistency
// rules (edit checks) of a few kinds, the reviewed YAML rule set they live in,
// the proposer that suggests rules from a data extract and the associations
// between its variables, and the review decisions (accept, reject, retire).
//
// Rule kinds (kinds.go, derived.go, expr.go; docs/ruleset.md):
//
//   - order: X ≤ Y + tolerance, for numbers or ISO 8601 dates. Partial dates
//     are compared as intervals (SDTMIG v3.4 §4.4; dataset.LessEq); a
//     comparison they leave open is not evaluable, never a discrepancy.
//   - implies: X ∈ A ⇒ Y ∈ B (or Y ∉ B).
//   - cutoff: a flag equals a value exactly when a number is below a cut.
//   - band: Y within k robust scales of the Theil–Sen line predicted from X,
//     and X from Y (Theil 1950, Indag. Math. 12:85–91; Sen 1968, JASA
//     63:1379–1389); the residual scale is the MAD × 1.4826 (Rousseeuw &
//     Croux 1993, JASA 88:1273–1283).
//   - derived: Y = f(X, …): BMI, mean arterial pressure, unit factors,
//     age in whole years, exact linear relations.
//   - presence: X present (absent, or X ∈ A) ⇒ Y present (absent).
//   - group_range: Y within limits per level of X, from Tukey's far-out
//     fences Q1 − 3·IQR, Q3 + 3·IQR (Tukey 1977, Exploratory Data Analysis,
//     §2C).
//   - visit_change: change of Y from the subject's previous visit within
//     limits.
//   - expr: hand-written when/require expressions (expr-lang).
//
// Every rule binds to a dataset.Table (Bind) and judges each record Pass,
// Fail or NotEvaluable. The package never prints; problems in rule files are
// *ParseError values with line and column, a rule that cannot run on a table
// is an *UnevaluableError.
package rules
