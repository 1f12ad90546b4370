package recon

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strconv"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// assumedTravelMM is the cross-scan travel a first look assumes when the
// position calibration is unknown: the default recipe's calibration spans
// it, and it keeps the frame near square for a bench head.
const assumedTravelMM = 400

// Known is the set of recipe keys whose values the user stated, by their
// dotted names ("sweep.apertures", "rows.calibration", "channels" for all
// channel roles). A first look changes none of them. The key "*" stands
// for every key not named otherwise, so Known{"*": true, "channels": false}
// is a whole recipe whose channel roles are to be guessed.
type Known map[string]bool

// Has reports whether the user stated key.
func (k Known) Has(key string) bool {
	if v, ok := k[key]; ok {
		return v
	}
	return k["*"]
}

// KnowAll marks every key of a recipe as stated: a recipe the user wrote.
var KnowAll = Known{"*": true}

// Look is the outcome of a first look: the starting recipe (every
// automatic value resolved), its build, and notes saying what the first
// look chose or found wrong and what to measure instead.
type Look struct {
	Recipe recipe.Recipe // every automatic value resolved
	// Settings is the recipe the last build was given: what the first
	// look chose, with the automatic values (delay, threshold, pitch…)
	// still null, for a tool that keeps finding them as settings change.
	Settings recipe.Recipe
	Result   *Result
	Notes    []string
}

// FirstLook makes a starting recipe for a capture from what the user
// knows: start holds the stated values (known names which) and defaults
// for the rest. Every key the user did not state may be changed to fit
// the capture: the channel roles, rows.source (a carrier tone is told from
// a DC level), signal.ac_corner_hz (from how the beam-off level drifts
// back after bright stretches), the aperture count the beam-on fraction
// implies, signal.invert for a negative-going detector, a calibration
// spanning the position levels seen, and an automatic pitch. It also says
// when the capture has no beam-off stretch and when the aperture count,
// the field and the beam-on fraction disagree. The command line and the
// window both start a capture with it, so they agree on every value.
func FirstLook(ctx context.Context, s *Session, start recipe.Recipe, known Known, progress Progress) (*Look, error) {
	rec := s.Recording()
	if err := rec.Validate(); err != nil {
		return nil, err
	}
	r := start.Clone()
	if r.Format == "" {
		r.Format = recipe.RecipeFormat
	}
	var notes []string
	if !known.Has("channels") {
		r = GuessChannels(r, rec)
	}
	if !known.Has("rows.source") && r.Rows.Source.ReadsPosition() {
		if ch, err := rec.Lookup(string(r.Channels.Position)); err == nil && r.Channels.Position.IsSet() {
			if hz, ok := carrierTone(rec.Channels[ch].Samples, rec.SampleRateHz); ok {
				if r.Rows.Source != recipe.SourceTone {
					notes = append(notes, fmt.Sprintf("the position channel carries a %.4g Hz tone whose amplitude moves with the head: rows.source is set to tone", hz))
				}
				r.Rows.Source = recipe.SourceTone
			} else {
				r.Rows.Source = recipe.SourcePosition
			}
		}
	}
	if !known.Has("image.pitch_mm") {
		r.Image.PitchMM = 0
	}
	res, err := s.Build(ctx, r, progress)
	if err != nil {
		if ctx.Err() != nil || known.Has("sweep.delay_deg") || known.Has("signal.baseline") || !hasBeamOff(r.Sweep.Law) {
			return nil, err
		}
		// The automatic delay needs a beam-off stretch: when the beam
		// never leaves the field, build with the field at the index edge
		// and no baseline, and say so.
		lit := r.Clone()
		lit.Sweep.DelayDeg, lit.Signal.Baseline = recipe.Float(0), "none"
		again, err2 := s.Build(ctx, lit, progress)
		if err2 != nil {
			return nil, err
		}
		if _, ok, ferr := s.beamOnFraction(ctx, again.Recipe, again.Lines); ferr != nil || ok {
			return nil, err
		}
		_, n := fitDuty(&lit, 1, false, known)
		return &Look{Recipe: again.Recipe, Settings: lit, Result: again, Notes: append(notes, n...)}, nil
	}
	// r stays the settings (automatic values null); found is what the
	// build resolved them to.
	found := res.Recipe
	changed := false

	det := rec.Channels[mustLookup(rec, found.Channels.Detector)].Samples
	if hasBeamOff(r.Sweep.Law) && r.Signal.Baseline != "none" {
		if hz, ok := acCornerFromBaselines(det, rec.SampleRateHz, res.Lines); ok {
			if math.Abs(hz-r.Signal.ACCornerHz) > 0.1*math.Max(hz, r.Signal.ACCornerHz) {
				if known.Has("signal.ac_corner_hz") {
					notes = append(notes, fmt.Sprintf("the detector's beam-off level drifts back after bright stretches as through a %.3g Hz high-pass: set signal.ac_corner_hz to %.3g (it is %g)", hz, hz, r.Signal.ACCornerHz))
				} else {
					notes = append(notes, fmt.Sprintf("the detector is AC-coupled (its beam-off level drifts back after bright stretches): signal.ac_corner_hz is set to %.3g Hz, the corner that drift fits", hz))
					r.Signal.ACCornerHz = roundSignificant(hz, 3)
					changed = true
				}
			}
		}
	}
	// The beam-on fraction is measured on the detector the engine sees,
	// with its AC coupling undone.
	measured := found.Clone()
	measured.Signal = r.Signal
	duty, dutyOK, err := s.beamOnFraction(ctx, measured, res.Lines)
	if err != nil {
		return nil, err
	}
	if hasBeamOff(r.Sweep.Law) {
		adjusted, n := fitDuty(&r, duty, dutyOK, known)
		notes = append(notes, n...)
		changed = changed || adjusted
		if !dutyOK && !known.Has("signal.baseline") {
			r.Signal.Baseline = "none"
			if !known.Has("sweep.delay_deg") {
				r.Sweep.DelayDeg = recipe.Float(0)
			}
			changed = true
		}
	}
	if slices.Contains(res.Report.Warnings, WarnNegativeDetector) && !r.Signal.Invert && !known.Has("signal.invert") {
		r.Signal.Invert = true
		notes = append(notes, "the detector is negative-going: signal.invert is set, so more scatter shows brighter")
		changed = true
	}
	if !known.Has("rows.calibration") {
		if cal, note := calibrationFor(r, res.Report); note != "" {
			r.Rows.Calibration = cal
			notes = append(notes, note)
			changed = true
		}
	}
	if changed {
		if res, err = s.Build(ctx, r, progress); err != nil {
			return nil, err
		}
	}
	return &Look{Recipe: res.Recipe, Settings: r, Result: res, Notes: notes}, nil
}

func mustLookup(rec *capture.Recording, ref recipe.ChannelRef) int {
	i, err := rec.Lookup(string(ref))
	if err != nil {
		return 0
	}
	return i
}

// hasBeamOff reports whether a law leaves the beam off for part of each
// line (a wheel between apertures); a resonant mirror never does.
func hasBeamOff(law recipe.Law) bool { return mustLaw(law).hasBeamOff() }

// roundSignificant rounds v to n significant digits.
func roundSignificant(v float64, n int) float64 {
	if v == 0 {
		return 0
	}
	f, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', n, 64), 64)
	return f
}

// fitDuty compares the measured beam-on fraction with the one the recipe's
// aperture count and field imply. With the aperture count unknown, it
// takes the count that fits the field; otherwise it says which values
// disagree.
func fitDuty(r *recipe.Recipe, duty float64, ok bool, known Known) (bool, []string) {
	if !ok {
		return false, []string{WarnNoBeamOff}
	}
	sw := r.Sweep
	if sw.Law != recipe.LawUniform {
		return false, nil
	}
	spacing := apertureSpacingDeg(sw)
	want := sw.FieldDeg / spacing
	if math.Abs(duty-want) <= dutyTolerance {
		return false, nil
	}
	implied := 360 * duty / sw.FieldDeg
	n := int(math.Round(implied))
	if !known.Has("sweep.apertures") && n >= 1 && n <= 360 && math.Abs(implied-float64(n)) < 0.15 && n != sw.Apertures {
		if r.Timing.PulsesPerRev != 1 {
			r.Timing.PulsesPerRev = n
		}
		r.Sweep.Apertures = n
		if len(r.Sweep.ApertureOffsetsDeg) != 0 {
			r.Sweep.ApertureOffsetsDeg = []float64{} // one per aperture no longer fits
		}
		return true, []string{fmt.Sprintf("sweep.apertures is set to %d, the count the beam-on fraction (%.0f %% of each line) implies for a %g° field: check it against the wheel", n, 100*duty, sw.FieldDeg)}
	}
	return false, []string{fmt.Sprintf("the beam is on for %.0f %% of each line (%.1f° of the %.4g° between apertures), but %d apertures and a %g° field make %.0f %%: check sweep.apertures and sweep.field_deg (with %d apertures the field would be %.1f°)",
		100*duty, duty*spacing, spacing, sw.Apertures, sw.FieldDeg, 100*want, sw.Apertures, duty*spacing)}
}

// WarnNoBeamOff is the note of a first look on a capture whose detector
// is lit for the whole line.
const WarnNoBeamOff = "the capture has no beam-off stretch (the detector is lit for the whole line), so neither the baseline nor the delay can be found from it: use signal.baseline none and set sweep.delay_deg by hand"

// dutyTolerance is how far the measured beam-on fraction may stray from
// field/spacing before a first look says so: the spot's blur at both ends
// of the field (a 5 mm spot at 500 mm is 0.6°, 1 % of a 60° spacing) and
// a bin or two of the fold stay well inside it.
const dutyTolerance = 0.04

// calibrationFor returns a calibration spanning the position levels seen
// over assumedTravelMM, with a note, when r's calibration misses most of
// them; else an empty note.
func calibrationFor(r recipe.Recipe, rep Report) ([][2]float64, string) {
	lv := rep.PositionLevels
	if len(lv) != 2 || !(lv[1] > lv[0]) || len(r.Rows.Calibration) < 2 {
		return nil, ""
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range r.Rows.Calibration {
		lo, hi = math.Min(lo, p[0]), math.Max(hi, p[0])
	}
	if overlap := math.Min(hi, lv[1]) - math.Max(lo, lv[0]); overlap >= 0.5*(lv[1]-lv[0]) {
		return nil, ""
	}
	return [][2]float64{{lv[0], 0}, {lv[1], assumedTravelMM}},
		fmt.Sprintf("rows.calibration is a guess: the position levels seen (%.4g to %.4g) are spread over %d mm; measure two head positions and their levels for a true cross-scan scale", lv[0], lv[1], assumedTravelMM)
}
