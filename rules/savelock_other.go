//go:build !unix && !windows

package rules

import "os"

// lockFile does nothing where no file locking is available (js, wasip1,
// plan9): Save's conflict check then guards sequential writers only.
func lockFile(*os.File) error { return nil }

func unlockFile(*os.File) error { return nil }
