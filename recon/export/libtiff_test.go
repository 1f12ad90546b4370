package export

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"spotloom/recon"
)

// needTool skips the test when a libtiff tool is missing: the checks
// against libtiff run in CI (.ci/run installs libtiff-tools) and wherever
// the Debian package is installed.
func needTool(t *testing.T, name string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err != nil {
		t.Skipf("%s (Debian package libtiff-tools) is not installed: the TIFF is not checked against libtiff here", name)
	}
	return p
}

// TestTiffinfoReadsResolution: libtiff's tiffinfo, an independent reader,
// reports the worked example (0.25 mm pitch → 40 pixels per centimetre)
// and 0.4 mm → 25 px/cm, and the page count and sample format of a
// two-page float file.
func TestTiffinfoReadsResolution(t *testing.T) {
	tiffinfo := needTool(t, "tiffinfo")
	dir := t.TempDir()
	a, b := testFrame(64, 48, 0.25), testFrame(30, 20, 0.4)
	b.PitchYMM = 0.5 // 20 px/cm across the scan
	path := filepath.Join(dir, "pages.tiff")
	if err := Write(path, []*recon.Frame{a, b}, Options{Raw: true, Compression: "lzw"}); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(tiffinfo, path).CombinedOutput()
	if err != nil {
		t.Fatalf("tiffinfo: %v\n%s", err, out)
	}
	text := string(out)
	want := []string{
		"Resolution: 40, 40 pixels/cm",
		"Resolution: 25, 20 pixels/cm",
		"Sample Format: IEEE floating point",
		"Compression Scheme: LZW",
		"Image Width: 30 Image Length: 20",
		"SMin Sample Value:",
		"SMax Sample Value:",
	}
	for _, w := range want {
		if !strings.Contains(text, w) {
			t.Errorf("tiffinfo output lacks %q:\n%s", w, text)
		}
	}
	if n := len(regexp.MustCompile(`TIFF Directory at offset`).FindAllString(text, -1)); n != 2 {
		t.Errorf("tiffinfo found %d directories, want 2", n)
	}
	if strings.Contains(strings.ToLower(text), "warning") || strings.Contains(strings.ToLower(text), "error") {
		t.Errorf("tiffinfo complains:\n%s", text)
	}
}

// TestTiffcpDecompresses: libtiff's tiffcp rewrites our LZW and Deflate
// files uncompressed; the samples libtiff decoded must equal those of our
// own uncompressed file, page by page (independent decoder for our
// encoders, including float samples that x/image/tiff cannot read).
func TestTiffcpDecompresses(t *testing.T) {
	tiffcp := needTool(t, "tiffcp")
	dir := t.TempDir()
	frames := []*recon.Frame{testFrame(333, 201, 0.3), testFrame(90, 410, 0.3)}
	for _, depth := range []int{8, 16, 32} {
		plain := filepath.Join(dir, "plain.tiff")
		if err := Write(plain, frames, Options{Depth: depth, Force: true}); err != nil {
			t.Fatal(err)
		}
		plainBytes, _ := os.ReadFile(plain)
		wantPages := parseTIFF(t, plainBytes)
		for _, comp := range []string{"lzw", "deflate"} {
			packed := filepath.Join(dir, comp+".tiff")
			if err := Write(packed, frames, Options{Depth: depth, Compression: comp, Force: true}); err != nil {
				t.Fatal(err)
			}
			unpacked := filepath.Join(dir, comp+"-none.tiff")
			if out, err := exec.Command(tiffcp, "-c", "none", packed, unpacked).CombinedOutput(); err != nil || len(bytes.TrimSpace(out)) > 0 {
				t.Fatalf("depth %d %s: tiffcp: %v\n%s", depth, comp, err, out)
			}
			got, _ := os.ReadFile(unpacked)
			gotPages := parseTIFF(t, got)
			if len(gotPages) != len(wantPages) {
				t.Fatalf("depth %d %s: libtiff wrote %d pages, want %d", depth, comp, len(gotPages), len(wantPages))
			}
			for i := range gotPages {
				if !bytes.Equal(gotPages[i].samples, wantPages[i].samples) {
					t.Errorf("depth %d %s page %d: samples decoded by libtiff differ", depth, comp, i)
				}
			}
		}
	}
}
