# export_mass.R writes two open datasets shipped with R's recommended package
# MASS (Debian package r-cran-mass) as CSV for crossform's rules tests:
#
#   birthwt.csv  Risk factors associated with low infant birth weight, 189
#                births at Baystate Medical Center, Springfield MA, 1986.
#                Source: Hosmer, D.W. and Lemeshow, S. (1989) Applied Logistic
#                Regression. New York: Wiley. (MASS documentation ?birthwt.)
#   cats.csv     Anatomical data from domestic cats: sex, body weight (kg),
#                heart weight (g) of 144 adult cats used for digitalis
#                experiments. Source: R. A. Fisher (1947) The analysis of
#                covariance method for the relation between a part and the
#                whole, Biometrics 3, 65-68. (MASS documentation ?cats.)
#
# Rerun from this directory with:  /usr/bin/Rscript export_mass.R
# It also writes mass_versions.txt with the R and MASS versions used.
library(MASS)
write.csv(birthwt, "birthwt.csv", row.names = FALSE, quote = FALSE)
write.csv(cats, "cats.csv", row.names = FALSE, quote = FALSE)
writeLines(c(R.version.string, paste("MASS", as.character(packageVersion("MASS")))),
           "mass_versions.txt")
# Reference values for the robust helpers (MAD with constant 1/qnorm(3/4),
# quantiles of type 7), written with full precision.
ref <- data.frame(
  case = c("mad cats Hwt", "mad birthwt bwt", "q25 cats Hwt", "q75 birthwt bwt", "median cats Bwt"),
  value = c(mad(cats$Hwt, constant = 1 / qnorm(3 / 4)),
            mad(birthwt$bwt, constant = 1 / qnorm(3 / 4)),
            quantile(cats$Hwt, 0.25, type = 7),
            quantile(birthwt$bwt, 0.75, type = 7),
            median(cats$Bwt)),
  call = c("mad(cats$Hwt, constant = 1/qnorm(3/4))", "mad(birthwt$bwt, constant = 1/qnorm(3/4))",
           "quantile(cats$Hwt, 0.25, type = 7)", "quantile(birthwt$bwt, 0.75, type = 7)", "median(cats$Bwt)"))
ref$value <- sprintf("%.17g", ref$value)
write.csv(ref, "robust_fixture.csv", row.names = FALSE)
