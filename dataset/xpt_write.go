package dataset

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"strings"

	"golang.org/x/text/encoding/charmap"
)

// xptStamp is the creation and modification time written in every header,
// fixed so that output does not depend on the clock.
const xptStamp = "01JAN70:00:00:00"

// WriteXPT writes t as a SAS transport (XPORT) version 5 file with one member
// named t.Name, in the record layout of SAS technical paper TS-140. Float
// columns become 8-byte numerics (missing values written with their
// Column.Special code, else '.'); coded columns become character variables
// as long as their longest level; date columns become numerics with format
// DATE9. (days since 1960-01-01) when every value is a whole day, else ISO
// 8601 text at each value's precision (invalid values as read; date
// intervals as their start). Text is written as Latin-1. It fails
// when a name is longer than 8 bytes, a label longer than 40, a value longer
// than 200 bytes or not representable in Latin-1, or a number outside the IBM
// range (see FloatToIBM).
func WriteXPT(w io.Writer, t *Table) error {
	if len(t.Cols) == 0 || len(t.Cols) > xptMaxVars {
		return fmt.Errorf("xpt: table %q has %d columns (want 1 to %d)", t.Name, len(t.Cols), xptMaxVars)
	}
	if len(t.Name) == 0 || len(t.Name) > 8 {
		return fmt.Errorf("xpt: dataset name %q must have 1 to 8 characters", t.Name)
	}
	enc := charmap.ISO8859_1.NewEncoder()
	type wvar struct {
		c      *Column
		char   bool
		length int
		pos    int
		format string
		width  int
		text   []string // per-level or per-row text for character variables
		days   int      // sasDays for dates written as numerics
	}
	vars := make([]wvar, len(t.Cols))
	pos := 0
	for i, c := range t.Cols {
		if len(c.Name) == 0 || len(c.Name) > 8 {
			return fmt.Errorf("xpt: variable name %q must have 1 to 8 characters", c.Name)
		}
		if len(c.Label) > 40 {
			return fmt.Errorf("xpt: variable %q: label longer than 40 bytes", c.Name)
		}
		v := wvar{c: c, length: 8}
		switch c.Storage {
		case StoreCode:
			v.char = true
			v.text = make([]string, len(c.Levels))
			for k, s := range c.Levels {
				e, err := enc.String(s)
				if err != nil {
					return fmt.Errorf("xpt: variable %q: value %q is not representable in Latin-1", c.Name, s)
				}
				v.text[k] = e
			}
		case StoreDate:
			allDay := true
			for r := 0; r < t.NRows; r++ {
				if !c.Missing(r) {
					allDay = allDay && c.DatePrec[r] == PrecDay && c.DateHi[r] == c.DateLo[r]+1
				}
			}
			switch {
			case allDay && len(c.Invalid) == 0:
				v.days, v.format, v.width = sasDays, "DATE", 9
			default:
				v.char = true
				v.text = make([]string, t.NRows)
				for r := range v.text {
					v.text[r] = c.String(r)
				}
				for _, iv := range c.Invalid {
					if iv.Row >= 0 && iv.Row < t.NRows {
						v.text[iv.Row] = iv.Raw
					}
				}
			}
		case StoreFloat:
		default:
			return fmt.Errorf("xpt: variable %q has no storage", c.Name)
		}
		if v.char {
			v.length = 1
			for _, s := range v.text {
				v.length = max(v.length, len(s))
			}
			if v.length > xptMaxChar {
				return fmt.Errorf("xpt: variable %q: value longer than %d bytes", c.Name, xptMaxChar)
			}
		}
		v.pos = pos
		pos += v.length
		vars[i] = v
	}
	if pos > xptMaxObsLen {
		return fmt.Errorf("xpt: observation length %d exceeds %d", pos, xptMaxObsLen)
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	rec := func(s string) {
		bw.WriteString(s)
		bw.WriteString(strings.Repeat(" ", xptRecLen-len(s)))
	}
	pad8 := func(s string) string { return s + strings.Repeat(" ", 8-len(s)) }
	zeros := strings.Repeat("0", 30)
	rec(xptLibHeader + zeros)
	rec("SAS     SAS     SASLIB  9.4     Go      " + strings.Repeat(" ", 24) + xptStamp)
	rec(xptStamp)
	rec(xptMemberHeader + "000000000000000001600000000140")
	rec(xptDscrptrHeader + zeros)
	rec("SAS     " + pad8(t.Name) + "SASDATA 9.4     Go      " + strings.Repeat(" ", 24) + xptStamp)
	rec(xptStamp)
	rec(fmt.Sprintf("%s000000%04d%s", xptNamestrHeader, len(vars), strings.Repeat("0", 20)))
	ns := make([]byte, 140)
	be := binary.BigEndian
	for i, v := range vars {
		clear(ns)
		if v.char {
			be.PutUint16(ns[0:], 2)
		} else {
			be.PutUint16(ns[0:], 1)
		}
		be.PutUint16(ns[4:], uint16(v.length))
		be.PutUint16(ns[6:], uint16(i+1))
		copy(ns[8:16], pad8(v.c.Name))
		label, err := enc.String(v.c.Label)
		if err != nil {
			return fmt.Errorf("xpt: variable %q: label not representable in Latin-1", v.c.Name)
		}
		copy(ns[16:56], label+strings.Repeat(" ", 40-len(label)))
		copy(ns[56:64], pad8(v.format))
		be.PutUint16(ns[64:], uint16(v.width))
		copy(ns[72:80], "        ")
		be.PutUint32(ns[84:], uint32(v.pos))
		bw.Write(ns)
	}
	if r := len(vars) * 140 % xptRecLen; r != 0 {
		bw.WriteString(strings.Repeat(" ", xptRecLen-r))
	}
	rec(xptObsHeader + zeros)
	row := make([]byte, pos)
	for r := 0; r < t.NRows; r++ {
		for _, v := range vars {
			b := row[v.pos : v.pos+v.length]
			if v.char {
				s := ""
				switch {
				case v.c.Storage == StoreDate:
					s = v.text[r] // "" when missing, the raw text when invalid
				case !v.c.Missing(r):
					s = v.text[v.c.Codes[r]]
				}
				copy(b, s)
				for k := len(s); k < len(b); k++ {
					b[k] = ' '
				}
				continue
			}
			var x float64
			switch {
			case v.c.Missing(r):
				clear(b)
				b[0] = '.'
				if code, ok := v.c.Special[r]; ok {
					b[0] = code
				}
				continue
			case v.days == sasDays:
				x = v.c.DateLo[r] - sasEpochDays
			default:
				x = v.c.Floats[r]
			}
			u, ok := FloatToIBM(x)
			if !ok {
				return fmt.Errorf("xpt: variable %q row %d: %g is outside the IBM floating-point range", v.c.Name, r+1, x)
			}
			be.PutUint64(b, u)
		}
		if _, err := bw.Write(row); err != nil {
			return err
		}
	}
	if r := int64(t.NRows) * int64(pos) % xptRecLen; r != 0 {
		bw.WriteString(strings.Repeat(" ", int(xptRecLen-r)))
	}
	return bw.Flush()
}
