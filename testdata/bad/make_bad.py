#!/usr/bin/python3
"""Writes the malformed-input corpus of crossform (testdata/bad).

Run from this folder: /usr/bin/python3 make_bad.py (Python 3 standard library
only). Each file is small and deliberately broken in one way; the one-line
error crossform gives for each is in expected.tsv, checked by TestBadCorpus in
package reliability. Binary transport files are derived from the R-written
fixture ../xpt/roundtrip.xpt (see ../xpt/README.md). All data are invented.
"""
import json
import os

HERE = os.path.dirname(os.path.abspath(__file__))
XPT = open(os.path.join(HERE, "..", "xpt", "roundtrip.xpt"), "rb").read()
REC = 80


def put(name, data):
    if isinstance(data, str):
        data = data.encode("utf-8")
    with open(os.path.join(HERE, name), "wb") as f:
        f.write(data)


def xpt_find(tag):
    """Offset of the 80-byte header record whose text starts with tag."""
    i = XPT.find(tag.encode())
    assert i >= 0 and i % REC == 0, tag
    return i


def xpt_patch(off, new):
    b = bytearray(XPT)
    b[off:off + len(new)] = new
    return bytes(b)


NAMESTR_HDR = xpt_find("HEADER RECORD*******NAMESTR")
OBS_HDR = xpt_find("HEADER RECORD*******OBS")
MEMBER_HDR = xpt_find("HEADER RECORD*******MEMBER")
FIRST_NS = NAMESTR_HDR + REC

# ---- CSV (dataset.ReadCSVFile) ----
put("csv_empty.csv", b"")
put("csv_header_only.csv", "USUBJID,AGE,SEX\n")
put("csv_truncated_quote.csv", 'USUBJID,AETERM\nS1,"HEADACHE\nS2,"NAUS')
put("csv_ragged.csv", "USUBJID,AGE,SEX\nS1,34,F\nS2,51\nS3,47,M\n")
put("csv_latin1.csv", b"USUBJID,CITY\nS1,K\xf6ln\n")
put("csv_utf16le.csv", "\ufeffUSUBJID,AGE\nS1,34\n".encode("utf-16-le"))
put("csv_nul.csv", b"USUBJID,AGE\nS1,3\x004\n")
put("csv_duplicate_column.csv", "USUBJID,AGE,AGE\nS1,34,35\n")
put("csv_is_xpt.csv", XPT[:400])
put("csv_field_2mib.csv", "USUBJID,NOTE\nS1," + "x" * (2 << 20) + "\n")

# ---- SAS transport v5 (dataset.ReadXPTFile) ----
put("xpt_empty.xpt", b"")
put("xpt_wrong_magic.xpt", b"USUBJID,AGE\nS1,34\n" + b" " * 200)
put("xpt_truncated_library_header.xpt", XPT[:50])
put("xpt_truncated_in_namestr.xpt", XPT[:FIRST_NS + 100])
# The NAMESTR header says 9999 variables (bytes 54-57), the file holds two.
put("xpt_namestr_count_9999.xpt", xpt_patch(NAMESTR_HDR + 54, b"9999"))
put("xpt_namestr_count_not_digits.xpt", xpt_patch(NAMESTR_HDR + 54, b"12x4"))
put("xpt_truncated_observation.xpt", XPT[:OBS_HDR + REC + 5])
put("xpt_libv8.xpt", xpt_patch(0, b"HEADER RECORD*******LIBV8   HEADER RECORD!!!!!!!"))
put("xpt_cport.xpt", b"**COMPRESSED** **COMPRESSED** **COMPRESSED** **COMPRESSED** **COMPRESSED********" + b"\0" * 160)
put("xpt_namestr_size_150.xpt", xpt_patch(MEMBER_HDR + 74, b"0150"))
# First NAMESTR: ntype (bytes 0-1) = 3; second variant: numeric length (4-5) = 9.
put("xpt_variable_type_3.xpt", xpt_patch(FIRST_NS, b"\x00\x03"))
put("xpt_numeric_length_9.xpt", xpt_patch(FIRST_NS + 2 * 140 + 4, b"\x00\x09"))  # third variable, AESEQ, is numeric
put("xpt_zero_variables.xpt", xpt_patch(NAMESTR_HDR + 54, b"0000")[:NAMESTR_HDR + REC])
# Second NAMESTR named like the first.
put("xpt_duplicate_variable.xpt", xpt_patch(FIRST_NS + 140 + 8, XPT[FIRST_NS + 8:FIRST_NS + 16]))

# ---- Dataset-JSON v1.1 (dataset.ReadDatasetJSONFile) ----
cols = [
    {"itemOID": "IT.USUBJID", "name": "USUBJID", "label": "Subject", "dataType": "string", "length": 8, "keySequence": 1},
    {"itemOID": "IT.AGE", "name": "AGE", "label": "Age", "dataType": "integer"},
]
meta = {"datasetJSONCreationDateTime": "2026-01-02T03:04:05", "datasetJSONVersion": "1.1.0",
        "itemGroupOID": "IG.DM", "records": 2, "name": "DM", "label": "Demographics", "columns": cols}


def dsjson(records=2, rows=(["S1", 34], ["S2", 51]), **kw):
    d = dict(meta, records=records, **kw)
    d["rows"] = list(rows)
    return json.dumps(d)


put("dsjson_empty.json", b"")
good = dsjson()
put("dsjson_truncated.json", good[: len(good) // 2])
put("dsjson_records_1e12.json", good.replace('"records": 2', '"records": 1e12'))
put("dsjson_records_1e12_integer.json", good.replace('"records": 2', '"records": 1000000000000'))
put("ndjson_records_1e12_integer.ndjson", json.dumps(dict(meta, records=10**12)) + '\n["S1", 34]\n')
put("dsjson_records_huge_int.json", good.replace('"records": 2', '"records": 99999999999999999999999'))
put("dsjson_records_mismatch.json", dsjson(records=5))
put("dsjson_row_too_short.json", dsjson(rows=(["S1", 34], ["S2"])))
put("dsjson_string_in_integer.json", dsjson(rows=(["S1", 34], ["S2", "fifty"])))
put("dsjson_not_object.json", "[1, 2, 3]\n")
put("dsjson_deep_nesting.json", "[" * 100000 + "]" * 100000)
put("dsjson_deep_rows.json", good.replace('"rows": [', '"rows": [' + "[" * 50000, 1))
put("dsjson_duplicate_column.json", good.replace('"name": "AGE"', '"name": "USUBJID"'))
put("dsjson_latin1_value.json", dsjson(rows=(["S1", 34], ["KOELN", 51])).replace("KOELN", "K\\xf6ln").encode().replace(b"K\\xf6ln", b"K\xf6ln"))  # Latin-1 o-umlaut byte in a value
put("dsjson_latin1_label.json", good.replace('"Demographics"', '"D\\u00e9mographie"').encode().replace(b"D\\u00e9m", b"D\xe9m"))
put("dsjson_version_10.json", json.dumps({"creationDateTime": "2026-01-02T03:04:05", "datasetJSONVersion": "1.0.0",
                                           "clinicalData": {"itemGroupData": {"IG.DM": {"records": 0, "name": "DM", "items": [], "itemData": []}}}}))
put("dsjson_no_columns.json", json.dumps({k: v for k, v in json.loads(good).items() if k != "columns"}))

# ---- Dataset-JSON as NDJSON (metadata line, then one row per line) ----
nd_meta = json.dumps(dict(meta))
put("ndjson_truncated_row.ndjson", nd_meta + '\n["S1", 34]\n["S2", 5')
put("ndjson_records_mismatch.ndjson", json.dumps(dict(meta, records=3)) + '\n["S1", 34]\n["S2", 51]\n')
put("ndjson_row_not_array.ndjson", nd_meta + '\n["S1", 34]\n{"USUBJID": "S2"}\n')
put("ndjson_rows_only.ndjson", '["S1", 34]\n["S2", 51]\n')

# ---- Define-XML (dataset.ReadDefineFile) ----
define = open(os.path.join(HERE, "..", "define", "define20.xml"), encoding="utf-8").read()
put("define_truncated.xml", define[: len(define) // 3])
put("define_not_odm.xml", "<?xml version=\"1.0\"?>\n<html><body>not metadata</body></html>\n")
laughs = ['<!ENTITY lol "lol">'] + ['<!ENTITY lol%d "%s">' % (i, ("&lol%d;" % (i - 1) if i > 1 else "&lol;") * 10) for i in range(1, 10)]
put("define_billion_laughs.xml", '<?xml version="1.0"?>\n<!DOCTYPE ODM [\n' + "\n".join(laughs) +
    '\n]>\n<ODM xmlns="http://www.cdisc.org/ns/odm/v1.3"><Study OID="S">&lol9;</Study></ODM>\n')
put("define_deep_nesting.xml", '<?xml version="1.0"?>\n<ODM xmlns="http://www.cdisc.org/ns/odm/v1.3">' + "<a>" * 100000 + "</a>" * 100000 + "</ODM>\n")
put("define_dangling_itemref.xml", define.replace('ItemOID="IT.VS.VSNRIND"', 'ItemOID="IT.VS.MISSING"', 1))
put("define_utf16_declared.xml", define.replace('encoding="UTF-8"', 'encoding="UTF-16"', 1))
put("define_empty.xml", b"")

# ---- variables files (dataset.ReadVarsFile) ----
bomb = ['a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]']
for i, c in enumerate("bcdefghi"):
    prev = "abcdefghi"[i]
    bomb.append("%s: &%s [%s]" % (c, c, ",".join(["*" + prev] * 9)))
put("vars_alias_bomb_outside.yaml", "\n".join(bomb) + "\nvariables:\n  AGE:\n    type: continuous\n    levels: *i\n")
# The same bomb inside the variables: each V<k> lists nine copies of V<k-1>'s levels.
vb = ["variables:", '  V1: {type: nominal, levels: &a ["l1","l2","l3","l4","l5","l6","l7","l8","l9"]}']
for i, c in enumerate("bcdefghi"):
    vb.append("  V%d: {type: nominal, levels: &%s [%s]}" % (i + 2, c, ",".join(["*" + "abcdefghi"[i]] * 9)))
put("vars_alias_bomb.yaml", "\n".join(vb) + "\n")
put("vars_deep_nesting.yaml", "variables: " + "[" * 20000 + "]" * 20000 + "\n")
put("vars_duplicate_key.yaml", "variables:\n  AGE:\n    type: continuous\n  AGE:\n    type: nominal\n")
put("vars_tab_indent.yaml", "variables:\n\tAGE:\n\t\ttype: continuous\n")

# ---- rule sets (rules.Load, then rules.Lint against data/ at each rule's level) ----
put("rules_empty.yaml", b"")
put("rules_not_mapping.yaml", "- id: a\n- id: b\n")
put("rules_schema_2.yaml", "schema: 2\nrules: []\n")
put("rules_truncated.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: order\n    variables: [SBP, \n")
put("rules_binary.yaml", b"schema: 1\nrules:\n  - id: r\xff\xfe\n")
bomb_r = ['a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]']
for i, c in enumerate("bcdefghi"):
    bomb_r.append("%s: &%s [%s]" % (c, c, ",".join(["*" + "abcdefghi"[i]] * 9)))
put("rules_alias_bomb.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: expr\n    level: table:vitals\n    params:\n" +
    "\n".join("      " + l for l in bomb_r) + "\n      require: 'SBP > 0'\n      big: *i\n")
put("rules_deep_nesting.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: expr\n    params: {require: 'SBP > 0', x: " + "[" * 20000 + "]" * 20000 + "}\n")
put("rules_duplicate_key.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: expr\n    level: table:vitals\n    severity: minor\n    status: rejected\n"
    "    params: {require: 'SBP > 0'}\n    status: accepted\n")
put("rules_duplicate_params_key.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: expr\n    level: table:vitals\n"
    "    params: {require: 'SBP > 0', require: 'SBP > 1'}\n")
put("rules_duplicate_id.yaml", "schema: 1\nrules:\n" + "".join(
    "  - id: same\n    kind: expr\n    level: table:vitals\n    severity: minor\n    params: {require: 'SBP > %d'}\n" % k for k in (0, 1)))
put("rules_absent_variable.yaml", "schema: 1\nrules:\n  - id: dbp-le-sbp\n    kind: order\n    level: table:vitals\n"
    "    severity: major\n    variables: [DIABP, SYSBP]\n")
put("rules_expr_does_not_compile.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: expr\n    level: table:vitals\n"
    "    severity: minor\n    params: {require: 'SBP >'}\n")
put("rules_contradictory_order.yaml", "schema: 1\nrules:\n"
    "  - id: dbp-below-sbp\n    kind: order\n    level: table:vitals\n    severity: major\n    variables: [DBP, SBP]\n    params: {tolerance: -1}\n"
    "  - id: sbp-below-dbp\n    kind: order\n    level: table:vitals\n    severity: major\n    variables: [SBP, DBP]\n")
put("rules_expr_never_holds.yaml", "schema: 1\nrules:\n  - id: high-sbp-low\n    kind: expr\n    level: table:vitals\n"
    "    severity: minor\n    params: {when: 'SBP > 180', require: 'SBP < 120'}\n")
put("rules_history_rewritten_time.yaml", "schema: 1\nrules:\n  - id: r1\n    kind: expr\n    level: table:vitals\n"
    "    params: {require: 'SBP > 0'}\n    history:\n      - {at: yesterday, by: a, action: accepted}\n")

# The study the rule sets are linted against: one table, "vitals".
put(os.path.join("data", "vitals.csv"), "USUBJID,SBP,DBP\nS1,120,80\nS2,135,85\nS3,118,76\n")

# ---- listings (check.ReadListing) ----
header = "site,subject,visit,visit_label,rule_id,severity,kind,rule_status,level,domain,seq,record_key,values,query,detail,class,changed,previous_values,key"
row = '01,S1,1,,r1,major,order,accepted,visit,VS,,USUBJID=S1;VISITNUM=1,DBP=90; SBP=80,please check,,,,,r1|USUBJID=S1;VISITNUM=1'
put("listing_bad_header.csv", "subject,rule,key\nS1,r1,k\n")
put("listing_duplicate_key.csv", header + "\n" + row + "\n" + row + "\n")
put("listing_bad_values.csv", header + "\n" + row.replace("DBP=90; SBP=80", "DBP90") + "\n")
put("listing_bad_severity.csv", header + "\n" + row.replace(",major,", ",urgent,") + "\n")
put("listing_truncated.json", '{"schema": "crossform.listing/1", "findings": [{"key": "r1|USUBJID=S1", "rule_id": "r1"')
put("listing_wrong_schema.json", '{"schema": "crossform.listing/9", "findings": []}\n')
