package ui

import (
	"os"
	"regexp"
	"runtime/debug"
	"testing"
)

// TestVersionFromBuildInfo reads build information in the text form the Go
// toolchain prints (`go version -m`), parsed by the standard library's
// debug.ParseBuildInfo, with the versions of go.mod's requirements.
func TestVersionFromBuildInfo(t *testing.T) {
	mod, err := os.ReadFile("../../go.mod")
	if err != nil {
		t.Fatal(err)
	}
	required := func(path string) string {
		m := regexp.MustCompile(`(?m)^\s*` + regexp.QuoteMeta(path) + ` (v\S+)`).FindSubmatch(mod)
		if m == nil {
			t.Fatalf("go.mod does not require %s", path)
		}
		return string(m[1])
	}
	text := "path\tspotloom/app\nmod\tspotloom\t(devel)\t\n"
	for _, lib := range builtWith {
		text += "dep\t" + lib.path + "\t" + required(lib.path) + "\th1:x=\n"
	}
	text += "build\tvcs.revision=0123456789abcdef0123\nbuild\tvcs.time=2026-12-01T10:00:00Z\nbuild\tvcs.modified=true\n"
	info, err := debug.ParseBuildInfo(text)
	if err != nil {
		t.Fatal(err)
	}
	info.GoVersion = "go1.26.0" // ParseBuildInfo leaves it unset, as its documentation says
	got := versionFrom(info).String()
	want := "spotloom devel (commit 0123456789ab, 2026-12-01T10:00:00Z, with changes not committed) built with go1.26.0, fyne " +
		required("fyne.io/fyne/v2") + ", gonum " + required("gonum.org/v1/gonum") + ", go-audio/wav " + required("github.com/go-audio/wav") +
		", x/image " + required("golang.org/x/image")
	if got != want {
		t.Errorf("version\n got %s\nwant %s", got, want)
	}
}
