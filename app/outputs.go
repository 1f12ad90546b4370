package main

import (
	"os"

	"spotloom/capture"
	"spotloom/recon/export"
)

// captureInputs are the files a command reads for a capture: the file
// itself, the layout given with --layout, and the layout sidecars the
// reader would look for beside it. No output may be one of them.
func captureInputs(path string, cf *captureFlags) []export.Role {
	if path == "" {
		return nil
	}
	inputs := []export.Role{{What: "the capture", Path: path}}
	if cf.layoutPath != "" {
		return append(inputs, export.Role{What: "the layout", Path: cf.layoutPath})
	}
	for _, p := range capture.LayoutPaths(path) {
		if _, err := os.Stat(p); err == nil {
			inputs = append(inputs, export.Role{What: "the layout", Path: p})
		}
	}
	return inputs
}
