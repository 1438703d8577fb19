# site_reference.R: reference values for rules/check site screening tests
# (TestBinomialUpperTail, TestBenjaminiHochberg, TestSiteTestPlanted).
# Run: /usr/bin/Rscript testdata/check/site_reference.R
# Uses base R only (stats::binom.test, stats::p.adjust); version printed below.
cat(R.version.string, "\n")
options(digits = 17)
cases <- list(c(7, 20, 0.1), c(0, 10, 0.3), c(3, 3, 0.5), c(30, 1000, 0.01),
              c(25, 400, 0.02), c(60, 500, 0.05), c(1, 1000, 0.0001))
for (x in cases) {
  p <- binom.test(x[1], x[2], x[3], alternative = "greater")$p.value
  cat(sprintf("binom.test(%d, %d, %g, alternative=\"greater\")$p.value = %.17g\n", x[1], x[2], x[3], p))
}
p <- c(0.01, 0.04, 0.03, 0.005, 0.5, 0.2)
cat("p.adjust(c(0.01, 0.04, 0.03, 0.005, 0.5, 0.2), \"BH\") =", sprintf("%.17g", p.adjust(p, "BH")), "\n")
# Planted site fixture (TestSiteTestPlanted): sites A-E, each 10 subjects, 400 evaluations;
# violations A=8, B=10, C=9, D=40, E=7. Each site is tested against the other four pooled.
v <- c(A = 8, B = 10, C = 9, D = 40, E = 7); n <- 400
pv <- sapply(names(v), function(s) binom.test(v[[s]], n, sum(v[names(v) != s]) / (n * 4), alternative = "greater")$p.value)
cat("planted p:", sprintf("%s=%.17g", names(pv), pv), "\n")
cat("planted q:", sprintf("%s=%.17g", names(pv), p.adjust(pv, "BH")), "\n")
