package ui

import (
	"fmt"
	"runtime/debug"
	"strings"
)

// builtWith are the libraries whose versions the version text names, with
// the short names it gives them: the toolkit, the numerics, the report
// sheet's plots, the image codecs and fonts, and the sound-card driver.
var builtWith = []struct{ path, name string }{
	{"fyne.io/fyne/v2", "fyne"},
	{"gonum.org/v1/gonum", "gonum"},
	{"gonum.org/v1/plot", "gonum/plot"},
	{"golang.org/x/image", "x/image"},
	{"github.com/gen2brain/malgo", "malgo"},
	{"github.com/go-audio/wav", "go-audio/wav"},
}

// Version says which Spotloom this is, from the build information the Go
// toolchain records in the program: the module version (or the commit and
// its time for a build from a checkout), the Go release and the versions
// of the main libraries it was built with.
type Version struct {
	Spotloom  string            // "v1.2.0", or "devel" for a checkout build
	Commit    string            // vcs.revision, shortened; "" when unknown
	Time      string            // vcs.time; "" when unknown
	Modified  bool              // the checkout had changes not committed
	Go        string            // "go1.26.0"
	Libraries map[string]string // short name (fyne, gonum, …) → version
}

// BuildVersion reads the version from the running program.
func BuildVersion() Version {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return Version{Spotloom: "unknown", Libraries: map[string]string{}}
	}
	return versionFrom(info)
}

func versionFrom(info *debug.BuildInfo) Version {
	v := Version{Spotloom: info.Main.Version, Go: info.GoVersion, Libraries: map[string]string{}}
	if v.Spotloom == "" || v.Spotloom == "(devel)" {
		v.Spotloom = "devel"
	}
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			v.Commit = s.Value[:min(len(s.Value), 12)]
		case "vcs.time":
			v.Time = s.Value
		case "vcs.modified":
			v.Modified = s.Value == "true"
		}
	}
	for _, d := range info.Deps {
		if d.Replace != nil {
			d = d.Replace
		}
		for _, lib := range builtWith {
			if d.Path == lib.path {
				v.Libraries[lib.name] = d.Version
			}
		}
	}
	return v
}

// String is the one-line version: "spotloom devel (commit 1a2b3c4d5e6f,
// 2026-12-01T10:00:00Z, with changes) built with go1.26.0, fyne v2.7.1, …".
func (v Version) String() string {
	var b strings.Builder
	b.WriteString("spotloom " + v.Spotloom)
	var about []string
	if v.Commit != "" {
		about = append(about, "commit "+v.Commit)
	}
	if v.Time != "" {
		about = append(about, v.Time)
	}
	if v.Modified {
		about = append(about, "with changes not committed")
	}
	if len(about) > 0 {
		b.WriteString(" (" + strings.Join(about, ", ") + ")")
	}
	parts := []string{}
	if v.Go != "" {
		parts = append(parts, v.Go)
	}
	// A library the program does not link (go-audio/wav serves only the
	// tests) is not named.
	for _, lib := range builtWith {
		if version := v.Libraries[lib.name]; version != "" {
			parts = append(parts, fmt.Sprintf("%s %s", lib.name, version))
		}
	}
	b.WriteString(" built with " + strings.Join(parts, ", "))
	return b.String()
}
