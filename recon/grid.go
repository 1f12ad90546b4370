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

const statsBlock = 256

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
				var s float32
				for _, v := range x[blk*statsBlock : (blk+1)*statsBlock] {
					s += v
					lo, hi = min(lo, v), max(hi, v)
				}
				st.prefix[blk+1] = float64(s)
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
	// Typical beam-off length, for the intervals before the first line
	// and after the last.
	var gaps []float64
	for i := 1; i < len(lines); i++ {
		if g := lines[i].first - lines[i-1].last; g > 0 {
			gaps = append(gaps, float64(g))
		}
	}
	typ := 0
	if len(gaps) > 0 {
		typ = int(median(gaps))
	}
	type interval struct{ a, b int }
	iv := make([]interval, len(lines)+1)
	for i := range iv {
		var a, b int
		switch {
		case i == 0:
			a, b = lines[0].first-typ, lines[0].first
		case i == len(lines):
			a, b = lines[i-1].last, lines[i-1].last+typ
		default:
			a, b = lines[i-1].last, lines[i].first
		}
		a, b = max(a, 0), min(b, n)
		m := (b - a) / 10
		iv[i] = interval{a + m, b - m}
	}
	means := make([]float64, len(iv))
	valid := make([]bool, len(iv))
	for i, v := range iv {
		if i%4096 == 0 && ctx.Err() != nil {
			return ctx.Err()
		}
		if v.b > v.a {
			means[i] = st.sum(det, v.a, v.b) / float64(v.b-v.a)
			valid[i] = true
		}
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
		l := &lines[i]
		c0 := float64(iv[i].a+iv[i].b) / 2
		c1 := float64(iv[i+1].a+iv[i+1].b) / 2
		slope := 0.0
		if c1 > c0 {
			slope = (means[i+1] - means[i]) / (c1 - c0)
		}
		l.base0 = means[i] + slope*(float64(l.first)-c0)
		l.baseSlope = slope
		l.baseFirst, l.baseLast = iv[i].a, iv[i].b
	}
	return nil
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
	p := in.pitch
	// The grid covers the x extent centred on it, so a reversed sweep
	// gives the exact mirror image, and the y extent on the row lattice.
	// The size is checked in floating point before any conversion, so an
	// absurd extent cannot wrap round to a negative or small int.
	colsF, rowsF := frameSize(in.sweep, in.yTop, in.yBottom, p)
	if !(colsF*rowsF <= maxPixels) {
		return nil, st, nil, fmt.Errorf("the frame would be %.3g × %.3g pixels (%.4g mm × %.4g mm at image.pitch_mm %g), more than %d pixels: raise pitch_mm or check the sweep and rows keys",
			colsF, rowsF, in.sweep.xMax-in.sweep.xMin, in.yTop-in.yBottom, p, maxPixels)
	}
	cols, rows := int(colsF), int(rowsF)
	x0 := (in.sweep.xMin+in.sweep.xMax)/2 - float64(cols-1)/2*p
	top, _ := rowLattice(in.yTop, in.yBottom, p)
	in.yTop = top * p
	npx := cols * rows
	w := min(workers(), max(1, len(in.lines)/64))
	if npx > maxSplitPixels {
		w = 1
	}
	sums := make([][]float64, w)
	weights := make([][]float64, w)
	clipped := make([]bool, len(in.lines))
	ties := make([]int, len(in.lines))
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
		sums[k] = make([]float64, npx)
		weights[k] = make([]float64, npx)
		a, b := k*chunk, min((k+1)*chunk, len(in.lines))
		wg.Add(1)
		go func(sum, wt []float64, a, b int) {
			defer wg.Done()
			for i := a; i < b; i++ {
				if (i-a)%64 == 0 {
					if ctx.Err() != nil {
						return
					}
					if i > a {
						report(64)
					}
				}
				var t int
				clipped[i], t = splatLine(in, &in.lines[i], sum, wt, cols, rows, x0)
				ties[i] = t
			}
		}(sums[k], weights[k], a, b)
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, st, nil, err
	}
	sum, wt := sums[0], weights[0]
	for k := 1; k < w; k++ {
		for i := range sum {
			sum[i] += sums[k][i]
			wt[i] += weights[k][i]
		}
	}
	f := &Frame{
		Width: cols, Height: rows,
		Pix:      make([]float32, npx),
		Covered:  make([]bool, npx),
		PitchXMM: p, PitchYMM: p,
		OriginXMM: x0, OriginYMM: in.yTop,
	}
	for i := range sum {
		if wt[i] >= minCoverWeight {
			f.Pix[i] = float32(sum[i] / wt[i])
			f.Covered[i] = true
		}
	}
	// Down a column, rows between two lines at most maxGapMM apart are
	// interpolated between them: covered pixel centres N+1 pitches apart
	// hold N empty rows.
	down := max(in.fill, int(math.Floor(in.maxGapMM/p+1e-9))-1)
	fillGaps(f, down, in.fill)
	// Rows with gaps: inside the covered span of rows, under half the
	// columns that a typical row covers.
	perRow := make([]int, rows)
	for r := 0; r < rows; r++ {
		for c := 0; c < cols; c++ {
			if f.Covered[r*cols+c] {
				perRow[r]++
				st.covered++
			}
		}
	}
	typical := medianInts(perRow)
	for r := 0; r < rows; r++ {
		if float64(perRow[r]) < 0.5*float64(typical) {
			st.gapRows++
		}
	}
	// Clipping is only told apart from a clean flat signal when the
	// detector is noisy: under 20 % of neighbouring samples equal.
	tieCount, samples := 0, 0
	for i, l := range in.lines {
		tieCount += ties[i]
		samples += l.last - l.first
	}
	if float64(tieCount) < 0.2*float64(samples) {
		for _, c := range clipped {
			if c {
				st.clippedLines++
			}
		}
	}
	return f, st, clipped, nil
}

func medianInts(v []int) int {
	s := slices.Clone(v)
	slices.Sort(s)
	if len(s) == 0 {
		return 0
	}
	return s[len(s)/2]
}

// splatLine adds one line's samples to sum/wt and reports whether the
// detector sat at its extreme for three samples in a row (clipping), and
// how many samples away from the extremes repeated the one before (a
// noise-free or coarsely quantised signal repeats often, and then a flat
// top says nothing about clipping).
func splatLine(in gridInput, l *placedLine, sum, wt []float64, cols, rows int, x0 float64) (bool, int) {
	inv := 1 / in.pitch
	first, last := l.first, l.last
	y0 := in.rows.at(float64(first))
	y1 := in.rows.at(float64(last - 1))
	span := float64(max(last-1-first, 1))
	v0 := (in.yTop - y0) * inv
	dv := -(y1 - y0) / span * inv
	sign := 1.0
	if in.invert {
		sign = -1
	}
	m := in.sweep
	run, clipped := 0, false
	det := in.det[first:last]
	lut := m.lut
	uScale := m.scale
	uOff := (l.u0 - m.uMin) * uScale
	duS := l.du * uScale
	// Lines whose every sample lands at least one pixel inside the grid
	// take the fast path without bounds checks (most lines do).
	vEnd := v0 + dv*float64(len(det))
	fast := math.Min(v0, vEnd) >= 0 && math.Max(v0, vEnd) < float64(rows-1) &&
		(m.xMin-x0)*inv >= 0 && (m.xMax-x0)*inv < float64(cols-1)
	curCell := -1
	var a00, a10, a01, a11, b00, b10, b01, b11 float64
	flush := func() {
		if curCell < 0 {
			return
		}
		s := sum[curCell : curCell+cols+2]
		w := wt[curCell : curCell+cols+2]
		s[0] += a00
		s[1] += a10
		s[cols] += a01
		s[cols+1] += a11
		w[0] += b00
		w[1] += b10
		w[cols] += b01
		w[cols+1] += b11
		a00, a10, a01, a11, b00, b10, b01, b11 = 0, 0, 0, 0, 0, 0, 0, 0
	}
	riseSamples, fallFrom, lead := 0, last-first, 0.0
	if in.edge != nil {
		riseSamples, fallFrom, lead = in.edge.rise, last-first-in.edge.fall, float64(first)-l.start
	}
	ties := 0
	prev := float32(math.NaN())
	clipTest := det
	if in.recorded != nil {
		clipTest = in.recorded[first:last]
	}
	for k, raw := range det {
		if c := clipTest[k]; c >= in.clipHi || c <= in.clipLo {
			run++
			if run >= 3 {
				clipped = true
			}
		} else {
			run = 0
			if raw == prev {
				ties++
			}
		}
		prev = raw
		fk := float64(k)
		value := sign * (float64(raw) - (l.base0 + l.baseSlope*fk))
		if k < riseSamples || k >= fallFrom {
			// Inside the detector's rise or fall: correct by its step
			// response, or leave out a sample that shows too little.
			g := 1.0
			if k < riseSamples {
				g = in.edge.startGain(lead + fk)
			}
			if k >= fallFrom {
				g *= in.edge.endGain(lead + fk - (l.end - l.start))
			}
			if g < minEdgeResponse {
				continue
			}
			value /= g
		}
		// x from the law table (sweepMap.x, inlined).
		pu := uOff + duS*fk
		var x float64
		if pu <= 0 {
			x = lut[0]
		} else if iu := int(pu); iu >= lutSize-1 {
			x = lut[lutSize-1]
		} else {
			fu := pu - float64(iu)
			x = lut[iu] + fu*(lut[iu+1]-lut[iu])
		}
		cu := (x - x0) * inv
		cv := v0 + dv*fk
		if fast {
			i, j := int(cu), int(cv)
			fx, fy := cu-float64(i), cv-float64(j)
			cell := j*cols + i
			if cell != curCell {
				flush()
				curCell = cell
			}
			// Consecutive samples mostly fall in the same cell (a few
			// samples per pixel along the sweep): sum there in registers.
			w00 := (1 - fx) * (1 - fy)
			w10 := fx * (1 - fy)
			w01 := (1 - fx) * fy
			w11 := fx * fy
			a00 += w00 * value
			a10 += w10 * value
			a01 += w01 * value
			a11 += w11 * value
			b00 += w00
			b10 += w10
			b01 += w01
			b11 += w11
			continue
		}
		if cu <= -1 || cv <= -1 {
			continue
		}
		i := int(math.Floor(cu))
		j := int(math.Floor(cv))
		if i >= cols || j >= rows {
			continue
		}
		fx := cu - float64(i)
		fy := cv - float64(j)
		w00 := (1 - fx) * (1 - fy)
		w10 := fx * (1 - fy)
		w01 := (1 - fx) * fy
		w11 := fx * fy
		base := j*cols + i
		if j >= 0 {
			if i >= 0 {
				sum[base] += w00 * value
				wt[base] += w00
			}
			if i+1 < cols {
				sum[base+1] += w10 * value
				wt[base+1] += w10
			}
		}
		if j+1 < rows {
			if i >= 0 {
				sum[base+cols] += w01 * value
				wt[base+cols] += w01
			}
			if i+1 < cols {
				sum[base+cols+1] += w11 * value
				wt[base+cols+1] += w11
			}
		}
	}
	flush()
	return clipped, ties
}

// fillGaps fills runs of uncovered pixels that have covered pixels on both
// sides, first down each column (runs of at most down pixels), then along
// each row (at most along), by linear interpolation between the two ends.
// Wider holes stay no-data.
func fillGaps(f *Frame, down, along int) {
	fillRuns := func(n, stride, count, step, maxRun int) {
		if maxRun <= 0 {
			return
		}
		for line := 0; line < count; line++ {
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
	fillRuns(f.Height, f.Width, f.Width, 1, down)  // down each column
	fillRuns(f.Width, 1, f.Height, f.Width, along) // along each row
}
