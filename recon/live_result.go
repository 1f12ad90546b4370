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
	if c.byStroke {
		f := c.strokes.clone()
		f.feed(t.rows.y)
		t.rows.strokes = f.strokes(t.rows.blockLen, c.n)
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

// result is the image and report of the samples so far: one frame, or
// one per stroke (rows.strokes split), or the first stroke's.
func (c *liveCore) result() *Result {
	t, err := c.tail()
	if err != nil {
		return nil
	}
	total := c.committed
	if t.settled > 0 {
		total.merge(c.early.totals)
	}
	groups := c.groups(t, &total)
	if len(groups) == 0 {
		return nil
	}
	var frames []*Frame
	var covered, pixels, gapRows int
	var cover []float64
	for _, gr := range groups {
		f, err := c.gridGroup(t, gr, &total)
		if err != nil {
			return nil
		}
		cov, gaps := coverCounts(f)
		f.Stroke = gr.stroke
		frames = append(frames, f)
		covered, pixels, gapRows = covered+cov, pixels+f.Width*f.Height, gapRows+gaps
		cover = append(cover, float64(cov)/float64(f.Width*f.Height))
	}
	rep := c.report(t, total, frames[0], float64(covered)/float64(pixels), gapRows)
	for i, f := range frames {
		f.Report, f.Recipe = rep, c.r.Clone()
		f.Report.Columns, f.Report.Rows, f.Report.Coverage = f.Width, f.Height, cover[i]
		f.Report.OriginXMM, f.Report.OriginYMM = f.OriginXMM, f.OriginYMM
		f.Report.Warnings = slices.Clone(rep.Warnings)
	}
	return &Result{Frames: frames, Report: rep, Recipe: c.r.Clone(), Lines: c.recentLines(t.lines, t.rows)}
}

// liveGroup is the lines of one frame of a Result: its stroke, the canvas
// of its gridded lines (nil for none), the range of its lines' ends and
// the lines of the tail in it.
type liveGroup struct {
	stroke   int
	canvas   *liveCanvas
	yHi, yLo float64
	lines    []int // of the tail's lines
}

// groups sorts the tail's lines into the frames of a Result, as
// groupByStroke does, and counts in total those of no frame.
func (c *liveCore) groups(t *liveTail, total *liveTotals) []liveGroup {
	ends := func(l *placedLine) (float64, float64) {
		y0, y1 := t.rows.at(float64(l.first)), t.rows.at(float64(l.last-1))
		return math.Max(y0, y1), math.Min(y0, y1)
	}
	if !c.byStroke {
		g := liveGroup{yHi: total.yHi, yLo: total.yLo}
		if len(c.canvases) > 0 {
			g.canvas = &c.canvases[0]
		}
		for i := range t.lines {
			g.lines = append(g.lines, i)
			if !t.settles(i) {
				hi, lo := ends(&t.lines[i])
				g.yHi, g.yLo = math.Max(g.yHi, hi), math.Min(g.yLo, lo)
			}
		}
		if total.lines+len(t.lines) == 0 {
			return nil
		}
		return []liveGroup{g}
	}
	n := len(t.rows.strokes)
	if c.r.Rows.Strokes == "first" {
		n = 1
	}
	out := make([]liveGroup, n)
	for s := range out {
		out[s] = liveGroup{stroke: s, yHi: math.Inf(-1), yLo: math.Inf(1)}
		if s < len(c.canvases) && c.canvases[s].g != nil {
			v := &c.canvases[s]
			out[s].canvas, out[s].yHi, out[s].yLo = v, v.yHi, v.yLo
		}
	}
	for i := range t.lines {
		l := &t.lines[i]
		s := t.rows.strokeOf((l.first + l.last) / 2)
		if s >= n {
			total.count(l)
			continue
		}
		g := &out[s]
		g.lines = append(g.lines, i)
		hi, lo := ends(l)
		g.yHi, g.yLo = math.Max(g.yHi, hi), math.Min(g.yLo, lo)
	}
	return slices.DeleteFunc(out, func(g liveGroup) bool { return g.canvas == nil && len(g.lines) == 0 })
}

// gridGroup grids the frame of group gr: its canvas, and its lines of the
// tail, which it counts in total. The tail's lines are gridded on the band
// of rows they reach only, and each pixel is its canvas sums plus its band
// sums: no copy of the canvas, whose rows outside the band are the frame's.
func (c *liveCore) gridGroup(t *liveTail, gr liveGroup, total *liveTotals) (*Frame, error) {
	p := c.r.Image.PitchMM
	g, err := layoutFrame(gridInput{sweep: c.sweep, pitch: p, yTop: gr.yHi, yBottom: gr.yLo})
	if err != nil {
		return nil, err
	}
	top, _ := rowLattice(gr.yHi, gr.yLo, p)
	in := c.gridInput(t.rows, t.edge)
	// The rows the lines' samples reach (each lands on the two rows about
	// its position, bilinear), with two rows to spare, so that each line
	// lies inside the band as it would inside the frame.
	b0, b1 := g.rows, -1
	for _, i := range gr.lines {
		l := &t.lines[i]
		v0, v1 := (g.yTop-t.rows.at(float64(l.first)))*g.inv, (g.yTop-t.rows.at(float64(l.last-1)))*g.inv
		b0, b1 = min(b0, int(math.Floor(math.Min(v0, v1)))-2), max(b1, int(math.Floor(math.Max(v0, v1)))+3)
	}
	b0, b1 = max(b0, 0), min(b1, g.rows-1)
	var band frameSums
	if b1 >= b0 {
		gb := newFrameGrid(c.sweep, g.cols, b1-b0+1, g.x0, g.yTop-float64(b0)*p, p)
		// The accumulators are scratch, kept between calls.
		acc := slices.Grow(c.scratch[:0], 2*g.cols*gb.rows)[:2*g.cols*gb.rows]
		clear(acc)
		c.scratch = acc
		for _, i := range gr.lines {
			l := &t.lines[i]
			if t.settles(i) {
				c.early.splatEnds(&in, gb, l, acc)
				continue
			}
			clipped, ties := splatLine(&in, gb, l, acc)
			total.add(l, t.rows.at(float64(l.first)), t.rows.at(float64(l.last-1)), clipped, ties)
		}
		band = frameSums{acc: acc, first: b0, rows: gb.rows}
	}
	var canvas frameSums
	if v := gr.canvas; v != nil && v.g != nil && (c.warm || t.settled > 0) {
		// Canvas row r is lattice row v.top−r, frame row int(top)−(v.top−r).
		canvas = frameSums{acc: v.acc, first: int(top) - v.top, rows: v.g.rows}
	}
	f := frameFromParts(g, p, canvas, band)
	fillGaps(f, max(c.r.Image.FillGapsPx, int(math.Floor(*c.r.Image.MaxGapMM/p+1e-9))-1), c.r.Image.FillGapsPx)
	return f, nil
}

// frameSums are the accumulators (value sum and weight of each pixel,
// interleaved) of rows of a frame from row first on; none when acc is nil.
type frameSums struct {
	acc         []float64
	first, rows int
}

// row is the sums of frame row r, nil when they hold none of it.
func (s frameSums) row(r, cols int) []float64 {
	if k := r - s.first; s.acc != nil && k >= 0 && k < s.rows {
		return s.acc[2*k*cols : 2*(k+1)*cols]
	}
	return nil
}

// frameFromParts is frameFromSums of grid g with each pixel's sums the sum
// of the two parts' (either may hold none of a row).
func frameFromParts(g *frameGrid, p float64, a, b frameSums) *Frame {
	f := &Frame{
		Width: g.cols, Height: g.rows,
		Pix:      make([]float32, g.cols*g.rows),
		Covered:  make([]bool, g.cols*g.rows),
		PitchXMM: p, PitchYMM: p,
		OriginXMM: g.x0, OriginYMM: g.yTop,
	}
	forSpans(g.rows, (1<<15)/max(g.cols, 1), func(r0, r1 int) {
		for r := r0; r < r1; r++ {
			ra, rb := a.row(r, g.cols), b.row(r, g.cols)
			pix, cov := f.Pix[r*g.cols:(r+1)*g.cols], f.Covered[r*g.cols:(r+1)*g.cols]
			switch {
			case ra != nil && rb != nil:
				for i := range pix {
					if wt := ra[2*i+1] + rb[2*i+1]; wt >= minCoverWeight {
						pix[i], cov[i] = float32((ra[2*i]+rb[2*i])/wt), true
					}
				}
			case ra == nil:
				ra = rb // one part, or none
				fallthrough
			default:
				for i := 0; ra != nil && i < len(pix); i++ {
					if wt := ra[2*i+1]; wt >= minCoverWeight {
						pix[i], cov[i] = float32(ra[2*i]/wt), true
					}
				}
			}
		}
	})
	return f
}

// report is the build report of the samples so far, as timingReport and
// gridStage make it.
func (c *liveCore) report(t *liveTail, total liveTotals, f *Frame, coverage float64, gapRows int) Report {
	rep := Report{
		Lines: total.lines, LinesRepaired: t.rep.missing, PulsesMissing: t.rep.missing, PulsesExtra: t.rep.extra,
		Revolutions: t.revs.n, DelayDeg: *c.r.Sweep.DelayDeg, Threshold: *c.r.Timing.Threshold, PitchMM: c.r.Image.PitchMM,
		Columns: f.Width, Rows: f.Height, OriginXMM: f.OriginXMM, OriginYMM: f.OriginYMM,
		Coverage: coverage,
	}
	if c.byStroke {
		rep.Strokes = len(t.rows.strokes)
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
