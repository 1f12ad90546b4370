package recon

import (
	"context"
	"fmt"
	"math"
	"slices"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// liveCore is one live build with one recipe. Every stage keeps the part
// of its result that later samples cannot change ("final") and the state
// to go on from; what the samples so far leave open (the last edges, the
// last blocks of the rows, the lines not yet gridded) is worked out in
// result, the way a batch build of the samples so far would.
type liveCore struct {
	r    recipe.Recipe
	ch   channels
	rate float64
	nch  int
	n    int // frames appended

	// Every channel as recorded; det is the detector the stages see (the
	// recorded one, or a corrected copy).
	raw               [][]float32
	det               []float32
	hp                *highPassUndo
	glow              *afterglowUndo
	stats             channelStats // of det, over whole statsBlock blocks
	detLo, detHi      float32      // range of the recorded detector so far
	blockSum          float32      // of det since the last whole stats block
	corrected, usePos bool
	// sh takes apart an index channel carrying the position tone too;
	// the edges are found on its notched samples, scanned up to there.
	sh      *liveShared
	scanned int

	// Timing: raw edges, the repair walk, the final edges' flags.
	tp       timingParams
	trig     trigger
	high     bool
	rawEdges []float64
	rep      repairer
	gapAfter []bool // for rep.res.edges but the last (whose next is unknown)
	gapsSeen int
	revDone  int // edges whose revolution is decided
	revs     liveRevs
	timings  []lineTiming // lines of final edges, not yet placed
	timingNo int          // number (index in the batch's lines) of timings[0]
	baseline bool         // beam-off baselines are taken
	warm     bool         // typ and edge are known
	typ      int
	edge     *edgeResponse
	queue    []placedLine // placed, not yet gridded
	bound    beamOffState // the beam-off stretch before queue[0]
	live     liveRows
	law      sweepLaw
	sweep    *sweepMap
	sinePer  float64
	// The strokes of the final rows, when the lines are gridded stroke by
	// stroke (byStroke); each stroke has its canvas (one in all else).
	byStroke  bool
	strokes   strokeFinder
	canvases  []liveCanvas
	committed liveTotals
	recent    []Line // the last gridded lines, at most LiveRecentLines
	early     earlyLines
	scratch   []float64 // Result's accumulators
}

// LiveRecentLines is how many of the newest lines a live Result lists
// (Result.Lines), for the trace strip: enough to step through the last
// few revolutions, and a constant cost however long the recording runs.
const LiveRecentLines = 32

// liveLine is l as Result.Lines lists it: its baseline interval in
// seconds and its cross-scan position at mid-field, as linesOnRows and
// placeLines give them. Its stroke is -1: the passes of the head are told
// apart over the whole recording (findStrokes), not while it is recorded.
func (c *liveCore) liveLine(l *placedLine, rows *rowsResult) Line {
	out := l.Line
	if c.baseline {
		out.BaselineStartS, out.BaselineEndS = float64(l.baseFirst)/c.rate, float64(l.baseLast)/c.rate
	}
	out.YMM = rows.at(float64((l.first + l.last) / 2))
	out.Stroke = -1
	return out
}

// keepRecent adds a gridded line to the recent ones, dropping the oldest.
func (c *liveCore) keepRecent(l Line) {
	if len(c.recent) == LiveRecentLines {
		copy(c.recent, c.recent[1:])
		c.recent = c.recent[:LiveRecentLines-1]
	}
	c.recent = append(c.recent, l)
}

// recentLines is the newest LiveRecentLines lines: the gridded ones kept
// and then those of the tail (lines, on rows).
func (c *liveCore) recentLines(lines []placedLine, rows *rowsResult) []Line {
	out := slices.Clone(c.recent)
	for i := max(len(lines)-LiveRecentLines, 0); i < len(lines); i++ {
		out = append(out, c.liveLine(&lines[i], rows))
	}
	return out[max(len(out)-LiveRecentLines, 0):]
}

// liveRevs adds up the timed revolutions for the report.
type liveRevs struct {
	n                  int
	sum, rpmSum, rpmSq float64
}

func (v *liveRevs) add(period, rate float64) {
	v.n++
	v.sum += period
	rpm := 60 * rate / period
	v.rpmSum += rpm
	v.rpmSq += rpm * rpm
}

// liveTotals counts what the gridded lines gave.
type liveTotals struct {
	lines, clipped, ties, samples int
	periodSum                     float64
	yHi, yLo                      float64
}

func (t *liveTotals) add(l *placedLine, y0, y1 float64, clipped bool, ties int) {
	t.lines++
	if clipped {
		t.clipped++
	}
	t.ties += ties
	t.samples += l.last - l.first
	t.periodSum += l.period
	t.yHi = math.Max(t.yHi, math.Max(y0, y1))
	t.yLo = math.Min(t.yLo, math.Min(y0, y1))
}

// count counts a line that is not gridded.
func (t *liveTotals) count(l *placedLine) {
	t.lines++
	t.periodSum += l.period
}

// merge adds the lines o counts.
func (t *liveTotals) merge(o liveTotals) {
	t.lines += o.lines
	t.clipped += o.clipped
	t.ties += o.ties
	t.samples += o.samples
	t.periodSum += o.periodSum
	t.yHi, t.yLo = math.Max(t.yHi, o.yHi), math.Min(t.yLo, o.yLo)
}

func newLiveCore(r recipe.Recipe, layout LiveLayout) (*liveCore, error) {
	r = r.Clone()
	if r.Format == "" {
		r.Format = recipe.RecipeFormat
	}
	if err := r.Validate(); err != nil {
		return nil, err
	}
	if key := unresolved(r); key != "" {
		return nil, fmt.Errorf("%s is automatic (null): a live build needs it resolved first (recon.ResolveLive on the first seconds)", key)
	}
	rec := &capture.Recording{SampleRateHz: layout.SampleRateHz, Channels: layout.Channels}
	if err := rec.Validate(); err != nil {
		return nil, err
	}
	c := &liveCore{r: r, rate: layout.SampleRateHz, nch: len(layout.Channels), raw: make([][]float32, len(layout.Channels))}
	var err error
	if c.ch, err = liveChannels(rec, r); err != nil {
		return nil, err
	}
	c.tp = timingParams{Channel: c.ch.index, Rising: r.Timing.Edge != "falling", Threshold: r.Timing.Threshold, Hysteresis: r.Timing.Hysteresis,
		PulsesPerRev: r.Timing.PulsesPerRev, Apertures: r.Sweep.Apertures, NoApertures: !mustLaw(r.Sweep.Law).isWheel()}
	c.trig = newTrigger(*r.Timing.Threshold, *r.Timing.Hysteresis, c.tp.Rising)
	if c.law, err = lawOf(r.Sweep.Law); err != nil {
		return nil, err
	}
	if c.sweep, err = lawMap(r.Sweep); err != nil {
		return nil, err
	}
	if r.Sweep.SinePeriodS != nil {
		c.sinePer = *r.Sweep.SinePeriodS * c.rate
	}
	c.baseline = r.Signal.Baseline != "none" && c.law.hasBeamOff()
	if r.Signal.ACCornerHz > 0 {
		c.hp = newHighPassUndo(r.Signal.ACCornerHz, c.rate)
	}
	if g := afterglowS(r.Signal); g > 0 {
		c.glow = newAfterglowUndo(g, c.rate)
	}
	c.corrected = c.hp != nil || c.glow != nil
	c.detLo, c.detHi = float32(math.Inf(1)), float32(math.Inf(-1))
	c.stats.prefix = []float64{0}
	c.bound.lastValid = math.NaN()
	c.committed.yHi, c.committed.yLo = math.Inf(-1), math.Inf(1)
	c.early = earlyLines{zone: 2 * edgeLeadSamples, totals: c.committed}
	if c.live, err = newLiveRows(r, c.ch, c.rate); err != nil {
		return nil, err
	}
	if c.byStroke = byStroke(r); c.byStroke {
		c.strokes = strokeFinder{hyst: *r.Rows.StrokesHysteresisMM}
	}
	if sharesIndex(r, c.ch) {
		d := newToneDemod(*r.Rows.CarrierHz, c.rate)
		c.sh = newLiveShared(*r.Rows.CarrierHz, *r.Rows.PulseRest, *r.Rows.PulseAway, c.rate, d.blockLen)
		c.live.src = &sharedLevels{d: d, sh: c.sh}
	}
	return c, nil
}

// liveChannels looks the recipe's channel roles up in the layout.
func liveChannels(rec *capture.Recording, r recipe.Recipe) (channels, error) {
	c := channels{-1, -1, -1, -1}
	src, err := sourceOf(r.Rows.Source)
	if err != nil {
		return c, err
	}
	for _, role := range []struct {
		key string
		ref recipe.ChannelRef
		out *int
	}{{"detector", r.Channels.Detector, &c.detector}, {"index", r.Channels.Index, &c.index}, {"position", r.Channels.Position, &c.position}, {"steps", r.Channels.Steps, &c.steps}} {
		if (role.key == "position" || role.key == "steps") && src.needs() != role.key {
			continue
		}
		i, err := rec.Lookup(string(role.ref))
		if err != nil {
			return c, fmt.Errorf("channels.%s: %v", role.key, err)
		}
		*role.out = i
	}
	rows := max(c.position, c.steps)
	if c.index == rows && sharesIndex(r, c) {
		// A two-input sound card: the tone on the index channel.
		rows = -1
	}
	if c.detector == c.index || c.detector == rows || c.index == rows {
		return c, fmt.Errorf("channels.detector, index and the rows' channel must name three channels (%d, %d, %d)", c.detector, c.index, max(c.position, c.steps))
	}
	return c, nil
}

// append takes interleaved frames.
func (c *liveCore) append(x []float32) error {
	if len(x)%c.nch != 0 {
		return fmt.Errorf("a block of %d samples is not a whole number of %d-channel frames", len(x), c.nch)
	}
	k := len(x) / c.nch
	for ch := range c.raw {
		c.raw[ch] = grow(c.raw[ch], k)
		dst := c.raw[ch][c.n:]
		for i := range dst {
			dst[i] = x[i*c.nch+ch]
		}
	}
	return c.advance(k)
}

// grow extends s by k elements (their values to be written). When it
// must move, the capacity grows by half (at least 64 Ki elements): a live
// capture's channels are tens of megabytes, and moving them is the live
// path's largest cost, done under the engine's lock, so they move less
// often than under append's 1.25× for large slices (amortised two copies
// of each sample instead of about four), while the memory held beyond the
// samples stays at most half of them.
func grow(s []float32, k int) []float32 {
	if len(s)+k > cap(s) {
		s = moved(s, k)
	}
	return s[:len(s)+k]
}

// moved is s copied into new memory with room for k more as grow gives.
func moved(s []float32, k int) []float32 {
	t := make([]float32, len(s), max(cap(s)+cap(s)/2, len(s)+k, 1<<16))
	copy(t, s)
	return t
}

// storeMove is one of the store's slices that the next frames move to new
// memory: where the core keeps it, as it was, and (once copied) the copy.
type storeMove struct {
	dst      *[]float32
	old, new []float32
}

// moves lists the store's slices (the channels, and the corrected
// detector) that k more frames would move, so that Live.Append can copy
// them without holding its lock.
func (c *liveCore) moves(k int) []storeMove {
	var out []storeMove
	add := func(p *[]float32) {
		if s := *p; len(s)+k > cap(s) {
			out = append(out, storeMove{dst: p, old: s})
		}
	}
	for ch := range c.raw {
		add(&c.raw[ch])
	}
	if c.corrected {
		add(&c.det)
	}
	return out
}

// replay feeds c everything old was given, a second at a time. The two
// share the samples' store: c takes it over, writing past old's samples
// only, and old, unless c fails, is given no more.
func (c *liveCore) replay(ctx context.Context, old *liveCore) error {
	step := max(int(c.rate), 1)
	for at := 0; at < old.n; at += step {
		if err := ctx.Err(); err != nil {
			return err
		}
		k := min(step, old.n-at)
		for ch := range c.raw {
			c.raw[ch] = old.raw[ch][:at+k]
		}
		if err := c.advance(k); err != nil {
			return err
		}
	}
	return nil
}

// advance runs the stages over the k frames just added to raw.
func (c *liveCore) advance(k int) error {
	from := c.n
	c.n += k
	rec := c.raw[c.ch.detector]
	for _, v := range rec[from:] {
		c.detLo, c.detHi = min(c.detLo, v), max(c.detHi, v)
	}
	if c.corrected {
		c.det = grow(c.det, k)
		if c.hp != nil {
			c.hp.run(c.det[from:], rec[from:])
		} else {
			copy(c.det[from:], rec[from:])
		}
		if c.glow != nil {
			c.glow.run(c.det[from:], c.det[from:])
		}
	} else {
		c.det = rec
	}
	if c.sh != nil {
		c.sh.add(c.raw[c.ch.index], c.n)
	}
	c.addStats(from)
	c.addEdges(from)
	c.live.add(c.raw, c.n)
	if c.byStroke {
		c.strokes.feed(c.live.rows.y)
	}
	c.place()
	return c.commit()
}

// addStats extends the detector's block sums the way newChannelStats
// makes them.
func (c *liveCore) addStats(from int) {
	for i := from; i < c.n; i++ {
		c.blockSum += c.det[i]
		if (i+1)%statsBlock == 0 {
			c.stats.prefix = append(c.stats.prefix, c.stats.prefix[len(c.stats.prefix)-1]+float64(c.blockSum))
			c.blockSum = 0
		}
	}
}

// addEdges finds the new index edges, walks the repair as far as the
// edges so far decide it and makes the lines of the edges whose next edge
// is known.
func (c *liveCore) addEdges(from int) {
	if c.sh != nil {
		c.rawEdges, c.high = c.sh.edges(c.trig, c.scanned, c.sh.nf, c.high, c.rawEdges)
		c.scanned = max(c.scanned, c.sh.nf)
	} else {
		x := c.raw[c.ch.index]
		if from == 0 {
			c.high = c.trig.sign*x[0] > c.trig.t
		}
		c.rawEdges, c.high, _ = c.trig.scanState(context.Background(), x, from, c.n, c.high, c.rawEdges)
	}
	c.rep.walk(c.rawEdges, false)
	edges := c.rep.res.edges
	starts := map[float64]bool{}
	for _, g := range c.rep.res.gaps[c.gapsSeen:] {
		starts[g[0]] = true
	}
	c.gapsSeen = len(c.rep.res.gaps)
	for len(c.gapAfter) < len(edges)-1 {
		i := len(c.gapAfter)
		c.gapAfter = append(c.gapAfter, starts[edges[i]])
		c.timings = c.tp.edgeLines(c.timings, edges, c.rep.res.repaired[i], i, c.gapAfter[i], c.n)
	}
	for ; c.revDone < len(c.gapAfter)-c.revLookahead()+1; c.revDone++ {
		if rev, ok := c.tp.revolution(edges, c.gapAfter, c.revDone); ok {
			c.revs.add(rev, c.rate)
		}
	}
}

// revLookahead is how many edges after an edge its revolution needs.
func (c *liveCore) revLookahead() int {
	if c.tp.onePerRev() {
		return 1
	}
	if c.tp.NoApertures {
		return 1
	}
	return max(c.tp.Apertures, 1)
}

// place places the lines whose field the samples so far hold whole.
func (c *liveCore) place() {
	for len(c.timings) > 0 {
		var out []placedLine
		c.law.place(c.r.Sweep, c.timings[0], c.timingNo, *c.r.Sweep.DelayDeg, c.sinePer, placer(&out, math.MaxInt, c.rate))
		for _, l := range out {
			if l.last > c.n {
				return
			}
		}
		c.queue = append(c.queue, out...)
		c.timings = c.timings[1:]
		c.timingNo++
	}
}

// beamOffState is the beam-off stretch before the next line to baseline,
// its mean, and the last valid mean (for empty stretches).
type beamOffState struct {
	iv        interval
	mean      float64
	set       bool
	lastValid float64
}

// baselineNext sets l's baseline from the stretch before it (st, or before
// the first line one typical beam-off long) and the stretch from its end
// to nextFirst (nextFirst < 0: one typical beam-off long, cut to the
// samples so far), as baselineLines does, and returns the state for the
// line after. An empty stretch takes the last valid mean before it.
func (c *liveCore) baselineNext(st beamOffState, l *placedLine, nextFirst, typ int) beamOffState {
	if !st.set {
		st.iv = beamOff(l.first-typ, l.first, c.n)
		st.mean, st.lastValid = c.meanOf(st.iv, st.lastValid)
		st.set = true
	}
	after := beamOff(l.last, l.last+typ, c.n)
	if nextFirst >= 0 {
		after = beamOff(l.last, nextFirst, c.n)
	}
	m, valid := c.meanOf(after, st.lastValid)
	l.setBaseline(st.iv, after, st.mean, m)
	return beamOffState{iv: after, mean: m, set: true, lastValid: valid}
}

func (c *liveCore) meanOf(iv interval, lastValid float64) (mean, valid float64) {
	if m, ok := iv.mean(c.det, &c.stats); ok {
		return m, m
	}
	return lastValid, lastValid
}

// commit grids the queued lines that nothing later can change: once the
// first lines have given the typical beam-off and the edge response, a
// line whose next line is placed and whose rows are final (the first
// ones mostly gridded already, earlyLines).
func (c *liveCore) commit() error {
	if !c.warm && !c.warmUp() {
		return nil
	}
	if len(c.early.lines) > 0 {
		if err := c.commitEarly(); err != nil {
			return err
		}
	}
	for len(c.queue) > 0 {
		l := &c.queue[0]
		if c.baseline && len(c.queue) < 2 || !c.live.final(l) || !c.strokeFinal(l) {
			return nil
		}
		if c.baseline {
			c.bound = c.baselineNext(c.bound, l, c.queue[1].first, c.typ)
		}
		if err := c.commitLine(l); err != nil {
			return err
		}
		c.queue = c.queue[1:]
	}
	return nil
}

// commitLine grids l on its stroke's canvas with the measured edge
// response and counts it in the totals (a line after the first stroke,
// with rows.strokes first, is counted only, as a batch build lists it but
// grids no frame of its stroke).
func (c *liveCore) commitLine(l *placedLine) error {
	s := c.strokeOf(l)
	c.keepRecent(c.liveLine(l, &c.live.rows))
	if s > 0 && c.r.Rows.Strokes == "first" {
		c.committed.count(l)
		return nil
	}
	v := c.canvasOf(s)
	y0, y1, err := c.coverLine(v, l)
	if err != nil {
		return err
	}
	in := c.gridInput(&c.live.rows, c.edge)
	clipped, ties := splatLine(&in, v.g, l, v.acc)
	c.committed.add(l, y0, y1, clipped, ties)
	v.yHi, v.yLo = math.Max(v.yHi, math.Max(y0, y1)), math.Min(v.yLo, math.Min(y0, y1))
	return nil
}

// strokeFinal reports whether the stroke of l is final: always, unless
// the lines are gridded stroke by stroke, and then when the middle of l
// is before any reversal that later samples may still find.
func (c *liveCore) strokeFinal(l *placedLine) bool {
	return !c.byStroke || (l.first+l.last)/2 < c.strokes.horizon(c.live.rows.blockLen)
}

// strokeOf is the stroke of a line whose stroke is final (strokeFinal),
// as linesOnRows numbers them: 0 unless the lines are gridded stroke by
// stroke.
func (c *liveCore) strokeOf(l *placedLine) int {
	if !c.byStroke {
		return 0
	}
	return c.strokes.strokeAt((l.first+l.last)/2, c.live.rows.blockLen)
}

// canvasOf is the canvas of stroke s, made empty when there is none yet.
func (c *liveCore) canvasOf(s int) *liveCanvas {
	for len(c.canvases) <= s {
		c.canvases = append(c.canvases, liveCanvas{yHi: math.Inf(-1), yLo: math.Inf(1)})
	}
	return &c.canvases[s]
}

// coverLine grows canvas v to hold l and returns the y of its ends.
func (c *liveCore) coverLine(v *liveCanvas, l *placedLine) (y0, y1 float64, err error) {
	y0, y1 = c.live.rows.at(float64(l.first)), c.live.rows.at(float64(l.last-1))
	return y0, y1, v.cover(c, math.Min(y0, y1), math.Max(y0, y1))
}

// earlyLines is what a live build keeps of its first lines until warmUp
// fixes the typical beam-off and the edge response, which the first
// measureLines lines give (and the index repair its reference period,
// which the first pulses give): until then every Result works the lines
// out afresh, as a batch build of the samples so far, and most of them
// come out as the last Result had them. Those it keeps: lines[k] was line
// k+1 of the last Result, with its baseline, the y of its ends and the
// first sample of the line after it — all that the middle of a line
// (its samples but the first zone and the last edgeLeadSamples, the only
// ones the edge response corrects) is gridded from, and that middle is on
// the canvas. A Result grids a kept line's middle only when it is not
// the same any more (and the canvas is then made again from the lines
// that are), so its cost does not grow with the first lines. The first
// line is never kept: the typical beam-off sets the stretch before it.
type earlyLines struct {
	lines  []earlyLine
	zone   int        // samples at a kept line's start left off the canvas
	fold   *edgeFold  // of lines[:folded], nil until a Result folds them
	folded int        //
	totals liveTotals // of the kept lines
}

// earlyLine is one kept line.
type earlyLine struct {
	l         placedLine
	y0, y1    float64
	nextFirst int
	clipped   bool
	ties      int
}

// same reports whether l (followed by a line from nextFirst) grids and
// folds as the kept line does.
func (k *earlyLine) same(l *placedLine, rows *rowsResult, nextFirst int) bool {
	a := &k.l
	return a.first == l.first && a.last == l.last && a.start == l.start && a.end == l.end && a.u0 == l.u0 && a.du == l.du &&
		a.base0 == l.base0 && a.baseSlope == l.baseSlope && k.nextFirst == nextFirst &&
		k.y0 == rows.at(float64(l.first)) && k.y1 == rows.at(float64(l.last-1))
}

// interior is the part of a kept line of n samples on the canvas.
func (e *earlyLines) interior(n int) (from, to int) {
	from = min(e.zone, n)
	return from, max(n-edgeLeadSamples, from)
}

// splatEnds splats the samples of kept line l that are not on the canvas.
func (e *earlyLines) splatEnds(in *gridInput, g *frameGrid, l *placedLine, acc []float64) {
	n := l.last - l.first
	from, to := e.interior(n)
	splatSpan(in, g, l, acc, 0, from)
	splatSpan(in, g, l, acc, to, n)
}

// keep adds lines[i] (all of whose rows are final, followed by
// lines[i+1]) to the kept lines, its middle to the canvas.
func (c *liveCore) keep(lines []placedLine, i int) error {
	e := &c.early
	l := &lines[i]
	v := c.canvasOf(0)
	y0, y1, err := c.coverLine(v, l)
	if err != nil {
		return err
	}
	in := c.gridInput(&c.live.rows, nil)
	k := earlyLine{l: *l, y0: y0, y1: y1, nextFirst: lines[i+1].first}
	k.clipped, k.ties = clipLine(&in, l)
	e.totals.add(l, y0, y1, k.clipped, k.ties)
	from, to := e.interior(l.last - l.first)
	splatSpan(&in, v.g, l, v.acc, from, to)
	if e.fold != nil && e.folded == len(e.lines) && i < measureLines {
		e.fold.add(c.det, l, k.nextFirst)
		e.folded++
	}
	e.lines = append(e.lines, k)
	return nil
}

// regrid makes the canvas again from the kept lines (their totals and
// fold too), with zone samples at their starts left off.
func (c *liveCore) regrid(zone int) {
	e := &c.early
	v := c.canvasOf(0)
	clear(v.acc)
	e.zone, e.fold, e.folded = zone, nil, 0
	e.totals = liveTotals{yHi: math.Inf(-1), yLo: math.Inf(1)}
	in := c.gridInput(&c.live.rows, nil)
	for i := range e.lines {
		k := &e.lines[i]
		e.totals.add(&k.l, k.y0, k.y1, k.clipped, k.ties)
		from, to := e.interior(k.l.last - k.l.first)
		splatSpan(&in, v.g, &k.l, v.acc, from, to)
	}
}

// keepEarly matches the kept lines against lines (lines[i] is kept line
// i−1), drops those that are not the same any more, and keeps the lines
// after them whose rows are final, short of the last few, which the next
// edges may still change. It returns how many lines are kept.
func (c *liveCore) keepEarly(lines []placedLine, rows *rowsResult) (int, error) {
	e := &c.early
	if c.byStroke {
		// The strokes of the first lines are not final yet: each Result
		// grids them afresh, until warmUp.
		return 0, nil
	}
	k := 0
	for k < len(e.lines) && k+2 < len(lines) && e.lines[k].same(&lines[k+1], rows, lines[k+2].first) {
		k++
	}
	if k < len(e.lines) {
		e.lines = e.lines[:k]
		c.regrid(e.zone)
	}
	margin := max(c.tp.Apertures, 1) + 2
	for i := k + 1; i+1+margin < len(lines) && c.live.final(&lines[i]); i++ {
		if err := c.keep(lines, i); err != nil {
			return 0, err
		}
	}
	return len(e.lines), nil
}

// measureEarly is measureEdgeResponse of lines, the first lines of the
// build with their baselines, of which lines[1 : 1+kept] are the kept
// ones: only the others are folded afresh.
func (c *liveCore) measureEarly(lines []placedLine, kept int) *edgeResponse {
	span, ok := edgeSpan(lines)
	if !ok {
		return nil
	}
	e := &c.early
	k := min(kept, measureLines-1) // lines 1…k are kept and measured
	if k == 0 {
		return measureEdgeResponse(c.det, lines)
	}
	if e.fold == nil || e.fold.span != span || e.folded != k {
		e.fold, e.folded = newEdgeFold(span), k
		for i := range e.lines[:k] {
			e.fold.add(c.det, &e.lines[i].l, e.lines[i].nextFirst)
		}
	}
	f := e.fold.clone()
	m := min(len(lines), measureLines+1)
	for i := 0; i+1 < m; i++ {
		if i == 1 {
			i = k + 1
			if i+1 >= m {
				break
			}
		}
		f.add(c.det, &lines[i], lines[i+1].first)
	}
	return f.response()
}

// commitEarly commits the first line and the kept ones that are the same
// as the queue's, once warmUp has fixed the edge response: only their
// ends are gridded now.
func (c *liveCore) commitEarly() error {
	e := &c.early
	st := c.baselineNext(c.bound, &c.queue[0], c.queue[1].first, c.typ)
	k := 0
	for k < len(e.lines) && k+2 < len(c.queue) {
		l := &c.queue[k+1]
		next := c.baselineNext(st, l, c.queue[k+2].first, c.typ)
		if !e.lines[k].same(l, &c.live.rows, c.queue[k+2].first) {
			break
		}
		st, k = next, k+1
	}
	zone := e.zone
	if c.edge != nil {
		zone = max(zone, c.edge.rise)
	}
	if k < len(e.lines) || zone > e.zone {
		e.lines = e.lines[:k]
		c.regrid(zone)
	}
	if k > 0 {
		first := &c.queue[0]
		c.bound = c.baselineNext(c.bound, first, c.queue[1].first, c.typ)
		if err := c.commitLine(first); err != nil {
			return err
		}
		in := c.gridInput(&c.live.rows, c.edge)
		v := c.canvasOf(0)
		for i := 1; i <= k; i++ {
			e.splatEnds(&in, v.g, &c.queue[i], v.acc)
			c.keepRecent(c.liveLine(&c.queue[i], &c.live.rows))
		}
		c.committed.merge(e.totals)
		c.bound = st
		c.queue = c.queue[k+1:]
	}
	c.early = earlyLines{}
	return nil
}

// warmUp fixes the typical beam-off length and the detector's edge
// response once the first measureLines lines (and the one after) are
// placed and the index repair has its reference period, as a batch build
// measures them; it reports whether they are fixed.
func (c *liveCore) warmUp() bool {
	if !c.rep.started {
		return false
	}
	if c.baseline {
		if len(c.queue) < measureLines+2 {
			return false
		}
		c.typ = typicalBeamOff(c.queue)
		first := append([]placedLine(nil), c.queue[:measureLines+1]...)
		st := c.bound
		for i := range first[:measureLines] {
			st = c.baselineNext(st, &first[i], first[i+1].first, c.typ)
		}
		c.edge = measureEdgeResponse(c.det, first)
	}
	c.warm = true
	return true
}

// gridInput is what splatLine needs of the live build.
func (c *liveCore) gridInput(rows *rowsResult, edge *edgeResponse) gridInput {
	in := gridInput{det: c.det, rows: rows, sweep: c.sweep, pitch: c.r.Image.PitchMM, invert: c.r.Signal.Invert,
		clipHi: c.detHi, clipLo: float32(math.Inf(-1)), edge: edge}
	if c.detLo < 0 {
		in.clipLo = c.detLo
	}
	if c.corrected {
		in.recorded = c.raw[c.ch.detector]
	}
	return in
}

// liveCanvas holds the accumulators of the gridded lines (of a stroke),
// on the rows of the lattice from top down (rowLattice), grown as the
// head moves.
type liveCanvas struct {
	g        *frameGrid
	acc      []float64
	top      int     // lattice number of row 0
	yHi, yLo float64 // range of the ends of the lines gridded on it, mm
}

// cover grows the canvas to hold y from lo to hi, mm, with room for more.
func (v *liveCanvas) cover(c *liveCore, lo, hi float64) error {
	p := c.r.Image.PitchMM
	topF, bottomF := rowLattice(hi, lo, p)
	top, bottom := int(topF), int(bottomF)
	if v.g != nil && top <= v.top && bottom >= v.top-v.g.rows+1 {
		return nil
	}
	if v.g != nil {
		top, bottom = max(top, v.top), min(bottom, v.top-v.g.rows+1)
	}
	margin := 16
	if v.g != nil {
		margin = max(margin, v.g.rows/2)
	}
	g, err := layoutFrame(gridInput{sweep: c.sweep, pitch: p, yTop: float64(top+margin) * p, yBottom: float64(bottom-margin) * p})
	if err != nil {
		// Without room to spare, if that fits.
		if g, err = layoutFrame(gridInput{sweep: c.sweep, pitch: p, yTop: float64(top) * p, yBottom: float64(bottom) * p}); err != nil {
			return fmt.Errorf("live image: %v", err)
		}
		margin = 0
	}
	acc := make([]float64, 2*g.cols*g.rows)
	newTop := top + margin
	if v.g != nil {
		shift := newTop - v.top
		row := 2 * g.cols
		copy(acc[shift*row:], v.acc)
	}
	v.g, v.acc, v.top = g, acc, newTop
	return nil
}
