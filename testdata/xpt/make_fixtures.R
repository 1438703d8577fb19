# make_fixtures.R writes the SAS transport (XPORT v5) fixtures read by
# dataset/xpt_test.go, using an independent general-purpose writer: R's haven
# package (Debian r-cran-haven), write_xpt(version = 5). Beside each .xpt it
# writes the values it gave the writer to expected.csv, so that the Go test
# checks our reader against the writer's own input.
#
# Run from the repository root:  /usr/bin/Rscript testdata/xpt/make_fixtures.R
#
# expected.csv columns: file, dataset, var, row (1-based), kind, value
#   kind num  : value is the double written, as a C99 hexadecimal float (exact)
#   kind na   : value is the SAS missing code ("." or a letter of a tagged NA)
#   kind chr  : value is the character value ("" for an empty value)
#   kind date : value is the ISO 8601 date of an R Date written with format DATE9.
# versions.txt records R and haven versions.
suppressPackageStartupMessages(library(haven))
dir <- "testdata/xpt"
stopifnot(dir.exists(dir))
rows <- list()
add <- function(file, ds, df) {
  for (v in names(df)) {
    x <- df[[v]]
    for (i in seq_along(x)) {
      if (inherits(x, "Date")) {
        kind <- if (is.na(x[i])) "na" else "date"
        val <- if (is.na(x[i])) "." else format(x[i], "%Y-%m-%d")
      } else if (is.character(x)) {
        kind <- "chr"; val <- if (is.na(x[i])) "" else x[i]
      } else if (is.na(x[i])) {
        kind <- "na"; tag <- na_tag(x[i]); val <- if (is.na(tag)) "." else toupper(tag)
      } else {
        kind <- "num"; val <- sprintf("%a", unclass(x[i]))
      }
      rows[[length(rows) + 1]] <<- data.frame(file = file, dataset = ds, var = v, row = i, kind = kind, value = val)
    }
  }
}

# 1. edge.xpt: doubles at the edges of the IBM range, negatives, decimals that
# are not binary fractions, tagged (special) missing values, a 40-character
# label, empty and 200-byte character values, a DATE9. numeric and ISO text.
big <- 2^248 * (1 - 2^-53) # haven 2.5.1 clamps magnitudes >= 2^249 (see README)
x <- c(2^-260, -2^-260, 2^-260 * (1 + 2^-52), 1e-78, 0.1, -118.5, 1 / 3, pi,
       100, -1, 0, 1e10, -123456.789, 2^248, big, -big, 1e-5, 7e74)
n <- length(x)
spc <- c(1.5, tagged_na("A"), tagged_na("Z"), NA, tagged_na("B"), rep(2.5, n - 5))
edge <- data.frame(
  ROW = seq_len(n),
  X = x,
  SPC = spc,
  C200 = c(strrep("abcdefghij", 20), "", "short", paste0("trailing blanks kept off", "   "), rep(c("A", "B", ""), length.out = n - 4)),
  DT = as.Date("2023-05-10") + c(0, 1, -22000, 30000, rep(0, n - 4)),
  AESTDTC = rep(c("2023-05-10", "2023-05", "2023-05-10T08:30", ""), length.out = n),
  stringsAsFactors = FALSE
)
edge$DT[4] <- NA
attr(edge$X, "label") <- "Forty character label for the X variable"
stopifnot(nchar(attr(edge$X, "label")) == 40)
attr(edge$C200, "label") <- "Two hundred byte text"
attr(edge$DT, "format.sas") <- "DATE9"
write_xpt(edge, file.path(dir, "edge.xpt"), version = 5, name = "EDGE")
edge$C200 <- sub(" +$", "", edge$C200) # the format pads with blanks; readers strip them
add("edge.xpt", "EDGE", edge)

# 2. two.xpt: two members in one file. haven writes one member per file, so
# the second file's records from its member header on (after the three
# library records, 240 bytes) are appended to the first file.
dm <- data.frame(USUBJID = c("S-001", "S-002", "S-003"), AGE = c(34, 51, 47), SEX = c("F", "M", "F"))
vs <- data.frame(USUBJID = c("S-001", "S-001", "S-002", "S-003"), VSSEQ = c(1, 2, 1, 1),
                 VSSTRESN = c(120, 118.5, NA, 131))
a <- tempfile(); b <- tempfile()
write_xpt(dm, a, version = 5, name = "DM")
write_xpt(vs, b, version = 5, name = "VS")
ab <- readBin(a, "raw", file.size(a)); bb <- readBin(b, "raw", file.size(b))
stopifnot(rawToChar(bb[241:260]) == "HEADER RECORD*******")
writeBin(c(ab, bb[241:length(bb)]), file.path(dir, "two.xpt"))
add("two.xpt", "DM", dm)
add("two.xpt", "VS", vs)

# 3. chars.xpt: an all-character dataset whose observation length (3) makes
# the 80-byte padding look like up to 26 blank rows.
ch <- data.frame(A = c("x", "yy", "zzz", "", "w"), stringsAsFactors = FALSE)
write_xpt(ch, file.path(dir, "chars.xpt"), version = 5, name = "CHARS")
add("chars.xpt", "CHARS", ch)

out <- do.call(rbind, rows)
write.csv(out, file.path(dir, "expected.csv"), row.names = FALSE, na = "")
writeLines(c(R.version.string, paste("haven", as.character(packageVersion("haven"))),
             paste("ReadStat (bundled with haven)")), file.path(dir, "versions.txt"))

# 4. clamp.xpt: haven 2.5.1 writes magnitudes of 2^249 and above as the
# largest IBM number (bytes 7F FF FF FF FF FF FF FF) and magnitudes below
# 2^-260 as zero; the Go test checks how our reader reads those bytes.
write_xpt(data.frame(X = c(7.237005e75, -1e76, 2^-261)), file.path(dir, "clamp.xpt"), version = 5, name = "CLAMP")

# 5. roundtrip.xpt: roundtrip.csv (the table of dataset/roundtrip_test.go) as
# read by R's read.csv (numbers become doubles, empty text stays "").
rt <- read.csv(file.path(dir, "roundtrip.csv"), stringsAsFactors = FALSE)
write_xpt(rt, file.path(dir, "roundtrip.xpt"), version = 5, name = "AE")
