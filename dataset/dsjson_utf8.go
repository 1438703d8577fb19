package dataset

import (
	"fmt"
	"io"
	"unicode/utf8"
)

// errDSJSONUTF8 is the cause of a ParseError for a Dataset-JSON file that is
// not UTF-8; errors.Is(err, ErrBadEncoding) holds for it.
type errDSJSONUTF8 struct{ b byte }

func (e errDSJSONUTF8) Error() string {
	return fmt.Sprintf("invalid UTF-8 (byte 0x%02X): Dataset-JSON files are UTF-8 (RFC 8259 §8.1); re-export the file as UTF-8", e.b)
}

func (e errDSJSONUTF8) Is(target error) bool { return target == ErrBadEncoding }

// utf8Reader passes r through, failing with a positioned *ParseError at the
// first byte that is not valid UTF-8. encoding/json would otherwise replace
// such bytes with U+FFFD and a Latin-1 "Köln" would load as "K\uFFFDln"
// without a word (found by the malformed-input corpus, testdata/bad).
type utf8Reader struct {
	r     io.Reader
	name  string
	off   int64  // bytes passed through so far
	carry []byte // a rune's first bytes at the end of the last read
}

func (u *utf8Reader) fail(off int64, b byte) error {
	return &ParseError{File: u.name, Offset: off, Err: errDSJSONUTF8{b}}
}

func (u *utf8Reader) Read(p []byte) (int, error) {
	n, err := u.r.Read(p)
	b := p[:n]
	i := 0
	if len(u.carry) > 0 {
		need := 4
		switch c := u.carry[0]; {
		case c < 0xE0:
			need = 2
		case c < 0xF0:
			need = 3
		}
		take := min(need-len(u.carry), len(b))
		rn := append(u.carry[:len(u.carry):len(u.carry)], b[:take]...)
		if len(rn) < need && err == nil {
			u.carry = rn
			u.off += int64(n)
			return n, nil
		}
		if !utf8.FullRune(rn) || !utf8.Valid(rn) {
			return 0, u.fail(u.off-int64(len(u.carry)), u.carry[0])
		}
		u.carry, i = nil, take
	}
	for i < len(b) {
		if b[i] < utf8.RuneSelf {
			i++
			continue
		}
		r, size := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && size == 1 {
			if !utf8.FullRune(b[i:]) && err == nil {
				u.carry = append([]byte(nil), b[i:]...)
				break
			}
			return 0, u.fail(u.off+int64(i), b[i])
		}
		i += size
	}
	u.off += int64(n)
	if err == io.EOF && len(u.carry) > 0 {
		return 0, u.fail(u.off-int64(len(u.carry)), u.carry[0])
	}
	return n, err
}
