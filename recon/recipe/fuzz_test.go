package recipe

import (
	"bytes"
	"testing"
)

// FuzzParse: Parse never panics, and whatever it accepts writes back to
// JSON that parses to the same recipe.
func FuzzParse(f *testing.F) {
	f.Add(Default().JSON())
	f.Add([]byte(`{"format": "spotloom-recipe/1", "channels": {"detector": "det", "index": 1}}`))
	f.Add([]byte(`{"format": "spotloom-recipe/1", "sweep": {"table": [[0, 1], [0.5, 2]]}}`))
	f.Add([]byte(`{"format": 3}`))
	f.Add([]byte(`[`))
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := Parse(data)
		if err != nil {
			return
		}
		_ = r.Validate()
		out := r.JSON()
		r2, err := Parse(out)
		if err != nil {
			t.Fatalf("JSON of an accepted recipe does not parse: %v\n%s", err, out)
		}
		if !bytes.Equal(r2.JSON(), out) {
			t.Fatalf("round trip changed the recipe:\n%s\n%s", out, r2.JSON())
		}
	})
}
