#!/usr/bin/python3
"""make_bm.py: reference values for signals.TestBrunnerMunzel.

Run from the repository root with Debian's python: /usr/bin/python3 testdata/signals/make_bm.py
The samples come from R's 'datasets' package (shipped with Debian r-base-core),
exported through /usr/bin/Rscript; the test statistics from
scipy.stats.brunnermunzel(x, y) (Debian python3-scipy). Writes bm_data.csv
(case,sample,value) and bm_expected.csv (case,statistic,pvalue,effect) with the
versions in bm_versions.txt. effect is P(Y < X) + P(Y = X)/2 from mid-ranks.
"""
import csv, io, subprocess, sys
import numpy as np
import scipy
from scipy import stats

OUT = "testdata/signals/"
R = r'''
emit <- function(case, x, y) {
  x <- x[!is.na(x)]; y <- y[!is.na(y)]
  cat(paste(case, "x", format(x, digits = 17), sep = ","), sep = "\n")
  cat(paste(case, "y", format(y, digits = 17), sep = ","), sep = "\n")
}
cat("case,sample,value\n")
emit("toothgrowth_oj_vc", ToothGrowth$len[ToothGrowth$supp == "OJ"], ToothGrowth$len[ToothGrowth$supp == "VC"])
emit("insectsprays_c_d", InsectSprays$count[InsectSprays$spray == "C"], InsectSprays$count[InsectSprays$spray == "D"])
emit("chickwts_casein_horsebean", chickwts$weight[chickwts$feed == "casein"], chickwts$weight[chickwts$feed == "horsebean"])
emit("airquality_ozone_may_aug", airquality$Ozone[airquality$Month == 5], airquality$Ozone[airquality$Month == 8])
'''
data = subprocess.run(["/usr/bin/Rscript", "-e", R], check=True, capture_output=True, text=True).stdout
rver = subprocess.run(["/usr/bin/Rscript", "-e", "cat(R.version.string)"], check=True, capture_output=True, text=True).stdout
rows = [r for r in csv.DictReader(io.StringIO(data))]
for r in rows:
    r["value"] = r["value"].strip()
with open(OUT + "bm_data.csv", "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["case", "sample", "value"])
    for r in rows:
        w.writerow([r["case"], r["sample"], r["value"]])
cases = []
for r in rows:
    if r["case"] not in cases:
        cases.append(r["case"])
with open(OUT + "bm_expected.csv", "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["case", "statistic", "pvalue", "effect"])
    for c in cases:
        x = np.array([float(r["value"]) for r in rows if r["case"] == c and r["sample"] == "x"])
        y = np.array([float(r["value"]) for r in rows if r["case"] == c and r["sample"] == "y"])
        res = stats.brunnermunzel(x, y)
        rk = stats.rankdata(np.concatenate((x, y)))
        eff = (rk[:len(x)].mean() - (len(x) + 1) / 2) / len(y)
        w.writerow([c, repr(float(res.statistic)), repr(float(res.pvalue)), repr(float(eff))])
with open(OUT + "bm_versions.txt", "w") as f:
    f.write("scipy %s, numpy %s, python %s\n%s\n" % (scipy.__version__, np.__version__, sys.version.split()[0], rver))
