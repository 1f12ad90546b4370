package recipe

import (
	"encoding/json"
	"errors"
	"strings"
	"testing"
)

// TestModesKeepTheirJSON: the typed law and source read and write the same
// strings docs/pipeline.md's recipe lists, and every listed value parses back to
// itself (the JSON text is the standard library's encoding/json).
func TestModesKeepTheirJSON(t *testing.T) {
	for _, law := range Laws {
		r := Default()
		r.Sweep.Law = law
		if law == LawTable {
			r.Sweep.Table = [][2]float64{{0, -10}, {0.5, 10}}
		}
		var doc struct {
			Sweep map[string]any `json:"sweep"`
		}
		if err := json.Unmarshal(r.JSON(), &doc); err != nil {
			t.Fatal(err)
		}
		if got := doc.Sweep["law"]; got != string(law) {
			t.Errorf("sweep.law written as %v, want %q", got, law)
		}
		if p, err := ParseLaw(string(law)); err != nil || p != law {
			t.Errorf("ParseLaw(%q) = %q, %v", law, p, err)
		}
		back, err := Parse(r.JSON())
		if err != nil || back.Sweep.Law != law {
			t.Errorf("law %q read back as %q, %v", law, back.Sweep.Law, err)
		}
	}
	for _, src := range RowSources {
		if p, err := ParseRowSource(string(src)); err != nil || p != src {
			t.Errorf("ParseRowSource(%q) = %q, %v", src, p, err)
		}
		if got, want := src.ReadsPosition(), src == SourcePosition || src == SourceTone; got != want {
			t.Errorf("%q.ReadsPosition() = %v", src, got)
		}
	}
}

// TestUnknownModeNamesTheAllowedValues: the error of an unknown law or
// source is a *KeyError naming the key and the one list of allowed values,
// and Validate gives the same error.
func TestUnknownModeNamesTheAllowedValues(t *testing.T) {
	_, err := ParseLaw("spiral")
	var ke *KeyError
	if !errors.As(err, &ke) || ke.Key != "sweep.law" || !strings.Contains(ke.Msg, "uniform, sine, table") {
		t.Fatalf("ParseLaw(spiral) = %v", err)
	}
	_, err = ParseRowSource("laser")
	if !errors.As(err, &ke) || ke.Key != "rows.source" || !strings.Contains(ke.Msg, "position, tone, steps, even") {
		t.Fatalf("ParseRowSource(laser) = %v", err)
	}
	r := Default()
	r.Rows.Source = "laser"
	if err := r.Validate(); err == nil || !strings.Contains(err.Error(), `"rows.source" is "laser": allowed values are position, tone, steps, even`) {
		t.Fatalf("Validate: %v", err)
	}
}

// TestGivenKeys: the keys a partial recipe states with a value are given,
// null ones and absent ones are not, channels count as one key, and a
// sidecar states everything.
func TestGivenKeys(t *testing.T) {
	got, err := GivenKeys([]byte(`{"format": "spotloom-recipe/1", "sweep": {"apertures": 6, "delay_deg": null},
		"rows": {"calibration": [[0, 0], [1, 100]]}, "channels": {"detector": 0}}`))
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]bool{"sweep.apertures": true, "rows.calibration": true, "channels": true}
	if len(got) != len(want) {
		t.Errorf("given %v, want %v", got, want)
	}
	for k := range want {
		if !got[k] {
			t.Errorf("%s not given: %v", k, got)
		}
	}
	side, err := GivenKeys([]byte(`{"format": "spotloom-export/1", "recipe": {}}`))
	if err != nil || !side["*"] {
		t.Errorf("sidecar: %v, %v", side, err)
	}
	if _, err := GivenKeys([]byte(`{"format": `)); err == nil {
		t.Error("broken JSON gave no error")
	}
}
