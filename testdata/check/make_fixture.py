#!/usr/bin/python3
"""make_fixture.py: write the invented extract under testdata/check/fixture/
(dm.csv, ae.csv, vitals.csv) used by the checker's cross-check
(rules/check TestCrossCheck). Seeded, so reruns give the same bytes.

Run: /usr/bin/python3 testdata/check/make_fixture.py   (Debian numpy 1.24.2)

The study is invented: 40 subjects at 4 sites; errors are planted at random
(diastolic above systolic, heights out of range, AE end before start, fatal
AEs not marked serious, pregnancy AEs in men) together with partial dates and
missing values so that every rule meets boundaries and not-evaluable cases.
"""
import csv
import os

import numpy as np

rng = np.random.default_rng(20261202)
out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "fixture")
os.makedirs(out, exist_ok=True)

subjects = []
for i in range(40):
    site = "%02d" % (1 + i % 4)
    subjects.append(("CFC-%s-%03d" % (site, i + 1), site, "M" if rng.random() < 0.5 else "F"))

with open(os.path.join(out, "dm.csv"), "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["STUDYID", "DOMAIN", "USUBJID", "SUBJID", "SITEID", "SEX", "AGE"])
    for u, site, sex in subjects:
        w.writerow(["CFC", "DM", u, u[-3:], site, sex, int(rng.integers(18, 76))])

terms = ["HEADACHE", "NAUSEA", "RASH", "COUGH", "FATIGUE", "PREGNANCY"]
outcomes = ["RECOVERED/RESOLVED", "NOT RECOVERED/NOT RESOLVED", "FATAL", ""]


def iso(day, prec):
    d = np.datetime64("2024-01-01") + int(day)
    s = str(d)
    return {"day": s, "month": s[:7], "year": s[:4], "time": s + "T%02d:%02d" % (rng.integers(0, 24), rng.integers(0, 60))}[prec]


with open(os.path.join(out, "ae.csv"), "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["STUDYID", "DOMAIN", "USUBJID", "AESEQ", "AETERM", "AESTDTC", "AEENDTC", "AESER", "AEOUT"])
    for u, site, sex in subjects:
        for seq in range(1, int(rng.integers(0, 5)) + 1):
            term = terms[int(rng.integers(0, len(terms)))]
            st = int(rng.integers(0, 300))
            dur = int(rng.integers(-6, 20))  # negative: end before start
            sp = ["day", "day", "day", "month", "time"][int(rng.integers(0, 5))]
            ep = ["day", "day", "day", "month", "year"][int(rng.integers(0, 5))]
            start = iso(st, sp)
            end = "" if rng.random() < 0.15 else iso(st + dur, ep)
            outc = outcomes[int(rng.integers(0, len(outcomes)))]
            ser = ["Y", "N", ""][int(rng.integers(0, 3))]
            w.writerow(["CFC", "AE", u, seq, term, start, end, ser, outc])

with open(os.path.join(out, "vitals.csv"), "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["USUBJID", "SITEID", "VISITNUM", "SEX", "SYSBP", "DIABP", "HEIGHT"])
    for u, site, sex in subjects:
        height = rng.normal(176 if sex == "M" else 163, 8)
        for v in (1, 2, 3):
            sys = int(rng.normal(130, 12))
            dia = int(rng.normal(82, 8))
            if rng.random() < 0.08:
                dia = sys + int(rng.integers(0, 3))  # on or above systolic
            h = round(height, 1)
            r = rng.random()
            if r < 0.05:
                h = [149.5, 150, 200, 200.5, 139.9, 140, 190, 190.1][int(rng.integers(0, 8))]
            sx = sex if rng.random() > 0.03 else ""
            w.writerow([u, site, v, sx, "" if rng.random() < 0.05 else sys, "" if rng.random() < 0.05 else dia,
                        "" if rng.random() < 0.05 else h])
