# make_gower.R: reference Gower distances for signals.TestGowerDaisy.
# Run from the repository root: /usr/bin/Rscript testdata/signals/make_gower.R
#
# Data: the 'flower' data set shipped with R's recommended package cluster
# (Debian r-cran-cluster; Struyf, Hubert & Rousseeuw 1996, J. Stat. Softw. 1(4),
# the example data of ?daisy): 18 flowers, 3 binary factors (V1-V3), one
# nominal factor (V4), two ordered factors (V5, V6), two numeric (V7, V8).
# A second copy has missing values put in at fixed cells (listed below) so that
# the pairwise-available rule is exercised.
#
# Writes, next to this script:
#   gower_flower.csv     the data as numbers: V1-V3 as 0/1, V4-V6 as the factor
#                        codes (1-based level positions), V7-V8 as read; "NA" missing;
#                        column 'copy' is "plain" or "na"
#   gower_expected.csv   case,i,j,d: every pair i < j (1-based rows), d with 17 digits
#   gower_versions.txt   R and cluster versions
# The cases (kinds and weights) are repeated in signals/gower_test.go.
suppressMessages(library(cluster))
out <- "testdata/signals"
data(flower)
na <- flower
na$V1[3] <- NA; na$V2[4] <- NA; na$V3[1] <- NA; na$V4[6] <- NA
na$V5[7] <- NA; na$V6[8] <- NA; na$V7[c(2, 10)] <- NA; na$V8[c(2, 11)] <- NA

num <- function(d, copy) {
  data.frame(copy = copy,
             V1 = as.numeric(as.character(d$V1)), V2 = as.numeric(as.character(d$V2)),
             V3 = as.numeric(as.character(d$V3)), V4 = as.integer(d$V4),
             V5 = as.integer(d$V5), V6 = as.integer(d$V6), V7 = d$V7, V8 = d$V8)
}
write.csv(rbind(num(flower, "plain"), num(na, "na")), file.path(out, "gower_flower.csv"),
          row.names = FALSE, quote = FALSE, na = "NA")

cases <- list(
  # A: V1, V3 asymmetric binary, V2 symmetric binary, V4 nominal, V5-V6 ordinal, V7-V8 numeric.
  A = daisy(flower, metric = "gower", type = list(asymm = c(1, 3), symm = 2)),
  # B: as A with missing values.
  B = daisy(na, metric = "gower", type = list(asymm = c(1, 3), symm = 2)),
  # C: all binaries symmetric, missing values, weights.
  C = daisy(na, metric = "gower", type = list(symm = c(1, 2, 3)),
            weights = c(1, 2, 0.5, 1, 3, 1, 2, 1.5)),
  # D: numeric only, missing values (metric = "gower" forces range scaling).
  D = daisy(na[, c("V7", "V8")], metric = "gower"),
  # E: asymmetric binaries only, missing values (rows with no present-present or
  # present-absent pair get NA).
  E = daisy(na[, c("V1", "V3")], metric = "gower", type = list(asymm = c(1, 2)))
)
rows <- list()
for (nm in names(cases)) {
  m <- as.matrix(cases[[nm]])
  n <- nrow(m)
  for (i in 1:(n - 1)) for (j in (i + 1):n) {
    rows[[length(rows) + 1]] <- sprintf("%s,%d,%d,%s", nm, i, j,
                                        if (is.na(m[i, j])) "NA" else sprintf("%.17g", m[i, j]))
  }
}
writeLines(c("case,i,j,d", unlist(rows)), file.path(out, "gower_expected.csv"))
writeLines(c(R.version.string, paste("cluster", as.character(packageVersion("cluster")))),
           file.path(out, "gower_versions.txt"))
