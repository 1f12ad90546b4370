package recon

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sync"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// Progress receives the name of the running stage and how far it is, 0..1.
// It may be nil.
type Progress func(stage string, fraction float64)

func (p Progress) report(stage string, fraction float64) {
	if p != nil {
		p(stage, fraction)
	}
}

// Line is one sweep of the beam as the build found it. Aperture counts
// lines modulo sweep.apertures (for the sine law: 0 for a forward line, 1
// for a backward one); Stroke is the pass of the head, from 0.
type Line struct {
	Number, Aperture, Stroke int
	// EdgeS is the time of the line's index edge (or the start of its
	// share of the revolution with one pulse per revolution), seconds.
	EdgeS float64
	// Repaired is true when the edge was missing and filled in.
	Repaired bool
	// FieldStartS and FieldEndS bound the time the beam is inside the field.
	FieldStartS, FieldEndS float64
	// BaselineStartS and BaselineEndS bound the beam-off interval before
	// the line used for its baseline.
	BaselineStartS, BaselineEndS float64
	// YMM is the cross-scan position at mid-field.
	YMM float64
}

// Result is the outcome of a build.
type Result struct {
	Frames []*Frame      // one per stroke with rows.strokes split, else one
	Report Report        // the whole build; each frame carries its own copy
	Recipe recipe.Recipe // every automatic value resolved
	Lines  []Line        // every line found, in time order (recon.Live: the newest LiveRecentLines)
}

// WarnNegativeDetector is the warning a build gives when the automatic
// delay found the detector's beam-on level below its beam-off level and
// signal.invert is off; tools that write a starting recipe set invert.
const WarnNegativeDetector = "the detector is negative-going (its beam-on level lies below its beam-off level): set signal.invert to true so that more scatter shows brighter"

// Session holds one recording and the cached results of each stage, so a
// changed parameter re-runs only the stages that depend on it: timing
// (index channel and timing keys), rows (position keys), delay estimate,
// placement (sweep keys and baseline) and gridding (image and signal keys).
// One Build or Resolve runs at a time; concurrent calls wait.
type Session struct {
	rec *capture.Recording
	mu  sync.Mutex

	// Each stage's results, by the key of its resolved parameters.
	splits   *memo[OtsuResult]    // index channel → its two levels
	carriers *memo[float64]       // position channel → its strongest tone
	timings  *memo[*timingResult] // index edges and lines
	rows     *memo[*rowsResult]   // cross-scan position of every sample
	delays   *memo[delayFound]
	offsets  *memo[offsetsFound]
	// afterglows holds estimated afterglows, µs
	afterglows *memo[float64]
	coupled    *memo[detectorView] // the detector with its AC coupling undone
	shared     *memo[*sharedIndex] // a channel of index pulses and a tone, taken apart
	places     *memo[*placement]
	grids      *memo[*Result]
	stats      *memo[*channelStats]   // whole-channel statistics of the recording
	clips      *memo[*clipTable]      // the detector's clipping test, once it is gridded again
	maps       *memo[*sweepMap]       // the sweep's x lookup, by the sweep without delay and offsets
	gridded    map[string]bool        // detectors (by clipKey) gridded at least once
	flat       map[int]flatRunsResult // constant stretches of each channel, once needed
	roles      []capture.RoleGuess    // the capture's guessed roles, once needed
	// runs counts how often each stage was computed (not reused), for
	// tests of the caching.
	runs map[string]int
}

// NewSession starts a session on a recording.
func NewSession(rec *capture.Recording) *Session {
	return &Session{
		rec: rec, runs: map[string]int{},
		splits: newMemo[OtsuResult](4), carriers: newMemo[float64](4),
		timings: newMemo[*timingResult](2), rows: newMemo[*rowsResult](2),
		delays: newMemo[delayFound](4), offsets: newMemo[offsetsFound](4), afterglows: newMemo[float64](2),
		// A corrected detector and a grid are as large as the capture
		// and the image: keep one of each.
		coupled: newMemo[detectorView](1), places: newMemo[*placement](2), grids: newMemo[*Result](1),
		stats: newMemo[*channelStats](len(rec.Channels)), shared: newMemo[*sharedIndex](1),
		clips: newMemo[*clipTable](1), gridded: map[string]bool{}, maps: newMemo[*sweepMap](2),
	}
}

// Recording returns the session's recording.
func (s *Session) Recording() *capture.Recording { return s.rec }

// channels is the resolved channel numbers (-1 when unused).
type channels struct{ detector, index, position, steps int }

func (s *Session) lookup(key string, ref recipe.ChannelRef) (int, error) {
	i, err := s.rec.Lookup(string(ref))
	if err != nil {
		return -1, fmt.Errorf("channels.%s: %w", key, err)
	}
	return i, nil
}

// resolveChannels fills automatic channel roles and checks the named ones.
func (s *Session) resolveChannels(r *recipe.Recipe) (channels, error) {
	c := channels{-1, -1, -1, -1}
	src, err := sourceOf(r.Rows.Source)
	if err != nil {
		return c, err
	}
	need := map[string]bool{"detector": true, "index": true, src.needs(): true}
	refs := map[string]*recipe.ChannelRef{
		"detector": &r.Channels.Detector, "index": &r.Channels.Index,
		"position": &r.Channels.Position, "steps": &r.Channels.Steps,
	}
	out := map[string]*int{"detector": &c.detector, "index": &c.index, "position": &c.position, "steps": &c.steps}
	for _, role := range []string{"detector", "index", "position", "steps"} {
		ref := refs[role]
		if !ref.IsSet() {
			if !need[role] {
				continue
			}
			g, err := s.guessChannel(role)
			if err != nil {
				return c, err
			}
			*ref = recipe.ChannelRef(fmt.Sprint(g))
		}
		i, err := s.lookup(role, *ref)
		if err != nil {
			return c, err
		}
		*out[role] = i
	}
	// One channel cannot carry two signals, except the index pulses and a
	// position tone (a two-input sound card; docs/pipeline.md).
	seen := map[int]string{}
	for _, role := range []string{"detector", "index", "position", "steps"} {
		i := *out[role]
		if i < 0 || role == "position" && i == c.index && mustSource(r.Rows.Source).readsTone() {
			continue
		}
		if other, dup := seen[i]; dup {
			return c, fmt.Errorf("channels.%s and channels.%s both name channel %d: each role needs its own channel", other, role, i)
		}
		seen[i] = role
	}
	return c, nil
}

// resolved carries everything the later stages need.
type resolved struct {
	r      recipe.Recipe
	ch     channels
	timing *timingResult
	rows   *rowsResult
	// aperturesSeen is the aperture count the automatic delay's beam-on
	// stretch implies when it does not fit the recipe, else 0.
	aperturesSeen int
}

// Resolve returns a copy of r with every automatic value filled in from
// the recording: channels, threshold, hysteresis, delay, sine period,
// carrier and pitch. It runs (and caches) the timing and rows stages.
func (s *Session) Resolve(ctx context.Context, r recipe.Recipe) (recipe.Recipe, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	res, _, err := s.resolve(ctx, r, nil)
	if err != nil {
		return recipe.Recipe{}, err
	}
	return res.r, nil
}

func (s *Session) resolve(ctx context.Context, in recipe.Recipe, progress Progress) (*resolved, []string, error) {
	if err := s.rec.Validate(); err != nil {
		return nil, nil, err
	}
	r := in.Clone()
	if r.Format == "" {
		r.Format = recipe.RecipeFormat
	}
	if err := r.Validate(); err != nil {
		return nil, nil, err
	}
	ch, err := s.resolveChannels(&r)
	if err != nil {
		return nil, nil, err
	}
	detStats, err := s.channelStats(ctx, ch.detector)
	if err != nil {
		return nil, nil, err
	}
	if err := refuseFlatDetector(s.rec, ch.detector, detStats); err != nil {
		return nil, nil, err
	}
	var warns []string
	progress.report("timing", 0)
	t, err := s.timingStage(ctx, r, ch)
	if err != nil {
		return nil, nil, err
	}
	warns = append(warns, t.warnings...)
	r.Timing.Threshold = recipe.Float(t.threshold)
	r.Timing.Hysteresis = recipe.Float(t.hysteresis)
	progress.report("timing", 1)
	mustLaw(r.Sweep.Law).fromTiming(&r.Sweep, t, s.rec.SampleRateHz)
	warns = append(warns, mustSource(r.Rows.Source).fromTiming(&r, t, s.rec.SampleRateHz)...)
	progress.report("rows", 0)
	rows, err := s.rowsStage(ctx, r, ch)
	if err != nil {
		return nil, nil, err
	}
	warns = append(warns, rows.warnings...)
	if cutsStrokes(r.Rows.Strokes) && r.Rows.StrokesHysteresisMM == nil && rows.autoHyst > 0 {
		r.Rows.StrokesHysteresisMM = recipe.Float(rows.autoHyst)
	}
	rows = rows.withHysteresis(r.Rows.StrokesHysteresisMM)
	if mustSource(r.Rows.Source).readsTone() && r.Rows.CarrierHz == nil {
		r.Rows.CarrierHz = recipe.Float(rows.carrier)
	}
	if r.Rows.Source == recipe.SourceSteps {
		r.Rows.StepsThreshold, r.Rows.StepsHysteresis = recipe.Float(rows.stepsThreshold), recipe.Float(rows.stepsHysteresis)
	}
	if sharesIndex(r, ch) {
		sh, err := s.sharedStage(ctx, r, ch)
		if err != nil {
			return nil, nil, err
		}
		rest, away, _ := sh.spansFor(r.Rows.PulseRest, r.Rows.PulseAway)
		r.Rows.PulseRest, r.Rows.PulseAway = recipe.Float(rest), recipe.Float(away)
	}
	progress.report("rows", 1)
	if r.Signal.AfterglowUS == nil {
		us, w, err := s.afterglowStage(ctx, r, ch, t)
		if err != nil {
			return nil, nil, err
		}
		r.Signal.AfterglowUS = recipe.Float(us)
		warns = append(warns, w...)
	}
	if r.Sweep.ApertureOffsetsDeg == nil {
		w, err := s.resolveOffsets(ctx, &r, ch, t)
		if err != nil {
			return nil, nil, err
		}
		warns = append(warns, w...)
	}
	aperturesSeen := 0
	if r.Sweep.DelayDeg == nil {
		progress.report("delay", 0)
		d, err := s.delayStage(ctx, r, ch, t)
		if err != nil {
			return nil, nil, err
		}
		warns = append(warns, d.Warnings...)
		r.Sweep.DelayDeg = recipe.Float(d.DelayDeg)
		if d.Negative && !r.Signal.Invert {
			warns = append(warns, WarnNegativeDetector)
		}
		aperturesSeen = d.AperturesSeen
		progress.report("delay", 1)
	}
	if r.Image.PitchMM == 0 {
		r.Image.PitchMM = autoPitch(t, rows, r.Sweep, s.rec.SampleRateHz)
	}
	if r.Image.MaxGapMM == nil {
		r.Image.MaxGapMM = recipe.Float(autoMaxGap(t, rows, r.Sweep))
	}
	return &resolved{r: r, ch: ch, timing: t, rows: rows, aperturesSeen: aperturesSeen}, warns, nil
}

// timingStage finds the index edges and lines. The automatic threshold
// and hysteresis are resolved from the index channel's two levels first,
// so a recipe and its resolved copy share one key.
func (s *Session) timingStage(ctx context.Context, r recipe.Recipe, ch channels) (*timingResult, error) {
	c := s.rec.Channels[ch.index]
	name, unit := fmt.Sprintf("%d (%s)", ch.index, c.Name), unitOf(c)
	samples := c.Samples
	var toneHz float64
	var o OtsuResult
	if sharesIndex(r, ch) {
		sh, err := s.sharedStage(ctx, r, ch)
		if err != nil {
			return nil, err
		}
		samples, o, toneHz = sh.pulses, sh.otsu, sh.carrierHz
	} else {
		o, _ = cachedStage(s.splits, nil, "", ch.index, func() (OtsuResult, error) { return Otsu(c.Samples), nil })
	}
	p := timingParams{
		ToneHz:       toneHz,
		Channel:      ch.index,
		Rising:       r.Timing.Edge != "falling",
		Threshold:    r.Timing.Threshold,
		Hysteresis:   r.Timing.Hysteresis,
		PulsesPerRev: r.Timing.PulsesPerRev,
		Apertures:    r.Sweep.Apertures,
		NoApertures:  !mustLaw(r.Sweep.Law).isWheel(),
	}
	p, err := p.withLevels(o, name, unit)
	if err != nil {
		return nil, err
	}
	return cachedStage(s.timings, s.runs, "timing", p, func() (*timingResult, error) {
		t, err := findTiming(ctx, samples, o, s.rec.SampleRateHz, name, unit, p)
		if t != nil {
			t.key = key(p)
		}
		return t, err
	})
}

func unitOf(c capture.Channel) string {
	if c.Unit == "" {
		return capture.UnitVolt
	}
	return c.Unit
}

// rowsStage finds the cross-scan position of every sample. An automatic
// carrier is resolved first (the position channel's strongest tone), so a
// recipe and its resolved copy share one key.
func (s *Session) rowsStage(ctx context.Context, r recipe.Recipe, ch channels) (*rowsResult, error) {
	p := rowsParams{
		Source: r.Rows.Source, Channel: -1, Calib: r.Rows.Calibration,
		CarrierHz: r.Rows.CarrierHz, MMPerStep: r.Rows.MMPerStep, SpeedMMS: r.Rows.SpeedMMS,
	}
	if p.Source == recipe.SourceSteps {
		p.StepsThreshold, p.StepsHysteresis = r.Rows.StepsThreshold, r.Rows.StepsHysteresis
	}
	src, err := sourceOf(p.Source)
	if err != nil {
		return nil, err
	}
	p.Channel = src.channel(ch)
	in := rowsInput{n: s.rec.Frames(), rateHz: s.rec.SampleRateHz}
	if p.Channel >= 0 {
		c := s.rec.Channels[p.Channel]
		in.channel, in.name, in.unit = c.Samples, fmt.Sprintf("%d (%s)", p.Channel, c.Name), unitOf(c)
	}
	if src.readsTone() && p.CarrierHz == nil {
		fc, err := s.strongestTone(p.Channel)
		if err != nil {
			return nil, err
		}
		p.CarrierHz = &fc
	}
	if sharesIndex(r, ch) {
		sh, err := s.sharedStage(ctx, r, ch)
		if err != nil {
			return nil, err
		}
		var rest, away float64
		rest, away, in.pulses = sh.spansFor(r.Rows.PulseRest, r.Rows.PulseAway)
		p.SharesIndex, p.PulseRest, p.PulseAway = true, &rest, &away
	}
	if p.Source == recipe.SourceSteps && p.Channel >= 0 {
		// Resolved first, so a recipe and its resolved copy share one key.
		if p, err = p.withStepLevels(in.channel, in.name, in.unit); err != nil {
			return nil, err
		}
	}
	return cachedStage(s.rows, s.runs, "rows", p, func() (*rowsResult, error) {
		rows, err := findRows(ctx, in, p)
		if rows != nil {
			rows.key = key(p)
		}
		return rows, err
	})
}

// strongestTone is the strongest tone of channel ch (cached).
func (s *Session) strongestTone(ch int) (float64, error) {
	return cachedStage(s.carriers, nil, "", ch, func() (float64, error) {
		c := s.rec.Channels[ch]
		fc, err := strongestTone(c.Samples, s.rec.SampleRateHz)
		if err != nil {
			return 0, fmt.Errorf("position channel %d (%s): %w", ch, c.Name, err)
		}
		return fc, nil
	})
}

// sharesIndex reports whether r reads the position tone from the index
// channel.
func sharesIndex(r recipe.Recipe, ch channels) bool {
	return mustSource(r.Rows.Source).readsTone() && ch.position >= 0 && ch.position == ch.index
}

// sharedStage takes apart the channel that carries both the index pulses
// and the position tone, at rows.carrier_hz or the channel's strongest
// tone.
func (s *Session) sharedStage(ctx context.Context, r recipe.Recipe, ch channels) (*sharedIndex, error) {
	var fc float64
	if r.Rows.CarrierHz != nil {
		fc = *r.Rows.CarrierHz
	} else {
		var err error
		if fc, err = s.strongestTone(ch.index); err != nil {
			return nil, err
		}
	}
	return s.sharedChannel(ctx, ch.index, fc)
}

// delayFound is everything the delay stage finds: the delay, whether the
// detector is negative-going, the aperture count its beam-on stretch
// implies when that does not fit the recipe (else 0), and warnings.
type delayFound struct {
	DelayDeg      float64
	Negative      bool
	AperturesSeen int
	Warnings      []string
}

// delayParams are the values the delay estimate depends on: the edges
// (by their timing key), the detector as the engine sees it, and the
// sweep.
type delayParams struct {
	Timing   string
	Detector int
	Law      recipe.Law
	Field    float64
	Aper     int
	Offsets  []float64
	Keep     float64
	Period   *float64
	AC       string
	Invert   bool
}

// delayStage finds the delay of r's sweep from the folded detector: a pure
// function of the edges, the detector and the sweep, cached by them.
func (s *Session) delayStage(ctx context.Context, r recipe.Recipe, ch channels, t *timingResult) (delayFound, error) {
	sw := r.Sweep
	law, err := lawOf(sw.Law)
	if err != nil {
		return delayFound{}, err
	}
	p := delayParams{t.key, ch.detector, sw.Law, sw.FieldDeg, sw.Apertures, sw.ApertureOffsetsDeg, sw.SineKeep, sw.SinePeriodS, detectorKey(r.Signal), r.Signal.Invert}
	return cachedStage(s.delays, s.runs, "delay", p, func() (delayFound, error) {
		det, _, err := s.detector(ctx, ch.detector, r.Signal)
		if err != nil {
			return delayFound{}, err
		}
		period := 0.0
		if sw.SinePeriodS != nil {
			period = *sw.SinePeriodS * s.rec.SampleRateHz
		}
		return law.estimateDelay(ctx, t, det, sw, r.Signal.Invert, period)
	})
}

// lineSpacings is the cross-scan distance between each line and the next,
// mm.
func lineSpacings(t *timingResult, rows *rowsResult) []float64 {
	var dys []float64
	for i := 1; i < len(t.lines); i++ {
		dys = append(dys, math.Abs(rows.at(t.lines[i].edge)-rows.at(t.lines[i-1].edge)))
	}
	return dys
}

// autoMaxGap is the automatic image.max_gap_mm: four times the median
// spacing of neighbouring lines while the head moves, so a fast stretch of
// a hand scan is filled and a jump of the head is not. Spacings under a
// tenth of the 90th-percentile spacing are rests and turns and are left
// out: the percentile follows the head's working speed, where a mean is
// pulled down by long rests until their sensor noise counts as motion.
// The sine law's two lines per period halve the spacing.
func autoMaxGap(t *timingResult, rows *rowsResult, sw recipe.Sweep) float64 {
	dys := lineSpacings(t, rows)
	if len(dys) == 0 {
		return 0
	}
	sorted := slices.Sorted(slices.Values(dys))
	working := sorted[min(len(sorted)-1, int(0.9*float64(len(sorted))))]
	var moving []float64
	for _, d := range dys {
		if d > 0.1*working {
			moving = append(moving, d)
		}
	}
	if len(moving) == 0 {
		return 0
	}
	v := 4 * median(moving)
	v /= float64(mustLaw(sw.Law).linesPerIndex())
	return v
}

// autoPitch picks a pixel size near the spacing of neighbouring lines and
// of samples along a line, rounded up to 1, 2 or 5 times a power of ten.
func autoPitch(t *timingResult, rows *rowsResult, sw recipe.Sweep, rate float64) float64 {
	dys := lineSpacings(t, rows)
	v := 0.0
	if len(dys) > 0 {
		v = median(dys) / float64(mustLaw(sw.Law).linesPerIndex())
	}
	if m, err := lawMap(sw); err == nil && len(t.lines) > 0 {
		periods := make([]float64, len(t.lines))
		for i, l := range t.lines {
			periods[i] = l.period
		}
		field := median(periods) * fieldFraction(sw)
		if field > 0 {
			v = math.Max(v, (m.xMax-m.xMin)/field)
		}
	}
	if !(v > 0) {
		return 1
	}
	e := math.Pow(10, math.Floor(math.Log10(v)))
	for _, f := range []float64{1, 2, 5, 10} {
		if f*e >= v*0.999 {
			return f * e
		}
	}
	return 10 * e
}

// fieldFraction is the share of a line period spent inside the field.
func fieldFraction(sw recipe.Sweep) float64 { return mustLaw(sw.Law).fieldFraction(sw) }

func (s *Session) placeStage(ctx context.Context, r recipe.Recipe, ch channels, t *timingResult) (*placement, error) {
	sw := r.Sweep
	p := struct {
		T        string
		Sweep    recipe.Sweep
		Detector int
		Baseline string
		AC       string
	}{t.key, sw, ch.detector, r.Signal.Baseline, detectorKey(r.Signal)}
	return cachedStage(s.places, s.runs, "placement", p, func() (*placement, error) {
		pl, err := s.placeLines(ctx, r, ch, t)
		if pl != nil {
			pl.key = key(p)
		}
		return pl, err
	})
}

// placeLines places every line of t in the field of r's sweep and takes
// its baseline from the beam-off stretch before it.
func (s *Session) placeLines(ctx context.Context, r recipe.Recipe, ch channels, t *timingResult) (*placement, error) {
	sw := r.Sweep
	m, err := s.sweepMap(sw)
	if err != nil {
		return nil, err
	}
	rate := s.rec.SampleRateHz
	period := 0.0 // for a resonant mirror: the measured index period
	if sw.SinePeriodS != nil {
		period = *sw.SinePeriodS * rate
	}
	det, st, err := s.detector(ctx, ch.detector, r.Signal)
	if err != nil {
		return nil, err
	}
	pl := &placement{sweep: m, lines: placeLines(t, sw, *sw.DelayDeg, period, len(det), rate)}
	if len(pl.lines) == 0 {
		return nil, fmt.Errorf("no line has its field inside the capture: check sweep.delay_deg (%g°) and sweep.field_deg", *sw.DelayDeg)
	}
	switch {
	case r.Signal.Baseline == "none":
	case !mustLaw(sw.Law).hasBeamOff():
		pl.warnings = append(pl.warnings, fmt.Sprintf("the %s law has no beam-off interval, so no baseline was removed; set signal.baseline to none to silence this", sw.Law))
	default:
		if err := baselineLines(ctx, det, st, pl.lines); err != nil {
			return nil, err
		}
		for i := range pl.lines {
			l := &pl.lines[i]
			l.BaselineStartS, l.BaselineEndS = float64(l.baseFirst)/rate, float64(l.baseLast)/rate
		}
		pl.edge = measureEdgeResponse(det, pl.lines)
	}
	return pl, nil
}

// sweepMap is the x lookup of a sweep (lawMap), kept across changes of
// the delay and the aperture offsets, which move the lines in time but
// not the law's map from u to x.
func (s *Session) sweepMap(sw recipe.Sweep) (*sweepMap, error) {
	sw.DelayDeg, sw.ApertureOffsetsDeg = nil, nil
	return cachedStage(s.maps, nil, "", sw, func() (*sweepMap, error) { return lawMap(sw) })
}

// detectorView is the detector as the stages see it, and its statistics.
type detectorView struct {
	samples []float32
	stats   *channelStats
}

// detector returns the detector samples the stages work on, and their
// statistics: the recorded channel, or with signal.ac_corner_hz or
// signal.afterglow_us set, the channel with that high-pass and afterglow
// undone (computed once per setting).
func (s *Session) detector(ctx context.Context, ch int, sig recipe.Signal) ([]float32, *channelStats, error) {
	glow := afterglowS(sig)
	if sig.ACCornerHz <= 0 && glow == 0 {
		st, err := s.channelStats(ctx, ch)
		return s.rec.Channels[ch].Samples, st, err
	}
	v, err := cachedStage(s.coupled, s.runs, "ac", [3]float64{float64(ch), sig.ACCornerHz, glow}, func() (detectorView, error) {
		// The chain was afterglow, then the input's high-pass: undo them
		// in the reverse order.
		det := s.rec.Channels[ch].Samples
		if sig.ACCornerHz > 0 {
			det = undoHighPass(det, sig.ACCornerHz, s.rec.SampleRateHz)
		}
		if glow > 0 {
			det = undoAfterglow(det, glow, s.rec.SampleRateHz)
		}
		st, err := newChannelStats(ctx, det)
		return detectorView{det, st}, err
	})
	return v.samples, v.stats, err
}

// afterglowS is the afterglow to undo, seconds (0 when none or not yet
// estimated).
func afterglowS(sig recipe.Signal) float64 {
	if sig.AfterglowUS == nil || !(*sig.AfterglowUS > 0) {
		return 0
	}
	return *sig.AfterglowUS * 1e-6
}

// detectorKey names the clean-up the detector gets, for the stages' keys.
func detectorKey(sig recipe.Signal) string {
	return fmt.Sprint(sig.ACCornerHz, "/", afterglowS(sig))
}

// flatRuns returns the stretches of at least minQuietS over which channel
// ch of the recording holds one value, computed once per channel.
func (s *Session) flatRuns(ch int) ([]flatRun, int) {
	if s.flat == nil {
		s.flat = map[int]flatRunsResult{}
	}
	if f, ok := s.flat[ch]; ok {
		return f.runs, f.total
	}
	runs, total := flatRuns(s.rec.Channels[ch].Samples, int(minQuietS*s.rec.SampleRateHz))
	s.flat[ch] = flatRunsResult{runs, total}
	return runs, total
}

type flatRunsResult struct {
	runs  []flatRun
	total int
}

// channelStats returns the whole-channel statistics of recorded channel ch.
func (s *Session) channelStats(ctx context.Context, ch int) (*channelStats, error) {
	return cachedStage(s.stats, nil, "", ch, func() (*channelStats, error) {
		return newChannelStats(ctx, s.rec.Channels[ch].Samples)
	})
}

// Build reconstructs the frames of a recipe. Stages whose parameters are
// unchanged since the last Build are reused. It stops with ctx.Err() when
// the context is cancelled.
func (s *Session) Build(ctx context.Context, r recipe.Recipe, progress Progress) (*Result, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	rs, warns, err := s.resolve(ctx, r, progress)
	if err != nil {
		return nil, err
	}
	t, rows := rs.timing, rs.rows
	progress.report("placement", 0)
	pl, err := s.placeStage(ctx, rs.r, rs.ch, t)
	if err != nil {
		return nil, err
	}
	warns = append(warns, pl.warnings...)
	progress.report("placement", 1)
	p := struct {
		P, R  string
		Rows  recipe.Rows
		Sig   recipe.Signal
		Image recipe.Image
		Warn  []string
	}{pl.key, rows.key, rs.r.Rows, rs.r.Signal, rs.r.Image, warns}
	res, err := cachedStage(s.grids, s.runs, "gridding", p, func() (*Result, error) {
		progress.report("gridding", 0)
		defer progress.report("gridding", 1)
		return s.gridStage(ctx, rs, t, rows, pl, warns, progress)
	})
	if err != nil {
		return nil, err
	}
	return cloneResult(res, rs.r), nil
}

// cloneResult copies the result's slices so a caller's edits do not reach
// the cache.
func cloneResult(res *Result, r recipe.Recipe) *Result {
	out := &Result{Report: res.Report, Recipe: r.Clone(), Lines: slices.Clone(res.Lines)}
	out.Report.Warnings = slices.Clone(res.Report.Warnings)
	out.Report.PositionLevels = slices.Clone(res.Report.PositionLevels)
	for _, f := range res.Frames {
		g := *f
		g.Pix = slices.Clone(f.Pix)
		g.Covered = slices.Clone(f.Covered)
		g.Recipe = r.Clone()
		g.Report.Warnings = slices.Clone(f.Report.Warnings)
		out.Frames = append(out.Frames, &g)
	}
	return out
}

// gridStage grids the placed lines into frames (one per stroke with
// rows.strokes split, else one) and writes the build's report.
func (s *Session) gridStage(ctx context.Context, rs *resolved, t *timingResult, rows *rowsResult, pl *placement, warns []string, progress Progress) (*Result, error) {
	r := rs.r
	in, err := s.gridSignal(ctx, rs, rows, pl)
	if err != nil {
		return nil, err
	}
	lines := linesOnRows(pl.lines, rows)
	groups, groupStroke := groupByStroke(lines, rows, r.Rows.Strokes)
	// Every frame's extent first, so the memory of all of them is known
	// before any is gridded.
	extents, err := strokeExtents(groups, rows, r.Rows.Strokes)
	if err != nil {
		return nil, err
	}
	if err := checkResultSize(r, pl.sweep, extents); err != nil {
		return nil, err
	}
	frames, tot, err := gridStrokes(ctx, in, groups, extents, progress)
	if err != nil {
		return nil, err
	}
	rep := timingReport(t, rows, pl, r, s.rec.SampleRateHz)
	rep.Lines = len(lines)
	rep.AperturesSuggested = rs.aperturesSeen
	if len(frames) > 0 {
		rep.Columns, rep.Rows = frames[0].Width, frames[0].Height
		rep.OriginXMM, rep.OriginYMM = frames[0].OriginXMM, frames[0].OriginYMM
	}
	if tot.pixels > 0 {
		rep.Coverage = float64(tot.covered) / float64(tot.pixels)
	}
	rep.Warnings = s.gridWarnings(rs, pl, lines, rep, tot, warns)
	// Each frame's report describes that frame's own size and coverage.
	for i, f := range frames {
		f.Stroke = groupStroke[i]
		f.Report = rep
		f.Report.Columns, f.Report.Rows, f.Report.Coverage = f.Width, f.Height, tot.frameCover[i]
		f.Report.OriginXMM, f.Report.OriginYMM = f.OriginXMM, f.OriginYMM
		f.Report.Warnings = slices.Clone(rep.Warnings)
		f.Recipe = r
	}
	res := &Result{Recipe: r, Frames: frames, Report: rep, Lines: make([]Line, len(lines))}
	for i, l := range lines {
		res.Lines[i] = l.Line
	}
	return res, nil
}

// gridSignal is what every frame of the build is gridded from: the
// detector as the stages see it, the recorded one for the clipping test,
// the sweep, the rows and the image keys. Clipping is a property of the
// recording: the recorded samples are tested against the recorded range,
// even when the detector is a corrected copy.
func (s *Session) gridSignal(ctx context.Context, rs *resolved, rows *rowsResult, pl *placement) (gridInput, error) {
	r := rs.r
	det, _, err := s.detector(ctx, rs.ch.detector, r.Signal)
	if err != nil {
		return gridInput{}, err
	}
	st, err := s.channelStats(ctx, rs.ch.detector)
	if err != nil {
		return gridInput{}, err
	}
	clipLo := float32(math.Inf(-1))
	if st.lo < 0 {
		clipLo = st.lo
	}
	recorded := s.rec.Channels[rs.ch.detector].Samples
	// The first gridding of a detector scans each line's samples for
	// clipping; a session that grids it again (a delay, pitch or offset
	// moved) builds the clipping table once and reads the lines from it.
	var clips *clipTable
	ck := key([2]any{rs.ch.detector, detectorKey(r.Signal)})
	if s.gridded[ck] {
		clips, _ = cachedStage(s.clips, nil, "", ck, func() (*clipTable, error) {
			return newClipTable(recorded, det, st.hi, clipLo), nil
		})
	}
	s.gridded[ck] = true
	return gridInput{
		det: det, recorded: recorded, sweep: pl.sweep, rows: rows, pitch: r.Image.PitchMM,
		invert: r.Signal.Invert, fill: r.Image.FillGapsPx, maxGapMM: *r.Image.MaxGapMM, clipHi: st.hi, clipLo: clipLo,
		edge: pl.edge, clips: clips,
	}, nil
}

// strokeExtents is the y extent (top, bottom) of each group of lines.
func strokeExtents(groups [][]placedLine, rows *rowsResult, strokes string) ([][2]float64, error) {
	extents := make([][2]float64, len(groups))
	for gi, g := range groups {
		if len(g) == 0 {
			return nil, fmt.Errorf("rows.strokes %s: no lines in the first stroke", strokes)
		}
		yTop, yBottom := math.Inf(-1), math.Inf(1)
		for _, l := range g {
			for _, y := range []float64{rows.at(float64(l.first)), rows.at(float64(l.last - 1))} {
				yTop = math.Max(yTop, y)
				yBottom = math.Min(yBottom, y)
			}
		}
		extents[gi] = [2]float64{yTop, yBottom}
	}
	return extents, nil
}

// strokeTotals is what gridding the frames of a build found, summed over
// the frames, and each frame's covered fraction.
type strokeTotals struct {
	clipped, gapRows, covered, pixels int
	frameCover                        []float64
}

// gridStrokes grids each group of lines over its extent into a frame, in
// turn (each frame uses both cores).
func gridStrokes(ctx context.Context, in gridInput, groups [][]placedLine, extents [][2]float64, progress Progress) ([]*Frame, strokeTotals, error) {
	var tot strokeTotals
	frames := make([]*Frame, 0, len(groups))
	for gi, g := range groups {
		in := in
		in.lines = g
		in.yTop, in.yBottom = extents[gi][0], extents[gi][1]
		in.progress = func(f float64) { progress.report("gridding", (float64(gi)+f)/float64(len(groups))) }
		f, st, _, err := gridFrame(ctx, in)
		if err != nil {
			return nil, tot, err
		}
		tot.clipped += st.clippedLines
		tot.gapRows += st.gapRows
		tot.covered += st.covered
		tot.pixels += f.Width * f.Height
		tot.frameCover = append(tot.frameCover, float64(st.covered)/float64(f.Width*f.Height))
		frames = append(frames, f)
	}
	return frames, tot, nil
}

// gridWarnings is the build's warnings: the capture's own, those of the
// stages before (warns), then what gridding found and what the build
// could not use, so none of it passes in silence.
func (s *Session) gridWarnings(rs *resolved, pl *placement, lines []placedLine, rep Report, tot strokeTotals, warns []string) []string {
	r, rate := rs.r, s.rec.SampleRateHz
	pMean := meanLinePeriod(pl.lines)
	if tot.clipped > 0 {
		warns = append(warns, fmt.Sprintf("the detector clipped on %s of lines (%d of %d): lower the detector gain", percentText(float64(tot.clipped)/float64(len(lines))), tot.clipped, len(lines)))
	}
	if rep.Columns < minUsefulSide || rep.Rows < minUsefulSide {
		warns = append(warns, fmt.Sprintf("the frame is only %d × %d pixels at image.pitch_mm %g: lower pitch_mm (0 chooses one from the line spacing), or check the field, distance and rows keys", rep.Columns, rep.Rows, r.Image.PitchMM))
	}
	if w := coverageWarning(pl.lines, len(s.rec.Channels[rs.ch.detector].Samples), pMean, rate); w != "" {
		warns = append(warns, w)
	}
	runs, total := s.flatRuns(rs.ch.detector)
	if w := flatWarning(runs, total, pMean, rate); w != "" {
		warns = append(warns, w)
	}
	warns = append(slices.Clone(s.rec.Warnings), warns...)
	if tot.gapRows > 0 {
		warns = append(warns, gapWarning(lines, r.Image.PitchMM, *r.Image.MaxGapMM, tot.gapRows))
	}
	return append([]string{}, warns...)
}

// linesOnRows returns a copy of the placed lines with their cross-scan
// position (at mid-field) and stroke.
func linesOnRows(placed []placedLine, rows *rowsResult) []placedLine {
	lines := slices.Clone(placed)
	for i := range lines {
		l := &lines[i]
		mid := (l.first + l.last) / 2
		l.YMM = rows.at(float64(mid))
		l.Stroke = rows.strokeOf(mid)
	}
	return lines
}

// groupByStroke groups the lines into frames as rows.strokes asks: all in
// one (merge), one frame per stroke (split), or the first stroke only.
// It returns the groups and the stroke of each.
func groupByStroke(lines []placedLine, rows *rowsResult, mode string) ([][]placedLine, []int) {
	strokeLines := func(si int) []placedLine {
		var g []placedLine
		for _, l := range lines {
			if l.Stroke == si {
				g = append(g, l)
			}
		}
		return g
	}
	switch mode {
	case "split":
		var groups [][]placedLine
		var strokes []int
		for si := range rows.strokes {
			if g := strokeLines(si); len(g) > 0 {
				groups, strokes = append(groups, g), append(strokes, si)
			}
		}
		return groups, strokes
	case "first":
		return [][]placedLine{strokeLines(0)}, []int{0}
	}
	return [][]placedLine{lines}, []int{0}
}

// timingReport is the part of the build report the timing, rows and
// placement give: pulses, revolutions and their rev/min, the sweep time
// and line rate, the resolved delay and threshold, strokes and pitch.
func timingReport(t *timingResult, rows *rowsResult, pl *placement, r recipe.Recipe, rate float64) Report {
	rep := Report{
		LinesRepaired: t.missing,
		PulsesMissing: t.missing,
		PulsesExtra:   t.extra,
		Revolutions:   len(t.revPeriods),
		DelayDeg:      *r.Sweep.DelayDeg,
		Threshold:     t.threshold,
		Strokes:       len(rows.strokes),
		PitchMM:       r.Image.PitchMM,
	}
	if r.Rows.Source.ReadsPosition() {
		rep.PositionLevels = []float64{rows.levelMin, rows.levelMax}
	}
	if len(t.revPeriods) > 0 {
		rpms := make([]float64, len(t.revPeriods))
		sum := 0.0
		for i, p := range t.revPeriods {
			rpms[i] = 60 * rate / p
			sum += p
		}
		rep.RPMMean = 60 * rate * float64(len(t.revPeriods)) / sum
		v := 0.0
		for _, x := range rpms {
			v += (x - rep.RPMMean) * (x - rep.RPMMean)
		}
		if len(rpms) > 1 {
			rep.RPMSpreadPct = 100 * math.Sqrt(v/float64(len(rpms)-1)) / rep.RPMMean
		}
	}
	pMean := meanLinePeriod(pl.lines)
	rep.SweepMS = 1000 * pMean * fieldFraction(r.Sweep) / rate
	rep.LineRateHz = float64(mustLaw(r.Sweep.Law).linesPerIndex()) * rate / pMean
	if !mustLaw(r.Sweep.Law).isWheel() {
		rep.RPMMean, rep.RPMSpreadPct = 0, 0 // a mirror, not a wheel
	}
	return rep
}

// meanLinePeriod is the mean index period of the placed lines, samples.
func meanLinePeriod(lines []placedLine) float64 {
	periods := make([]float64, len(lines))
	for i, l := range lines {
		periods[i] = l.period
	}
	return meanOf(periods)
}

// gapWarning describes where the head outran the lines: where two
// neighbouring lines of a stroke lie further apart than the gap filled.
func gapWarning(lines []placedLine, pitch, maxGapMM float64, gapRows int) string {
	limit := math.Max(maxGapMM, pitch)
	from, to := math.Inf(1), math.Inf(-1)
	for i := 1; i < len(lines); i++ {
		if lines[i].Stroke == lines[i-1].Stroke && math.Abs(lines[i].YMM-lines[i-1].YMM) > limit {
			from = math.Min(from, lines[i-1].FieldStartS)
			to = math.Max(to, lines[i].FieldEndS)
		}
	}
	if math.IsInf(from, 1) {
		return fmt.Sprintf("%d rows have gaps where no line passed", gapRows)
	}
	return fmt.Sprintf("the head moved more than image.max_gap_mm (%.3g mm) from one line to the next between %.1f s and %.1f s: %d rows have gaps", limit, from, to, gapRows)
}

// automaticSpeed is the head speed assumed when the recipe gives neither a
// position channel nor a speed: one pitch (1 mm when the pitch is
// automatic) per line, so every line gets its own row. The picture is then
// whole but its cross-scan scale is only as true as that guess, which the
// warning says.
func automaticSpeed(t *timingResult, r recipe.Recipe, rateHz float64) (float64, string) {
	periods := make([]float64, len(t.lines))
	for i, l := range t.lines {
		periods[i] = l.period
	}
	lineRate := 1.0
	if len(periods) > 0 && median(periods) > 0 {
		lineRate = rateHz / median(periods)
	}
	lineRate *= float64(mustLaw(r.Sweep.Law).linesPerIndex()) // a resonant mirror: a line each way
	pitch := r.Image.PitchMM
	if pitch <= 0 {
		pitch = 1
	}
	speed := pitch * lineRate
	return speed, fmt.Sprintf("rows.speed_mm_s is null and there is no position channel: the head is taken to move one pitch (%.3g mm) per line, %.4g mm/s; give its real speed for a true cross-scan scale", pitch, speed)
}
