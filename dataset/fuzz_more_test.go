package dataset

import (
	"bytes"
	"errors"
	"io"
	"testing"
	"testing/iotest"
	"unicode/utf8"
)

// FuzzUTF8Reader: utf8Reader (Dataset-JSON's input filter) passes every byte
// of valid UTF-8 through unchanged and fails exactly on invalid input, with
// the offset of the first bad byte as utf8 finds it, whether the input
// arrives whole or one byte per Read.
func FuzzUTF8Reader(f *testing.F) {
	for _, s := range []string{"", "abc", "K\xf6ln", "Köln", "日本", "\xe6\x97", "a\xf0\x9f\x98\x80b", "\xed\xa0\x80", "\xff"} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		for _, oneByte := range []bool{false, true} {
			var r io.Reader = &utf8Reader{r: bytes.NewReader(b), name: "f"}
			if oneByte {
				r = &utf8Reader{r: iotest.OneByteReader(bytes.NewReader(b)), name: "f"}
			}
			got, err := io.ReadAll(r)
			if utf8.Valid(b) {
				if err != nil || !bytes.Equal(got, b) {
					t.Fatalf("valid %q (one byte %v): got %q, %v", b, oneByte, got, err)
				}
				continue
			}
			var pe *ParseError
			if !errors.As(err, &pe) || !errors.Is(err, ErrBadEncoding) {
				t.Fatalf("invalid %q (one byte %v): error %v, want a ParseError wrapping ErrBadEncoding", b, oneByte, err)
			}
			first := 0
			for first < len(b) {
				r, n := utf8.DecodeRune(b[first:])
				if r == utf8.RuneError && n == 1 {
					break
				}
				first += n
			}
			if pe.Offset != int64(first) {
				t.Fatalf("invalid %q (one byte %v): offset %d, want %d", b, oneByte, pe.Offset, first)
			}
		}
	})
}
