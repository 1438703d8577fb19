//go:build !unix

package assoc

// processCPU reports that process CPU time is not measured on this platform.
func processCPU() (float64, bool) { return 0, false }
