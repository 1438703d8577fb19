package check

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/crossform/crossform/rules"
)

func finding(rule, subject, visit string, values ...string) Finding {
	vars := make([]string, len(values))
	for i := range values {
		vars[i] = "V" + string(rune('A'+i))
	}
	rk := "USUBJID=" + subject + ";VISITNUM=" + visit
	return Finding{Key: rule + "|" + rk, RuleID: rule, Kind: "order", Severity: rules.Major, RuleStatus: rules.StatusAccepted,
		Level: "visit", Site: "01", Subject: subject, Visit: visit, Domain: "VS", RecordKey: rk, Vars: vars, Values: values,
		Query: "check " + strings.Join(values, ", "), Row: -1}
}

// TestClassify: hand-built previous and current listings. P1 persists
// unchanged, P2 persists with a changed value, C1 is new, R1 is resolved.
func TestClassify(t *testing.T) {
	prev := []Finding{finding("r1", "S1", "1", "5", "3"), finding("r1", "S2", "1", "9", "1"), finding("r2", "S3", "2", "x")}
	cur := []Finding{finding("r1", "S1", "1", "5", "3"), finding("r1", "S2", "1", "9", "2"), finding("r1", "S4", "1", "7", "6")}
	c := Classify(cur, prev)
	want := ClassCounts{New: 1, Persisting: 2, Changed: 1, Resolved: 1}
	if c.Counts != want {
		t.Errorf("Counts = %+v, want %+v", c.Counts, want)
	}
	got := []string{}
	for _, f := range c.Current {
		got = append(got, f.Subject+":"+string(f.Class)+":"+map[bool]string{true: "changed", false: ""}[f.Changed]+":"+strings.Join(f.Previous, ","))
	}
	wantRows := []string{"S1:persisting::", "S2:persisting:changed:9,1", "S4:new::"}
	if !reflect.DeepEqual(got, wantRows) {
		t.Errorf("Current = %v, want %v", got, wantRows)
	}
	if len(c.Resolved) != 1 || c.Resolved[0].Subject != "S3" || c.Resolved[0].Class != Resolved {
		t.Errorf("Resolved = %+v, want S3", c.Resolved)
	}
	if cur[1].Class != "" || cur[1].Changed {
		t.Error("Classify modified its input")
	}
}

// TestListingRoundTrip writes a classified listing as CSV and JSON the way
// package render does, reads it back with ReadListing, and classifies a
// rerun against it: all persisting, nothing changed.
func TestListingRoundTrip(t *testing.T) {
	cur := []Finding{finding("r1", "S1", "1", `a;b\c`, ""), finding("r1", "S2", "1", "9", "2"), finding("r2", "S4", "1", "x=y; z")}
	cur[0].Detail = "why"
	c := Classify(cur, []Finding{finding("r1", "S2", "1", "9", "1"), finding("r9", "S9", "1", "q")})
	dir := t.TempDir()

	var csvBuf bytes.Buffer
	w := csv.NewWriter(&csvBuf)
	w.Write(ListingHeader)
	for _, f := range append(append([]Finding{}, c.Current...), c.Resolved...) {
		w.Write(f.Record())
	}
	w.Flush()
	js, err := json.Marshal(Listing{Schema: ListingSchema, Findings: c.Current, Resolved: c.Resolved})
	if err != nil {
		t.Fatal(err)
	}
	for name, b := range map[string][]byte{"l.csv": csvBuf.Bytes(), "l.json": js} {
		path := filepath.Join(dir, name)
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
		back, err := ReadListing(path)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if len(back) != len(c.Current) {
			t.Fatalf("%s: read %d findings, want %d (resolved rows skipped)", name, len(back), len(c.Current))
		}
		for i := range back {
			want := c.Current[i]
			want.Row = -1
			if !reflect.DeepEqual(back[i], want) {
				t.Errorf("%s row %d:\n got %+v\nwant %+v", name, i, back[i], want)
			}
		}
		again := Classify(cur, back)
		if again.Counts != (ClassCounts{Persisting: 3}) {
			t.Errorf("%s: rerun against the listing = %+v, want 3 persisting", name, again.Counts)
		}
	}
}

func TestReadListingErrors(t *testing.T) {
	hdr := strings.Join(ListingHeader, ",") + "\n"
	good := finding("r1", "S1", "1", "5")
	rec := func(mod func(r []string)) string {
		r := good.Record()
		mod(r)
		var b bytes.Buffer
		w := csv.NewWriter(&b)
		w.Write(r)
		w.Flush()
		return b.String()
	}
	col := func(name string) int {
		for i, h := range ListingHeader {
			if h == name {
				return i
			}
		}
		t.Fatalf("no column %s", name)
		return -1
	}
	tests := []struct {
		name, file, text, want string
	}{
		{"bad severity", "a.csv", hdr + rec(func(r []string) {}) + rec(func(r []string) { r[col("severity")] = "urgent"; r[col("key")] += "x" }),
			`a.csv:3: field "severity": unknown severity "urgent"`},
		{"key without rule id", "a.csv", hdr + rec(func(r []string) { r[col("key")] = "zz|x" }), `a.csv:2: field "key": "zz|x" does not begin with the rule id "r1|"`},
		{"duplicate key", "a.csv", hdr + rec(func(r []string) {}) + rec(func(r []string) {}), `a.csv:3: field "key": key "r1|USUBJID=S1;VISITNUM=1" already on line 2`},
		{"bad values", "a.csv", hdr + rec(func(r []string) { r[col("values")] = "novalue" }), `a.csv:2: field "values": want VAR=value at "novalue"`},
		{"missing column", "a.csv", "site,subject\n", `a.csv:1: field "key": missing column`},
		{"ragged", "a.csv", hdr + "a,b\n", `a.csv:2: wrong number of fields`},
		{"json syntax", "a.json", "{\"schema\": \"crossform.listing/1\",\n \"findings\": [\n {\"key\": }]}", `a.json:3: field "findings": invalid character '}'`},
		{"json bad class", "a.json", "{\"schema\": \"crossform.listing/1\",\n\"findings\": [\n{\"key\": \"r|k\", \"rule_id\": \"r\", \"severity\": \"minor\", \"class\": \"old\"}]}",
			`a.json:3: field "class": unknown class "old"`},
		{"json wrong schema", "a.json", `{"schema": "other"}`, `a.json:1: field "schema": "other", want "crossform.listing/1"`},
		{"json type", "a.json", "{\"schema\": \"crossform.listing/1\", \"findings\": [\n{\"key\": 3}]}", `a.json:2: field "key": json: cannot unmarshal number`},
	}
	dir := t.TempDir()
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, tc.file)
			if err := os.WriteFile(path, []byte(tc.text), 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := ReadListing(path)
			var le *ListingError
			if !errors.As(err, &le) {
				t.Fatalf("ReadListing = %v, want a *ListingError", err)
			}
			got := strings.TrimPrefix(err.Error(), dir+string(filepath.Separator))
			if !strings.HasPrefix(got, tc.want) {
				t.Errorf("error = %q, want prefix %q", got, tc.want)
			}
		})
	}
}

func TestValuesRoundTrip(t *testing.T) {
	for _, vals := range [][]string{{}, {""}, {"a", ""}, {`x\`, "a;b", "; ", "=="}} {
		vars := make([]string, len(vals))
		for i := range vars {
			vars[i] = "V" + string(rune('0'+i))
		}
		s := FormatValues(vars, vals)
		gv, gx, err := ParseValues(s)
		if err != nil || !reflect.DeepEqual(gv, vars) || !reflect.DeepEqual(gx, vals) {
			t.Errorf("ParseValues(%q) = %q, %q, %v; want %q, %q", s, gv, gx, err, vars, vals)
		}
	}
}

// FuzzReadListing: parsing a listing never panics, every failure is a
// positioned *ListingError, and a success has well-formed findings.
func FuzzReadListing(f *testing.F) {
	good := finding("r1", "S1", "1", "5", "a;b")
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.Write(ListingHeader)
	w.Write(good.Record())
	w.Flush()
	f.Add(b.Bytes(), false)
	js, _ := json.Marshal(Listing{Schema: ListingSchema, Findings: []Finding{good}})
	f.Add(js, true)
	f.Add([]byte(`{"schema":"crossform.listing/1","findings":[{"key":"a|b","rule_id":"a","severity":"minor"}],"resolved":[]}`), true)
	f.Fuzz(func(t *testing.T, data []byte, isJSON bool) {
		var fs []Finding
		var err error
		if isJSON {
			fs, err = ParseListingJSON(data, "f.json")
		} else {
			fs, err = ParseListingCSV(bytes.NewReader(data), "f.csv")
		}
		var le *ListingError
		if err != nil {
			if !errors.As(err, &le) {
				t.Fatalf("error without position: %v", err)
			}
			return
		}
		seen := map[string]bool{}
		for _, f := range fs {
			if _, err := validFinding(&f); err != nil || seen[f.Key] || f.Class == Resolved {
				t.Fatalf("inconsistent finding %+v: %v", f, err)
			}
			seen[f.Key] = true
		}
	})
}
