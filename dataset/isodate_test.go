package dataset

import (
	"errors"
	"math"
	"testing"
)

// Days since 1970-01-01 of the dates used below, from GNU coreutils 9.1:
// `echo $(( $(date -u -d 2003-12-15 +%s) / 86400 ))`.
const (
	d20030101 = 12053
	d20031201 = 12387
	d20031215 = 12401
	d20040101 = 12418
	d20230101 = 19358
	d20230228 = 19416
	d20230501 = 19478
	d20230510 = 19487
	d20230601 = 19509
	d20240101 = 19723
	d20240201 = 19754
	d20240229 = 19782
	d20240301 = 19783
	d20000229 = 11016
	d19000228 = -25509
	d19691231 = -1
)

const (
	hour   = 1.0 / 24
	minute = 1.0 / 1440
	second = 1.0 / 86400
)

func near(a, b float64) bool { return math.Abs(a-b) < 1e-9 }

// TestParseISO8601Examples checks the examples of SDTMIG v3.4 §4.4 (right
// truncation and unknown middle components; listed in shared/domain/SDTM.md §4)
// and of ISO 8601-1:2019 (calendar dates §5.2.2, reduced precision, time
// intervals §5.5). The expected intervals are hand-derived: a value covers its
// whole last known unit, lo from the day numbers above.
func TestParseISO8601Examples(t *testing.T) {
	tests := []struct {
		in     string
		want   Date
		lo, hi float64
		source string
	}{
		{"2003-12-15T13:14:17.123", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Minute: 14, Second: 17, Frac: 0.123, Prec: PrecSecond},
			d20031215 + 13*hour + 14*minute + 17*second, d20031215 + 13*hour + 14*minute + 18*second, "SDTMIG v3.4 §4.4"},
		{"2003-12-15T13:14:17", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Minute: 14, Second: 17, Prec: PrecSecond},
			d20031215 + 13*hour + 14*minute + 17*second, d20031215 + 13*hour + 14*minute + 18*second, "SDTMIG v3.4 §4.4"},
		{"2003-12-15T13:14", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Minute: 14, Prec: PrecMinute},
			d20031215 + 13*hour + 14*minute, d20031215 + 13*hour + 15*minute, "SDTMIG v3.4 §4.4"},
		{"2003-12-15T13", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Prec: PrecHour},
			d20031215 + 13*hour, d20031215 + 14*hour, "SDTMIG v3.4 §4.4"},
		{"2003-12-15", Date{Year: 2003, Month: 12, Day: 15, Prec: PrecDay}, d20031215, d20031215 + 1, "SDTMIG v3.4 §4.4"},
		{"2003-12", Date{Year: 2003, Month: 12, Prec: PrecMonth}, d20031201, d20040101, "SDTMIG v3.4 §4.4"},
		{"2003", Date{Year: 2003, Prec: PrecYear}, d20030101, d20040101, "SDTMIG v3.4 §4.4"},
		// Unknown middle components keep only the known leading parts.
		{"2003-12-15T-:15", Date{Year: 2003, Month: 12, Day: 15, Prec: PrecDay}, d20031215, d20031215 + 1, "SDTMIG v3.4 §4.4 (unknown hour)"},
		{"2003-12-15T13:-:17", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Prec: PrecHour},
			d20031215 + 13*hour, d20031215 + 14*hour, "SDTMIG v3.4 §4.4 (unknown minute)"},
		{"2003---15", Date{Year: 2003, Prec: PrecYear}, d20030101, d20040101, "SDTMIG v3.4 §4.4 (unknown month)"},
		// Unknown year: no position on the time line, so missing, not invalid.
		{"--12-15", Date{}, math.NaN(), math.NaN(), "SDTMIG v3.4 §4.4 (unknown year)"},
		{"-----T07:15", Date{}, math.NaN(), math.NaN(), "SDTMIG v3.4 §4.4 (unknown date)"},
		{"", Date{}, math.NaN(), math.NaN(), "SDTM: empty = unknown"},
		// Time-zone designators are checked and ignored (site clock time).
		{"2003-12-15T13:14Z", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Minute: 14, Prec: PrecMinute},
			d20031215 + 13*hour + 14*minute, d20031215 + 13*hour + 15*minute, "ISO 8601-1:2019 §5.3.3 (UTC)"},
		{"2003-12-15T13:14-05:00", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Minute: 14, Prec: PrecMinute},
			d20031215 + 13*hour + 14*minute, d20031215 + 13*hour + 15*minute, "ISO 8601-1:2019 §5.3.4 (offset)"},
		{"2003-12-15T13+01", Date{Year: 2003, Month: 12, Day: 15, Hour: 13, Prec: PrecHour},
			d20031215 + 13*hour, d20031215 + 14*hour, "ISO 8601-1:2019 §5.3.4 (offset, hours only)"},
		// Leap years (Gregorian rule: divisible by 4, centuries only by 400).
		{"2024-02-29", Date{Year: 2024, Month: 2, Day: 29, Prec: PrecDay}, d20240229, d20240301, "ISO 8601-1:2019 §3.2.1 (Gregorian calendar)"},
		{"2000-02-29", Date{Year: 2000, Month: 2, Day: 29, Prec: PrecDay}, d20000229, d20000229 + 1, "ISO 8601-1:2019 §3.2.1 (2000 is a leap year)"},
		{"2024-02", Date{Year: 2024, Month: 2, Prec: PrecMonth}, d20240201, d20240301, "hand-derived: February 2024 has 29 days"},
		{"1900-02-28", Date{Year: 1900, Month: 2, Day: 28, Prec: PrecDay}, d19000228, d19000228 + 1, "before 1970: negative day numbers"},
		{"1969-12-31T23:59:59", Date{Year: 1969, Month: 12, Day: 31, Hour: 23, Minute: 59, Second: 59, Prec: PrecSecond},
			d19691231 + 1 - second, 0, "hand-derived: last second before the epoch"},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			got, err := ParseISO8601(tt.in)
			if err != nil {
				t.Fatalf("ParseISO8601(%q) error %v, want none (%s)", tt.in, err, tt.source)
			}
			if got != tt.want {
				t.Errorf("ParseISO8601(%q) = %+v, want %+v (%s)", tt.in, got, tt.want, tt.source)
			}
			lo, hi := got.Interval()
			if math.IsNaN(tt.lo) {
				if !math.IsNaN(lo) || !math.IsNaN(hi) {
					t.Errorf("Interval(%q) = [%v, %v), want NaN (no position)", tt.in, lo, hi)
				}
				return
			}
			if !near(lo, tt.lo) || !near(hi, tt.hi) {
				t.Errorf("Interval(%q) = [%.9f, %.9f), want [%.9f, %.9f) (%s)", tt.in, lo, hi, tt.lo, tt.hi, tt.source)
			}
		})
	}
}

// TestParseISO8601Intervals checks "start/end" values (ISO 8601-1:2019 §5.5,
// time interval by start and end; SDTMIG v3.4 §4.4 uses them for uncertainty
// windows such as 2003-12-01/2003-12-10). Intervals hand-derived.
func TestParseISO8601Intervals(t *testing.T) {
	tests := []struct {
		in      string
		prec    Precision
		endPrec Precision
		lo, hi  float64
	}{
		{"2003-12-01/2003-12-10", PrecDay, PrecDay, d20031201, d20031201 + 10},
		{"2003-12/2004", PrecMonth, PrecYear, d20031201, d20040101 + 366}, // 2004 is a leap year
		{"2003-12-15T13:14/2003-12-15T15", PrecMinute, PrecHour, d20031215 + 13*hour + 14*minute, d20031215 + 16*hour},
		{"2003-12-10/2003-12", PrecDay, PrecMonth, d20031201 + 9, d20040101},
	}
	for _, tt := range tests {
		got, err := ParseISO8601(tt.in)
		if err != nil {
			t.Errorf("ParseISO8601(%q) error %v", tt.in, err)
			continue
		}
		if got.Prec != tt.prec || got.End == nil || got.End.Prec != tt.endPrec {
			t.Errorf("ParseISO8601(%q) = %+v (end %+v), want precisions %v/%v", tt.in, got, got.End, tt.prec, tt.endPrec)
			continue
		}
		if lo, hi := got.Interval(); !near(lo, tt.lo) || !near(hi, tt.hi) {
			t.Errorf("Interval(%q) = [%v, %v), want [%v, %v) (hand-derived)", tt.in, lo, hi, tt.lo, tt.hi)
		}
	}
	// An interval with an unknown-year end has no position.
	if d, err := ParseISO8601("2003-12-01/--12-10"); err != nil || !d.IsZero() {
		t.Errorf(`ParseISO8601("2003-12-01/--12-10") = %+v, %v, want zero Date, nil`, d, err)
	}
}

// TestParseISO8601Invalid checks values that SDTMIG v3.4 §4.4 and ISO
// 8601-1:2019 rule out, with the exact message each gives.
func TestParseISO8601Invalid(t *testing.T) {
	tests := []struct{ in, want string }{
		{"2023-02-30", `not an ISO 8601 date: "2023-02-30" (day out of range)`},
		{"2023-02-29", `not an ISO 8601 date: "2023-02-29" (day out of range)`}, // 2023 is not a leap year
		{"1900-02-29", `not an ISO 8601 date: "1900-02-29" (day out of range)`}, // centuries leap only by 400
		{"2023-04-31", `not an ISO 8601 date: "2023-04-31" (day out of range)`},
		{"2023-13-01", `not an ISO 8601 date: "2023-13-01" (month out of range)`},
		{"2023-00-10", `not an ISO 8601 date: "2023-00-10" (month out of range)`},
		{"2023-05-00", `not an ISO 8601 date: "2023-05-00" (day out of range)`},
		{"--02-30", `not an ISO 8601 date: "--02-30" (day out of range)`},
		{"UNK", `not an ISO 8601 date: "UNK" (want YYYY-MM-DD)`},
		{"2023/05/10", `not an ISO 8601 date: "2023/05/10" (want YYYY-MM-DD)`},
		{"10MAY2023", `not an ISO 8601 date: "10MAY2023" (want YYYY-MM-DD)`},
		{"20230510", `not an ISO 8601 date: "20230510" (want YYYY-MM-DD)`}, // basic format, ISO 8601-1:2019 §5.2.2.1 a
		{"2023-05-10T131417", `not an ISO 8601 date: "2023-05-10T131417" (want hh:mm:ss)`},
		{"2023-5-10", `not an ISO 8601 date: "2023-5-10" (want YYYY-MM-DD)`},
		{"23-05-10", `not an ISO 8601 date: "23-05-10" (want YYYY-MM-DD)`},
		{"2023-05-10 13:14", `not an ISO 8601 date: "2023-05-10 13:14" (want YYYY-MM-DD)`},
		{"2023-05-10T24:00", `not an ISO 8601 date: "2023-05-10T24:00" (hour out of range)`},
		{"2023-05-10T13:60", `not an ISO 8601 date: "2023-05-10T13:60" (minute out of range)`},
		{"2023-05-10T23:59:60", `not an ISO 8601 date: "2023-05-10T23:59:60" (second out of range)`},
		{"2023-05-10T13:14:17,5", `not an ISO 8601 date: "2023-05-10T13:14:17,5" (want hh:mm:ss)`},
		{"2023-05-10T13:14:17.", `not an ISO 8601 date: "2023-05-10T13:14:17." (bad fraction of a second)`},
		{"2023-05-10T", `not an ISO 8601 date: "2023-05-10T" (no time after T)`},
		{"2023-05T10:00", `not an ISO 8601 date: "2023-05T10:00" (time without a full date)`},
		{"2023-05-10T13+garbage", `not an ISO 8601 date: "2023-05-10T13+garbage" (bad time-zone offset)`},
		{"2023-05-10T13:14+25:00", `not an ISO 8601 date: "2023-05-10T13:14+25:00" (bad time-zone offset)`},
		{"2023-05-10T13TT", `not an ISO 8601 date: "2023-05-10T13TT" (two T separators)`},
		{"2003---", `not an ISO 8601 date: "2003---" (want YYYY-MM-DD)`},
		{"2003-12-15T13:-", `not an ISO 8601 date: "2003-12-15T13:-" (trailing unknown component; truncate instead)`},
		{"-----", `not an ISO 8601 date: "-----" (trailing unknown component; truncate instead)`},
		{"P2Y3M", `not an ISO 8601 date: "P2Y3M" (want YYYY-MM-DD)`},
		{"2003-12-01/P10D", `not an ISO 8601 date: "2003-12-01/P10D" (want YYYY-MM-DD)`},
		{"2003-12-10/2003-12-09", `not an ISO 8601 date: "2003-12-10/2003-12-09" (interval ends before it starts)`},
		{"2003-12-10/", `not an ISO 8601 date: "2003-12-10/" (empty part)`},
		{"2003-12-01/2003-12-10/2003-12-11", `not an ISO 8601 date: "2003-12-01/2003-12-10/2003-12-11" (want YYYY-MM-DD)`},
	}
	for _, tt := range tests {
		d, err := ParseISO8601(tt.in)
		if err == nil {
			t.Errorf("ParseISO8601(%q) = %+v, want error %q", tt.in, d, tt.want)
			continue
		}
		if !errors.Is(err, ErrNotISODate) {
			t.Errorf("ParseISO8601(%q) error %v does not wrap ErrNotISODate", tt.in, err)
		}
		if err.Error() != tt.want {
			t.Errorf("ParseISO8601(%q) error\n got %s\nwant %s", tt.in, err, tt.want)
		}
	}
}

func mustInterval(t *testing.T, s string) (lo, hi float64) {
	t.Helper()
	d, err := ParseISO8601(s)
	if err != nil {
		t.Fatalf("ParseISO8601(%q): %v", s, err)
	}
	return d.Interval()
}

// TestLessEq checks the comparison semantics of partial dates in
// shared/domain/SDTM.md §4: each value is the closed range of whole units it
// can fall in; a ≤ b is true when a's latest unit is not after b's earliest,
// false when a's earliest is after b's latest, else unknown. Expected values
// are hand-derived from that rule.
func TestLessEq(t *testing.T) {
	tests := []struct {
		a, b string
		unit Precision
		want Tri
	}{
		{"2023-05", "2023-05-10", PrecDay, Unknown},       // May could be before or after the 10th
		{"2023-05-10", "2023-05", PrecDay, Unknown},       // and the other way round
		{"2023-05-10", "2023-05-10", PrecDay, True},       // equal complete dates satisfy ≤
		{"2023-05-10", "2023-05-11", PrecDay, True},       //
		{"2023-05-11", "2023-05-10", PrecDay, False},      //
		{"2023-04", "2023-05-10", PrecDay, True},          // all of April is before
		{"2023-06", "2023-05-10", PrecDay, False},         // all of June is after
		{"2023", "2023-05-10", PrecDay, Unknown},          // different precisions overlapping
		{"2022", "2023-05", PrecDay, True},                //
		{"2023-05-10T08:30", "2023-05-10", PrecDay, True}, // same day at day unit
		{"2023-05-10", "2023-05-10T08:30", PrecDay, True},
		{"2023-05-10", "2023-05-10T08:30", PrecHour, Unknown}, // a date-only value is the whole day
		{"2023-05-10T08:30", "2023-05-10", PrecMinute, Unknown},
		{"2023-05-09", "2023-05-10T08:30", PrecHour, True},
		{"2023-05-11", "2023-05-10T08:30", PrecHour, False},
		{"2023-05-10T08:30", "2023-05-10T08:45", PrecHour, True}, // same hour
		{"2023-05-10T08:45", "2023-05-10T08:30", PrecHour, True},
		{"2023-05-10T08:45", "2023-05-10T08:30", PrecMinute, False},
		{"2023-05-10T08:30", "2023-05-10T08:30", PrecMinute, True},
		{"2023-05-10T08:30:01", "2023-05-10T08:30:00", PrecSecond, False},
		{"2023-05-10T08:30:00", "2023-05-10T08:30:00", PrecSecond, True},
		{"2023-05-10T08:30:00.900", "2023-05-10T08:30:00.100", PrecSecond, True}, // fractions are within the second
		{"2023-05-10T08", "2023-05-10T08:30", PrecMinute, Unknown},
		{"2023-05-01/2023-05-09", "2023-05-10", PrecDay, True}, // window wholly before
		{"2023-05-01/2023-05-12", "2023-05-10", PrecDay, Unknown},
		{"2023-05", "2023-05-10", PrecYear, Unknown}, // coarser units act as day
	}
	for _, tt := range tests {
		alo, ahi := mustInterval(t, tt.a)
		blo, bhi := mustInterval(t, tt.b)
		if got := LessEq(alo, ahi, blo, bhi, tt.unit); got != tt.want {
			t.Errorf("LessEq(%s, %s, unit %v) = %v, want %v (hand-derived, SDTM.md §4)", tt.a, tt.b, tt.unit, got, tt.want)
		}
	}
	nan := math.NaN()
	if got := LessEq(nan, nan, d20230510, d20230510+1, PrecDay); got != Unknown {
		t.Errorf("LessEq(missing, 2023-05-10) = %v, want unknown", got)
	}
}

// TestLessEqSecondsFarFromEpoch guards the rounding of unit bounds: at second
// precision day numbers near 2.9e6 (year 9999) carry errors above 1e-9 of a unit.
func TestLessEqSecondsFarFromEpoch(t *testing.T) {
	for _, y := range []string{"1900", "2023", "2099", "9999"} {
		a := y + "-12-31T23:59:58"
		b := y + "-12-31T23:59:59"
		alo, ahi := mustInterval(t, a)
		blo, bhi := mustInterval(t, b)
		if got := LessEq(alo, ahi, blo, bhi, PrecSecond); got != True {
			t.Errorf("LessEq(%s, %s, second) = %v, want true", a, b, got)
		}
		if got := LessEq(blo, bhi, alo, ahi, PrecSecond); got != False {
			t.Errorf("LessEq(%s, %s, second) = %v, want false", b, a, got)
		}
		if got := LessEq(blo, bhi, blo, bhi, PrecSecond); got != True {
			t.Errorf("LessEq(%s, %s, second) = %v, want true", b, b, got)
		}
	}
}

// TestFormatDays checks that FormatDays writes the earliest point of a value at
// its precision and that the text parses back to the same interval.
func TestFormatDays(t *testing.T) {
	tests := []struct {
		in, want string
	}{
		{"2003", "2003"},
		{"2003-12", "2003-12"},
		{"2003-12-15", "2003-12-15"},
		{"2003-12-15T13", "2003-12-15T13"},
		{"2003-12-15T13:14", "2003-12-15T13:14"},
		{"2003-12-15T13:14:17", "2003-12-15T13:14:17"},
		{"2003-12-15T13:14:17.987", "2003-12-15T13:14:17"}, // the fraction is below the precision; never rounded up
		{"2003-12-15T-:15", "2003-12-15"},
		{"2003---15", "2003"},
		{"2003-12-15T13:14+02:00", "2003-12-15T13:14"},
		{"1969-12-31T23:59:59", "1969-12-31T23:59:59"},
		{"0001-01-01", "0001-01-01"},
		{"9999-12-31T23:59:59", "9999-12-31T23:59:59"},
		{"2024-02-29T00:00:00", "2024-02-29T00:00:00"},
	}
	for _, tt := range tests {
		d, err := ParseISO8601(tt.in)
		if err != nil {
			t.Fatalf("ParseISO8601(%q): %v", tt.in, err)
		}
		lo, hi := d.Interval()
		got := FormatDays(lo, d.Prec)
		if got != tt.want {
			t.Errorf("FormatDays(Interval(%q)) = %q, want %q", tt.in, got, tt.want)
		}
		back, err := ParseISO8601(got)
		if err != nil {
			t.Errorf("ParseISO8601(FormatDays(%q) = %q): %v", tt.in, got, err)
			continue
		}
		if blo, bhi := back.Interval(); blo != lo || bhi != hi || back.Prec != d.Prec {
			t.Errorf("round trip %q → %q: [%v, %v) %v, want [%v, %v) %v", tt.in, got, blo, bhi, back.Prec, lo, hi, d.Prec)
		}
	}
	if got := FormatDays(math.NaN(), PrecDay); got != "" {
		t.Errorf("FormatDays(NaN) = %q, want \"\"", got)
	}
	if got := FormatDays(d20230510, PrecNone); got != "" {
		t.Errorf("FormatDays(_, PrecNone) = %q, want \"\"", got)
	}
}

// TestFormatDaysEveryDay round-trips every day of 1999–2025 at day precision
// (hand-derived: the span is exactly [n, n+1)).
func TestFormatDaysEveryDay(t *testing.T) {
	for n := 10592.0; n < d20240101+2*366; n++ { // 1999-01-01 onwards
		s := FormatDays(n, PrecDay)
		d, err := ParseISO8601(s)
		if err != nil {
			t.Fatalf("day %v: ParseISO8601(%q): %v", n, s, err)
		}
		if lo, hi := d.Interval(); lo != n || hi != n+1 {
			t.Fatalf("day %v: %q → [%v, %v)", n, s, lo, hi)
		}
	}
}

func TestPrecisionNames(t *testing.T) {
	for p := PrecYear; p <= PrecSecond; p++ {
		got, err := ParsePrecision(p.String())
		if err != nil || got != p {
			t.Errorf("ParsePrecision(%q) = %v, %v, want %v", p.String(), got, err, p)
		}
	}
	if _, err := ParsePrecision("fortnight"); err == nil || err.Error() != `unknown date unit "fortnight" (want year, month, day, hour, minute or second)` {
		t.Errorf("ParsePrecision(fortnight) error = %v", err)
	}
	if _, err := ParsePrecision("none"); err == nil {
		t.Errorf("ParsePrecision(none) succeeded, want error")
	}
}
