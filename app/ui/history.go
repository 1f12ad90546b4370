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
// one step: the step is recorded when the drag starts and the changes
// until it ends (Fyne's drag end) merge into it.
type history struct {
	undo, redo []settings
	// gesture is the control being dragged ("" when none) and stepped
	// whether its step was already recorded.
	gesture string
	stepped bool
	limit   int
}

func newHistory() *history {
	return &history{limit: 200}
}

// begin and end bracket a drag of control.
func (h *history) begin(control string) { h.gesture, h.stepped = control, false }
func (h *history) end()                 { h.gesture, h.stepped = "", false }

// record notes that control is about to change the settings from before.
// Changes during one drag of a control merge into one step. It returns
// true when a new step was pushed.
func (h *history) record(control string, before settings) bool {
	h.redo = nil
	if control != "" && control == h.gesture {
		if h.stepped && len(h.undo) > 0 {
			return false
		}
		h.stepped = true
	}
	h.undo = append(h.undo, before.clone())
	if len(h.undo) > h.limit {
		h.undo = h.undo[len(h.undo)-h.limit:]
	}
	return true
}

// dropLast removes the newest undo step (its change was refused).
func (h *history) dropLast() {
	if len(h.undo) > 0 {
		h.undo = h.undo[:len(h.undo)-1]
	}
	h.stepped = false
}

// back returns the settings to restore for undo, given the current ones.
func (h *history) back(current settings) (settings, bool) {
	if len(h.undo) == 0 {
		return current, false
	}
	prev := h.undo[len(h.undo)-1]
	h.undo = h.undo[:len(h.undo)-1]
	h.redo = append(h.redo, current.clone())
	h.end()
	return prev, true
}

// forward returns the settings to restore for redo.
func (h *history) forward(current settings) (settings, bool) {
	if len(h.redo) == 0 {
		return current, false
	}
	next := h.redo[len(h.redo)-1]
	h.redo = h.redo[:len(h.redo)-1]
	h.undo = append(h.undo, current.clone())
	h.end()
	return next, true
}

func (h *history) canUndo() bool { return len(h.undo) > 0 }
func (h *history) canRedo() bool { return len(h.redo) > 0 }
