package recipe

import (
	"bytes"
	"strings"
	"testing"
)

// TestParseExportSidecar: an export's sidecar holds the recipe under
// "recipe"; Parse reads it from there, and says so when it is missing or bad.
func TestParseExportSidecar(t *testing.T) {
	want := Default()
	want.Sweep.Apertures = 6
	side := []byte(`{"format": "` + SidecarFormat + `", "file": "f.tiff", "recipe": ` + string(want.JSON()) + `, "report": {"lines": 3}}`)
	got, err := Parse(side)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got.JSON(), want.JSON()) {
		t.Errorf("got\n%s\nwant\n%s", got.JSON(), want.JSON())
	}
	if _, err := Parse([]byte(`{"format": "` + SidecarFormat + `", "file": "f.tiff"}`)); err == nil || !strings.Contains(err.Error(), `no "recipe"`) {
		t.Errorf("sidecar without a recipe: %v", err)
	}
	bad := []byte(`{"format": "` + SidecarFormat + `", "recipe": {"format": "` + RecipeFormat + `", "sweep": {"colour": 1}}}`)
	if _, err := Parse(bad); err == nil || !strings.Contains(err.Error(), "colour") || !strings.Contains(err.Error(), "sidecar") {
		t.Errorf("sidecar with a bad recipe: %v", err)
	}
}

// TestNullOnlyWhereAutomatic: null means "find it automatically", which a
// distance cannot be; Parse says so instead of keeping the default, and
// still takes null where the value is found automatically.
func TestNullOnlyWhereAutomatic(t *testing.T) {
	_, err := Parse([]byte(`{"format": "` + RecipeFormat + `", "sweep": {"distance_mm": null}}`))
	if err == nil || !strings.Contains(err.Error(), `"sweep.distance_mm" at line 1, column 58 is null: give a number`) {
		t.Errorf("distance null: %v", err)
	}
	r, err := Parse([]byte(`{"format": "` + RecipeFormat + `", "sweep": {"delay_deg": null}, "channels": {"position": null}}`))
	if err != nil || r.Sweep.DelayDeg != nil || r.Channels.Position.IsSet() {
		t.Errorf("automatic nulls: %v %+v", err, r.Channels)
	}
}
