#!/usr/bin/Rscript
# Writes mtcars_fixture.json, a second, independent reference for the cluster package: R's
# hclust on a real data set, the Motor Trend car road tests (Henderson & Velleman 1981,
# Biometrics 37:391-411) shipped with R as datasets::mtcars (Debian r-base-core).
#
#     /usr/bin/Rscript testdata/cluster/make_mtcars.R > testdata/cluster/mtcars_fixture.json
#
# Strength = |Spearman rho| of each pair of the 11 variables; distance = 1 - strength.
# hclust's merge order and leaf order follow its own conventions, so the fixture keeps what
# does not depend on them: the sorted merge heights and the clusters of cutree at every k.
s <- abs(cor(mtcars, method = "spearman"))
d <- as.dist(1 - s)
num <- function(x) sprintf("%.17g", x)
vec <- function(x, f = num) paste0("[", paste(f(x), collapse = ","), "]")
cat("{\n")
cat(sprintf(' "R": "%s",\n', R.version.string))
cat(sprintf(' "names": [%s],\n', paste0('"', colnames(mtcars), '"', collapse = ",")))
cat(' "strength": [\n')
rows <- apply(s, 1, vec)
cat(paste0("  ", rows, collapse = ",\n"), "\n ],\n")
cat(' "methods": {\n')
methods <- c("average", "single", "complete")
for (mi in seq_along(methods)) {
  hc <- hclust(d, method = methods[mi])
  cat(sprintf('  "%s": {"heights": %s, "cutree": [\n', methods[mi], vec(sort(hc$height))))
  ks <- 1:ncol(mtcars)
  cuts <- sapply(ks, function(k) vec(cutree(hc, k = k), function(x) sprintf("%d", x)))
  cat(paste0("   ", cuts, collapse = ",\n"), "\n  ]}")
  cat(if (mi < length(methods)) ",\n" else "\n")
}
cat(" }\n}\n")
