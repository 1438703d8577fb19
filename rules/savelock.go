package rules

import (
	"os"
	"path/filepath"
)

// lockPath returns the lock file that serialises saves of the rule set at
// path: ".NAME.lock" in the same folder. It exists only while a save runs
// (or after a save was killed); it is empty and never read, so a leftover one
// is harmless and may be deleted.
func lockPath(path string) string {
	return filepath.Join(filepath.Dir(path), "."+filepath.Base(path)+".lock")
}

// withSaveLock runs fn holding an exclusive advisory lock on lockPath(path),
// so that two processes saving the same rule set cannot both pass the
// conflict check before either renames: the check-and-replace in Save is one
// step. The operating system releases the lock when the process dies, so a
// killed save never leaves the rule set locked. The lock file is removed
// while still locked; a process that then acquires the lock on the removed
// file sees that the path no longer names it and starts over.
func withSaveLock(path string, fn func() error) error {
	lp := lockPath(path)
	for {
		f, err := os.OpenFile(lp, os.O_RDWR|os.O_CREATE, 0o644)
		if err != nil {
			return err
		}
		if err := lockFile(f); err != nil {
			f.Close()
			return err
		}
		held, err1 := f.Stat()
		now, err2 := os.Stat(lp)
		if err1 != nil || err2 != nil || !os.SameFile(held, now) {
			unlockFile(f)
			f.Close()
			continue // removed (or replaced) by the previous holder
		}
		err = fn()
		os.Remove(lp) // best effort: Windows refuses to remove an open file
		unlockFile(f)
		f.Close()
		return err
	}
}
