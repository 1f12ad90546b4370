package ui

import (
	"regexp"
	"strings"
)

// The engine and the recipe checks speak in recipe keys ("timing.threshold
// ... set threshold to null"), which suits a recipe file; the window says the
// same in the names of its controls. Phrases go first (they name a value
// as well as a key), then the bare keys, longest first.
var windowPhrases = []struct{ from, to string }{
	{"set threshold to null to find it automatically", "press Find automatically under Index threshold"},
	{"set timing.threshold and timing.hysteresis", "set Index threshold by hand"},
	{"set signal.invert to true so that more scatter shows brighter", "choose Detector polarity: negative-going, so that more scatter shows brighter"},
	{"signal.invert is set", "Detector polarity is negative-going"},
	{"set signal.baseline to none", "choose Baseline: none"},
	{"set sweep.delay_deg by hand", "set the Delay by hand"},
	{"set sweep.delay_deg", "set the Delay by hand"},
	{"use rows.source even with rows.speed_mm_s", "choose Rows from: even speed and give the Head speed"},
	{"use rows.source position", "choose Rows from: position level"},
	{"rows.source even", "Rows from: even speed"},
	{"rows.source steps", "Rows from: step pulses"},
	{"rows.strokes merge", "Passes of the head: merge all passes"},
	{"rows.strokes split", "Passes of the head: one frame per pass"},
	{"rows.strokes first", "Passes of the head: first pass only"},
	{"sweep.law sine", "the resonant-mirror sweep"},
	{"source even needs", "Rows from: even speed needs"},
	{"source steps needs", "Rows from: step pulses needs"},
	{"law table needs", "the measured-table sweep needs"},
	{"with projection flat", "with the flat-plane projection"},
	{"use projection angular", "choose Projection: angular"},
	{"raise pitch_mm", "raise the Pitch"},
	{"check field_deg and apertures", "check Field of view and Apertures on the wheel"},
	{" is null", " is not given"},
	{"or null for automatic", "or leave it automatic"},
	{"expected a finite number or null", "expected a finite number"},
	{"check --dots", "check the spacing typed"},
}

var windowKeys = map[string]string{
	"timing.threshold":           "Index threshold",
	"timing.edge":                "Index edge",
	"timing.hysteresis":          "index hysteresis (set in a recipe file)",
	"timing.pulses_per_rev":      "Index pulses",
	"sweep.delay_deg":            "Delay",
	"sweep.field_deg":            "Field of view",
	"sweep.apertures":            "Apertures on the wheel",
	"sweep.aperture_offsets_deg": "Aperture offsets",
	"sweep.law":                  "Sweep",
	"sweep.table":                "the measured table",
	"sweep.projection":           "Projection",
	"sweep.distance_mm":          "Distance to the scene",
	"sweep.sine_period_s":        "mirror period (set in a recipe file)",
	"sweep.sine_keep":            "mirror half-periods kept (set in a recipe file)",
	"image.pitch_mm":             "Pitch",
	"image.fill_gaps_px":         "gap filling (set in a recipe file)",
	"rows.calibration":           "the position calibration",
	"rows.speed_mm_s":            "Head speed",
	"rows.mm_per_step":           "Travel per step",
	"rows.steps_threshold":       "step-pulse threshold (set in a recipe file)",
	"rows.steps_hysteresis":      "step-pulse hysteresis (set in a recipe file)",
	"rows.pulse_rest":            "index pulses' resting level (set in a recipe file)",
	"rows.pulse_away":            "index pulses' least height (set in a recipe file)",
	"rows.source":                "Rows from",
	"rows.strokes":               "Passes of the head",
	"rows.strokes_hysteresis_mm": "reversal hysteresis of the passes (set in a recipe file)",
	"rows.carrier_hz":            "the carrier frequency (set in a recipe file)",
	"signal.baseline":            "Baseline",
	"signal.invert":              "Detector polarity",
	"signal.ac_corner_hz":        "AC coupling to undo",
	"channels.index":             "the Index pulse channel",
	"channels.position":          "the Position channel",
	"channels.detector":          "the Detector channel",
	"channels.steps":             "the Position channel (step pulses)",
}

var recipeKeyPattern = regexp.MustCompile(`"?\b(timing|sweep|image|rows|signal|channels)\.[a-z_]+\b"?`)

// windowWords rewrites a message from the engine or the recipe checks in
// the window's words. Keys it does not know stay as they are.
func windowWords(msg string) string {
	msg = strings.TrimPrefix(msg, "recipe: ")
	msg = strings.ReplaceAll(msg, "recipe key ", "")
	for _, p := range windowPhrases {
		msg = strings.ReplaceAll(msg, p.from, p.to)
	}
	return recipeKeyPattern.ReplaceAllStringFunc(msg, func(k string) string {
		if label, ok := windowKeys[strings.Trim(k, `"`)]; ok {
			return label
		}
		return k
	})
}
