package dataset

import (
	"bytes"
	"encoding/binary"
	"encoding/csv"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

const xptDir = "../testdata/xpt"

// TestReadXPTHaven reads the fixtures written by R's haven (write_xpt,
// version = 5; versions in testdata/xpt/versions.txt) and checks every value
// against what testdata/xpt/make_fixtures.R gave the writer
// (testdata/xpt/expected.csv). Doubles are compared bit for bit: every one
// lies in the IBM range, where IEEE → IBM → IEEE is exact.
func TestReadXPTHaven(t *testing.T) {
	f, err := os.Open(filepath.Join(xptDir, "expected.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	tables := map[string]*Table{}
	nrows := map[string]int{}
	checked := 0
	for _, r := range recs[1:] {
		file, ds, name, kind, val := r[0], r[1], r[2], r[4], r[5]
		row, _ := strconv.Atoi(r[3])
		if _, ok := tables[file+"/"+ds]; !ok {
			ts, err := ReadXPTFile(filepath.Join(xptDir, file), XPTOptions{})
			if err != nil {
				t.Fatalf("ReadXPTFile(%s): %v", file, err)
			}
			for _, tb := range ts {
				if err := tb.Validate(); err != nil {
					t.Fatalf("%s %s: Validate: %v", file, tb.Name, err)
				}
				tables[file+"/"+tb.Name] = tb
			}
		}
		tb := tables[file+"/"+ds]
		if tb == nil {
			t.Fatalf("%s: no dataset %q", file, ds)
		}
		nrows[file+"/"+ds] = max(nrows[file+"/"+ds], row)
		c := tb.Col(name)
		if c == nil {
			t.Fatalf("%s %s: no variable %q", file, ds, name)
		}
		i := row - 1
		switch kind {
		case "num":
			want, err := strconv.ParseFloat(val, 64)
			if err != nil {
				t.Fatal(err)
			}
			var got float64
			if c.Storage == StoreCode { // identifiers (VSSEQ) keep their text
				got, _ = strconv.ParseFloat(c.String(i), 64)
			} else {
				got = c.Float(i)
			}
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Errorf("%s %s.%s row %d = %x (%.17g), want %x (%.17g) (haven write_xpt input)", file, ds, name, row, got, got, want, want)
			}
		case "na":
			if !c.Missing(i) {
				t.Errorf("%s %s.%s row %d = %q, want missing", file, ds, name, row, c.String(i))
			}
			if val != "." && c.Special[i] != val[0] {
				t.Errorf("%s %s.%s row %d: special missing %q, want %q", file, ds, name, row, c.Special[i], val)
			}
			if val == "." && c.Special[i] != 0 {
				t.Errorf("%s %s.%s row %d: special missing %q, want the ordinary '.'", file, ds, name, row, c.Special[i])
			}
		case "chr":
			if got := c.String(i); got != val || c.Missing(i) != (val == "") {
				t.Errorf("%s %s.%s row %d = %q (missing %v), want %q", file, ds, name, row, got, c.Missing(i), val)
			}
		case "date":
			if c.Storage != StoreDate {
				t.Fatalf("%s %s.%s: storage %d, want date", file, ds, name, c.Storage)
			}
			if got := c.String(i); got != val {
				t.Errorf("%s %s.%s row %d = %q, want %q", file, ds, name, row, got, val)
			}
		default:
			t.Fatalf("expected.csv: unknown kind %q", kind)
		}
		checked++
	}
	if checked < 100 {
		t.Fatalf("only %d values checked", checked)
	}
	for k, n := range nrows {
		if tables[k].NRows != n {
			t.Errorf("%s: %d rows, want %d", k, tables[k].NRows, n)
		}
	}
	edge := tables["edge.xpt/EDGE"]
	for _, tc := range []struct{ v, label, format string }{
		{"X", "Forty character label for the X variable", ""},
		{"C200", "Two hundred byte text", ""}, // haven writes no format for text
		{"DT", "", "DATE9."},
	} {
		c := edge.Col(tc.v)
		if c.Label != tc.label || c.Format != tc.format {
			t.Errorf("EDGE.%s: label %q format %q, want %q %q", tc.v, c.Label, c.Format, tc.label, tc.format)
		}
	}
	for _, tc := range []struct {
		v    string
		want Type
	}{{"X", Continuous}, {"DT", DateTime}, {"AESTDTC", DateTime}, {"ROW", Continuous}} {
		if got := edge.Col(tc.v).Type; got != tc.want {
			t.Errorf("EDGE.%s: type %s, want %s", tc.v, got, tc.want)
		}
	}
	if got := tables["two.xpt/VS"].Col("VSSEQ").Type; got != Identifier {
		t.Errorf("VS.VSSEQ: type %s, want identifier (SDTM --SEQ)", got)
	}
}

// TestReadXPTClamp reads testdata/xpt/clamp.xpt, where haven 2.5.1 wrote
// 7.237005e75 and −1e76 as the largest IBM magnitude (bytes 7F FF … FF, seen
// with xxd) and 2^−261 as zero. Hand-derived: 0x7FFFFFFFFFFFFFFF is
// (2^56 − 1) × 16^63 × 2^−56 = (2^56 − 1) × 2^196, which rounds to the 53-bit
// double 2^252 (the documented 56 → 53 bit rounding).
func TestReadXPTClamp(t *testing.T) {
	ts, err := ReadXPTFile(filepath.Join(xptDir, "clamp.xpt"), XPTOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0x1p252, -0x1p252, 0}
	c := ts[0].Col("X")
	for i, w := range want {
		if got := c.Floats[i]; got != w {
			t.Errorf("X row %d = %g, want %g", i+1, got, w)
		}
	}
}

// TestIBMToFloat checks the conversion on test vectors. "computed" vectors are
// from FORMATS.md (a) (derived from the definition, not published).
func TestIBMToFloat(t *testing.T) {
	for _, tc := range []struct {
		name   string
		b      []byte
		want   float64
		source string
	}{
		{"one", []byte{0x41, 0x10, 0, 0, 0, 0, 0, 0}, 1, "computed (FORMATS.md)"},
		{"minus one", []byte{0xC1, 0x10, 0, 0, 0, 0, 0, 0}, -1, "computed (FORMATS.md)"},
		{"half", []byte{0x40, 0x80, 0, 0, 0, 0, 0, 0}, 0.5, "computed (FORMATS.md)"},
		{"hundred", []byte{0x42, 0x64, 0, 0, 0, 0, 0, 0}, 100, "computed (FORMATS.md)"},
		{"118.5", []byte{0x42, 0x76, 0x80, 0, 0, 0, 0, 0}, 118.5, "computed (FORMATS.md)"},
		{"0.1", []byte{0x40, 0x19, 0x99, 0x99, 0x99, 0x99, 0x99, 0x9A}, 0.1, "computed (FORMATS.md); 0x199999999999A × 2^-56 rounds to the double 0.1"},
		{"truncated 1.0", []byte{0x41, 0x10}, 1, "computed (FORMATS.md): 2-byte numeric padded with zeros"},
		{"short 2.1", []byte{0x41, 0x21, 0x99, 0x99}, float64(0x219999) / (1 << 20),
			"published: x'41219999' is about 2.09999943 (S/390 floating point, billlalonde.tripod.com/card/float.htm); exact 0x219999/2^24 × 16"},
		{"smallest normalised", []byte{0x00, 0x10, 0, 0, 0, 0, 0, 0}, 0x1p-260, "theoretical: 16^-64 × 1/16 = 2^-260 ≈ 5.397605e-79"},
		{"largest", []byte{0x7F, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF, 0xFF}, 0x1p252, "theoretical: (1 − 16^-14) × 16^63 rounds to 2^252 ≈ 7.237006e75"},
		{"unnormalised", []byte{0x00, 0x00, 0, 0, 0, 0, 0, 1}, 0x1p-312, "theoretical: 2^-56 × 16^-64"},
		{"negative zero", []byte{0x80, 0, 0, 0, 0, 0, 0, 0}, 0, "theoretical: zero fraction"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, code := ibmValue(tc.b)
			if code != 0 || got != tc.want {
				t.Errorf("ibmValue(% x) = %.17g (code %q), want %.17g (%s)", tc.b, got, code, tc.want, tc.source)
			}
		})
	}
	// System/360 Principles of Operation (A22-6821-0, "Floating-Point
	// Arithmetic"): magnitudes range from about 10^-78 to 10^75.
	if lo, hi := IBMToFloat(0x0010000000000000), IBMToFloat(0x7FFFFFFFFFFFFFFF); lo < 1e-79 || lo > 1e-78 || hi < 1e75 || hi > 1e76 {
		t.Errorf("IBM range [%g, %g], want about 10^-78 to 10^75 (Principles of Operation)", lo, hi)
	}
}

// TestXPTMissingCodes checks the 28 missing codes of TS-140 ("Missing
// values"): '.', '_' and 'A'–'Z' in the first byte, the rest 0x00.
func TestXPTMissingCodes(t *testing.T) {
	codes := []byte{'.', '_'}
	for c := byte('A'); c <= 'Z'; c++ {
		codes = append(codes, c)
	}
	if len(codes) != 28 {
		t.Fatalf("%d codes", len(codes))
	}
	for _, c := range codes {
		for _, n := range []int{2, 8} {
			b := make([]byte, n)
			b[0] = c
			if v, got := ibmValue(b); got != c || !math.IsNaN(v) {
				t.Errorf("ibmValue(% x) = %g, %q; want NaN, %q", b, v, got, c)
			}
		}
	}
	// A code followed by a non-zero byte is a number.
	if _, got := ibmValue([]byte{'A', 1, 0, 0}); got != 0 {
		t.Errorf("'A' 01 00 00 read as missing code %q, want a number", got)
	}
}

// TestFloatToIBMRoundTrip: every double in the IBM range survives IEEE →
// IBM → IEEE exactly (a normalised IBM fraction keeps ≥ 53 bits).
func TestFloatToIBMRoundTrip(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 1))
	vals := []float64{0x1p-260, 0x1.fffffffffffffp251, 1, -1, 0.1, math.Pi, 1e-78, 7e75}
	for range 20000 {
		e := r.IntN(251+259) - 259
		v := math.Ldexp(1+r.Float64(), e-1)
		if r.IntN(2) == 0 {
			v = -v
		}
		vals = append(vals, v)
	}
	for _, v := range vals {
		u, ok := FloatToIBM(v)
		if !ok {
			t.Fatalf("FloatToIBM(%g) not ok", v)
		}
		if got := IBMToFloat(u); got != v {
			t.Fatalf("IBMToFloat(FloatToIBM(%x)) = %x", v, got)
		}
	}
	for _, v := range []float64{0x1p-261, 0x1p252, math.Inf(1), math.NaN()} {
		if _, ok := FloatToIBM(v); ok {
			t.Errorf("FloatToIBM(%g) ok, want out of range", v)
		}
	}
	if u, _ := FloatToIBM(1); u != 0x4110000000000000 {
		t.Errorf("FloatToIBM(1) = %016x, want 4110000000000000 (computed, FORMATS.md)", u)
	}
}

// TestReadXPTPadding: chars.xpt has one 3-byte variable, so the
// 65 bytes of padding after 5 rows look like 21 blank rows; they are dropped,
// the real blank row 4 is kept.
func TestReadXPTPadding(t *testing.T) {
	ts, err := ReadXPTFile(filepath.Join(xptDir, "chars.xpt"), XPTOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tb := ts[0]
	if tb.NRows != 5 {
		t.Fatalf("%d rows, want 5", tb.NRows)
	}
	if !tb.Col("A").Missing(3) || tb.Col("A").String(4) != "w" {
		t.Errorf("rows 4-5 = %q %q, want missing, \"w\"", tb.Col("A").String(3), tb.Col("A").String(4))
	}
}

func readFixture(t *testing.T, name string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(xptDir, name))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestReadXPTEncoding patches a character value of chars.xpt to the Latin-1
// byte 0xE9 (é).
func TestReadXPTEncoding(t *testing.T) {
	b := readFixture(t, "chars.xpt")
	i := bytes.LastIndex(b, []byte("w"))
	b[i] = 0xE9
	ts, err := ReadXPT("chars.xpt", bytes.NewReader(b), XPTOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got := ts[0].Col("A").String(4); got != "é" {
		t.Errorf("latin1: %q, want \"é\"", got)
	}
	_, err = ReadXPT("chars.xpt", bytes.NewReader(b), XPTOptions{Encoding: "utf-8"})
	if !errors.Is(err, ErrBadEncoding) {
		t.Errorf("utf-8: error %v, want ErrBadEncoding", err)
	}
}

// TestReadXPTErrors damages the haven fixtures and checks the exact message.
func TestReadXPTErrors(t *testing.T) {
	two := readFixture(t, "two.xpt")
	edge := readFixture(t, "edge.xpt")
	patch := func(b []byte, off int, s string) []byte {
		b = bytes.Clone(b)
		copy(b[off:], s)
		return b
	}
	u16 := func(b []byte, off int, v uint16) []byte {
		b = bytes.Clone(b)
		binary.BigEndian.PutUint16(b[off:], v)
		return b
	}
	ns1 := 8 * 80 // first NAMESTR
	for _, tc := range []struct {
		name string
		in   []byte
		want string
		is   error
	}{
		{"empty", nil, "f.xpt: record 1: empty file", ErrEmpty},
		{"not xpt", []byte("USUBJID,AGE\n"), "f.xpt: record 1: " + ErrNotXPT.Error(), ErrNotXPT},
		{"v8", patch(two, 20, "LIBV8   "), "f.xpt: record 1: " + ErrXPTVersion.Error(), ErrXPTVersion},
		{"cport", patch(two, 0, "**COMPRESSED** **COMPRESSED**"), "f.xpt: record 1: " + ErrXPTCPORT.Error(), ErrXPTCPORT},
		{"truncated in namestr", two[:ns1+100], "f.xpt: record 9 (byte 640): file truncated: 3 variables need 420 bytes of NAMESTR records, 100 remain", ErrTruncated},
		{"bad namestr size", patch(two, 3*80+74, "0099"), `f.xpt: record 4 (byte 314): NAMESTR size "0099" in the member header (want 0140, or 0136 for VAX/VMS)`, nil},
		{"bad var count", patch(two, 7*80+54, "00x3"), `f.xpt: record 8 (byte 614): bad variable count "00x3" in the NAMESTR header (want 4 digits)`, nil},
		{"numeric length", u16(two, ns1+140+4, 9), `f.xpt: record 10 (byte 784): variable "AGE": numeric length 9 (want 2 to 8)`, nil},
		{"char length", u16(two, ns1+4, 201), `f.xpt: record 9 (byte 644): variable "USUBJID": character length 201 (want 1 to 200)`, nil},
		{"var type", u16(two, ns1, 3), `f.xpt: record 9 (byte 640): variable "USUBJID": variable type 3 (want 1 numeric or 2 character)`, nil},
		{"duplicate name", patch(two, ns1+140+8, "USUBJID "), `f.xpt: record 10 (byte 788): variable "USUBJID": duplicate column name`, ErrDuplicateColumn},
		{"missing obs header", patch(two, 14*80, "HEADER RECORD*******OBX"), `f.xpt: record 15 (byte 1120): want the OBS header, found "HEADER RECORD*******OBX     HEADER RECORD!!!!!!!"`, nil},
		{"truncated observation", edge[:len(edge)-80*8+5], "", ErrTruncated},
		{"labelv8", patch(two, 14*80, "HEADER RECORD*******LABELV8 HEADER RECORD!!!!!!!"), "f.xpt: record 15 (byte 1120): " + ErrXPTVersion.Error(), ErrXPTVersion},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadXPT("f.xpt", bytes.NewReader(tc.in), XPTOptions{})
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v, want a *ParseError", err)
			}
			if tc.want != "" && err.Error() != tc.want {
				t.Errorf("error\n got %s\nwant %s", err, tc.want)
			}
			if tc.is != nil && !errors.Is(err, tc.is) {
				t.Errorf("error %v, want errors.Is %v", err, tc.is)
			}
		})
	}
}

// TestWriteXPTRoundTrip writes the haven fixtures back with WriteXPT and
// reads them again: identical tables.
func TestWriteXPTRoundTrip(t *testing.T) {
	for _, f := range []string{"edge.xpt", "two.xpt", "chars.xpt"} {
		ts, err := ReadXPTFile(filepath.Join(xptDir, f), XPTOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for _, tb := range ts {
			var buf bytes.Buffer
			if err := WriteXPT(&buf, tb); err != nil {
				t.Fatalf("%s %s: WriteXPT: %v", f, tb.Name, err)
			}
			if buf.Len()%80 != 0 {
				t.Errorf("%s %s: %d bytes, not a multiple of 80", f, tb.Name, buf.Len())
			}
			back, err := ReadXPT(f, bytes.NewReader(buf.Bytes()), XPTOptions{})
			if err != nil {
				t.Fatalf("%s %s: reading back: %v", f, tb.Name, err)
			}
			if err := sameTable(tb, back[0]); err != nil {
				t.Errorf("%s %s: %v", f, tb.Name, err)
			}
		}
	}
}

func TestSASFormat(t *testing.T) {
	for _, tc := range []struct {
		name string
		w, d int
		want string
	}{{"DATE", 9, 0, "DATE9."}, {"", 8, 2, "8.2"}, {"$CHAR", 20, 0, "$CHAR20."}, {"", 0, 0, ""}, {"BEST", 0, 0, "BEST."}} {
		if got := sasFormat(tc.name, tc.w, tc.d); got != tc.want {
			t.Errorf("sasFormat(%q, %d, %d) = %q, want %q", tc.name, tc.w, tc.d, got, tc.want)
		}
	}
	if sasDateKind("DATE") != sasDays || sasDateKind("E8601DT") != sasSeconds || sasDateKind("TIME") != 0 || sasDateKind("BEST") != 0 {
		t.Error("sasDateKind misclassifies DATE, E8601DT, TIME or BEST")
	}
}
