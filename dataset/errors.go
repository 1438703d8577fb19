package dataset

import (
	"errors"
	"fmt"
	"strconv"
)

// A ParseError reports malformed input. Line and Column are 1-based, Column in
// bytes; binary formats (XPT) set Record (1-based, in 80-byte records) or Offset
// (0-based byte offset) instead of Line. Zero fields are unknown and not printed.
type ParseError struct {
	File         string
	Line, Column int
	Record       int
	Offset       int64 // byte offset from the start of the file; -1 or 0 when unused
	Row          int   // 1-based data row (Dataset-JSON), 0 when unused
	Var          string
	Err          error
}

func (e *ParseError) Error() string {
	pos := e.File
	if pos == "" {
		pos = "<input>"
	}
	switch {
	case e.Line > 0:
		pos += ":" + strconv.Itoa(e.Line)
		if e.Column > 0 {
			pos += ":" + strconv.Itoa(e.Column)
		}
	case e.Row > 0:
		pos += ": row " + strconv.Itoa(e.Row)
	case e.Record > 0:
		pos += ": record " + strconv.Itoa(e.Record)
		if e.Offset > 0 {
			pos += " (byte " + strconv.FormatInt(e.Offset, 10) + ")"
		}
	case e.Offset > 0:
		pos += ": byte " + strconv.FormatInt(e.Offset, 10)
	}
	if e.Var != "" {
		return fmt.Sprintf("%s: variable %q: %v", pos, e.Var, e.Err)
	}
	return fmt.Sprintf("%s: %v", pos, e.Err)
}

func (e *ParseError) Unwrap() error { return e.Err }

// Sentinel causes carried by ParseError.Err; test them with errors.Is.
var (
	ErrNotISODate      = errors.New("not an ISO 8601 date")
	ErrRagged          = errors.New("wrong number of fields")
	ErrBadQuote        = errors.New("bad quoting")
	ErrBadEncoding     = errors.New("invalid UTF-8 (use --encoding windows-1252 or latin1 if the file is not UTF-8)")
	ErrEmpty           = errors.New("empty file")
	ErrNoRows          = errors.New("header only, no data rows")
	ErrDuplicateColumn = errors.New("duplicate column name")
	ErrFieldTooLong    = errors.New("field too long")
	ErrBOMInside       = errors.New("byte order mark inside the data")
	ErrUnknownVariable = errors.New("unknown variable")
	ErrTruncated       = errors.New("file truncated")
)
