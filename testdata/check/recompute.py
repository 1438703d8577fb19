#!/usr/bin/python3
"""recompute.py: recompute the discrepancies of testdata/check/rules.yaml on
the fixture extract testdata/check/fixture/ with plain pandas filters,
written from the rule kinds' definitions, independently of the Go checker:

  order (numbers)  X <= Y + tolerance passes; either missing: not evaluable.
  order (dates)    ISO 8601 values become closed intervals of whole days
                   (SDTM.md section 4: "2024-03" is 2024-03-01..2024-03-31,
                   "2024" the whole year, a date-time its day); X <= Y fails
                   when X's earliest day is after Y's latest day, passes when
                   X's latest day is on or before Y's earliest day, and is
                   not evaluable otherwise or when either is missing.
  implies          X missing: not evaluable; X not in when_in: pass; Y
                   missing: not evaluable; then_in: Y in the set passes;
                   then_not_in: Y not in the set passes.
  group_range      G or Y missing, or G without limits: not evaluable;
                   low <= Y <= high passes.

Record-level AE rules see DM's SITEID (the site) and DM.SEX joined by
USUBJID. Writes expected_listing.csv (one row per discrepancy: rule_id,
site, subject, record_key, values, sorted) and expected_summary.csv (per
rule: evaluated, violations, not_evaluable). The Go test TestCrossCheck runs
the checker on the same files and compares row for row.

Run: /usr/bin/python3 testdata/check/recompute.py
Versions (Debian bookworm packages): see versions.txt, written by this script.
"""
import datetime
import os
import sys

import pandas as pd
import yaml

here = os.path.dirname(os.path.abspath(__file__))
fx = os.path.join(here, "fixture")
read = lambda n: pd.read_csv(os.path.join(fx, n), dtype=str, keep_default_na=False)
dm, ae, vit = read("dm.csv"), read("ae.csv"), read("vitals.csv")
with open(os.path.join(here, "rules.yaml")) as f:
    ruleset = yaml.safe_load(f)

ae = ae.merge(dm[["USUBJID", "SITEID", "SEX"]].rename(columns={"SEX": "DM.SEX"}), on="USUBJID", how="left")
tables = {"record:AE": ae, "table:vitals": vit}


def natural_key(level, r):
    if level == "record:AE":
        return "USUBJID=%s;AETERM=%s;AESTDTC=%s" % (r["USUBJID"], r["AETERM"], r["AESTDTC"])
    return "USUBJID=%s;VISITNUM=%s" % (r["USUBJID"], r["VISITNUM"])


def display(s):
    """Numbers as the shortest text that reads back (120.0 -> 120)."""
    try:
        x = float(s)
    except ValueError:
        return s
    return str(int(x)) if x == int(x) else repr(x)


def days(s):
    """Closed interval of whole days (ordinal numbers) of an ISO 8601 value."""
    if s == "":
        return None
    d = s.split("T")[0]
    parts = d.split("-")
    y = int(parts[0])
    if len(parts) == 1:
        return datetime.date(y, 1, 1).toordinal(), datetime.date(y, 12, 31).toordinal()
    m = int(parts[1])
    if len(parts) == 2:
        nxt = datetime.date(y + (m == 12), m % 12 + 1, 1)
        return datetime.date(y, m, 1).toordinal(), nxt.toordinal() - 1
    o = datetime.date(y, m, int(parts[2])).toordinal()
    return o, o


def is_num(s):
    try:
        float(s)
        return True
    except ValueError:
        return False


def verdict(rule, r):
    kind, v, p = rule["kind"], rule["variables"], rule.get("params") or {}
    x, y = r[v[0]], r[v[1]]
    if kind == "order":
        if x == "" or y == "":
            return "ne"
        if is_num(x) and is_num(y):
            return "pass" if float(x) <= float(y) + float(p.get("tolerance", 0)) else "fail"
        a, b = days(x), days(y)
        if a[1] <= b[0]:
            return "pass"
        if a[0] > b[1]:
            return "fail"
        return "ne"
    if kind == "implies":
        if x == "":
            return "ne"
        if x not in [str(s) for s in p["when_in"]]:
            return "pass"
        if y == "":
            return "ne"
        if "then_in" in p:
            return "pass" if y in [str(s) for s in p["then_in"]] else "fail"
        return "pass" if y not in [str(s) for s in p["then_not_in"]] else "fail"
    if kind == "group_range":
        if x == "" or y == "" or x not in p["limits"]:
            return "ne"
        lo, hi = p["limits"][x]
        return "pass" if lo <= float(y) <= hi else "fail"
    raise ValueError("kind %s not recomputed" % kind)


rows, summary = [], []
for rule in ruleset["rules"]:
    t = tables[rule["level"]]
    verdicts = t.apply(lambda r: verdict(rule, r), axis=1)
    fails = t[verdicts == "fail"]
    for _, r in fails.iterrows():
        vals = "; ".join("%s=%s" % (n, display(r[n])) for n in rule["variables"])
        rows.append([rule["id"], r["SITEID"], r["USUBJID"], natural_key(rule["level"], r), vals])
    summary.append([rule["id"], int((verdicts != "ne").sum()), int((verdicts == "fail").sum()), int((verdicts == "ne").sum())])

listing = pd.DataFrame(rows, columns=["rule_id", "site", "subject", "record_key", "values"])
listing = listing.sort_values(["rule_id", "site", "subject", "record_key"]).reset_index(drop=True)
listing.to_csv(os.path.join(here, "expected_listing.csv"), index=False, lineterminator="\n")
pd.DataFrame(summary, columns=["rule_id", "evaluated", "violations", "not_evaluable"]).sort_values("rule_id").to_csv(
    os.path.join(here, "expected_summary.csv"), index=False, lineterminator="\n")
with open(os.path.join(here, "versions.txt"), "w") as f:
    f.write("python %s\npandas %s\npyyaml %s\n" % (sys.version.split()[0], pd.__version__, yaml.__version__))
print("%d discrepancies" % len(listing))
