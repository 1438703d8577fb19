//go:build unix

package assoc

import "syscall"

// processCPU returns the user plus system CPU seconds of the whole process,
// every thread included (getrusage(2), RUSAGE_SELF).
func processCPU() (float64, bool) {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0, false
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9, true
}
