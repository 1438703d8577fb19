package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.csv")
	if err := Write(path, func(w io.Writer) error { _, err := io.WriteString(w, "old\n"); return err }); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("boom")
	if err := Write(path, func(w io.Writer) error { io.WriteString(w, "half"); return boom }); !errors.Is(err, boom) {
		t.Fatalf("err = %v, want the writer's error", err)
	}
	b, _ := os.ReadFile(path)
	if string(b) != "old\n" {
		t.Errorf("after a failed write the file holds %q, want the old content", b)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("folder holds %d entries, want only the target (temporary file removed)", len(ents))
	}
	if fi, _ := os.Stat(path); fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, want 0644", fi.Mode().Perm())
	}
}
