"""gram_numpy.py times numpy's complete-data Spearman matrix as one
rank-then-matrix-product, the counterpart of assoc's BenchmarkGramComplete*.

    /usr/bin/python3 bench/gram_numpy.py [--rows 5000] [--cols 1000] [--reps 3] [--batches 3]

The matrix is the one assoc/gram_test.go builds (splitmixColumn): cell (i, j)
is (splitmix64(j*rows + i) >> 11) * 2**-53, SplitMix64's output function
(Steele, Lea & Flood 2014) used as a hash, so both sides rank the same
numbers. Each repetition times, wall (perf_counter) and process CPU
(process_time, every BLAS thread included):
  rank     scipy.stats.rankdata(x, axis=0): average ranks for ties, as assoc;
  product  g = rc.T @ rc on the centred ranks rc (numpy calls BLAS dsyrk for
           a product of a matrix with its own transpose);
  total    rank, centre, product and scaling g to the p×p matrix of rho.
It runs --batches batches of --reps repetitions, as `go test -benchtime
3x -count 3` does, and prints "key m1 m2 ..." lines, one mean per batch, for
bench/gram.sh, after checking that numpy runs on OpenBLAS (threadpoolctl)
and that a few rho agree with scipy.stats.spearmanr to 1e-12.
"""

import argparse
import sys
import time

import numpy as np
import scipy
import scipy.stats as ss

try:
    import threadpoolctl
except ImportError:  # python3-threadpoolctl not installed
    threadpoolctl = None


def splitmix64(k):
    """SplitMix64's output for state (k+1)*golden; uint64 arrays wrap."""
    g = np.uint64(0x9E3779B97F4A7C15)
    z = k * g + g
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return z ^ (z >> np.uint64(31))


def matrix(rows, cols):
    """rows × cols, column j = assoc's splitmixColumn(j, rows)."""
    i = np.arange(rows, dtype=np.uint64)[:, None]
    j = np.arange(cols, dtype=np.uint64)[None, :]
    with np.errstate(over="ignore"):
        z = splitmix64(j * np.uint64(rows) + i)
    return (z >> np.uint64(11)).astype(np.float64) * 2.0**-53


def spearman_matrix(x, t):
    """rho for all column pairs; t collects the step times."""
    n = x.shape[0]
    w0, c0 = time.perf_counter(), time.process_time()
    r = ss.rankdata(x, axis=0)
    w1, c1 = time.perf_counter(), time.process_time()
    rc = r - (n + 1) / 2.0  # complete data: mean rank is (n+1)/2
    w2, c2 = time.perf_counter(), time.process_time()
    g = rc.T @ rc
    w3, c3 = time.perf_counter(), time.process_time()
    d = np.sqrt(np.diag(g))
    rho = g / np.outer(d, d)
    w4, c4 = time.perf_counter(), time.process_time()
    t["rank_wall_s"].append(w1 - w0)
    t["rank_cpu_s"].append(c1 - c0)
    t["product_wall_s"].append(w3 - w2)
    t["product_cpu_s"].append(c3 - c2)
    t["total_wall_s"].append(w4 - w0)
    t["total_cpu_s"].append(c4 - c0)
    return rho


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rows", type=int, default=5000)
    ap.add_argument("--cols", type=int, default=1000)
    ap.add_argument("--reps", type=int, default=3)
    ap.add_argument("--batches", type=int, default=3)
    a = ap.parse_args()

    print(f"numpy {np.__version__}")
    print(f"scipy {scipy.__version__}")
    blas = "unknown"
    if threadpoolctl is not None:
        for info in threadpoolctl.threadpool_info():
            if info.get("user_api") == "blas":
                blas = info.get("internal_api", "?")
                print(f"blas {blas} {info.get('version')} {info.get('architecture')} "
                      f"threads={info.get('num_threads')} {info.get('filepath')}")
    if blas != "openblas":
        print(f"numpy does not run on OpenBLAS (found: {blas}); "
              "install libopenblas0 and check update-alternatives", file=sys.stderr)
        return 1

    # The first cells, to compare with assoc/gram_test.go's splitmix64 check.
    with np.errstate(over="ignore"):
        print("splitmix64_0_1 %016x %016x" % tuple(int(v) for v in splitmix64(np.arange(2, dtype=np.uint64))))

    x = matrix(a.rows, a.cols)
    t = {k: [] for k in ("rank_wall_s", "rank_cpu_s", "product_wall_s", "product_cpu_s",
                         "total_wall_s", "total_cpu_s")}
    means = {k: [] for k in t}
    for _ in range(a.batches):
        for v in t.values():
            v.clear()
        for _ in range(a.reps):
            rho = spearman_matrix(x, t)
        for k, v in t.items():
            means[k].append(np.mean(v))

    worst = 0.0
    for i, j in ((0, 1), (2, 3), (a.cols - 2, a.cols - 1)):
        want = ss.spearmanr(x[:, i], x[:, j]).correlation
        worst = max(worst, abs(rho[i, j] - want))
    print(f"check_max_abs_diff_vs_spearmanr {worst:.3g}")
    if worst > 1e-12:
        print("rho differs from scipy.stats.spearmanr", file=sys.stderr)
        return 1

    print(f"rows {a.rows}")
    print(f"cols {a.cols}")
    for k, v in means.items():
        print(k, " ".join(f"{m:.4f}" for m in v))
    return 0


if __name__ == "__main__":
    sys.exit(main())
