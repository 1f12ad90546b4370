//go:build unix

package recon

import "syscall"

// processCPU is the user and system CPU time of the process so far,
// seconds, and whether it could be read.
func processCPU() (float64, bool) {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0, false
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9, true
}
