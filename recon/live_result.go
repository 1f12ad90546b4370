package recon

import (
	"context"
	"fmt"
	"math"
	"slices"
)

// liveTail is what the samples so far leave open, worked out as a batch
// build of them would: the edges after the last final one, the lines not
// yet gridded (baselined), the rows of the last blocks, and the repair's
// counts.
type liveTail struct {
	lines   []placedLine
	rows    *rowsResult
	edge    *edgeResponse
	rep     repairResult
	revs    liveRevs
	lvLo    float64
	lvHi    float64
	timings int
	settled int // lines[1 : 1+settled] are kept (earlyLines)
}

// tail works out the open part of the build.
func (c *liveCore) tail() (*liveTail, error) {
	t := &liveTail{revs: c.revs}
	raw := c.rawEdges
	if c.sh != nil {
		// The notched samples after the final ones, and their edges.
		if err := c.sh.tail(c.raw[c.ch.index], c.n); err != nil {
			return nil, err
		}
		raw, _ = c.sh.edges(c.trig, c.scanned, c.n, c.high, slices.Clip(raw))
	}
	// The repair walked to the end, as with no more edges to come.
	w := c.rep
	w.recent, w.scratch = slices.Clone(w.recent), slices.Clone(w.scratch)
	w.res.gaps = slices.Clone(w.res.gaps)
	w.walk(raw, true)
	t.rep = w.res
	edges := w.res.edges
	gap := append(c.gapAfter, make([]bool, len(edges)-len(c.gapAfter))...)
	for _, g := range w.res.gaps[c.gapsSeen:] {
		for i := len(c.gapAfter); i < len(edges); i++ {
			if edges[i] == g[0] {
				gap[i] = true
			}
		}
	}
	timings := slices.Clone(c.timings)
	for i := len(c.gapAfter); i < len(edges); i++ {
		timings = c.tp.edgeLines(timings, edges, w.res.repaired[i], i, gap[i], c.n)
	}
	for i := c.revDone; i < len(edges); i++ {
		if rev, ok := c.tp.revolution(edges, gap, i); ok {
			t.revs.add(rev, c.rate)
		}
	}
	t.lines = slices.Clone(c.queue)
	for i, lt := range timings {
		c.law.place(c.r.Sweep, lt, c.timingNo+i, *c.r.Sweep.DelayDeg, c.sinePer, placer(&t.lines, c.n, c.rate))
	}
	if t.rows, t.lvLo, t.lvHi = c.live.tail(c.raw, c.n); t.rows == nil {
		return nil, errNoToneStretch
	}
	t.edge = c.edge
	if !c.baseline {
		return t, nil
	}
	if !c.warm {
		// Every line so far, as a batch build; the settled ones have
		// their baselines already and most of their samples gridded.
		_ = baselineLines(context.Background(), c.det, &c.stats, t.lines)
		var err error
		if t.settled, err = c.keepEarly(t.lines, t.rows); err != nil {
			return nil, err
		}
		t.edge = c.measureEarly(t.lines, t.settled)
		if t.settled > 0 && t.edge != nil && t.edge.rise > c.early.zone {
			c.regrid(2 * t.edge.rise)
		}
		return t, nil
	}
	st := c.bound
	for i := range t.lines {
		next := -1
		if i+1 < len(t.lines) {
			next = t.lines[i+1].first
		}
		st = c.baselineNext(st, &t.lines[i], next, c.typ)
	}
	return t, nil
}

// settles reports whether lines[i] is kept (earlyLines).
func (t *liveTail) settles(i int) bool { return i >= 1 && i <= t.settled }

// result is the image and report of the samples so far.
func (c *liveCore) result() *Result {
	t, err := c.tail()
	if err != nil {
		return nil
	}
	p := c.r.Image.PitchMM
	total := c.committed
	if t.settled > 0 {
		total.merge(c.early.totals)
	}
	ys := make([][2]float64, len(t.lines))
	for i := range t.lines {
		if t.settles(i) {
			continue
		}
		l := &t.lines[i]
		ys[i] = [2]float64{t.rows.at(float64(l.first)), t.rows.at(float64(l.last - 1))}
		total.yHi = math.Max(total.yHi, math.Max(ys[i][0], ys[i][1]))
		total.yLo = math.Min(total.yLo, math.Min(ys[i][0], ys[i][1]))
	}
	if total.lines+len(t.lines) == 0 {
		return nil
	}
	g, err := layoutFrame(gridInput{sweep: c.sweep, pitch: p, yTop: total.yHi, yBottom: total.yLo})
	if err != nil {
		return nil
	}
	top, _ := rowLattice(total.yHi, total.yLo, p)
	// The accumulators are scratch, kept between calls.
	acc := slices.Grow(c.scratch[:0], 2*g.cols*g.rows)[:2*g.cols*g.rows]
	clear(acc)
	c.scratch = acc
	if v := c.canvas; v.g != nil && (c.warm || t.settled > 0) {
		// Canvas row r is lattice row v.top−r, frame row int(top)−(v.top−r).
		shift := v.top - int(top)
		row := 2 * g.cols
		from, to := max(shift, 0), min(v.g.rows, g.rows+shift)
		if to > from {
			copy(acc[(from-shift)*row:], v.acc[from*row:to*row])
		}
	}
	in := c.gridInput(t.rows, t.edge)
	for i := range t.lines {
		l := &t.lines[i]
		if t.settles(i) {
			c.early.splatEnds(&in, g, l, acc)
			continue
		}
		clipped, ties := splatLine(&in, g, l, acc)
		total.add(l, ys[i][0], ys[i][1], clipped, ties)
	}
	f := frameFromSums(g, p, [][]float64{acc})
	fillGaps(f, max(c.r.Image.FillGapsPx, int(math.Floor(*c.r.Image.MaxGapMM/p+1e-9))-1), c.r.Image.FillGapsPx)
	covered, gapRows := coverCounts(f)
	rep := c.report(t, total, f, covered, gapRows)
	f.Report, f.Recipe = rep, c.r.Clone()
	f.Report.Warnings = slices.Clone(rep.Warnings)
	return &Result{Frames: []*Frame{f}, Report: rep, Recipe: c.r.Clone(), Lines: c.recentLines(t.lines, t.rows)}
}

// report is the build report of the samples so far, as timingReport and
// gridStage make it.
func (c *liveCore) report(t *liveTail, total liveTotals, f *Frame, covered, gapRows int) Report {
	rep := Report{
		Lines: total.lines, LinesRepaired: t.rep.missing, PulsesMissing: t.rep.missing, PulsesExtra: t.rep.extra,
		Revolutions: t.revs.n, DelayDeg: *c.r.Sweep.DelayDeg, Threshold: *c.r.Timing.Threshold, PitchMM: c.r.Image.PitchMM,
		Columns: f.Width, Rows: f.Height, OriginXMM: f.OriginXMM, OriginYMM: f.OriginYMM,
		Coverage: float64(covered) / float64(f.Width*f.Height),
	}
	if c.r.Rows.Source.ReadsPosition() {
		rep.PositionLevels = []float64{t.lvLo, t.lvHi}
	}
	if t.revs.n > 0 && !c.tp.NoApertures {
		rep.RPMMean = 60 * c.rate * float64(t.revs.n) / t.revs.sum
		if t.revs.n > 1 {
			m := t.revs.rpmSum / float64(t.revs.n)
			v := t.revs.rpmSq - 2*m*t.revs.rpmSum + float64(t.revs.n)*m*m
			rep.RPMSpreadPct = 100 * math.Sqrt(math.Max(v, 0)/float64(t.revs.n-1)) / rep.RPMMean
		}
	}
	if total.lines > 0 {
		pMean := total.periodSum / float64(total.lines)
		rep.SweepMS = 1000 * pMean * fieldFraction(c.r.Sweep) / c.rate
		rep.LineRateHz = float64(c.law.linesPerIndex()) * c.rate / pMean
	}
	if t.rep.missing > 0 {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("%d index pulses were missing and were filled in", t.rep.missing))
	}
	if t.rep.extra > 0 {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("%d extra index pulses were ignored", t.rep.extra))
	}
	if total.clipped > 0 && float64(total.ties) < 0.2*float64(total.samples) {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("the detector clipped on %s of lines (%d of %d): lower the detector gain", percentText(float64(total.clipped)/float64(total.lines)), total.clipped, total.lines))
	}
	if gapRows > 0 {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("%d rows have gaps where no line passed", gapRows))
	}
	return rep
}
