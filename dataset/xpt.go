package dataset

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"unicode/utf8"

	"golang.org/x/text/encoding/charmap"
)

// XPTOptions control ReadXPT. The zero value reads Latin-1 text and picks
// the SDTM default keys.
type XPTOptions struct {
	// Encoding of character values and labels: "" or "latin1" (the default:
	// every byte decodes), "windows-1252" or "utf-8" (invalid UTF-8 is an error).
	// The transport format records no encoding.
	Encoding string
	Keys     []string // key columns; nil picks the SDTM defaults present (see Table.SetKeys)
	Site     string   // site column; "" picks SITEID when present
	Infer    InferOptions
}

// Limits of the version 5 transport format (TS-140): the variable count has
// four digits, character values are at most 200 bytes, numerics 2 to 8.
const (
	xptRecLen    = 80
	xptMaxVars   = 9999
	xptMaxChar   = 200
	xptMaxObsLen = xptMaxVars * xptMaxChar
)

// Header record prefixes (TS-140, records 1, 4, 5, 8 and the OBS header).
const (
	xptLibHeader     = "HEADER RECORD*******LIBRARY HEADER RECORD!!!!!!!"
	xptMemberHeader  = "HEADER RECORD*******MEMBER  HEADER RECORD!!!!!!!"
	xptDscrptrHeader = "HEADER RECORD*******DSCRPTR HEADER RECORD!!!!!!!"
	xptNamestrHeader = "HEADER RECORD*******NAMESTR HEADER RECORD!!!!!!!"
	xptObsHeader     = "HEADER RECORD*******OBS     HEADER RECORD!!!!!!!"
)

// Errors specific to transport files, carried by ParseError.Err.
var (
	ErrNotXPT     = errors.New("not a SAS transport (XPORT) file: the first record is not a library header")
	ErrXPTVersion = errors.New("SAS transport version 8/9 file (LIBV8 header): only version 5 is supported; write it with the XPORT engine or as version 5")
	ErrXPTCPORT   = errors.New("SAS CPORT file (PROC CPORT): not a transport (XPORT) file; export the data with the XPORT engine")
)

// ReadXPTFile reads every dataset (member) of the SAS transport file at path.
func ReadXPTFile(path string, o XPTOptions) ([]*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadXPT(path, f, o)
}

// ReadXPT reads a SAS transport (XPORT) version 5 file from r, one Table per
// member, following the record layout of SAS technical paper TS-140 ("Record
// Layout of a SAS Version 5 or 6 Data Set in SAS Transport (XPORT) Format").
// name is used in errors and as the tables' source.
//
// Numeric values are IBM System/360 hexadecimal doubles (truncated on the
// right when shorter than 8 bytes) converted exactly to IEEE 754 doubles but
// for the rounding of a 56-bit fraction to 53 bits; values written from IEEE
// doubles within the IBM range (about 5.4e-79 to 7.2e75) read back bit for
// bit. A numeric whose first byte is '.', '_' or 'A'–'Z' and whose other bytes
// are zero is missing; codes other than the ordinary '.' are kept in
// Column.Special. Numerics with a SAS date format (DATE, YYMMDD, E8601DA…)
// are days since 1960-01-01 and become date columns, datetime formats
// (DATETIME, E8601DT…) seconds since 1960-01-01T00:00; time formats stay
// numeric. Other numerics are typed by the rules of Builder.Column
// (binary, ordinal integer scale, continuous); character values lose their
// trailing blanks (empty is missing) and are typed by Builder.Column, so
// that ISO 8601 text in --DTC variables becomes a date column.
//
// The format stores no observation count: observations run to the next member
// header or the end of the file, and trailing all-blank observations that
// the 80-byte padding can explain are dropped (a real all-blank last row of an
// all-character dataset is indistinguishable from padding). Version 8/9
// transport files and CPORT files are rejected. Errors are *ParseError values
// giving the 1-based 80-byte record and the byte offset.
func ReadXPT(name string, r io.Reader, o XPTOptions) ([]*Table, error) {
	x := &xptReader{name: name, br: bufio.NewReaderSize(r, 64<<10), size: -1, o: o}
	switch s := r.(type) {
	case interface{ Size() int64 }:
		x.size = s.Size()
	case interface{ Stat() (os.FileInfo, error) }:
		if fi, err := s.Stat(); err == nil && fi.Mode().IsRegular() {
			x.size = fi.Size()
		}
	}
	switch strings.ToLower(o.Encoding) {
	case "", "latin1", "iso-8859-1":
		x.decode = decodeLatin1
	case "windows-1252", "cp1252":
		x.decode = func(b []byte) (string, error) {
			out, err := charmap.Windows1252.NewDecoder().Bytes(b)
			return string(out), err
		}
	case "utf-8", "utf8":
		x.decode = func(b []byte) (string, error) {
			if !utf8.Valid(b) {
				return "", ErrBadEncoding
			}
			return string(b), nil
		}
	default:
		return nil, fmt.Errorf("%s: unknown encoding %q (want latin1, windows-1252 or utf-8)", name, o.Encoding)
	}
	return x.read()
}

type xptReader struct {
	name   string
	br     *bufio.Reader
	off    int64 // bytes consumed
	size   int64 // total size when known, else -1
	o      XPTOptions
	decode func([]byte) (string, error)
	rec    [xptRecLen]byte
	warn   []string // warnings for the member being read
}

// xptVar is one parsed NAMESTR.
type xptVar struct {
	numeric  bool
	length   int
	name     string
	label    string
	format   string // e.g. "DATE9.", "$CHAR20.", "8.2"; "" if none
	fmtName  string // format name alone, upper case
	pos      int
	namestr  int64 // byte offset of the NAMESTR, for errors
	floats   []float64
	special  map[int]byte
	dict     map[string]int32 // raw trimmed bytes → level
	dict64   map[uint64]int32 // the same for values of up to 8 bytes, packed
	levIndex map[string]int32 // decoded level → level
	levels   []string
	codes    []int32
}

func (x *xptReader) perr(off int64, v string, err error) *ParseError {
	return &ParseError{File: x.name, Record: int(off/xptRecLen) + 1, Offset: off, Var: v, Err: err}
}

// record reads the next 80-byte record into x.rec.
func (x *xptReader) record(what string) ([]byte, error) {
	n, err := io.ReadFull(x.br, x.rec[:])
	if err == io.EOF || err == io.ErrUnexpectedEOF {
		return nil, x.perr(x.off+int64(n), "", fmt.Errorf("%w: end of file in the %s", ErrTruncated, what))
	}
	if err != nil {
		return nil, fmt.Errorf("reading %s: %w", x.name, err)
	}
	x.off += xptRecLen
	return x.rec[:], nil
}

// expect reads a header record and checks its 48-byte prefix.
func (x *xptReader) expect(prefix, what string) ([]byte, error) {
	rec, err := x.record(what)
	if err != nil {
		return nil, err
	}
	if string(rec[:len(prefix)]) != prefix {
		if bytes.HasPrefix(rec, []byte("HEADER RECORD*******LABELV")) {
			return nil, x.perr(x.off-xptRecLen, "", ErrXPTVersion)
		}
		return nil, x.perr(x.off-xptRecLen, "", fmt.Errorf("want the %s, found %q", what, string(rec[:48])))
	}
	return rec, nil
}

func (x *xptReader) read() ([]*Table, error) {
	n, err := io.ReadFull(x.br, x.rec[:])
	switch {
	case n == 0 && (err == io.EOF || err == nil):
		return nil, x.perr(0, "", ErrEmpty)
	case err == io.ErrUnexpectedEOF:
		if !bytes.HasPrefix([]byte(xptLibHeader), x.rec[:min(n, len(xptLibHeader))]) {
			return nil, x.perr(0, "", ErrNotXPT)
		}
		return nil, x.perr(int64(n), "", fmt.Errorf("%w: end of file in the library header", ErrTruncated))
	case err != nil:
		return nil, fmt.Errorf("reading %s: %w", x.name, err)
	}
	x.off = xptRecLen
	rec := x.rec[:]
	switch {
	case bytes.HasPrefix(rec, []byte("HEADER RECORD*******LIBV8")):
		return nil, x.perr(0, "", ErrXPTVersion)
	case bytes.HasPrefix(rec, []byte("**COMPRESSED**")):
		return nil, x.perr(0, "", ErrXPTCPORT)
	case string(rec[:len(xptLibHeader)]) != xptLibHeader:
		return nil, x.perr(0, "", ErrNotXPT)
	}
	rec, err = x.record("first real header")
	if err != nil {
		return nil, err
	}
	if string(rec[:3]) != "SAS" || string(rec[16:22]) != "SASLIB" {
		return nil, x.perr(x.off-xptRecLen, "", fmt.Errorf("want the library's first real header (\"SAS SAS SASLIB\"), found %q", string(rec[:24])))
	}
	if _, err := x.record("second real header"); err != nil {
		return nil, err
	}
	var tables []*Table
	var warnings []string
	if x.size >= 0 && x.size%xptRecLen != 0 {
		warnings = append(warnings, fmt.Sprintf("%s: file size %d is not a multiple of 80 bytes: the file may be damaged or converted as text", x.name, x.size))
	}
	// The first member header.
	if _, err := x.expect(xptMemberHeader, "member header"); err != nil {
		return nil, err
	}
	for {
		t, more, err := x.member(len(tables) == 0)
		if err != nil {
			return nil, err
		}
		t.Warnings = append(warnings, t.Warnings...)
		tables = append(tables, t)
		if !more {
			return tables, nil
		}
	}
}

// member reads one member whose member header was just read. more reports
// whether another member header follows.
func (x *xptReader) member(first bool) (t *Table, more bool, err error) {
	nsize := 140
	switch s := string(x.rec[74:78]); s {
	case "0140":
	case "0136":
		nsize = 136
	default:
		return nil, false, x.perr(x.off-xptRecLen+74, "", fmt.Errorf("NAMESTR size %q in the member header (want 0140, or 0136 for VAX/VMS)", s))
	}
	if _, err := x.expect(xptDscrptrHeader, "descriptor header"); err != nil {
		return nil, false, err
	}
	rec, err := x.record("member descriptor")
	if err != nil {
		return nil, false, err
	}
	if string(rec[:3]) != "SAS" {
		return nil, false, x.perr(x.off-xptRecLen, "", fmt.Errorf("want the member descriptor (\"SAS\" then the dataset name), found %q", string(rec[:24])))
	}
	dsName := strings.TrimRight(string(rec[8:16]), " \x00")
	if dsName == "" || !isPrintableASCII(dsName) {
		return nil, false, x.perr(x.off-xptRecLen+8, "", fmt.Errorf("bad dataset name %q in the member descriptor", string(rec[8:16])))
	}
	if _, err := x.record("second member descriptor"); err != nil {
		return nil, false, err
	}
	rec, err = x.expect(xptNamestrHeader, "NAMESTR header")
	if err != nil {
		return nil, false, err
	}
	nvar, err := strconv.Atoi(string(rec[54:58]))
	if err != nil || nvar < 0 {
		return nil, false, x.perr(x.off-xptRecLen+54, "", fmt.Errorf("bad variable count %q in the NAMESTR header (want 4 digits)", string(rec[54:58])))
	}
	if nvar == 0 {
		return nil, false, x.perr(x.off-xptRecLen+54, "", fmt.Errorf("dataset %q has no variables", dsName))
	}
	if x.size >= 0 && x.off+int64(nvar*nsize) > x.size {
		return nil, false, x.perr(x.off, "", fmt.Errorf("%w: %d variables need %d bytes of NAMESTR records, %d remain", ErrTruncated, nvar, nvar*nsize, x.size-x.off))
	}
	vars := make([]*xptVar, nvar)
	byName := make(map[string]bool, nvar)
	ns := make([]byte, 140)
	obsLen := 0
	for i := range vars {
		clear(ns)
		start := x.off
		if n, err := io.ReadFull(x.br, ns[:nsize]); err != nil {
			if err == io.EOF || err == io.ErrUnexpectedEOF {
				return nil, false, x.perr(x.off+int64(n), "", fmt.Errorf("%w: end of file in NAMESTR %d of %d", ErrTruncated, i+1, nvar))
			}
			return nil, false, fmt.Errorf("reading %s: %w", x.name, err)
		}
		x.off += int64(nsize)
		v, err := x.namestr(ns, start, i+1)
		if err != nil {
			return nil, false, err
		}
		if byName[strings.ToUpper(v.name)] {
			return nil, false, x.perr(start+8, v.name, ErrDuplicateColumn)
		}
		byName[strings.ToUpper(v.name)] = true
		obsLen = max(obsLen, v.pos+v.length)
		vars[i] = v
	}
	if obsLen > xptMaxObsLen {
		return nil, false, x.perr(x.off, "", fmt.Errorf("observation length %d exceeds the format's limit %d", obsLen, xptMaxObsLen))
	}
	// Skip the padding of the last NAMESTR record.
	if pad := (xptRecLen - x.off%xptRecLen) % xptRecLen; pad > 0 {
		if n, err := x.br.Discard(int(pad)); err != nil {
			return nil, false, x.perr(x.off+int64(n), "", fmt.Errorf("%w: end of file in the NAMESTR records", ErrTruncated))
		}
		x.off += pad
	}
	if _, err := x.expect(xptObsHeader, "OBS header"); err != nil {
		return nil, false, err
	}
	if x.br.Size() < obsLen+2*xptRecLen {
		x.br = bufio.NewReaderSize(x.br, obsLen+2*xptRecLen)
	}
	capRows := 0
	if first && x.size > x.off {
		capRows = int((x.size-x.off)/int64(obsLen)) + 1
	}
	for _, v := range vars {
		if v.numeric {
			v.floats = make([]float64, 0, capRows)
		} else {
			v.codes = make([]int32, 0, capRows)
			v.dict = map[string]int32{}
			v.dict64 = map[uint64]int32{}
			v.levIndex = map[string]int32{}
		}
	}
	n, more, err := x.observations(vars, obsLen)
	if err != nil {
		return nil, false, err
	}
	t, err = x.table(dsName, vars, n)
	return t, more, err
}

// namestr parses one NAMESTR record at byte offset start; k is 1-based.
func (x *xptReader) namestr(ns []byte, start int64, k int) (*xptVar, error) {
	be := binary.BigEndian
	v := &xptVar{namestr: start}
	ntype := be.Uint16(ns[0:])
	v.length = int(be.Uint16(ns[4:]))
	raw := strings.TrimRight(string(ns[8:16]), " \x00")
	if raw == "" || !isPrintableASCII(raw) {
		return nil, x.perr(start+8, "", fmt.Errorf("NAMESTR %d: bad variable name %q", k, string(ns[8:16])))
	}
	v.name = raw
	switch ntype {
	case 1:
		v.numeric = true
		if v.length < 2 || v.length > 8 {
			return nil, x.perr(start+4, v.name, fmt.Errorf("numeric length %d (want 2 to 8)", v.length))
		}
	case 2:
		if v.length < 1 || v.length > xptMaxChar {
			return nil, x.perr(start+4, v.name, fmt.Errorf("character length %d (want 1 to %d)", v.length, xptMaxChar))
		}
	default:
		return nil, x.perr(start, v.name, fmt.Errorf("variable type %d (want 1 numeric or 2 character)", ntype))
	}
	label, err := x.decode(bytes.TrimRight(ns[16:56], " \x00"))
	if err != nil {
		return nil, x.perr(start+16, v.name, fmt.Errorf("label: %w", err))
	}
	v.label = label
	v.fmtName = strings.ToUpper(strings.TrimRight(string(ns[56:64]), " \x00"))
	if !isPrintableASCII(v.fmtName) {
		return nil, x.perr(start+56, v.name, fmt.Errorf("bad format name %q", string(ns[56:64])))
	}
	v.format = sasFormat(v.fmtName, int(be.Uint16(ns[64:])), int(be.Uint16(ns[66:])))
	pos := be.Uint32(ns[84:])
	if pos > xptMaxObsLen {
		return nil, x.perr(start+84, v.name, fmt.Errorf("position %d in the observation exceeds the format's limit %d", pos, xptMaxObsLen))
	}
	v.pos = int(pos)
	return v, nil
}

// sasFormat writes a SAS format as SAS displays it: name, width, ".", decimals.
func sasFormat(name string, w, d int) string {
	if name == "" && w == 0 {
		return ""
	}
	s := name
	if w > 0 {
		s += strconv.Itoa(w)
	}
	s += "."
	if d > 0 {
		s += strconv.Itoa(d)
	}
	return s
}

// observations reads observations of length L until the next member header
// (more = true) or the end of the file. It returns the number of rows kept.
func (x *xptReader) observations(vars []*xptVar, L int) (rows int, more bool, err error) {
	dataStart := x.off
	row := make([]byte, L)
	trailingBlank := 0 // all-blank rows at the end so far
	// An all-NUL row is padding from a re-blocking tool only when the
	// dataset has character variables (SAS pads text with blanks); in an
	// all-numeric dataset it is a row of zeros.
	hasChar := false
	for _, v := range vars {
		hasChar = hasChar || !v.numeric
	}
	nulTail := false
	for {
		// Does an 80-byte boundary fall inside the next L bytes? Then the
		// next member may start there, after blank padding.
		gap := int((xptRecLen - x.off%xptRecLen) % xptRecLen)
		if gap < L {
			head, _ := x.br.Peek(gap + xptRecLen)
			if len(head) == gap+xptRecLen && string(head[gap:gap+len(xptMemberHeader)]) == xptMemberHeader {
				if !blankOrNUL(head[:gap]) {
					return 0, false, x.perr(x.off, "", fmt.Errorf("%w: the observation before the next member header is cut short", ErrTruncated))
				}
				x.br.Discard(gap + xptRecLen)
				x.off += int64(gap + xptRecLen)
				copy(x.rec[:], head[gap:])
				more = true
				break
			}
		}
		n, err := io.ReadFull(x.br, row)
		if err == io.EOF || err == io.ErrUnexpectedEOF {
			if !blankOrNUL(row[:n]) {
				return 0, false, x.perr(x.off, "", fmt.Errorf("%w: the last observation has %d of %d bytes", ErrTruncated, n, L))
			}
			x.off += int64(n)
			break
		}
		if err != nil {
			return 0, false, fmt.Errorf("reading %s: %w", x.name, err)
		}
		rowOff := x.off
		x.off += int64(L)
		if row[0] == ' ' || row[0] == 0 {
			if allByte(row, ' ') {
				trailingBlank++
			} else if hasChar && allByte(row, 0) {
				trailingBlank++
				nulTail = true
			} else {
				trailingBlank = 0
			}
		} else {
			trailingBlank = 0
		}
		if err := x.decodeRow(vars, row, rowOff, rows); err != nil {
			return 0, false, err
		}
		rows++
	}
	// The member is padded to a multiple of 80 bytes, so fewer than 80
	// bytes of it can be padding: rows before minRows are data.
	data := x.off - dataStart
	if more {
		data -= xptRecLen
	}
	minRows := 0
	if data >= xptRecLen {
		minRows = int((data-xptRecLen)/int64(L)) + 1
	}
	drop := min(trailingBlank, max(rows-minRows, 0))
	if drop > 0 {
		rows -= drop
		for _, v := range vars {
			if v.numeric {
				v.floats = v.floats[:rows]
				for i := range v.special {
					if i >= rows {
						delete(v.special, i)
					}
				}
			} else {
				v.codes = v.codes[:rows]
			}
		}
	}
	if nulTail && drop > 0 {
		x.warn = append(x.warn, fmt.Sprintf("%s: record %d: dataset padded with NUL bytes instead of blanks (a transfer tool may have re-blocked the file)", x.name, int(x.off/xptRecLen)))
	}
	if trailingBlank > drop {
		x.warn = append(x.warn, fmt.Sprintf("%s: %d all-blank observations at the end of a dataset are kept as rows of missing values", x.name, trailingBlank-drop))
	}
	return rows, more, nil
}

// decodeRow appends one observation's values; off is the row's byte offset
// and i its 0-based index.
func (x *xptReader) decodeRow(vars []*xptVar, row []byte, off int64, i int) error {
	for _, v := range vars {
		b := row[v.pos : v.pos+v.length]
		if v.numeric {
			f, code := ibmValue(b)
			if code != 0 && code != '.' {
				if v.special == nil {
					v.special = map[int]byte{}
				}
				v.special[i] = code
			}
			v.floats = append(v.floats, f)
			continue
		}
		end := len(b)
		for end > 0 && b[end-1] == ' ' {
			end--
		}
		b = b[:end]
		if end == 0 {
			v.codes = append(v.codes, -1)
			continue
		}
		// Values of up to 8 bytes whose last byte is not NUL are keyed by
		// their bytes packed in an integer (cheaper to hash than a string).
		var key uint64
		short := end <= 8 && b[end-1] != 0
		var c int32
		var ok bool
		if short {
			for _, y := range b {
				key = key<<8 | uint64(y)
			}
			key <<= 8 * uint(8-end)
			c, ok = v.dict64[key]
		} else {
			c, ok = v.dict[string(b)]
		}
		if !ok {
			s, err := x.decode(b)
			if err != nil {
				return x.perr(off+int64(v.pos), v.name, fmt.Errorf("observation %d: %w", i+1, err))
			}
			if c, ok = v.levIndex[s]; !ok {
				c = int32(len(v.levels))
				v.levels = append(v.levels, s)
				v.levIndex[s] = c
			}
			if short {
				v.dict64[key] = c
			} else {
				v.dict[string(b)] = c
			}
		}
		v.codes = append(v.codes, c)
	}
	return nil
}

// table types the collected variables into a Table.
func (x *xptReader) table(dsName string, vars []*xptVar, n int) (*Table, error) {
	t := NewTable(strings.ToUpper(dsName), n)
	t.Source = x.name
	t.Warnings, x.warn = x.warn, nil
	for _, v := range vars {
		var c *Column
		var err error
		switch {
		case !v.numeric:
			b := &Builder{Name: v.name, lev: v.levels, codes: v.codes}
			c, err = b.Column(x.o.Infer)
		case sasDateKind(v.fmtName) != 0 && !overridden(x.o.Infer, v.name):
			c = sasDateColumn(v.name, v.floats, sasDateKind(v.fmtName))
		default:
			c, err = numericColumn(v.name, v.floats, x.o.Infer)
		}
		if err != nil {
			return nil, columnErr(x.name, v.name, err)
		}
		if v.numeric && len(v.special) > 0 && c.Storage == StoreFloat {
			c.Special = v.special
		}
		if c.Label == "" {
			c.Label = v.label
		}
		c.Format = v.format
		c.Prov = Provenance{Domain: t.Name, Source: v.name, File: x.name}
		if err := t.Add(c); err != nil {
			return nil, x.perr(v.namestr+8, v.name, err)
		}
	}
	if err := t.SetKeys(x.o.Keys, x.o.Site); err != nil {
		return nil, &ParseError{File: x.name, Err: fmt.Errorf("dataset %q: %w", t.Name, err)}
	}
	return t, nil
}

func overridden(o InferOptions, name string) bool {
	s, ok := o.Vars[name]
	return ok && s.Type != TypeUnknown && s.Type != DateTime
}

// ibmValue decodes a numeric field of 2 to 8 bytes. A missing value returns
// NaN and its code ('.', '_' or 'A'–'Z'); code is 0 for a number.
func ibmValue(b []byte) (float64, byte) {
	c := b[0]
	if c == '.' || c == '_' || c >= 'A' && c <= 'Z' {
		zero := true
		for _, y := range b[1:] {
			if y != 0 {
				zero = false
				break
			}
		}
		if zero {
			return math.NaN(), c
		}
	}
	var u uint64
	if len(b) == 8 {
		u = binary.BigEndian.Uint64(b)
	} else {
		for k := 0; k < 8; k++ {
			u <<= 8
			if k < len(b) {
				u |= uint64(b[k])
			}
		}
	}
	return IBMToFloat(u), 0
}

// IBMToFloat converts an IBM System/360 long (8-byte, big-endian as a
// uint64) hexadecimal floating-point number to an IEEE 754 double: sign bit,
// 7-bit excess-64 exponent of 16, and a 56-bit fraction f without hidden bit,
// value = ±f × 2^(4(e−64) − 56) (IBM System/360 Principles of Operation,
// "Floating-Point Arithmetic"). The conversion is exact except that a fraction
// with more than 53 significant bits is rounded to nearest, ties to even; the
// IBM range (about 5.4e-79 to 7.2e75) lies well inside the normal doubles. A
// zero fraction is zero whatever the sign and exponent.
func IBMToFloat(u uint64) float64 {
	f := u & (1<<56 - 1)
	if f == 0 {
		return 0
	}
	e := int(u>>56&0x7f) - 64
	v := math.Ldexp(float64(f), 4*e-56)
	if u>>63 != 0 {
		v = -v
	}
	return v
}

// FloatToIBM converts an IEEE double to an IBM System/360 long hexadecimal
// floating-point number (see IBMToFloat). Every double whose magnitude lies
// in the IBM range converts exactly (a normalised IBM fraction keeps at least
// 53 significant bits); ok is false for NaN, infinities, and magnitudes
// outside [16^−65, 16^63·(1−16^−14)].
func FloatToIBM(v float64) (u uint64, ok bool) {
	if v == 0 {
		return 0, true
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	var sign uint64
	if v < 0 {
		sign, v = 1<<63, -v
	}
	frac, exp := math.Frexp(v) // v = frac × 2^exp, frac in [0.5, 1)
	// v = F × 16^E with F in [1/16, 1): E = ceil(exp/4), shift = 4E − exp in [0, 3].
	e := exp / 4
	if exp > 0 && exp%4 != 0 {
		e++
	}
	shift := 4*e - exp
	m := uint64(math.Ldexp(frac, 53)) // 53-bit integer mantissa, exact
	f := m << 3 >> uint(shift)        // F × 2^56; the bits shifted out are zero
	if e+64 < 0 || e+64 > 127 {
		return 0, false
	}
	return sign | uint64(e+64)<<56 | f, true
}

// SAS date kinds of a numeric variable's display format.
const (
	sasDays    = 1 // days since 1960-01-01
	sasSeconds = 2 // seconds since 1960-01-01T00:00:00
)

// sasDateKind classifies a SAS format name (SAS 9.4 Formats and Informats
// reference, date and datetime formats) [m: the list is from memory].
func sasDateKind(format string) int {
	f := strings.TrimRight(format, "0123456789.")
	switch f {
	case "DATE", "DAY", "DDMMYY", "DDMMYYB", "DDMMYYC", "DDMMYYD", "DDMMYYN", "DDMMYYP", "DDMMYYS",
		"MMDDYY", "MMDDYYB", "MMDDYYC", "MMDDYYD", "MMDDYYN", "MMDDYYP", "MMDDYYS",
		"YYMMDD", "YYMMDDB", "YYMMDDC", "YYMMDDD", "YYMMDDN", "YYMMDDP", "YYMMDDS",
		"E8601DA", "B8601DA", "IS8601DA", "MONYY", "YYMON", "YYMM", "YYQ", "YEAR",
		"WEEKDATE", "WEEKDATX", "WORDDATE", "WORDDATX", "NLDATE", "JULIAN", "MMYY", "DOWNAME", "MONNAME":
		return sasDays
	case "DATETIME", "E8601DT", "B8601DT", "IS8601DT", "DATEAMPM", "DTDATE", "NLDATM", "E8601DZ", "B8601DZ":
		return sasSeconds
	}
	return 0
}

// sasEpochDays is 1960-01-01 in days since 1970-01-01.
const sasEpochDays = -3653

// sasDateColumn makes a date column from SAS day or second counts. Values
// beyond year 9999 are kept in Column.Invalid and are missing.
func sasDateColumn(name string, v []float64, kind int) *Column {
	n := len(v)
	c := &Column{Name: name, Type: DateTime, Storage: StoreDate,
		DateLo: make([]float64, n), DateHi: make([]float64, n), DatePrec: make([]Precision, n),
		missing: NewBitmap(n)}
	c.Why = "SAS date format (days since 1960-01-01)"
	if kind == sasSeconds {
		c.Why = "SAS datetime format (seconds since 1960-01-01T00:00:00)"
	}
	const maxDays = 3e6 // about 8200 years either side of 1960
	for i, x := range v {
		lo, hi, p := math.NaN(), math.NaN(), PrecNone
		if !math.IsNaN(x) {
			if kind == sasDays {
				lo = math.Floor(x) + sasEpochDays
				hi, p = lo+1, PrecDay
			} else {
				lo = x/secondsPerDay + sasEpochDays
				hi, p = lo+1.0/secondsPerDay, PrecSecond
			}
			if math.Abs(lo) > maxDays {
				c.Invalid = append(c.Invalid, InvalidValue{Row: i, Raw: FormatFloat(x), Err: fmt.Errorf("SAS date value %s out of range", FormatFloat(x))})
				lo, hi, p = math.NaN(), math.NaN(), PrecNone
			}
		}
		if p == PrecNone {
			c.missing.Set(i)
		}
		c.DateLo[i], c.DateHi[i], c.DatePrec[i] = lo, hi, p
	}
	return c
}

func decodeLatin1(b []byte) (string, error) {
	ascii := true
	for _, c := range b {
		if c >= 0x80 {
			ascii = false
			break
		}
	}
	if ascii {
		return string(b), nil
	}
	r := make([]rune, len(b))
	for i, c := range b {
		r[i] = rune(c)
	}
	return string(r), nil
}

func allByte(b []byte, c byte) bool {
	for _, y := range b {
		if y != c {
			return false
		}
	}
	return true
}

func blankOrNUL(b []byte) bool {
	for _, y := range b {
		if y != ' ' && y != 0 {
			return false
		}
	}
	return true
}

func isPrintableASCII(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] > 0x7e {
			return false
		}
	}
	return true
}
