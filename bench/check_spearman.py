"""Check that every Spearman pair crossform reports equals pandas' to 1e-9.

Usage: /usr/bin/python3 bench/check_spearman.py CROSSFORM_PAIRS.csv PANDAS_MATRIX.csv

CROSSFORM_PAIRS.csv is written by bench/assocrun -spearman (x, y, rho, n);
PANDAS_MATRIX.csv by bench/peers_pandas.py. Exits 1 on any difference above
1e-9 or on a crossform pair missing from pandas' matrix.
"""
import sys

import pandas as pd

pairs = pd.read_csv(sys.argv[1])
mat = pd.read_csv(sys.argv[2], index_col=0)
worst, bad = 0.0, 0
for x, y, rho in zip(pairs["x"], pairs["y"], pairs["rho"]):
    want = mat.at[x, y]
    d = abs(rho - want)
    worst = max(worst, d)
    if not d <= 1e-9:
        bad += 1
        if bad <= 10:
            print(f"{x} {y}: crossform {rho!r} pandas {want!r}", file=sys.stderr)
print(f"checked {len(pairs)} Spearman pairs against pandas {pd.__version__}: "
      f"max abs difference {worst:.3g}, {bad} above 1e-9")
sys.exit(1 if bad else 0)
