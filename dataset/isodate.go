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

// ParseISO8601 parses an SDTM --DTC value (SDTMIG v3.4 §4.4.2): the extended
// format YYYY-MM-DDThh:mm:ss(.fff), right-truncated to any precision
// ("2003-12", "2003"), with unknown middle components written as "-"
// ("2003---15", "2003-12-15T-:15"): only the known leading components are kept,
// so "2003---15" has year precision. A time-zone designator (Z or ±hh:mm) is
// accepted and ignored: clock times are kept as recorded at the site. A value
// "a/b" is an interval whose earliest point is a's and latest b's. A value with
// an unknown year ("--12-15", "-----T07:15") has no position and parses to the
// zero Date with a nil error. The empty string is the zero Date. Anything else
// (basic format "20230510", "2023/05/10", "10MAY2023", "2023-02-30", "UNK")
// returns ErrNotISODate.
func ParseISO8601(s string) (Date, error) {
	if s == "" {
		return Date{}, nil
	}
	if i := strings.IndexByte(s, '/'); i >= 0 {
		a, err := parseOne(s[:i])
		if err != nil {
			return Date{}, err
		}
		b, err := parseOne(s[i+1:])
		if err != nil {
			return Date{}, err
		}
		if a.Prec == PrecNone || b.Prec == PrecNone {
			return Date{}, nil
		}
		alo, _ := a.span()
		_, bhi := b.span()
		if bhi < alo {
			return Date{}, fmt.Errorf("%w: interval %q ends before it starts", ErrNotISODate, s)
		}
		a.End = &b
		return a, nil
	}
	return parseOne(s)
}

func parseOne(s string) (Date, error) {
	bad := func(why string) (Date, error) {
		if why != "" {
			return Date{}, fmt.Errorf("%w: %q (%s)", ErrNotISODate, s, why)
		}
		return Date{}, fmt.Errorf("%w: %q", ErrNotISODate, s)
	}
	if s == "" {
		return bad("empty part")
	}
	// Strip a time-zone designator after the time part.
	if t := strings.IndexByte(s, 'T'); t >= 0 {
		tail := s[t+1:]
		if strings.HasSuffix(tail, "Z") {
			s = s[:len(s)-1]
		} else if k := strings.LastIndexAny(tail, "+"); k >= 0 {
			s = s[:t+1+k]
		} else if k := strings.LastIndexByte(tail, '-'); k > 0 && len(tail)-k == 6 && tail[k+3] == ':' {
			s = s[:t+1+k]
		}
	}
	datePart, timePart, hasT := strings.Cut(s, "T")
	if strings.Contains(timePart, "T") {
		return bad("two T separators")
	}
	// Date part: YYYY[-MM[-DD]] with "-" for unknown components.
	var comps [3]string
	n := 0
	switch {
	case len(datePart) == 0:
		if !hasT {
			return bad("")
		}
	case strings.HasPrefix(datePart, "--"):
		// Unknown year: no position on the time line.
		if !validUnknownYear(datePart) {
			return bad("")
		}
		if hasT && !validTime(timePart) {
			return bad("bad time")
		}
		return Date{}, nil
	default:
		if len(datePart) < 4 {
			return bad("")
		}
		comps[0] = datePart[:4]
		rest := datePart[4:]
		n = 1
		for len(rest) > 0 && n < 3 {
			if rest[0] != '-' {
				return bad("")
			}
			rest = rest[1:]
			if strings.HasPrefix(rest, "-") { // unknown component
				comps[n] = "-"
				n++
				continue
			}
			if len(rest) < 2 {
				return bad("")
			}
			comps[n] = rest[:2]
			rest = rest[2:]
			n++
		}
		if rest != "" {
			return bad("")
		}
	}
	var d Date
	y, ok := digits(comps[0], 4)
	if !ok {
		return bad("")
	}
	d.Year, d.Prec = y, PrecYear
	known := true
	if n >= 2 {
		if comps[1] == "-" {
			known = false
		} else if m, ok := digits(comps[1], 2); !ok || m < 1 || m > 12 {
			return bad("month out of range")
		} else {
			d.Month, d.Prec = m, PrecMonth
		}
	}
	if n >= 3 {
		if comps[2] == "-" {
			known = false
		} else if dd, ok := digits(comps[2], 2); !ok || dd < 1 || dd > daysIn(d.Year, maxInt(d.Month, 1)) && d.Month != 0 || dd > 31 {
			return bad("day out of range")
		} else if known {
			d.Day, d.Prec = dd, PrecDay
		}
	}
	if n == 3 && comps[1] == "-" && comps[2] == "-" {
		return bad("")
	}
	if hasT {
		if n < 3 {
			return bad("time without a full date")
		}
		if !validTime(timePart) {
			return bad("bad time")
		}
		if known && d.Prec == PrecDay {
			parts := strings.Split(timePart, ":")
			for i, p := range parts {
				if p == "-" {
					break
				}
				if i == 2 {
					sec, frac, _ := strings.Cut(p, ".")
					v, _ := digits(sec, 2)
					d.Second, d.Prec = v, PrecSecond
					if frac != "" {
						f, _ := strconv.ParseFloat("0."+frac, 64)
						d.Frac = f
					}
					break
				}
				v, _ := digits(p, 2)
				if i == 0 {
					d.Hour, d.Prec = v, PrecHour
				} else {
					d.Minute, d.Prec = v, PrecMinute
				}
			}
		}
	}
	return d, nil
}

func validUnknownYear(s string) bool {
	// "--MM-DD", "--MM", "-----", "---DD" style forms.
	for _, c := range s {
		if c != '-' && (c < '0' || c > '9') {
			return false
		}
	}
	return len(s) >= 2 && len(s) <= 7
}

func validTime(t string) bool {
	if t == "" {
		return false
	}
	parts := strings.Split(t, ":")
	if len(parts) > 3 {
		return false
	}
	limits := [3]int{23, 59, 59}
	for i, p := range parts {
		if p == "-" {
			continue
		}
		if i == 2 {
			sec, frac, hasFrac := strings.Cut(p, ".")
			if hasFrac && (frac == "" || strings.Trim(frac, "0123456789") != "") {
				return false
			}
			p = sec
		}
		v, ok := digits(p, 2)
		if !ok || v > limits[i] {
			return false
		}
	}
	return true
}

func digits(s string, n int) (int, bool) {
	if len(s) != n {
		return 0, false
	}
	v := 0
	for i := 0; i < n; i++ {
		c := s[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + int(c-'0')
	}
	return v, true
}

func daysIn(y, m int) int {
	return time.Date(y, time.Month(m)+1, 0, 0, 0, 0, 0, time.UTC).Day()
}

func maxInt(a, b int) int {
	if a > b {
		return a
	}
	return b
}

const secondsPerDay = 86400

// epochDays returns days since 1970-01-01 of the given civil date.
func epochDays(y, m, d int) float64 {
	return float64(time.Date(y, time.Month(m), d, 0, 0, 0, 0, time.UTC).Unix() / secondsPerDay)
}

// span returns the half-open interval [lo, hi) in days since 1970-01-01
// covered by d alone (ignoring End).
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
		lo = epochDays(d.Year, d.Month, d.Day) + (float64(d.Hour*3600+d.Minute*60+d.Second)+d.Frac)/secondsPerDay
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
	first = math.Floor(lo/ud + 1e-9)
	last = math.Ceil(hi/ud-1e-9) - 1
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
