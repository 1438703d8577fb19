#!/usr/bin/python3
"""Writes linkage_fixture.json, the reference values for the cluster package's tests.

Run with Debian's Python and SciPy (python3-scipy, python3-numpy):

    /usr/bin/python3 testdata/cluster/make_fixture.py > testdata/cluster/linkage_fixture.json

For each strength matrix below and each linkage (average, single, complete) it records
scipy.cluster.hierarchy.linkage's matrix, leaves_list, fcluster at distance thresholds
half-way between consecutive distinct merge heights (criterion="distance") and at k clusters
(criterion="maxclust"), and the mean silhouette width of every cut between distinct heights,
computed below with plain NumPy from Rousseeuw (1987), J. Comput. Appl. Math. 20:53-65
(s(i) = 0 for a singleton), independently of the Go code.

Strengths are turned into distances here as the Go package documents: d = 1 - s, and an
unknown (NaN) strength gives d = 1. Several matrices use distances that are multiples of
1/8, so they are exact in binary and many merge heights are tied.
"""

import json
import platform
import sys

import numpy as np
import scipy
from scipy.cluster.hierarchy import fcluster, leaves_list, linkage
from scipy.spatial.distance import squareform


def distances(strength):
    d = 1.0 - strength
    d[np.isnan(d)] = 1.0
    np.fill_diagonal(d, 0.0)
    return d


def silhouette(d, labels):
    """Mean silhouette width; NaN unless 2 <= k <= n-1 clusters."""
    n = len(labels)
    ks = sorted(set(labels))
    if len(ks) < 2 or len(ks) > n - 1:
        return float("nan")
    total = 0.0
    for i in range(n):
        own = labels == labels[i]
        if own.sum() == 1:
            continue
        others = own.copy()
        others[i] = False
        a = d[i, others].mean()
        b = min(d[i, labels == k].mean() for k in ks if k != labels[i])
        m = max(a, b)
        total += 0.0 if m == 0 else (b - a) / m
    return total / n


def symmetric(rng, n, values):
    s = np.zeros((n, n))
    iu = np.triu_indices(n, 1)
    s[iu] = values
    s = s + s.T
    np.fill_diagonal(s, 1.0)
    return s


def cases():
    out = []
    # Hand-made: two tight pairs, a chain, ties at 1/8 and 2/8 (distances, as eighths).
    eighths = np.array([
        [0, 1, 4, 4, 6, 8],
        [1, 0, 4, 4, 6, 8],
        [4, 4, 0, 1, 6, 8],
        [4, 4, 1, 0, 6, 8],
        [6, 6, 6, 6, 0, 2],
        [8, 8, 8, 8, 2, 0],
    ], dtype=float)
    out.append(("hand6-ties", 1.0 - eighths / 8))
    rng = np.random.default_rng(20240501)
    for n in (9, 14):
        vals = rng.integers(0, 9, size=n * (n - 1) // 2) / 8.0
        out.append((f"eighths{n}-ties", symmetric(rng, n, 1.0 - vals)))
    for n in (12, 40):
        vals = rng.uniform(0, 1, size=n * (n - 1) // 2)
        out.append((f"uniform{n}", symmetric(rng, n, vals)))
    # Block structure with unknown pairs: three groups of correlated variables.
    n = 16
    block = rng.integers(0, 3, size=n)
    s = np.empty((n, n))
    for i in range(n):
        for j in range(n):
            s[i, j] = rng.uniform(0.5, 0.9) if block[i] == block[j] else rng.uniform(0, 0.3)
    s = np.triu(s, 1)
    s = s + s.T
    np.fill_diagonal(s, 1.0)
    for i, j in [(0, 3), (2, 7), (5, 11), (9, 14)]:
        s[i, j] = s[j, i] = np.nan
    out.append(("blocks16-unknown", s))
    return out


def heights_cuts(heights):
    """Thresholds half-way between consecutive distinct heights, plus one below and above."""
    hs = sorted(set(heights))
    cuts = [hs[0] / 2]
    cuts += [(a + b) / 2 for a, b in zip(hs, hs[1:])]
    cuts.append(hs[-1] + 0.25)
    return cuts


def jsonable(x):
    return [None if np.isnan(v) else float(v) for v in x]


def main():
    doc = {
        "generator": "testdata/cluster/make_fixture.py",
        "python": platform.python_version(),
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "cases": [],
    }
    for name, s in cases():
        n = s.shape[0]
        d = distances(s)
        cond = squareform(d, checks=False)
        case = {
            "name": name,
            "names": [f"V{i + 1:02d}" for i in range(n)],
            "strength": [jsonable(row) for row in s],
            "methods": {},
        }
        for method in ("average", "single", "complete"):
            z = linkage(cond, method=method)
            heights = z[:, 2].tolist()
            m = {
                "Z": [[int(r[0]), int(r[1]), float(r[2]), int(r[3])] for r in z],
                "leaves": leaves_list(z).tolist(),
                "cuts": [],
                "maxclust": [],
                "silhouette": [],
            }
            for h in heights_cuts(heights):
                lab = fcluster(z, h, criterion="distance")
                m["cuts"].append({"h": h, "labels": lab.tolist()})
            # k <= n-2 only: fcluster's maxclust search never settles on the lowest merge
            # height, so for k = n-1 it returns n-2 clusters (seen in scipy 1.10.1), where the
            # Go package returns the n-1 that the criterion asks for.
            for k in range(1, min(n - 2, 12) + 1):
                lab = fcluster(z, k, criterion="maxclust")
                m["maxclust"].append({"k": k, "labels": lab.tolist()})
            # Silhouette of each cut at a merge height not tied with the next merge.
            best = None
            for i in range(n - 1):
                if i + 1 < n - 1 and heights[i + 1] == heights[i]:
                    continue
                lab = fcluster(z, heights[i], criterion="distance")
                k = len(set(lab))
                if k < 2 or k > n - 1:
                    continue
                v = silhouette(d, lab)
                m["silhouette"].append({"h": heights[i], "k": k, "value": v})
                if best is None or v > best["value"]:
                    best = {"h": heights[i], "k": k, "value": v, "labels": lab.tolist()}
            m["auto"] = best
            case["methods"][method] = m
        doc["cases"].append(case)
    # One line per case keeps the file small and its diffs readable.
    sys.stdout.write("{\n")
    for key in ("generator", "python", "scipy", "numpy"):
        sys.stdout.write(f" {json.dumps(key)}: {json.dumps(doc[key])},\n")
    sys.stdout.write(' "cases": [\n')
    for i, case in enumerate(doc["cases"]):
        sep = "," if i + 1 < len(doc["cases"]) else ""
        sys.stdout.write("  " + json.dumps(case, separators=(",", ":")) + sep + "\n")
    sys.stdout.write(" ]\n}")
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
