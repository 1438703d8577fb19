package dataset

import (
	"errors"
	"fmt"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

const defineDir = "../testdata/define"

// TestReadDefine21 reads the hand-written Define-XML 2.1 fixture
// (testdata/define/study/define.xml); expected values are those written in it.
func TestReadDefine21(t *testing.T) {
	d, err := ReadDefineFile(filepath.Join(defineDir, "study", "define.xml"))
	if err != nil {
		t.Fatal(err)
	}
	if d.Version != "2.1.0" || len(d.Datasets) != 1 || len(d.Warnings) != 0 {
		t.Fatalf("version %q, %d datasets, warnings %q; want 2.1.0, 1, none", d.Version, len(d.Datasets), d.Warnings)
	}
	ae := d.Dataset("ae")
	if ae == nil || ae.Class != "EVENTS" || ae.Domain != "AE" || ae.Label != "Adverse Events" || len(ae.Refs) != 14 {
		t.Fatalf("AE dataset %+v; want class EVENTS (2.1 def:Class element), 14 ItemRefs", ae)
	}
	if got := strings.Join(d.Keys(ae), ","); got != "STUDYID,USUBJID,AESEQ" {
		t.Errorf("keys %s, want STUDYID,USUBJID,AESEQ", got)
	}
	if it := d.Items["IT.AE.AETOXGR"]; it == nil || it.DataType != "integer" || it.Length != 1 || it.CodeListOID != "CL.TOXGR" {
		t.Errorf("ItemDef IT.AE.AETOXGR = %+v", it)
	}
	if it := d.Items["IT.AE.AESEV"]; it.Origin != "Collected" || it.Label != "Severity/Intensity" {
		t.Errorf("ItemDef IT.AE.AESEV = %+v", it)
	}
	cl := d.CodeLists["CL.AESEV"]
	if cl == nil || len(cl.Items) != 3 || cl.Items[0].CodedValue != "SEVERE" || cl.Items[0].Rank != 3 || cl.Items[0].Decode != "Severe" {
		t.Errorf("CodeList CL.AESEV = %+v", cl)
	}
	if ny := d.CodeLists["CL.NY"]; len(ny.Items) != 2 || ny.Items[1].CodedValue != "Y" || ny.Items[1].HasRank {
		t.Errorf("CodeList CL.NY (EnumeratedItem) = %+v", ny)
	}

	specs, warns := d.VarSpecs("AE")
	for _, tc := range []struct {
		name   string
		typ    Type
		levels string
	}{
		{"STUDYID", TypeUnknown, ""},               // text, no codelist: inference
		{"AESEQ", TypeUnknown, ""},                 // integer but an SDTM identifier name
		{"AESITE", TypeUnknown, ""},                // text, no codelist (read as text by Open)
		{"AESEV", Ordinal, "MILD<MODERATE<SEVERE"}, // Rank 1-3, document order SEVERE first
		{"AETOXGR", Ordinal, "1<2<3<4<5"},
		{"AESER", Binary, ""},  // two-item codelist
		{"AEREL", Nominal, ""}, // OrderNumber only: no order
		{"AEACN", Ordinal, "DOSE NOT CHANGED<DOSE REDUCED<DRUG WITHDRAWN"},
		{"AEOUT", Nominal, ""},      // Rank on 2 of 3 items
		{"AEWT", Continuous, ""},    // float
		{"AESTDTC", DateTime, ""},   // datetime
		{"AEXTRA", TypeUnknown, ""}, // unknown DataType
	} {
		s, ok := specs[tc.name]
		if !ok {
			t.Errorf("no VarSpec for %s", tc.name)
			continue
		}
		if s.Type != tc.typ || strings.Join(s.Levels, "<") != tc.levels || s.Label == "" {
			t.Errorf("%s: %s %q label %q, want %s %q", tc.name, s.Type, s.Levels, s.Label, tc.typ, tc.levels)
		}
	}
	want := []string{
		`define.xml:116: ItemDef IT.AE.AEOUT: CodeList CL.AEOUT: Rank on 2 of 3 items, so no order; typed nominal`,
		`define.xml:24: ItemGroupDef IG.AE: ItemRef IT.AE.AEGHOST has no ItemDef`,
		`define.xml:86: ItemDef IT.AE.AEXTRA: unknown DataType "currency"; type left to inference`,
	}
	if got := trimDirs(warns); fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("warnings\n got %q\nwant %q", got, want)
	}
	if _, w := d.VarSpecs("LB"); len(w) != 1 || !strings.Contains(w[0], `no ItemGroupDef named "LB"`) {
		t.Errorf("VarSpecs(LB) warnings %q", w)
	}
}

func trimDirs(ws []string) []string {
	out := make([]string, len(ws))
	for i, w := range ws {
		out[i] = w[strings.LastIndex(w[:strings.Index(w, ".xml")], "/")+1:]
	}
	sort.Strings(out)
	return out
}

// TestReadDefine20 reads the Define-XML 2.0 fixture: class as the def:Class
// attribute, a language-tagged description, decimal Ranks.
func TestReadDefine20(t *testing.T) {
	d, err := ReadDefineFile(filepath.Join(defineDir, "define20.xml"))
	if err != nil {
		t.Fatal(err)
	}
	vs := d.Dataset("VS")
	if d.Version != "2.0.0" || vs == nil || vs.Class != "FINDINGS" {
		t.Fatalf("version %q, VS %+v; want 2.0.0, class FINDINGS", d.Version, vs)
	}
	if got := strings.Join(d.Keys(vs), ","); got != "USUBJID,VISITNUM,VSTESTCD" {
		t.Errorf("keys %s, want USUBJID,VISITNUM,VSTESTCD (KeySequence 1,2,3)", got)
	}
	if got := d.Items["IT.USUBJID"].Label; got != "Unique Subject Identifier" {
		t.Errorf("label %q, want the English TranslatedText", got)
	}
	specs, warns := d.VarSpecs("VS")
	if len(warns) != 0 {
		t.Errorf("warnings %q", warns)
	}
	if s := specs["VSNRIND"]; s.Type != Ordinal || strings.Join(s.Levels, "<") != "LOW<NORMAL<HIGH" {
		t.Errorf("VSNRIND %s %q, want ordinal LOW<NORMAL<HIGH (Rank -1, 2, 3.5)", s.Type, s.Levels)
	}
	if s := specs["VSTESTCD"]; s.Type != Nominal {
		t.Errorf("VSTESTCD %s, want nominal", s.Type)
	}
	if s := specs["VISITNUM"]; s.Type != Continuous {
		t.Errorf("VISITNUM %s, want continuous (float)", s.Type)
	}
}

func TestReadDefineErrors(t *testing.T) {
	for _, tc := range []struct{ name, in, want string }{
		{"not xml", "USUBJID,AGE\n", `d.xml:1: not a Define-XML document (want an ODM root element)`},
		{"other root", "<?xml version=\"1.0\"?>\n<html><body/></html>", `d.xml:2:7: not a Define-XML document (want an ODM root element), found <html>`},
		{"syntax", "<ODM>\n<Study>\n<ItemDef OID=\"X\"></Study></ODM>", `d.xml:3: invalid XML: element <ItemDef> closed by </Study>`},
		{"unclosed", "<ODM><Study>", `d.xml:1: invalid XML: unexpected EOF`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadDefine("d.xml", strings.NewReader(tc.in))
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v, want *ParseError", err)
			}
			if err.Error() != tc.want {
				t.Errorf("error\n got %s\nwant %s", err, tc.want)
			}
		})
	}
	// Bad attribute values and dangling references are warnings.
	d, err := ReadDefine("d.xml", strings.NewReader(`<ODM><Study><MetaDataVersion>
<ItemGroupDef OID="IG.X" Name="X"><ItemRef ItemOID="IT.A" KeySequence="first"/><ItemRef ItemOID="IT.B"/></ItemGroupDef>
<ItemDef OID="IT.A" Name="A" DataType="integer" Length="eight"><CodeListRef CodeListOID="CL.NONE"/></ItemDef>
<ItemDef OID="IT.B" Name="B" DataType="integer"><CodeListRef CodeListOID="CL.B"/></ItemDef>
<CodeList OID="CL.B" Name="B" DataType="integer"><CodeListItem CodedValue="low" Rank="x"/></CodeList>
</MetaDataVersion></Study></ODM>`))
	if err != nil {
		t.Fatal(err)
	}
	wantRead := []string{
		`d.xml:2: ItemRef IT.A: KeySequence "first" is not a non-negative integer; ignored`,
		`d.xml:3: ItemDef IT.A: Length "eight" is not a non-negative integer; ignored`,
		`d.xml:5: CodeList CL.B: Rank "x" of "low" is not a number; ignored`,
	}
	if fmt.Sprint(d.Warnings) != fmt.Sprint(wantRead) {
		t.Errorf("read warnings\n got %q\nwant %q", d.Warnings, wantRead)
	}
	specs, warns := d.VarSpecs("X")
	wantSpec := []string{
		`d.xml:3: ItemDef IT.A: CodeListRef CL.NONE has no CodeList`,
		`d.xml:5: ItemDef IT.B: CodeList CL.B: coded value "low" is not a number; typed continuous`,
	}
	if fmt.Sprint(warns) != fmt.Sprint(wantSpec) {
		t.Errorf("VarSpecs warnings\n got %q\nwant %q", warns, wantSpec)
	}
	if specs["A"].Type != Continuous || specs["B"].Type != Continuous {
		t.Errorf("A %s, B %s; want continuous", specs["A"].Type, specs["B"].Type)
	}
}

// TestOpenDefine opens testdata/define/study, whose define.xml overrides
// inference, and compares with the same CSV read without it.
func TestOpenDefine(t *testing.T) {
	dir := filepath.Join(defineDir, "study")
	s, err := Open(dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	plain, err := ReadCSVFile(filepath.Join(dir, "ae.csv"), CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	ae := s.Table("AE")
	if err := ae.Validate(); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name          string
		without, with Type
		levels        string
	}{
		{"AESITE", Ordinal, Nominal, "101,102,103,104"},                                              // numeric-looking, declared text
		{"AESEV", Binary, Ordinal, "MILD,MODERATE,SEVERE"},                                           // Rank order, MODERATE unobserved
		{"AETOXGR", Binary, Ordinal, "1,2,3,4,5"},                                                    // codelist grades 1-5
		{"AEACN", Nominal, Nominal, "DOSE NOT CHANGED,DOSE REDUCED,DRUG INTERRUPTED,DRUG WITHDRAWN"}, // value outside the codelist: inferred
		{"AEWT", Continuous, Continuous, ""},
		{"AESTDTC", DateTime, DateTime, ""},
	} {
		if got := plain.Col(tc.name).Type; got != tc.without {
			t.Errorf("without define: %s is %s, want %s", tc.name, got, tc.without)
		}
		c := ae.Col(tc.name)
		if c.Type != tc.with || strings.Join(c.Levels, ",") != tc.levels {
			t.Errorf("with define: %s is %s %q, want %s %q (%s)", tc.name, c.Type, c.Levels, tc.with, tc.levels, c.Why)
		}
	}
	if got := ae.Col("AEACN").Label; got != "Action Taken with Study Treatment" {
		t.Errorf("AEACN label %q, want the define's (kept when the type is dropped)", got)
	}
	if len(s.Warnings) != 4 || !strings.Contains(s.Warnings[3], `value "DRUG INTERRUPTED" is not one of the declared levels`) {
		t.Errorf("warnings %q, want 3 from the define and 1 about AEACN", s.Warnings)
	}
	// Options.Define names the file explicitly for a single-file study.
	s2, err := Open(filepath.Join(dir, "ae.csv"), Options{Define: filepath.Join(dir, "define.xml")})
	if err != nil {
		t.Fatal(err)
	}
	if got := s2.Table("AE").Col("AESEV").Type; got != Ordinal {
		t.Errorf("Options.Define: AESEV %s, want ordinal", got)
	}
}
