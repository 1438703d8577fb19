# Time R's Spearman matrix, cor(x, method = "spearman", use =
# "pairwise.complete.obs"), on the numeric and ordinal columns of a CSV.
#
# Usage: Rscript bench/peers_r.R DATA.csv [NCOLS]
#
# Reads DATA.csv.types.csv (written by bench/gen) to keep the continuous and
# ordinal columns; with NCOLS, only the first NCOLS of them (R computes the
# pairwise-complete Spearman matrix pair by pair, so the time is proportional
# to the number of pairs and a subset can be extrapolated). Prints seconds.
args <- commandArgs(trailingOnly = TRUE)
path <- args[1]
t0 <- proc.time()[["elapsed"]]
types <- read.csv(paste0(path, ".types.csv"), stringsAsFactors = FALSE)
keep <- types$name[types$type %in% c("continuous", "ordinal")]
if (length(args) > 1) keep <- keep[seq_len(min(length(keep), as.integer(args[2])))]
d <- read.csv(path, na.strings = "", colClasses = "character")[, keep]
x <- sapply(d, as.numeric)
p1 <- proc.time(); t1 <- p1[["elapsed"]]
r <- cor(x, method = "spearman", use = "pairwise.complete.obs")
p2 <- proc.time(); t2 <- p2[["elapsed"]]
cpu <- sum((p2 - p1)[c("user.self", "sys.self")])
cat(sprintf("%s columns %d pairs %d\n", R.version.string, length(keep), length(keep) * (length(keep) - 1) / 2), file = stderr())
cat(sprintf("load_seconds %.3f\ncorr_seconds %.3f\ncorr_cpu_seconds %.3f\n", t1 - t0, t2 - t1, cpu), file = stderr())
