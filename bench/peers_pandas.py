"""Time pandas' Spearman matrix on the numeric and ordinal columns of a CSV.

Usage: /usr/bin/python3 bench/peers_pandas.py DATA.csv [OUT_matrix.csv]

Reads DATA.csv and DATA.csv.types.csv (written by bench/gen), keeps the
continuous and ordinal columns, and times DataFrame.corr(method="spearman"),
which uses pairwise-complete observations. Prints load and corr seconds
(wall, and CPU for corr). With
OUT_matrix.csv, writes the correlation matrix (17 significant digits) for
bench/check_spearman.py.
"""
import sys
import time

import pandas as pd

path = sys.argv[1]
t0 = time.perf_counter()
types = pd.read_csv(path + ".types.csv")
keep = list(types.loc[types["type"].isin(["continuous", "ordinal"]), "name"])
df = pd.read_csv(path, usecols=keep)[keep].astype(float)
t1, c1 = time.perf_counter(), time.process_time()
r = df.corr(method="spearman")
t2, c2 = time.perf_counter(), time.process_time()
print(f"pandas {pd.__version__} columns {len(keep)} pairs {len(keep) * (len(keep) - 1) // 2}", file=sys.stderr)
print(f"load_seconds {t1 - t0:.3f}\ncorr_seconds {t2 - t1:.3f}\ncorr_cpu_seconds {c2 - c1:.3f}", file=sys.stderr)
if len(sys.argv) > 2:
    r.to_csv(sys.argv[2], float_format="%.17g")
