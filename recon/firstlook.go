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
// back after bright stretches, on the lines of the aperture count the
// beam-on stretch implies, which it takes first), signal.invert for a
// negative-going detector, a calibration spanning the position levels seen, an automatic pitch, and (null) the
// aperture offsets, which every build then measures. It also says
// when the capture has no beam-off stretch and when the aperture count,
// the field and the beam-on fraction disagree. The command line and the
// window both start a capture with it, so they agree on every value.
func FirstLook(ctx context.Context, s *Session, start recipe.Recipe, known Known, progress Progress) (*Look, error) {
	rec := s.Recording()
	if err := rec.Validate(); err != nil {
		return nil, err
	}
	d := newLookDraft(start, known)
	d.guessSignals(rec)
	res, err := s.Build(ctx, d.r, progress)
	if err != nil {
		return d.withoutBeamOff(ctx, s, err, progress)
	}
	if d.fitApertures(res.Report) {
		// The drift of an AC-coupled detector, and the beam-on fraction,
		// are measured on the lines of the wheel's own aperture count.
		if res, err = s.Build(ctx, d.r, progress); err != nil {
			return d.withoutBeamOff(ctx, s, err, progress)
		}
		d.changed = false
	}
	if err := d.fitToBuild(ctx, s, res); err != nil {
		return nil, err
	}
	if d.changed {
		if res, err = s.Build(ctx, d.r, progress); err != nil {
			return nil, err
		}
	}
	return &Look{Recipe: res.Recipe, Settings: d.r, Result: res, Notes: d.notes}, nil
}

// lookDraft is a first look in progress: the settings so far (automatic
// values left null), what the user stated, the notes, and whether a step
// changed the settings since the last build. Each step of FirstLook is one
// of its methods.
type lookDraft struct {
	r       recipe.Recipe
	known   Known
	notes   []string
	changed bool
}

func newLookDraft(start recipe.Recipe, known Known) *lookDraft {
	r := start.Clone()
	if r.Format == "" {
		r.Format = recipe.RecipeFormat
	}
	return &lookDraft{r: r, known: known}
}

func (d *lookDraft) note(format string, args ...any) {
	d.notes = append(d.notes, fmt.Sprintf(format, args...))
}

// guessSignals is the step before the first build: the channel roles, the
// rows source (a carrier tone told from a DC level) and an automatic
// pitch, each unless the user stated it.
func (d *lookDraft) guessSignals(rec *capture.Recording) {
	if !d.known.Has("channels") {
		d.r = GuessChannels(d.r, rec)
		d.guessSharedInput(rec)
	}
	if !d.known.Has("rows.source") {
		d.guessPositionSource(rec)
	}
	if !d.known.Has("image.pitch_mm") {
		d.r.Image.PitchMM = 0
	}
	// Offsets nobody stated are measured in every build (null), so the
	// starting recipe holds the values the capture shows, not zeros.
	if !d.known.Has("sweep.aperture_offsets_deg") && mustLaw(d.r.Sweep.Law).isWheel() {
		d.r.Sweep.ApertureOffsetsDeg = nil
	}
}

// guessPositionSource reads a position channel as the amplitude of a
// carrier tone when it carries one, else as a DC level.
func (d *lookDraft) guessPositionSource(rec *capture.Recording) {
	r := &d.r
	if !r.Rows.Source.ReadsPosition() || !r.Channels.Position.IsSet() {
		return
	}
	if r.Channels.Position == r.Channels.Index {
		r.Rows.Source = recipe.SourceTone // the only source that can share the index channel
		return
	}
	ch, err := rec.Lookup(string(r.Channels.Position))
	if err != nil {
		return
	}
	hz, ok := carrierTone(rec.Channels[ch].Samples, rec.SampleRateHz)
	if !ok {
		r.Rows.Source = recipe.SourcePosition
		return
	}
	if r.Rows.Source != recipe.SourceTone {
		d.note("the position channel carries a %.4g Hz tone whose amplitude moves with the head: rows.source is set to tone", hz)
	}
	r.Rows.Source = recipe.SourceTone
}

// withoutBeamOff answers a first build that failed with err. The automatic
// delay needs a beam-off stretch: when the beam never leaves the field,
// build with the field at the index edge and no baseline, and say so.
// Otherwise (or when that build fails too) err stands.
func (d *lookDraft) withoutBeamOff(ctx context.Context, s *Session, err error, progress Progress) (*Look, error) {
	if ctx.Err() != nil || d.known.Has("sweep.delay_deg") || d.known.Has("signal.baseline") || !hasBeamOff(d.r.Sweep.Law) {
		return nil, err
	}
	lit := d.r.Clone()
	lit.Sweep.DelayDeg, lit.Signal.Baseline = recipe.Float(0), "none"
	again, err2 := s.Build(ctx, lit, progress)
	if err2 != nil {
		return nil, err
	}
	if _, ok, ferr := s.beamOnFraction(ctx, again.Recipe, again.Lines); ferr != nil || ok {
		return nil, err
	}
	_, n := fitDuty(&lit, 1, false, d.known)
	return &Look{Recipe: again.Recipe, Settings: lit, Result: again, Notes: append(d.notes, n...)}, nil
}

// fitToBuild is the step after the first build: what the build shows
// about the detector's coupling, the beam-on fraction, the detector's
// polarity and the position calibration.
func (d *lookDraft) fitToBuild(ctx context.Context, s *Session, res *Result) error {
	d.fitACCorner(s.Recording(), res)
	if err := d.fitBeamOn(ctx, s, res); err != nil {
		return err
	}
	d.fitInvert(res.Report)
	d.fitCalibration(res.Report)
	return nil
}

// fitApertures takes the aperture count the delay stage's beam-on width
// implies for the field (Report.AperturesSuggested), when the user did not
// state the count and the law tells apertures from the beam-on fraction:
// that width is measured on the recorded detector as it is, so it holds
// where the beam-on fraction (fitBeamOn) needs the detector's coupling
// undone first, and that coupling is found on the lines of the count.
func (d *lookDraft) fitApertures(rep Report) bool {
	n := rep.AperturesSuggested
	if n < 1 || n > 360 || n == d.r.Sweep.Apertures || d.known.Has("sweep.apertures") || !mustLaw(d.r.Sweep.Law).dutyTellsApertures() {
		return false
	}
	if d.r.Sweep.FieldDeg*float64(n)/360 >= 0.9 {
		return false // lit for (nearly) the whole line: no beam-off stretch to count by (fitBeamOn says so)
	}
	setApertures(&d.r, n)
	d.note("sweep.apertures is set to %d, the count the beam-on stretch (%s of each line) implies for a %g° field: check it against the wheel", n, percentText(d.r.Sweep.FieldDeg*float64(n)/360), d.r.Sweep.FieldDeg)
	d.changed = true
	return true
}

// setApertures gives r a wheel of n apertures found from the capture: one
// index pulse each (unless one a revolution), and stated offsets, one per
// aperture that no longer fits, measured again.
func setApertures(r *recipe.Recipe, n int) {
	r.Sweep.Apertures = n
	if r.Timing.PulsesPerRev != 1 {
		r.Timing.PulsesPerRev = n
	}
	if len(r.Sweep.ApertureOffsetsDeg) != 0 {
		r.Sweep.ApertureOffsetsDeg = nil
	}
}

// fitACCorner sets signal.ac_corner_hz (or says what to set it to, when
// the user stated it) from how the beam-off level drifts back after
// bright stretches.
func (d *lookDraft) fitACCorner(rec *capture.Recording, res *Result) {
	r := &d.r
	if !hasBeamOff(r.Sweep.Law) || r.Signal.Baseline == "none" {
		return
	}
	det := rec.Channels[mustLookup(rec, res.Recipe.Channels.Detector)].Samples
	hz, ok := acCornerFromBaselines(det, rec.SampleRateHz, res.Lines)
	if !ok || math.Abs(hz-r.Signal.ACCornerHz) <= 0.1*math.Max(hz, r.Signal.ACCornerHz) {
		return
	}
	if d.known.Has("signal.ac_corner_hz") {
		d.note("the detector's beam-off level drifts back after bright stretches as through a %.3g Hz high-pass: set signal.ac_corner_hz to %.3g (it is %g)", hz, hz, r.Signal.ACCornerHz)
		return
	}
	d.note("the detector is AC-coupled (its beam-off level drifts back after bright stretches): signal.ac_corner_hz is set to %.3g Hz, the corner that drift fits", hz)
	r.Signal.ACCornerHz = roundSignificant(hz, 3)
	d.changed = true
}

// fitBeamOn measures the beam-on fraction on the detector the engine sees
// (the build's resolved recipe with the draft's signal settings, so AC
// coupling is undone) and fits the aperture count to it; with no beam-off
// stretch it drops the baseline and, unless stated, the automatic delay.
func (d *lookDraft) fitBeamOn(ctx context.Context, s *Session, res *Result) error {
	measured := res.Recipe.Clone()
	measured.Signal = d.r.Signal
	duty, dutyOK, err := s.beamOnFraction(ctx, measured, res.Lines)
	if err != nil {
		return err
	}
	if !hasBeamOff(d.r.Sweep.Law) {
		return nil
	}
	adjusted, n := fitDuty(&d.r, duty, dutyOK, d.known)
	d.notes = append(d.notes, n...)
	d.changed = d.changed || adjusted
	if !dutyOK && !d.known.Has("signal.baseline") {
		d.r.Signal.Baseline = "none"
		if !d.known.Has("sweep.delay_deg") {
			d.r.Sweep.DelayDeg = recipe.Float(0)
		}
		d.changed = true
	}
	return nil
}

// fitInvert sets signal.invert for a negative-going detector.
func (d *lookDraft) fitInvert(rep Report) {
	if slices.Contains(rep.Warnings, WarnNegativeDetector) && !d.r.Signal.Invert && !d.known.Has("signal.invert") {
		d.r.Signal.Invert = true
		d.note("the detector is negative-going: signal.invert is set, so more scatter shows brighter")
		d.changed = true
	}
}

// fitCalibration replaces a calibration that misses most of the position
// levels seen with a guess spanning them.
func (d *lookDraft) fitCalibration(rep Report) {
	if d.known.Has("rows.calibration") {
		return
	}
	if cal, note := calibrationFor(d.r, rep); note != "" {
		d.r.Rows.Calibration = cal
		d.notes = append(d.notes, note)
		d.changed = true
	}
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
	if !mustLaw(sw.Law).dutyTellsApertures() {
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
		setApertures(r, n)
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
