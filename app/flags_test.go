package main

import (
	"bytes"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"
)

// TestZeroAndNaNFlagsRefused: a zero, NaN or infinite value of a flag
// that needs a positive number is bad usage (exit 2) naming the flag, as a
// negative one is, instead of being read as "not given".
func TestZeroAndNaNFlagsRefused(t *testing.T) {
	wav := filepath.Join(captureFixtures, "pcm_s16_stereo.wav")
	out := filepath.Join(t.TempDir(), "x.wav")
	cases := [][]string{
		{"recipe", wav, "--field", "0"},
		{"recipe", wav, "--field", "NaN"},
		{"recipe", wav, "--distance", "0"},
		{"recipe", wav, "--distance", "-Inf"},
		{"recipe", wav, "--apertures", "0"},
		{"recipe", wav, "--pulses-per-rev", "0"},
		{"inspect", wav, "--rate", "0"},
		{"inspect", wav, "--rate", "NaN"},
		{"inspect", wav, "--raw", "int16", "--rate", "1000", "--scale", "0"},
		{"inspect", wav, "--raw", "int16", "--rate", "1000", "--scale", "NaN"},
		{"inspect", wav, "--raw", "int16", "--rate", "1000", "--channels", "0"},
		{"inspect", wav, "--raw", "int16", "--rate", "1000", "--offset", "NaN"},
		{"build", wav, "--recipe", "r.json", "--out", "f.png", "--gamma", "NaN"},
		{"build", wav, "--recipe", "r.json", "--out", "f.png", "--level", "0", "--window", "NaN"},
		{"build", wav, "--recipe", "r.json", "--out", "f.png", "--window", "1", "--level", "NaN"},
		{"build", wav, "--recipe", "r.json", "--out", "f.png", "--scale-bar-mm", "0"},
		{"simulate", "--scene", "bars", "--out", out, "--seconds", "0"},
		{"simulate", "--scene", "bars", "--out", out, "--rate", "NaN"},
		{"simulate", "--scene", "bars", "--out", out, "--truth-pitch", "0"},
	}
	for _, args := range cases {
		var flagName string
		for _, a := range args {
			if strings.HasPrefix(a, "--") {
				flagName = a // the last flag is the bad one
			}
		}
		code, _, stderr := runCmd(args...)
		if code != 2 || !strings.Contains(stderr, flagName+" ") || strings.Count(stderr, "\n") != 1 {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 naming %s", args, code, stderr, flagName)
		}
	}
}

// TestFlagsSpelledOneWay: every command's help lists its flags as the
// usage line spells them (--flag), the flag package's errors say --flag,
// and bad usage (an unknown scene, depth or compression, or help for an
// unknown command) exits 2.
func TestFlagsSpelledOneWay(t *testing.T) {
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	oneDash := regexp.MustCompile(`(^|[\s(\[,"])-[A-Za-z]`)
	for _, name := range names {
		var stdout, stderr bytes.Buffer
		if code := run([]string{name, "--help"}, &stdout, &stderr); code != 0 {
			t.Errorf("%s --help: exit %d", name, code)
			continue
		}
		help := stderr.String()
		flagsAt := strings.Index(help, "\nflags:\n")
		if flagsAt < 0 {
			continue
		}
		for _, line := range strings.Split(help[flagsAt:], "\n") {
			if strings.HasPrefix(line, "  -") && !strings.HasPrefix(line, "  --") {
				t.Errorf("%s --help lists %q", name, line)
			}
		}
		for _, line := range strings.Split(help, "\n") {
			if oneDash.MatchString(line) {
				t.Errorf("%s --help spells a flag with one dash: %q", name, line)
			}
		}
	}
	wav := filepath.Join(captureFixtures, "pcm_s16_stereo.wav")
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"build", "--bogus"}, "defined: --bogus"},
		{[]string{"inspect", "--rate", "abc", wav}, "for flag --rate"},
		{[]string{"build", wav, "--out"}, "argument: --out"},
		{[]string{"simulate", "--scene", "teapot", "--out", filepath.Join(t.TempDir(), "x.wav")}, `unknown scene "teapot"`},
		{[]string{"build", wav, "--recipe", "r.json", "--out", "f.tiff", "--depth", "12"}, "--depth 12"},
		{[]string{"build", wav, "--recipe", "r.json", "--out", "f.tiff", "--compress", "zip"}, `--compress "zip"`},
		{[]string{"help", "bogus"}, `unknown command "bogus"`},
	} {
		code, _, stderr := runCmd(c.args...)
		if code != 2 || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want exit 2 with %q", c.args, code, stderr, c.want)
		}
	}
}

// TestSimulateSaysWhatItWrote: simulate names every file it wrote and the
// capture's duration, channels and rate on stderr.
func TestSimulateSaysWhatItWrote(t *testing.T) {
	dir := t.TempDir()
	out, truth, start := filepath.Join(dir, "s.wav"), filepath.Join(dir, "s.truth.json"), filepath.Join(dir, "s.start.json")
	code, _, stderr := runSimulateCmd("--scene", "bars", "--out", out, "--seconds", "2", "--truth", truth, "--recipe", start)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, want := range []string{"wrote " + out + " (wav, 2 s: ", " channels at ", filepath.Join(dir, "s.truth.png"), truth, start} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr %q lacks %q", stderr, want)
		}
	}
}
