//go:build !unix

package recon

// processCPU cannot read the process's CPU time here.
func processCPU() (float64, bool) { return 0, false }
