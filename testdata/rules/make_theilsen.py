#!/usr/bin/python3
"""make_theilsen.py computes reference Theil-Sen fits for crossform's rules
tests with scipy.stats.theilslopes (Debian python3-scipy) on the MASS data
sets exported by export_mass.R (cats: Fisher 1947; birthwt: Hosmer &
Lemeshow 1989). Slope = median of pairwise slopes over pairs with distinct
x; intercept = median(y - slope * x) (method="joint", robust to a few wild y).

Rerun from this directory with:  /usr/bin/python3 make_theilsen.py
It writes theilsen_fixture.csv: case, x, y, n, slope, intercept, and a
comment line with the numpy and scipy versions.
"""
import csv

import numpy
import scipy
from scipy.stats import theilslopes


def load(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


CASES = [
    # (case, file, x, y, transform)
    ("cats Bwt->Hwt", "cats.csv", "Bwt", "Hwt", None),
    ("cats Hwt->Bwt", "cats.csv", "Hwt", "Bwt", None),
    ("birthwt lwt->bwt", "birthwt.csv", "lwt", "bwt", None),
    ("birthwt log lwt->log bwt", "birthwt.csv", "lwt", "bwt", "log"),
]

with open("theilsen_fixture.csv", "w", newline="") as out:
    out.write("# scipy %s, numpy %s: scipy.stats.theilslopes(y, x, method='joint')\n"
              % (scipy.__version__, numpy.__version__))
    w = csv.writer(out, lineterminator="\n")
    w.writerow(["case", "file", "x", "y", "transform", "n", "slope", "intercept"])
    for case, path, xn, yn, tr in CASES:
        rows = load(path)
        x = numpy.array([float(r[xn]) for r in rows])
        y = numpy.array([float(r[yn]) for r in rows])
        if tr == "log":
            x, y = numpy.log(x), numpy.log(y)
        res = theilslopes(y, x, method="joint")
        w.writerow([case, path, xn, yn, tr or "", len(x), repr(float(res[0])), repr(float(res[1]))])
