package sampledata

import (
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

// FuzzParseRig feeds arbitrary bytes to the rig parser: it must never
// panic, and whatever it accepts must validate and survive a JSON round
// trip unchanged.
func FuzzParseRig(f *testing.F) {
	f.Add(DemoRig().JSON())
	files, _ := filepath.Glob(filepath.Join("..", "testdata", "sampledata", "*.rig.json"))
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(data)
		}
	}
	f.Add([]byte(`{"format": "spotloom-rig/1"}`))
	f.Add([]byte(`{"wheel": null}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := ParseRig(data)
		if err != nil {
			return
		}
		if err := r.Validate(); err != nil {
			t.Fatalf("accepted a rig that does not validate: %v", err)
		}
		back, err := ParseRig(r.JSON())
		if err != nil {
			t.Fatalf("accepted rig does not parse back: %v\n%s", err, r.JSON())
		}
		if !reflect.DeepEqual(back, r) {
			t.Fatalf("round trip changed the rig")
		}
	})
}
