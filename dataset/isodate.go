package dataset

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// Precision is how much of an ISO 8601 date-time is known. Values are ordered:
// a larger precision is finer.
type Precision uint8

// The precisions. PrecNone marks a missing or unplaceable value.
const (
	PrecNone Precision = iota
	PrecYear
	PrecMonth
	PrecDay
	PrecHour
	PrecMinute
	PrecSecond
)

var precNames = [...]string{"none", "year", "month", "day", "hour", "minute", "second"}

func (p Precision) String() string {
	if int(p) < len(precNames) {
		return precNames[p]
	}
	return "precision(" + strconv.Itoa(int(p)) + ")"
}

// ParsePrecision returns the precision named s ("day", "hour", ...).
func ParsePrecision(s string) (Precision, error) {
	for i, n := range precNames {
		if n == s && i > 0 {
			return Precision(i), nil
		}
	}
	return PrecNone, fmt.Errorf("unknown date unit %q (want year, month, day, hour, minute or second)", s)
}

// A Date is an ISO 8601 calendar date-time as SDTM writes it: extended format,
// reduced precision by right truncation. Fields beyond Prec are zero. An
// interval value ("start/end") sets End to its end; otherwise End is nil.
type Date struct {
	Year, Month, Day     int
	Hour, Minute, Second int
	Frac                 float64 // fraction of a second, [0,1)
	Prec                 Precision
	End                  *Date
}

// IsZero reports whether d is the zero (missing) Date.
func (d Date) IsZero() bool { return d.Prec == PrecNone }

// ParseISO8601 parses an SDTM --DTC value (SDTMIG v3.4 §4.4; ISO 8601-1:2019
// §5.2.2 calendar dates, §5.3 time of day, §5.4 date and time, §5.5 time
// intervals, extended format only): YYYY-MM-DDThh:mm:ss(.fff), right-truncated
// to any precision ("2003-12", "2003"), with an unknown component written as a
// single "-" ("2003---15", "2003-12-15T-:15", "--12-15", "-----T07:15"). Only the
// known leading components are kept, so "2003---15" has year precision and
// "2003-12-15T-:15" day precision. An unknown component must be followed by a
// known one: trailing unknowns are written by truncation ("2003---" is
// invalid). A time needs all three date components written. A time-zone
// designator (Z, ±hh or ±hh:mm) is checked and ignored: clock times are kept as
// recorded at the site. A value "a/b" is an interval (an uncertainty window)
// from a's earliest to b's latest point; it must not end before it starts. A
// value with an unknown year ("--12-15", "-----T07:15") has no position and
// parses to the zero Date with a nil error, as does the empty string.
//
// Invalid, returning ErrNotISODate: the basic format ("20230510",
// "T131417"), other separators ("2023/05/10", "2023-05-10 13:14"), month
// names ("10MAY2023"), impossible dates ("2023-02-30", "2023-02-29",
// "2023-13-01"), "UNK", durations ("P2Y", "2003-12-01/P10D"), the hour 24
// ("24:00": ISO 8601:2004 allowed it for the end of a day, the 2019 edition as
// first published did not (from memory); SDTM data should write 00:00 of the
// next day, and one clock keeps comparisons simple), the leap second 60, and a
// comma as the decimal sign (SDTM uses the full stop).
func ParseISO8601(s string) (Date, error) {
	if s == "" {
		return Date{}, nil
	}
	if i := strings.IndexByte(s, '/'); i >= 0 {
		a, err := parseOne(s[:i], s)
		if err != nil {
			return Date{}, err
		}
		b, err := parseOne(s[i+1:], s)
		if err != nil {
			return Date{}, err
		}
		if a.Prec == PrecNone || b.Prec == PrecNone {
			return Date{}, nil
		}
		alo, _ := a.span()
		_, bhi := b.span()
		if !(bhi > alo) {
			return Date{}, fmt.Errorf("%w: %q (interval ends before it starts)", ErrNotISODate, s)
		}
		a.End = &b
		return a, nil
	}
	return parseOne(s, s)
}

// A component of a date-time as written: absent, unknown ("-") or a number.
type isoComp struct {
	present, known bool
	v              int
}

// parseOne parses one date-time (no "/"); whole is the full value for errors.
func parseOne(s, whole string) (Date, error) {
	bad := func(why string) (Date, error) {
		return Date{}, fmt.Errorf("%w: %q (%s)", ErrNotISODate, whole, why)
	}
	if s == "" {
		return bad("empty part")
	}
	datePart, timePart, hasT := strings.Cut(s, "T")
	if hasT {
		if strings.IndexByte(timePart, 'T') >= 0 {
			return bad("two T separators")
		}
		var ok bool
		if timePart, ok = stripZone(timePart); !ok {
			return bad("bad time-zone offset")
		}
		if timePart == "" {
			return bad("no time after T")
		}
	}
	// comps: year, month, day, hour, minute, second.
	var comps [6]isoComp
	rest := datePart
	// Year: four digits or "-".
	switch {
	case len(rest) >= 4 && isDigits(rest[:4]):
		comps[0] = isoComp{true, true, atoi(rest[:4])}
		rest = rest[4:]
	case strings.HasPrefix(rest, "-"):
		comps[0] = isoComp{present: true}
		rest = rest[1:]
	default:
		return bad("want YYYY-MM-DD")
	}
	for k := 1; k <= 2 && rest != ""; k++ {
		if rest[0] != '-' {
			return bad("want YYYY-MM-DD")
		}
		rest = rest[1:]
		switch {
		case len(rest) >= 2 && isDigits(rest[:2]):
			comps[k] = isoComp{true, true, atoi(rest[:2])}
			rest = rest[2:]
		case strings.HasPrefix(rest, "-"):
			comps[k] = isoComp{present: true}
			rest = rest[1:]
		default:
			return bad("want YYYY-MM-DD")
		}
	}
	if rest != "" {
		return bad("want YYYY-MM-DD")
	}
	if hasT {
		if !comps[2].present {
			return bad("time without a full date")
		}
		parts := strings.Split(timePart, ":")
		if len(parts) > 3 {
			return bad("want hh:mm:ss")
		}
		for k, p := range parts {
			if k == 2 {
				sec, frac, hasFrac := strings.Cut(p, ".")
				if hasFrac && (frac == "" || !isDigits(frac) || sec == "-") {
					return bad("bad fraction of a second")
				}
				p = sec
			}
			switch {
			case len(p) == 2 && isDigits(p):
				comps[3+k] = isoComp{true, true, atoi(p)}
			case p == "-":
				comps[3+k] = isoComp{present: true}
			default:
				return bad("want hh:mm:ss")
			}
		}
	}
	last := 0
	for k, c := range comps {
		if c.present {
			last = k
		}
	}
	if !comps[last].known {
		return bad("trailing unknown component; truncate instead")
	}
	// Ranges. A day is checked against its month and year when they are known
	// (a leap year allows 29 February; an unknown year allows it too).
	y, m, d := comps[0], comps[1], comps[2]
	if m.known && (m.v < 1 || m.v > 12) {
		return bad("month out of range")
	}
	if d.known {
		maxDay := 31
		switch {
		case m.known && y.known:
			maxDay = daysIn(y.v, m.v)
		case m.known:
			maxDay = daysIn(2000, m.v)
		}
		if d.v < 1 || d.v > maxDay {
			return bad("day out of range")
		}
	}
	if comps[3].known && comps[3].v > 23 {
		return bad("hour out of range")
	}
	if comps[4].known && comps[4].v > 59 {
		return bad("minute out of range")
	}
	if comps[5].known && comps[5].v > 59 {
		return bad("second out of range")
	}
	// Keep the known leading components.
	var out Date
	for k, c := range comps {
		if !c.known {
			break
		}
		switch k {
		case 0:
			out.Year = c.v
		case 1:
			out.Month = c.v
		case 2:
			out.Day = c.v
		case 3:
			out.Hour = c.v
		case 4:
			out.Minute = c.v
		case 5:
			out.Second = c.v
			if _, frac, ok := strings.Cut(timePart, "."); ok {
				out.Frac, _ = strconv.ParseFloat("0."+frac, 64)
			}
		}
		out.Prec = Precision(k + 1)
	}
	return out, nil
}

// stripZone removes a time-zone designator (Z, ±hh, ±hh:mm) from the end of a
// time; ok is false for a malformed one.
func stripZone(t string) (string, bool) {
	if strings.HasSuffix(t, "Z") {
		return t[:len(t)-1], true
	}
	k := strings.LastIndexAny(t, "+-")
	if k <= 0 || t[k-1] < '0' || t[k-1] > '9' {
		if strings.IndexByte(t, '+') >= 0 {
			return t, false
		}
		return t, true // a "-" here marks an unknown component
	}
	z := t[k+1:]
	ok := len(z) == 2 && isDigits(z) && atoi(z) <= 23 ||
		len(z) == 5 && isDigits(z[:2]) && z[2] == ':' && isDigits(z[3:]) && atoi(z[:2]) <= 23 && atoi(z[3:]) <= 59
	if !ok {
		// Not an offset: a "-" is left for the time parser to reject.
		return t, t[k] == '-'
	}
	return t[:k], true
}

func isDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return s != ""
}

func atoi(s string) int {
	v := 0
	for i := 0; i < len(s); i++ {
		v = v*10 + int(s[i]-'0')
	}
	return v
}

func daysIn(y, m int) int {
	return time.Date(y, time.Month(m)+1, 0, 0, 0, 0, 0, time.UTC).Day()
}

const secondsPerDay = 86400

// epochDays returns days since 1970-01-01 of the given civil date.
func epochDays(y, m, d int) float64 {
	return float64(time.Date(y, time.Month(m), d, 0, 0, 0, 0, time.UTC).Unix() / secondsPerDay)
}

// span returns the half-open interval [lo, hi) in days since 1970-01-01
// covered by d alone (ignoring End). A value with seconds covers its whole
// second: the fraction (Date.Frac) is kept but finer than any comparison unit.
func (d Date) span() (lo, hi float64) {
	switch d.Prec {
	case PrecYear:
		return epochDays(d.Year, 1, 1), epochDays(d.Year+1, 1, 1)
	case PrecMonth:
		return epochDays(d.Year, d.Month, 1), epochDays(d.Year, d.Month+1, 1)
	case PrecDay:
		lo = epochDays(d.Year, d.Month, d.Day)
		return lo, lo + 1
	case PrecHour:
		lo = epochDays(d.Year, d.Month, d.Day) + float64(d.Hour)/24
		return lo, lo + 1.0/24
	case PrecMinute:
		lo = epochDays(d.Year, d.Month, d.Day) + float64(d.Hour*60+d.Minute)/1440
		return lo, lo + 1.0/1440
	case PrecSecond:
		lo = epochDays(d.Year, d.Month, d.Day) + float64(d.Hour*3600+d.Minute*60+d.Second)/secondsPerDay
		return lo, lo + 1.0/secondsPerDay
	}
	return math.NaN(), math.NaN()
}

// Interval returns the half-open interval [lo, hi), in days since 1970-01-01,
// that the value can fall in: a day-precision date covers one day, a month the
// whole month. For an interval value it spans from the start's earliest to the
// end's latest point.
func (d Date) Interval() (lo, hi float64) {
	lo, hi = d.span()
	if d.End != nil {
		_, hi = d.End.span()
	}
	return lo, hi
}

// Tri is a three-valued truth: a comparison of partial dates can be unknown.
type Tri int8

// The truth values.
const (
	Unknown Tri = iota
	True
	False
)

func (t Tri) String() string {
	switch t {
	case True:
		return "true"
	case False:
		return "false"
	}
	return "unknown"
}

// unitDays is the length of one comparison unit in days.
func unitDays(u Precision) float64 {
	switch u {
	case PrecHour:
		return 1.0 / 24
	case PrecMinute:
		return 1.0 / 1440
	case PrecSecond:
		return 1.0 / secondsPerDay
	}
	return 1
}

// unitBounds maps [lo, hi) in days to the closed range of whole units it
// touches: the first and the last unit index.
func unitBounds(lo, hi float64, u Precision) (first, last float64) {
	ud := unitDays(u)
	// Interval ends lie on whole seconds; snap away rounding error, which
	// reaches 1e-6 of a unit at second precision (~1.7e9 s since 1970).
	snap := func(x float64) float64 {
		if r := math.Round(x); math.Abs(x-r) < 1e-4 {
			return r
		}
		return x
	}
	first = math.Floor(snap(lo / ud))
	last = math.Ceil(snap(hi/ud)) - 1
	if last < first {
		last = first
	}
	return first, last
}

// LessEq reports whether a ≤ b at comparison unit u (PrecDay, PrecHour,
// PrecMinute or PrecSecond; coarser units are treated as PrecDay), following
// the interval semantics of partial dates: each value is mapped to the closed
// range of whole units it can fall in; a ≤ b is True when a's latest unit is
// not after b's earliest, False when a's earliest is after b's latest, and
// Unknown otherwise (e.g. "2023-05" against "2023-05-10"). Two equal complete
// dates satisfy ≤. lo and hi are as returned by Date.Interval.
func LessEq(aLo, aHi, bLo, bHi float64, u Precision) Tri {
	if u < PrecDay {
		u = PrecDay
	}
	if math.IsNaN(aLo) || math.IsNaN(bLo) {
		return Unknown
	}
	af, al := unitBounds(aLo, aHi, u)
	bf, bl := unitBounds(bLo, bHi, u)
	switch {
	case al <= bf:
		return True
	case af > bl:
		return False
	}
	return Unknown
}

// FormatDays formats a day count (days since 1970-01-01) as ISO 8601 at
// precision p.
func FormatDays(days float64, p Precision) string {
	if math.IsNaN(days) || p == PrecNone {
		return ""
	}
	sec := math.Round(days * secondsPerDay)
	t := time.Unix(int64(sec), 0).UTC()
	switch p {
	case PrecYear:
		return t.Format("2006")
	case PrecMonth:
		return t.Format("2006-01")
	case PrecDay:
		return t.Format("2006-01-02")
	case PrecHour:
		return t.Format("2006-01-02T15")
	case PrecMinute:
		return t.Format("2006-01-02T15:04")
	}
	return t.Format("2006-01-02T15:04:05")
}
