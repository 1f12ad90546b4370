package main

import (
	"bytes"
	"io"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// TestNoLocaleNoiseOnCUTF8 runs this test binary again with LANG=C.UTF-8
// and checks that nothing but the command's own output reaches stderr: Fyne
// 2.7 logs a locale parse error at start-up unless localefix runs first.
func TestNoLocaleNoiseOnCUTF8(t *testing.T) {
	if os.Getenv("SPOTLOOM_LOCALE_CHILD") == "1" {
		os.Exit(run([]string{"help"}, io.Discard, os.Stderr))
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestNoLocaleNoiseOnCUTF8$")
	cmd.Env = append(os.Environ(), "SPOTLOOM_LOCALE_CHILD=1", "LANG=C.UTF-8", "LC_ALL=", "LC_MESSAGES=")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("child run: %v\n%s", err, stderr.String())
	}
	if s := stderr.String(); strings.Contains(s, "Fyne error") || strings.Contains(s, "locale") {
		t.Errorf("stderr is not clean under LANG=C.UTF-8:\n%s", s)
	}
}
