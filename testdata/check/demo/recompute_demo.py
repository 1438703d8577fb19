#!/usr/bin/python3
"""recompute_demo.py: recompute the discrepancies of
testdata/check/demo/rules.yaml on the invented demo study CFX-201 with plain
pandas filters, independently of the Go checker and of Study.Shape.

Generate the study first (deterministic, default configuration):

  go run ./cmd/crossform demo-data --out /tmp/demo1
  /usr/bin/python3 testdata/check/demo/recompute_demo.py /tmp/demo1

The tables the rules run on are built here from the CSV files:

  visit      one row per USUBJID x VISITNUM found in VS, LB or SV rows
             (subjects in DM only; non-integer VISITNUM, i.e. unscheduled
             visits, excluded). VS and LB long rows are pivoted to one column
             per DOMAIN.TESTCD ("VS.SYSBP", "LB.CREAT") from --STRESN as a
             float, the mean when several rows fill one cell; DM.SEX and
             DM.RFICDTC are joined by USUBJID; SV.STDTC is the earliest
             SVSTDTC of the subject's visit. Natural key
             "USUBJID=...;VISITNUM=...".
  record:AE  AE rows sorted by USUBJID then AESEQ, with DM's SITEID and SEX
             joined by USUBJID. Natural key
             "USUBJID=...;AETERM=...;AESTDTC=..."; a key repeated within the
             table gets "#2", "#3", ... on its later occurrences in that row
             order; the characters \\ ; = | # in a value are escaped with \\.

The rule kinds, copied from testdata/check/recompute.py to stay
self-contained:

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

Numbers are displayed in their shortest form (120.0 -> 120), dates as
written. Writes expected_listing.csv (rule_id, site, subject, record_key,
values; sorted) and expected_summary.csv (per rule: evaluated, violations,
not_evaluable) next to itself, and versions.txt (Debian bookworm packages).
The Go test TestCrossCheckDemo generates the same study and compares row for
row.
"""
import datetime
import os
import sys

import pandas as pd
import yaml

here = os.path.dirname(os.path.abspath(__file__))
if len(sys.argv) != 2:
    sys.exit("usage: recompute_demo.py DEMO_STUDY_FOLDER")
src = sys.argv[1]
read = lambda n: pd.read_csv(os.path.join(src, n), dtype=str, keep_default_na=False)
dm, ae, sv, vs, lb = read("dm.csv"), read("ae.csv"), read("sv.csv"), read("vs.csv"), read("lb.csv")
with open(os.path.join(here, "rules.yaml")) as f:
    ruleset = yaml.safe_load(f)


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


def escape(s):
    for c in "\\;=|#":
        s = s.replace(c, "\\" + c)
    return s


def scheduled(df):
    """Rows of subjects in DM at an integer VISITNUM."""
    v = pd.to_numeric(df["VISITNUM"], errors="coerce")
    return df[(v == v.round()) & df["USUBJID"].isin(dm["USUBJID"])].copy()


# ---- visit level ----
long = []
for dom, d in (("VS", vs), ("LB", lb)):
    d = scheduled(d)
    d["var"] = dom + "." + d[dom + "TESTCD"]
    d["val"] = pd.to_numeric(d[dom + "STRESN"], errors="coerce")
    long.append(d[["USUBJID", "VISITNUM", "var", "val"]])
long = pd.concat(long)
wide = long.pivot_table(index=["USUBJID", "VISITNUM"], columns="var", values="val", aggfunc="mean")
svs = scheduled(sv)
svs = svs[svs["SVSTDTC"] != ""]
svs["start"] = svs["SVSTDTC"].map(lambda s: days(s)[0])
first = svs.sort_values("start", kind="stable").groupby(["USUBJID", "VISITNUM"])["SVSTDTC"].first().rename("SV.STDTC")
visits = pd.concat([long[["USUBJID", "VISITNUM"]], scheduled(sv)[["USUBJID", "VISITNUM"]]]).drop_duplicates()
visit = visits.merge(wide.reset_index(), on=["USUBJID", "VISITNUM"], how="left")
visit = visit.merge(first.reset_index(), on=["USUBJID", "VISITNUM"], how="left")
for c in wide.columns:
    visit[c] = visit[c].map(lambda x: "" if pd.isna(x) else display(repr(float(x))))
visit["SV.STDTC"] = visit["SV.STDTC"].fillna("")
visit = visit.merge(dm[["USUBJID", "SITEID", "SEX", "RFICDTC"]].rename(
    columns={"SEX": "DM.SEX", "RFICDTC": "DM.RFICDTC"}), on="USUBJID", how="left")
visit["KEY"] = "USUBJID=" + visit["USUBJID"].map(escape) + ";VISITNUM=" + visit["VISITNUM"].map(escape)

# ---- record:AE ----
rec = ae[ae["USUBJID"].isin(dm["USUBJID"])].copy()
rec["_seq"] = pd.to_numeric(rec["AESEQ"])
rec = rec.sort_values(["USUBJID", "_seq"], kind="stable")
rec = rec.merge(dm[["USUBJID", "SITEID", "SEX"]].rename(columns={"SEX": "DM.SEX"}), on="USUBJID", how="left")
k = ("USUBJID=" + rec["USUBJID"].map(escape) + ";AETERM=" + rec["AETERM"].map(escape)
     + ";AESTDTC=" + rec["AESTDTC"].map(escape))
n = k.groupby(k).cumcount() + 1
rec["KEY"] = [a if i == 1 else "%s#%d" % (a, i) for a, i in zip(k, n)]

tables = {"visit": visit, "record:AE": rec}


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
        vals = "; ".join("%s=%s" % (nm, display(r[nm])) for nm in rule["variables"])
        rows.append([rule["id"], r["SITEID"], r["USUBJID"], r["KEY"], vals])
    summary.append([rule["id"], int((verdicts != "ne").sum()), int((verdicts == "fail").sum()), int((verdicts == "ne").sum())])

listing = pd.DataFrame(rows, columns=["rule_id", "site", "subject", "record_key", "values"])
listing = listing.sort_values(["rule_id", "site", "subject", "record_key"]).reset_index(drop=True)
listing.to_csv(os.path.join(here, "expected_listing.csv"), index=False, lineterminator="\n")
pd.DataFrame(summary, columns=["rule_id", "evaluated", "violations", "not_evaluable"]).sort_values("rule_id").to_csv(
    os.path.join(here, "expected_summary.csv"), index=False, lineterminator="\n")
with open(os.path.join(here, "versions.txt"), "w") as f:
    f.write("python %s\npandas %s\npyyaml %s\n" % (sys.version.split()[0], pd.__version__, yaml.__version__))
print("%d discrepancies, visit table %d rows, AE table %d rows" % (len(listing), len(visit), len(rec)))
