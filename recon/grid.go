package recon

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"

	"spotloom/internal/strictjson"
	"spotloom/recon/recipe"
)

// minCoverWeight is the accumulated kernel weight a pixel needs to count
// as covered: a twentieth of one sample landing on it squarely, so a
// sample almost a pixel away does not claim a pixel it barely touches.
const minCoverWeight = 0.05

// maxPixels bounds the size of one frame (4096 × 4096), and so the
// accumulators (16 bytes a pixel).
const maxPixels = recipe.MaxFramePixels

// maxSplitPixels is the largest frame whose accumulators are kept once per
// worker; a larger one is gridded by a single goroutine to bound memory.
const maxSplitPixels = 4 << 20

// workers is the number of goroutines the parallel stages use.
func workers() int { return max(1, runtime.GOMAXPROCS(0)) }

// channelStats holds what the stages need of a whole channel, found in
// one pass: its range (for clipping) and running sums over fixed blocks,
// so the mean of any interval costs at most two part-blocks of reading.
type channelStats struct {
	lo, hi float32
	prefix []float64 // prefix[b] = sum of samples [0, b·statsBlock)
}

const statsBlock = 256 // a multiple of four (blockStats)

func newChannelStats(ctx context.Context, x []float32) (*channelStats, error) {
	nb := len(x) / statsBlock
	st := &channelStats{prefix: make([]float64, nb+1)}
	w := workers()
	los := make([]float32, w)
	his := make([]float32, w)
	var wg sync.WaitGroup
	chunk := (nb + w - 1) / w
	for k := 0; k < w; k++ {
		wg.Add(1)
		go func(k int) {
			defer wg.Done()
			lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
			a, b := k*chunk, min((k+1)*chunk, nb)
			if k == w-1 {
				// The tail after the last whole block counts for the range.
				for _, v := range x[nb*statsBlock:] {
					lo, hi = min(lo, v), max(hi, v)
				}
			}
			for blk := a; blk < b; blk++ {
				if blk%4096 == 0 && ctx.Err() != nil {
					return
				}
				var s float64
				s, lo, hi = blockStats(x[blk*statsBlock:(blk+1)*statsBlock], lo, hi)
				st.prefix[blk+1] = s
			}
			los[k], his[k] = lo, hi
		}(k)
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	st.lo, st.hi = los[0], his[0]
	for k := 1; k < w; k++ {
		st.lo, st.hi = min(st.lo, los[k]), max(st.hi, his[k])
	}
	for b := 1; b <= nb; b++ {
		st.prefix[b] += st.prefix[b-1]
	}
	return st, nil
}

// blockStats returns the sum of the samples of one block (a multiple of
// four long), and lo and hi widened to their range. Four lanes, each with
// its own sum, minimum and maximum, keep the processor's adders busy
// instead of waiting on one chain; the sums are kept in float64. The range
// is found with plain comparisons, which cost less than the built-in min
// and max (those handle NaN and signed zeros on every call); a plain
// comparison passes over a NaN, so a block whose sum comes out NaN (a NaN
// sample, or +Inf and −Inf together) is ranged again with the built-ins,
// and a NaN sample makes the range NaN as before (TestChannelStatsNaN).
func blockStats(x []float32, lo, hi float32) (float64, float32, float32) {
	var s0, s1, s2, s3 float64
	lo0, lo1, lo2, lo3 := lo, lo, lo, lo
	hi0, hi1, hi2, hi3 := hi, hi, hi, hi
	for i := 0; i+3 < len(x); i += 4 {
		v := x[i : i+4 : i+4]
		a, b, c, d := v[0], v[1], v[2], v[3]
		s0 += float64(a)
		s1 += float64(b)
		s2 += float64(c)
		s3 += float64(d)
		if a < lo0 {
			lo0 = a
		}
		if a > hi0 {
			hi0 = a
		}
		if b < lo1 {
			lo1 = b
		}
		if b > hi1 {
			hi1 = b
		}
		if c < lo2 {
			lo2 = c
		}
		if c > hi2 {
			hi2 = c
		}
		if d < lo3 {
			lo3 = d
		}
		if d > hi3 {
			hi3 = d
		}
	}
	s := (s0 + s1) + (s2 + s3)
	if s != s { // NaN
		lo, hi = blockRangeNaN(x, lo, hi)
		return s, lo, hi
	}
	return s, min(lo0, lo1, lo2, lo3), max(hi0, hi1, hi2, hi3)
}

// blockRangeNaN is blockStats' range of a block with the built-in min and
// max, which make it NaN when a sample is NaN.
func blockRangeNaN(x []float32, lo, hi float32) (float32, float32) {
	for _, v := range x {
		lo, hi = min(lo, v), max(hi, v)
	}
	return lo, hi
}

// sum returns the sum of x[a:b].
func (st *channelStats) sum(x []float32, a, b int) float64 {
	ba := (a + statsBlock - 1) / statsBlock // first whole block
	bb := b / statsBlock                    // end of the whole blocks
	if ba >= bb {
		s := 0.0
		for _, v := range x[a:b] {
			s += float64(v)
		}
		return s
	}
	s := st.prefix[bb] - st.prefix[ba]
	for _, v := range x[a : ba*statsBlock] {
		s += float64(v)
	}
	for _, v := range x[bb*statsBlock : b] {
		s += float64(v)
	}
	return s
}

// baselineLines sets each line's baseline from the beam-off intervals
// before and after it: the mean of the middle 80 % of each interval, as a
// straight line between the interval centres, so slow drift and the droop
// of an AC-coupled input are followed across the line.
func baselineLines(ctx context.Context, det []float32, st *channelStats, lines []placedLine) error {
	n := len(det)
	if len(lines) == 0 {
		return nil
	}
	typ := typicalBeamOff(lines)
	iv := make([]interval, len(lines)+1)
	for i := range iv {
		switch {
		case i == 0:
			iv[i] = beamOff(lines[0].first-typ, lines[0].first, n)
		case i == len(lines):
			iv[i] = beamOff(lines[i-1].last, lines[i-1].last+typ, n)
		default:
			iv[i] = beamOff(lines[i-1].last, lines[i].first, n)
		}
	}
	means := make([]float64, len(iv))
	valid := make([]bool, len(iv))
	// Each mean is read on its own, so the workers' shares give the
	// values one worker would.
	forSpans(len(iv), 256, func(a, b int) {
		for i := a; i < b; i++ {
			if (i-a)%4096 == 0 && ctx.Err() != nil {
				return
			}
			means[i], valid[i] = iv[i].mean(det, st)
		}
	})
	if err := ctx.Err(); err != nil {
		return err
	}
	// Fill empty intervals from their neighbours.
	last := math.NaN()
	for i := range means {
		if valid[i] {
			last = means[i]
		} else if !math.IsNaN(last) {
			means[i] = last
			valid[i] = true
		}
	}
	for i := len(means) - 1; i >= 0; i-- {
		if valid[i] {
			last = means[i]
		} else {
			means[i] = last
		}
	}
	for i := range lines {
		lines[i].setBaseline(iv[i], iv[i+1], means[i], means[i+1])
	}
	return nil
}

// typicalBeamOff is the median beam-off length between the first
// measureLines lines, samples: the interval measured before the first line
// and after the last.
func typicalBeamOff(lines []placedLine) int {
	var gaps []float64
	for i := 1; i < min(len(lines), measureLines+1); i++ {
		if g := lines[i].first - lines[i-1].last; g > 0 {
			gaps = append(gaps, float64(g))
		}
	}
	if len(gaps) == 0 {
		return 0
	}
	return int(median(gaps))
}

// interval is the part of a beam-off stretch whose mean is a baseline,
// samples [a, b).
type interval struct{ a, b int }

// beamOff is the middle 80 % of the beam-off stretch [a, b), cut to the n
// samples of the capture.
func beamOff(a, b, n int) interval {
	a, b = max(a, 0), min(b, n)
	m := (b - a) / 10
	return interval{a + m, b - m}
}

// mean is the mean of det over the interval, and whether it has samples.
func (v interval) mean(det []float32, st *channelStats) (float64, bool) {
	if v.b > v.a {
		return st.sum(det, v.a, v.b) / float64(v.b-v.a), true
	}
	return 0, false
}

// setBaseline sets the line's baseline to the straight line between the
// means m0 and m1 of the intervals before and after it, at their centres.
func (l *placedLine) setBaseline(before, after interval, m0, m1 float64) {
	c0 := float64(before.a+before.b) / 2
	c1 := float64(after.a+after.b) / 2
	slope := 0.0
	if c1 > c0 {
		slope = (m1 - m0) / (c1 - c0)
	}
	l.base0 = m0 + slope*(float64(l.first)-c0)
	l.baseSlope = slope
	l.baseFirst, l.baseLast = before.a, before.b
}

// gridStats is what gridding found beside the pixels.
type gridStats struct {
	clippedLines int
	gapRows      int // rows inside the frame left without data after filling
	covered      int
}

// gridInput is everything one frame is made from.
type gridInput struct {
	det []float32
	// recorded, when not nil, is the detector as recorded, for the
	// clipping test, when det is a corrected copy (AC coupling undone).
	recorded      []float32
	lines         []placedLine // the lines of this frame
	sweep         *sweepMap
	rows          *rowsResult
	pitch         float64
	invert        bool
	fill          int
	maxGapMM      float64 // widest gap between lines filled down a column
	clipHi        float32
	clipLo        float32 // -Inf when the low end cannot clip
	yTop, yBottom float64 // frame extent in y, mm
	// edge, when not nil, is the detector's step response: the first
	// samples of each line are divided by it.
	edge *edgeResponse
	// clips, when not nil, answers the clipping test of each line in
	// place of a scan of its samples.
	clips *clipTable
	// progress, when not nil, gets the fraction of lines done; it is
	// called from one goroutine at a time.
	progress func(fraction float64)
}

// frameSize is the number of columns and rows of the grid over the sweep's
// x extent and the y extent yTop…yBottom at pitch p, in floating point so
// an absurd extent cannot wrap round when converted. The rows lie on the
// lattice of rowLattice.
func frameSize(sweep *sweepMap, yTop, yBottom, p float64) (cols, rows float64) {
	top, bottom := rowLattice(yTop, yBottom, p)
	return math.Ceil((sweep.xMax-sweep.xMin)/p-1e-9) + 1, top - bottom + 1
}

// rowLattice returns the lattice numbers of the first and last row of a
// frame over the y extent yTop…yBottom: row centres lie at whole multiples
// of the pitch (y = k·p), so frames of one pitch share their pixel centres
// whatever their extent, and an image that grows while it is recorded
// keeps the pixels it has (docs/pipeline.md, "Live").
func rowLattice(yTop, yBottom, p float64) (top, bottom float64) {
	return math.Ceil(yTop/p - 1e-9), math.Floor(yBottom/p + 1e-9)
}

// maxResultPixels bounds the pixels of all the frames of one build: each
// keeps 5 bytes a pixel (value and coverage), and a caller's copy as much
// again, so 64 M pixels hold about 640 MB.
const maxResultPixels = 4 * maxPixels

// checkResultSize refuses, before any frame is gridded, a build whose
// frames together would not fit: rows.strokes split makes one frame per
// stroke, and a hand scan of many strokes at a fine pitch adds up.
func checkResultSize(r recipe.Recipe, sweep *sweepMap, extents [][2]float64) error {
	total, largest := 0.0, 0.0
	for _, e := range extents {
		cols, rows := frameSize(sweep, e[0], e[1], r.Image.PitchMM)
		px := cols * rows
		total += px
		largest = math.Max(largest, px)
	}
	if total <= maxResultPixels { // NaN fails too
		return nil
	}
	const bytesPerPixel = 5
	return fmt.Errorf("the build would make %d frames (rows.strokes %s) of up to %s pixels, %s pixels in all (about %s): more than the %s pixels (%s) one build holds; raise image.pitch_mm, or use rows.strokes merge or first",
		len(extents), r.Rows.Strokes, strictjson.Count(int(math.Min(largest, 1e15))), strictjson.Count(int(math.Min(total, 1e15))),
		byteText(total*bytesPerPixel), strictjson.Count(maxResultPixels), byteText(maxResultPixels*bytesPerPixel))
}

// byteText prints a size in MB or GB.
func byteText(b float64) string {
	if b >= 1e9 {
		return fmt.Sprintf("%.3g GB", b/1e9)
	}
	return fmt.Sprintf("%.3g MB", b/1e6)
}

// gridFrame accumulates every beam-on sample of the lines into the frame
// with a bilinear kernel, divides by the weight, marks coverage and fills
// small gaps.
func gridFrame(ctx context.Context, in gridInput) (*Frame, gridStats, []bool, error) {
	var st gridStats
	g, err := layoutFrame(in)
	if err != nil {
		return nil, st, nil, err
	}
	in.yTop = g.yTop
	accs, clipped, ties, err := accumulateLines(ctx, in, g)
	defer func() {
		for _, a := range accs {
			putAccumulator(a)
		}
	}()
	if err != nil {
		return nil, st, nil, err
	}
	f := frameFromSums(g, in.pitch, accs)
	// Down a column, rows between two lines at most maxGapMM apart are
	// interpolated between them: covered pixel centres N+1 pitches apart
	// hold N empty rows.
	down := max(in.fill, int(math.Floor(in.maxGapMM/in.pitch+1e-9))-1)
	fillGaps(f, down, in.fill)
	st.covered, st.gapRows = coverCounts(f)
	st.clippedLines = clippedLines(in.lines, clipped, ties)
	return f, st, clipped, nil
}

// layoutFrame sizes the frame's grid and places it: it covers the x
// extent centred on it, so a reversed sweep gives the exact mirror image,
// and the y extent on the row lattice. The size is checked in floating
// point before any conversion, so an absurd extent cannot wrap round to a
// negative or small int.
func layoutFrame(in gridInput) (*frameGrid, error) {
	p := in.pitch
	colsF, rowsF := frameSize(in.sweep, in.yTop, in.yBottom, p)
	if !(colsF*rowsF <= maxPixels) {
		return nil, fmt.Errorf("the frame would be %.3g × %.3g pixels (%.4g mm × %.4g mm at image.pitch_mm %g), more than %d pixels: raise pitch_mm or check the sweep and rows keys",
			colsF, rowsF, in.sweep.xMax-in.sweep.xMin, in.yTop-in.yBottom, p, maxPixels)
	}
	cols, rows := int(colsF), int(rowsF)
	x0 := (in.sweep.xMin+in.sweep.xMax)/2 - float64(cols-1)/2*p
	top, _ := rowLattice(in.yTop, in.yBottom, p)
	return newFrameGrid(in.sweep, cols, rows, x0, top*p, p), nil
}

// accumulateLines splats the lines into one accumulator per worker (each
// worker takes a fixed share of the lines in order, so the sums do not
// depend on scheduling) and returns the accumulators, and for each line
// whether it clipped and how many of its samples repeated the one before.
// The accumulators come from a pool: give them back with putAccumulator.
func accumulateLines(ctx context.Context, in gridInput, g *frameGrid) (accs [][]float64, clipped []bool, ties []int, err error) {
	w := min(workers(), max(1, len(in.lines)/64))
	if g.cols*g.rows > maxSplitPixels {
		w = 1
	}
	accs = make([][]float64, w)
	clipped = make([]bool, len(in.lines))
	ties = make([]int, len(in.lines))
	var wg sync.WaitGroup
	var progMu sync.Mutex
	done := 0
	report := func(n int) {
		if in.progress == nil {
			return
		}
		progMu.Lock()
		done += n
		in.progress(float64(done) / float64(len(in.lines)))
		progMu.Unlock()
	}
	chunk := (len(in.lines) + w - 1) / w
	for k := 0; k < w; k++ {
		a, b := k*chunk, min((k+1)*chunk, len(in.lines))
		wg.Add(1)
		go func(k, a, b int) {
			defer wg.Done()
			// Each worker clears its own accumulator, in parallel.
			acc := getAccumulator(2 * g.cols * g.rows)
			accs[k] = acc
			for i := a; i < b; i++ {
				if (i-a)%64 == 0 {
					if ctx.Err() != nil {
						return
					}
					if i > a {
						report(64)
					}
				}
				clipped[i], ties[i] = splatLine(&in, g, &in.lines[i], acc)
			}
		}(k, a, b)
	}
	wg.Wait()
	return accs, clipped, ties, ctx.Err()
}

// accPool keeps accumulators between builds, so a re-grid (a delay or
// pitch moved in the window) does not allocate and collect megabytes each
// time.
var accPool sync.Pool

// getAccumulator returns a zeroed accumulator of n values.
func getAccumulator(n int) []float64 {
	if p, ok := accPool.Get().(*[]float64); ok && cap(*p) >= n {
		a := (*p)[:n]
		clear(a)
		return a
	}
	return make([]float64, n)
}

// putAccumulator gives an accumulator back to the pool (nil is ignored).
func putAccumulator(a []float64) {
	if a != nil {
		accPool.Put(&a)
	}
}

// frameFromSums adds up the workers' accumulators and makes the frame:
// each pixel with enough weight gets the weighted mean of its samples.
func frameFromSums(g *frameGrid, p float64, accs [][]float64) *Frame {
	npx := g.cols * g.rows
	f := &Frame{
		Width: g.cols, Height: g.rows,
		Pix:      make([]float32, npx),
		Covered:  make([]bool, npx),
		PitchXMM: p, PitchYMM: p,
		OriginXMM: g.x0, OriginYMM: g.yTop,
	}
	first, rest := accs[0], accs[1:]
	// Each pixel is summed on its own: the workers' shares of the pixels
	// give the values one worker would.
	forSpans(npx, 1<<15, func(a, b int) {
		for i := a; i < b; i++ {
			sum, wt := first[2*i], first[2*i+1]
			for _, acc := range rest {
				sum += acc[2*i]
				wt += acc[2*i+1]
			}
			if wt >= minCoverWeight {
				f.Pix[i] = float32(sum / wt)
				f.Covered[i] = true
			}
		}
	})
	return f
}

// coverCounts returns the covered pixels of the frame and its rows with
// gaps: under half the columns that a typical row covers.
func coverCounts(f *Frame) (covered, gapRows int) {
	perRow := make([]int, f.Height)
	for r := range perRow {
		n := 0 // a local count: no store and load of perRow[r] per pixel
		for _, c := range f.Covered[r*f.Width : (r+1)*f.Width] {
			if c {
				n++
			}
		}
		perRow[r] = n
		covered += n
	}
	typical := medianInts(perRow)
	for _, n := range perRow {
		if float64(n) < 0.5*float64(typical) {
			gapRows++
		}
	}
	return covered, gapRows
}

// clippedLines counts the lines that clipped. Clipping is only told apart
// from a clean flat signal when the detector is noisy: under 20 % of
// neighbouring samples equal; otherwise no line counts.
func clippedLines(lines []placedLine, clipped []bool, ties []int) int {
	tieCount, samples := 0, 0
	for i, l := range lines {
		tieCount += ties[i]
		samples += l.last - l.first
	}
	if float64(tieCount) >= 0.2*float64(samples) {
		return 0
	}
	n := 0
	for _, c := range clipped {
		if c {
			n++
		}
	}
	return n
}

func medianInts(v []int) int {
	s := slices.Clone(v)
	slices.Sort(s)
	if len(s) == 0 {
		return 0
	}
	return s[len(s)/2]
}

// frameGrid is the pixel grid of one frame and what putting a sample on
// it needs, worked out once per frame so that each sample costs a table
// look-up and a few multiplications. Grid coordinates count pixels: column
// (x − x0)/pitch and row (yTop − y)/pitch, pixel centres at whole numbers.
type frameGrid struct {
	cols, rows int
	x0, yTop   float64 // x of column 0 and y of row 0, mm
	inv        float64 // 1 / pitch
	sweep      *sweepMap
	// col holds, for entry i of the sweep's table, the column of its x at
	// col[2i] and the step to the next entry's column at col[2i+1].
	col []float64
	// steps holds the same per table interval i < lutSize−1, the step
	// scaled by 2⁻³² (exact, a power of two) for tablePos's fraction: the
	// row-by-row splat reads an entry with one index check.
	steps *[lutSize - 1][2]float64
	// insideX is true when every x of the kept sweep lies at least a
	// pixel inside the grid's columns.
	insideX bool
}

func newFrameGrid(m *sweepMap, cols, rows int, x0, yTop, pitch float64) *frameGrid {
	g := &frameGrid{cols: cols, rows: rows, x0: x0, yTop: yTop, inv: 1 / pitch, sweep: m}
	g.insideX = (m.xMin-x0)*g.inv >= 0 && (m.xMax-x0)*g.inv < float64(cols-1)
	if len(m.lut) == lutSize {
		t := m.columns.Load()
		if t == nil || t.x0 != x0 || t.inv != g.inv {
			t = newColumnTables(m, x0, g.inv)
			m.columns.Store(t)
		}
		g.col, g.steps = t.col, t.steps
	}
	return g
}

// columnTables are a grid's column tables for a sweep; never written once
// made, so grids share them.
type columnTables struct {
	x0, inv float64
	col     []float64
	steps   *[lutSize - 1][2]float64
}

func newColumnTables(m *sweepMap, x0, inv float64) *columnTables {
	t := &columnTables{x0: x0, inv: inv, col: make([]float64, 2*lutSize), steps: new([lutSize - 1][2]float64)}
	for i, x := range m.lut {
		t.col[2*i] = (x - x0) * inv
	}
	for i := 0; i+1 < lutSize; i++ {
		t.col[2*i+1] = t.col[2*i+2] - t.col[2*i]
		t.steps[i] = [2]float64{t.col[2*i], t.col[2*i+1] * (1.0 / tableOne)}
	}
	return t
}

// colAt is the column of table position pu (the sweep's x, interpolated
// in its table and clamped to it, as sweepMap.x does).
func (g *frameGrid) colAt(pu float64) float64 {
	if pu <= 0 {
		return g.col[0]
	}
	iu := int(pu)
	if iu >= lutSize-1 {
		return g.col[2*(lutSize-1)]
	}
	return g.col[2*iu] + (pu-float64(iu))*g.col[2*iu+1]
}

// lineOnGrid maps sample k of a line (counted from its first sample) onto
// the grid: table position pu0 + dpu·k, row v0 + dv·k (the cross-scan
// position taken as linear over the line), and the baseline base0 +
// slope·k.
type lineOnGrid struct {
	pu0, dpu     float64
	v0, dv       float64
	base0, slope float64
}

func (g *frameGrid) line(rows *rowsResult, l *placedLine) lineOnGrid {
	first, last := l.first, l.last
	y0 := rows.at(float64(first))
	y1 := rows.at(float64(last - 1))
	span := float64(max(last-1-first, 1))
	m := g.sweep
	return lineOnGrid{
		pu0: (l.u0 - m.uMin) * m.scale, dpu: l.du * m.scale,
		v0: (g.yTop - y0) * g.inv, dv: -(y1 - y0) / span * g.inv,
		base0: l.base0, slope: l.baseSlope,
	}
}

// splatLine adds one line's samples to the accumulator acc (value sum and
// weight of each pixel, interleaved) and reports whether the detector sat
// at its extreme for three samples in a row (clipping), and how many
// samples away from the extremes repeated the one before (a noise-free or
// coarsely quantised signal repeats often, and then a flat top says
// nothing about clipping). It touches only acc, so lines can be splatted
// one at a time as they arrive.
func splatLine(in *gridInput, g *frameGrid, l *placedLine, acc []float64) (clipped bool, ties int) {
	clipped, ties = clipLine(in, l)
	splatSpan(in, g, l, acc, 0, l.last-l.first)
	return clipped, ties
}

// clipLine is splatLine's clipping test and count of repeated samples.
func clipLine(in *gridInput, l *placedLine) (clipped bool, ties int) {
	if in.clips != nil {
		return in.clips.span(l.first, l.last)
	}
	det := in.det[l.first:l.last]
	clipTest := det
	if in.recorded != nil {
		clipTest = in.recorded[l.first:l.last]
	}
	return clipScan(clipTest, det, in.clipHi, in.clipLo)
}

// splatSpan adds samples [from, to) of the line (counted from l.first) to
// acc as splatLine adds them, so splatting the spans of a partition of a
// line adds what splatLine adds, to float rounding.
func splatSpan(in *gridInput, g *frameGrid, l *placedLine, acc []float64, from, to int) {
	det := in.det[l.first:l.last]
	n := len(det)
	from, to = max(from, 0), min(to, n)
	if from >= to {
		return
	}
	lg := g.line(in.rows, l)
	sign := 1.0
	if in.invert {
		sign = -1
	}
	// Samples inside the detector's rise [0, a) and fall [b, n) are
	// corrected by its step response one by one; the rest go in a run.
	a, b := 0, n
	if in.edge != nil {
		a = min(in.edge.rise, n)
		b = max(n-in.edge.fall, a)
		lead := float64(l.first) - l.start
		for _, r := range [2][2]int{{from, min(a, to)}, {max(b, from), to}} {
			for k := r[0]; k < r[1]; k++ {
				fk := float64(k)
				gain := 1.0
				if k < in.edge.rise {
					gain = in.edge.startGain(lead + fk)
				}
				if k >= n-in.edge.fall {
					gain *= in.edge.endGain(lead + fk - (l.end - l.start))
				}
				if gain < minEdgeResponse {
					continue // shows too little of the scene
				}
				value := sign * (float64(det[k]) - (lg.base0 + lg.slope*fk)) / gain
				g.splatPoint(acc, g.colAt(lg.pu0+lg.dpu*fk), lg.v0+lg.dv*fk, value)
			}
		}
	}
	lo, hi := max(a, from), min(b, to)
	if lo >= hi {
		return
	}
	// Lines whose every sample lands at least one pixel inside the grid
	// take the fast path without bounds checks (most lines do).
	vEnd := lg.v0 + lg.dv*float64(n)
	if g.insideX && math.Min(lg.v0, vEnd) >= 0 && math.Max(lg.v0, vEnd) < float64(g.rows-1) {
		g.splatRun(acc, det[:hi], lo, lg, sign)
		return
	}
	for k := lo; k < hi; k++ {
		fk := float64(k)
		value := sign * (float64(det[k]) - (lg.base0 + lg.slope*fk))
		g.splatPoint(acc, g.colAt(lg.pu0+lg.dpu*fk), lg.v0+lg.dv*fk, value)
	}
}

// clipScan reports whether test sits at or beyond hi or lo for three
// samples in a row, and counts the samples of det, away from those
// extremes, that equal the sample before.
func clipScan(test, det []float32, hi, lo float32) (clipped bool, ties int) {
	det = det[:len(test)]
	run := 0
	prev := float32(math.NaN())
	for k, c := range test {
		raw := det[k]
		if c >= hi || c <= lo {
			run++
			clipped = clipped || run >= 3
		} else {
			run = 0
			ties += b2i(raw == prev) // no branch: ties come at random
		}
		prev = raw
	}
	return clipped, ties
}

// b2i is 1 for true and 0 for false.
func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// splatPoint adds one sample at grid position (cu, cv) to the four pixels
// round it, leaving out those outside the grid.
func (g *frameGrid) splatPoint(acc []float64, cu, cv, value float64) {
	if cu <= -1 || cv <= -1 {
		return
	}
	i := int(math.Floor(cu))
	j := int(math.Floor(cv))
	cols, rows := g.cols, g.rows
	if i >= cols || j >= rows {
		return
	}
	fx := cu - float64(i)
	fy := cv - float64(j)
	add := func(i, j int, w float64) {
		if i >= 0 && j >= 0 && i < cols && j < rows {
			p := 2 * (j*cols + i)
			acc[p] += w * value
			acc[p+1] += w
		}
	}
	add(i, j, (1-fx)*(1-fy))
	add(i+1, j, fx*(1-fy))
	add(i, j+1, (1-fx)*fy)
	add(i+1, j+1, fx*fy)
}

// splatRun adds samples k0… of det (a line whose samples all land at
// least a pixel inside the grid) to the accumulator. Consecutive samples
// mostly fall in the same cell (a few samples per pixel along the sweep),
// so the run keeps the moments of the samples in the current cell in
// registers and hands them to the cell's four pixels when it moves on: a
// pixel's bilinear weight is a polynomial in the sample's offset (fx, fy)
// in the cell, so sums of 1, fx, fy and fx·fy, and of the value times each,
// give the four pixels' sums. The polarity is applied to the sums.
//
// The samples whose table position lies inside the sweep's table (all but
// the one or two at each end of a line that runs to the table's ends) go
// row by row (rowCells.splat); the rest go through splatClampedRun, which clamps
// to the table as sweepMap.x does.
func (g *frameGrid) splatRun(acc []float64, det []float32, k0 int, lg lineOnGrid, sign float64) {
	n := len(det)
	if len(g.col) != 2*lutSize {
		g.splatClampedRun(acc, det, k0, lg, sign)
		return
	}
	p := newTablePos(lg)
	a, b := k0, n
	for a < b && !p.inside(a) {
		a++
	}
	for b > a && !p.inside(b-1) {
		b--
	}
	if b-a < 16 {
		g.splatClampedRun(acc, det, k0, lg, sign)
		return
	}
	g.splatClampedRun(acc, det[:a], k0, lg, sign)
	g.splatClampedRun(acc, det, b, lg, sign)
	for k := a; k < b; {
		j := lg.rowOf(k)
		e := lg.rowEnd(k, b, j)
		c := rowCells{acc: acc, base: j * g.cols, cols: g.cols, fy0: lg.v0 - float64(j), dv: lg.dv, sign: sign}
		c.splat(det[:e], k, p, lg.base0, lg.slope, g.steps)
		k = e
	}
}

// tablePos is the table position pu0 + dpu·k of a line's samples in
// fixed point, 32 fractional bits: stepping it is an integer addition, and
// its whole and fractional parts come without a float-to-int conversion.
// Its rounding (2⁻³³ of a table step per sample) moves a sample by less
// than 10⁻⁸ of a pixel.
type tablePos struct{ p0, d int64 }

const tableOne = 1 << 32

// The row-by-row splat masks a table index with lutSize−2, which needs
// lutSize−1 to be a power of two; this fails to compile otherwise.
var _ = [1]struct{}{}[(lutSize-1)&(lutSize-2)]

func newTablePos(lg lineOnGrid) tablePos {
	return tablePos{p0: int64(math.Round(lg.pu0 * tableOne)), d: int64(math.Round(lg.dpu * tableOne))}
}

// inside reports whether sample k lies strictly inside the table, so that
// it and the entry after it can be read without clamping. Positions too
// far out for the fixed point are outside.
func (p tablePos) inside(k int) bool {
	at := float64(p.p0) + float64(p.d)*float64(k)
	if !(at > 0 && at < float64((lutSize-1)<<32)) {
		return false
	}
	q := p.p0 + int64(k)*p.d
	return q > 0 && q < (lutSize-1)<<32
}

// rowOf is the grid row (cell) of sample k, as splatClampedRun finds it.
func (lg lineOnGrid) rowOf(k int) int { return int(lg.v0 + lg.dv*float64(k)) }

// rowEnd is the first sample after k, at most n, that is not in row j
// (k's row): the row is linear in k, so the crossing is computed and then
// checked against rowOf, which the samples on either side must agree with.
func (lg lineOnGrid) rowEnd(k, n, j int) int {
	if lg.dv == 0 {
		return n
	}
	edge := float64(j + 1) // the row ends where v reaches j+1…
	if lg.dv < 0 {
		edge = float64(j) // …or, going up, falls below j
	}
	e := n
	if c := math.Ceil((edge - lg.v0) / lg.dv); c < float64(n) {
		e = max(int(c), k+1)
	}
	for e > k+1 && lg.rowOf(e-1) != j {
		e--
	}
	for e < n && lg.rowOf(e) == j {
		e++
	}
	return e
}

// rowCells hands the moments of a run of samples in one grid row to the
// accumulator, cell by cell. Within the row the offset fy = fy0 + dv·k is
// linear in the sample number k, so the sums over fy follow from sums over
// k, and the run keeps only the sums that involve fx and the value.
type rowCells struct {
	acc        []float64
	base, cols int // the row's first cell, and the grid's columns
	fy0, dv    float64
	sign       float64
}

// splat adds samples k0… of det (all in the row, all inside the table) to
// the accumulator.
func (c *rowCells) splat(det []float32, k0 int, p tablePos, base0, slope float64, steps *[lutSize - 1][2]float64) {
	cur, first := -1, k0
	var sx, sxk, v, vk, vx, vxk float64
	q := p.p0 + int64(k0)*p.d
	fk := float64(k0)
	for k := k0; k < len(det); k++ {
		// The column from the table (frameGrid.colAt, inlined).
		// Inside the table q>>32 < lutSize−1, a power of two, so the
		// mask changes nothing and spares the index check.
		e := &steps[int(q>>32)&(lutSize-2)]
		cu := e[0] + float64(q&(tableOne-1))*e[1]
		i := int(cu)
		fx := cu - float64(i)
		if i != cur {
			c.add(cur, first, k, sx, sxk, v, vk, vx, vxk)
			cur, first = i, k
			sx, sxk, v, vk, vx, vxk = 0, 0, 0, 0, 0, 0
		}
		value := float64(det[k]) - (base0 + slope*fk)
		sx += fx
		sxk += fx * fk
		v += value
		vk += value * fk
		vfx := value * fx
		vx += vfx
		vxk += vfx * fk
		q += p.d
		fk++
	}
	c.add(cur, first, len(det), sx, sxk, v, vk, vx, vxk)
}

// add hands cell i of the row, samples first…last−1, to addCell: sums of
// fx and fx·k, of the value and the value times k, fx and fx·k. A negative
// i is no cell.
func (c *rowCells) add(i, first, last int, sx, sxk, v, vk, vx, vxk float64) {
	if i < 0 {
		return
	}
	n := float64(last - first)
	sk := (float64(first) + float64(last-1)) * n / 2 // Σk, closed form
	sy := n*c.fy0 + c.dv*sk
	sxy := c.fy0*sx + c.dv*sxk
	vy := c.fy0*v + c.dv*vk
	vxy := c.fy0*vx + c.dv*vxk
	addCell(c.acc, c.base+i, c.cols, c.sign, n, sx, sy, sxy, v, vx, vy, vxy)
}

// splatClampedRun is splatRun for any samples of such a line, the table
// position clamped to the table's ends, the row found for each sample.
func (g *frameGrid) splatClampedRun(acc []float64, det []float32, k0 int, lg lineOnGrid, sign float64) {
	col, cols := g.col, g.cols
	const top = 2 * (lutSize - 1)
	cur := -1
	var n, sx, sy, sxy, v, vx, vy, vxy float64
	for k := k0; k < len(det); k++ {
		fk := float64(k)
		value := float64(det[k]) - (lg.base0 + lg.slope*fk)
		// The column from the table (frameGrid.colAt, inlined).
		pu := lg.pu0 + lg.dpu*fk
		var cu float64
		if pu <= 0 {
			cu = col[0]
		} else if iu := int(pu); iu >= lutSize-1 {
			cu = col[top]
		} else {
			cu = col[2*iu] + (pu-float64(iu))*col[2*iu+1]
		}
		cv := lg.v0 + lg.dv*fk
		i, j := int(cu), int(cv)
		fx, fy := cu-float64(i), cv-float64(j)
		if cell := j*cols + i; cell != cur {
			addCell(acc, cur, cols, sign, n, sx, sy, sxy, v, vx, vy, vxy)
			cur = cell
			n, sx, sy, sxy, v, vx, vy, vxy = 0, 0, 0, 0, 0, 0, 0, 0
		}
		fxy := fx * fy
		n++
		sx += fx
		sy += fy
		sxy += fxy
		v += value
		vx += value * fx
		vy += value * fy
		vxy += value * fxy
	}
	addCell(acc, cur, cols, sign, n, sx, sy, sxy, v, vx, vy, vxy)
}

// addCell adds the moments of the samples in cell (n samples; sums of fx,
// fy, fx·fy; sums of the value and of the value times fx, fy and fx·fy) to
// the cell's four pixels with the bilinear weights (1−fx)(1−fy),
// fx(1−fy), (1−fx)fy and fx·fy. A negative cell is no cell.
func addCell(acc []float64, cell, cols int, sign, n, sx, sy, sxy, v, vx, vy, vxy float64) {
	if cell < 0 {
		return
	}
	w10, w01 := sx-sxy, sy-sxy
	a10, a01 := vx-vxy, vy-vxy
	p := acc[2*cell : 2*cell+4]
	p[0] += sign * (v - vx - a01)
	p[1] += n - sx - w01
	p[2] += sign * a10
	p[3] += w10
	q := acc[2*(cell+cols) : 2*(cell+cols)+4]
	q[0] += sign * a01
	q[1] += w01
	q[2] += sign * vxy
	q[3] += sxy
}

// fillGaps fills runs of uncovered pixels that have covered pixels on both
// sides, first down each column (runs of at most down pixels), then along
// each row (at most along), by linear interpolation between the two ends.
// Wider holes stay no-data.
func fillGaps(f *Frame, down, along int) {
	// fill fills the runs of lines [from, to): line l starts at pixel
	// l·step, and its n pixels lie stride apart.
	fill := func(n, stride, step, maxRun, from, to int) {
		for line := from; line < to; line++ {
			base := line * step
			prev := -1
			for k := 0; k < n; k++ {
				i := base + k*stride
				if !f.Covered[i] {
					continue
				}
				if prev >= 0 && k-prev > 1 && k-prev-1 <= maxRun {
					a := f.Pix[base+prev*stride]
					b := f.Pix[i]
					for q := prev + 1; q < k; q++ {
						t := float32(q-prev) / float32(k-prev)
						j := base + q*stride
						f.Pix[j] = a + t*(b-a)
						f.Covered[j] = true
					}
				}
				prev = k
			}
		}
	}
	// Each column, then each row, is filled on its own, so the workers'
	// shares give what one worker would.
	if down > 0 {
		forSpans(f.Width, 64, func(from, to int) { fill(f.Height, f.Width, 1, down, from, to) })
	}
	if along > 0 {
		forSpans(f.Height, 64, func(from, to int) { fill(f.Width, 1, f.Width, along, from, to) })
	}
}
