package dataset

import (
	"bytes"
	"flag"
	"os"
	"testing"
)

// The -update flag rewrites golden files. It is defined here unless another
// test file of the package already defines it.
func init() {
	if flag.Lookup("update") == nil {
		flag.Bool("update", false, "rewrite golden files")
	}
}

// golden compares got with the golden file path, rewriting it under -update.
func golden(t *testing.T, path string, got []byte) {
	t.Helper()
	if f := flag.Lookup("update"); f != nil && f.Value.String() == "true" {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("output differs from %s (go test -update rewrites it; review the diff):\n got %s\nwant %s", path, got, want)
	}
}
