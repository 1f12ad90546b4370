package main

import (
	"bytes"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// TestVersionNamesTheLibrariesBuiltWith checks `spotloom --version` against
// the Go toolchain's own reading of the same binary (`go version -m`), an
// independent reader of the build information.
func TestVersionNamesTheLibrariesBuiltWith(t *testing.T) {
	var out, errOut bytes.Buffer
	if code := run([]string{"--version"}, &out, &errOut); code != 0 {
		t.Fatalf("--version exits %d: %s", code, errOut.String())
	}
	text := out.String()
	if !strings.HasPrefix(text, "spotloom ") {
		t.Errorf("--version prints %q, want it to start with the program's name", text)
	}
	exe, err := os.Executable()
	if err != nil {
		t.Skip("cannot find the test binary:", err)
	}
	m, err := exec.Command("go", "version", "-m", exe).Output()
	if err != nil {
		t.Skip("go version -m is not available:", err)
	}
	libs := map[string]string{"fyne.io/fyne/v2": "fyne", "gonum.org/v1/gonum": "gonum", "gonum.org/v1/plot": "gonum/plot",
		"golang.org/x/image": "x/image", "github.com/gen2brain/malgo": "malgo", "github.com/go-audio/wav": "go-audio/wav"}
	found := 0
	for _, line := range strings.Split(string(m), "\n") {
		f := strings.Fields(line)
		if len(f) < 3 || f[0] != "dep" {
			continue
		}
		if name, ok := libs[f[1]]; ok {
			found++
			if want := name + " " + f[2]; !strings.Contains(text, want) {
				t.Errorf("--version prints %q, want it to name %q", text, want)
			}
		}
	}
	if found == 0 {
		t.Errorf("go version -m lists none of the libraries:\n%s", m)
	}
	// A library the binary does not hold is not named.
	for path, name := range libs {
		if !strings.Contains(string(m), "\t"+path+"\t") && strings.Contains(text, name+" ") {
			t.Errorf("--version prints %q, naming %s, which the binary does not hold", text, name)
		}
	}
	if first := strings.Fields(string(m)); len(first) > 1 && !strings.Contains(text, first[1]) {
		t.Errorf("--version prints %q, want the Go release %s", text, first[1])
	}
}
