package recon

import (
	"testing"

	"spotloom/recon/recipe"
)

// TestEverySourceHasAnImplementation: every allowed rows.source has one,
// reading the channel its role names (none for an even motion), and an
// unknown source is an error.
func TestEverySourceHasAnImplementation(t *testing.T) {
	ch := channels{detector: 0, index: 1, position: 2, steps: 3}
	want := map[recipe.RowSource]int{recipe.SourcePosition: 2, recipe.SourceTone: 2, recipe.SourceSteps: 3, recipe.SourceEven: -1}
	for _, s := range recipe.RowSources {
		src, err := sourceOf(s)
		if err != nil {
			t.Fatalf("%s: %v", s, err)
		}
		if got := src.channel(ch); got != want[s] {
			t.Errorf("%s reads channel %d, want %d", s, got, want[s])
		}
		if (src.needs() != "") != (want[s] >= 0) {
			t.Errorf("%s needs role %q", s, src.needs())
		}
	}
	if _, err := sourceOf("laser"); err == nil {
		t.Error("no error for an unknown source")
	}
}
