// Package atomicfile writes files so that a reader, or a crash, never sees
// half of one: the content goes to a temporary file in the same folder,
// which is synced, closed and renamed over the target, and the folder is
// synced where the platform allows. Temporary files are named
// ".NAME.tmp*" so that they are hidden and never mistaken for the target.
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Write writes path through write. On any error the temporary file is
// removed and path is left as it was. The file gets mode 0644.
func Write(path string, write func(io.Writer) error) (err error) {
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	if err = write(f); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Chmod(0o644); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return err
	}
	if d, derr := os.Open(dir); derr == nil {
		d.Sync() // best effort: not every platform syncs folders
		d.Close()
	}
	return nil
}
