// Package assoc measures the association of every pair of variables in a
// table: rank correlation for numeric pairs, Cramér's V for nominal pairs,
// Somers' D for ordered categories, and a Kruskal–Wallis effect size for a
// numeric or ordinal variable against a nominal one. It owns the measures (on
// plain slices) and the parallel all-pairs engine (AllPairs on a
// dataset.Table); it never reads files or prints.
//
// Definitions implemented, with the sources cited on each function:
//
//   - Spearman's ρ with average ranks for ties (Spearman 1904, Am. J. Psychol.
//     15:72–101), t-approximation p-value, Fisher-z confidence interval with
//     the Bonett–Wright standard error (Bonett & Wright 2000, Psychometrika
//     65:23–28).
//   - Pearson's χ² and Cramér's V (Cramér 1946, Mathematical Methods of
//     Statistics, §21.9), plain and bias-corrected (Bergsma 2013, J. Korean
//     Stat. Soc. 42:323–328).
//   - Somers' D in both directions (Somers 1962, Am. Sociol. Rev. 27:799–811)
//     with the asymptotic standard errors ASE1 and ASE0 of Goodman & Kruskal
//     (1972, JASA 67:415–421) as given by Agresti (Categorical Data Analysis).
//   - The Kruskal–Wallis H statistic, corrected for ties (Kruskal & Wallis
//     1952, JASA 47:583–621), and its effect size ε² = H/(n−1) (Tomczak &
//     Tomczak 2014, Trends Sport Sci. 21:19–25).
//   - φ on the 2×2 table of two variables' missingness indicators.
//   - Benjamini–Hochberg q-values (Benjamini & Hochberg 1995, J. R. Stat.
//     Soc. B 57:289–300).
//
// Which measure a pair gets depends on the two variables' kinds (see Kind and
// AllPairs). Every measure is mapped to a strength in [0, 1] so that pairs of
// different kinds can be ranked and clustered together.
//
// Reference values for the tests come from R and SciPy on open data sets and
// from published worked examples; see testdata/assoc/README.md.
//
// Build tag openblas: by default the package is pure Go, and the Gram matrix
// of ranks that gives Spearman's ρ for every pair of complete numeric columns
// is computed with gonum's BLAS. Building with -tags openblas (cgo on, and the
// system's OpenBLAS with its headers: Debian's libopenblas-dev) computes it
// with one cblas_dsyrk call into OpenBLAS instead, whose threads follow
// OPENBLAS_NUM_THREADS rather than Options.Workers. The ranks are integers,
// so both builds give identical results; bench/gram.sh compares their speed
// with numpy's.
package assoc
