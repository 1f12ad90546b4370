package ui

import (
	"encoding/json"

	"spotloom/recon"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
)

// settings is everything the user can change that undo and redo restore:
// the recipe, the tone of the view and the measurements drawn on the
// frame (which need no build: they are taken again on every frame).
type settings struct {
	Recipe       recipe.Recipe
	Tone         recon.Tone
	Measurements []measure.Shape
}

func (s settings) clone() settings {
	return settings{Recipe: cloneRecipe(s.Recipe), Tone: s.Tone, Measurements: measure.CloneList(s.Measurements)}
}

// cloneRecipe deep-copies r through its JSON form, which keeps every key.
func cloneRecipe(r recipe.Recipe) recipe.Recipe {
	data, err := json.Marshal(r)
	if err != nil {
		return r
	}
	var out recipe.Recipe
	if err := json.Unmarshal(data, &out); err != nil {
		return r
	}
	return out
}

// sameRecipe reports whether a and b hold the same values.
func sameRecipe(a, b recipe.Recipe) bool {
	da, errA := json.Marshal(a)
	db, errB := json.Marshal(b)
	return errA == nil && errB == nil && string(da) == string(db)
}

func sameSettings(a, b settings) bool {
	return a.Tone == b.Tone && sameRecipe(a.Recipe, b.Recipe) && measure.SameList(a.Measurements, b.Measurements)
}

// history keeps undo and redo stacks of settings. A drag of a slider is
// one step, recorded when the drag ends (Fyne's drag end): its first change
// keeps the settings from before the drag, and the changes until it ends
// add nothing.
type history struct {
	undo, redo []settings
	// gesture is the control being dragged ("" when none) and pending the
	// settings before its first change (nil until it changes).
	gesture string
	pending *settings
	limit   int
}

func newHistory() *history {
	return &history{limit: 200}
}

// begin and end bracket a drag of control; end records its step.
func (h *history) begin(control string) { h.end(); h.gesture = control }
func (h *history) end() {
	if h.pending != nil {
		h.push(*h.pending)
	}
	h.gesture, h.pending = "", nil
}

func (h *history) push(before settings) {
	h.undo = append(h.undo, before)
	if len(h.undo) > h.limit {
		h.undo = h.undo[len(h.undo)-h.limit:]
	}
}

// record notes that control is about to change the settings from before.
// A change outside a drag is a step at once; the first change of a drag
// is kept for the step its end records, and the others merge into it. It
// returns true when the change starts a step.
func (h *history) record(control string, before settings) bool {
	h.redo = nil
	if control != "" && control == h.gesture {
		if h.pending != nil {
			return false
		}
		b := before.clone()
		h.pending = &b
		return true
	}
	h.push(before.clone())
	return true
}

// newest is the settings the newest step goes back to: a drag's that has
// not ended, else the top of the undo stack.
func (h *history) newest() (settings, bool) {
	if h.pending != nil {
		return *h.pending, true
	}
	if len(h.undo) == 0 {
		return settings{}, false
	}
	return h.undo[len(h.undo)-1], true
}

// dropLast removes the newest step (its change was refused).
func (h *history) dropLast() {
	if h.pending != nil {
		h.pending = nil
		return
	}
	if len(h.undo) > 0 {
		h.undo = h.undo[:len(h.undo)-1]
	}
}

// back returns the settings to restore for undo, given the current ones.
func (h *history) back(current settings) (settings, bool) {
	h.end() // a drag under way is a step of its own
	if len(h.undo) == 0 {
		return current, false
	}
	prev := h.undo[len(h.undo)-1]
	h.undo = h.undo[:len(h.undo)-1]
	h.redo = append(h.redo, current.clone())
	return prev, true
}

// forward returns the settings to restore for redo.
func (h *history) forward(current settings) (settings, bool) {
	h.end()
	if len(h.redo) == 0 {
		return current, false
	}
	next := h.redo[len(h.redo)-1]
	h.redo = h.redo[:len(h.redo)-1]
	h.undo = append(h.undo, current.clone())
	return next, true
}

func (h *history) canUndo() bool { return len(h.undo) > 0 || h.pending != nil }
func (h *history) canRedo() bool { return len(h.redo) > 0 }
