package recon

import (
	"math"

	"spotloom/recon/recipe"
)

// liveLevels is a rows source's share of a live build: the level of each
// block of its channel as the samples come in (rowSource.liveLevels).
type liveLevels interface {
	// blockLen is the samples in one block.
	blockLen() int
	// final extends levels, the final levels so far, by the blocks of the
	// n samples of x so far that no later sample changes.
	final(x []float32, n int, levels []float64) []float64
	// all returns the levels of all nb blocks of the n samples so far, as
	// a batch build of them finds them, given the final ones (whose
	// backing array it may extend).
	all(x []float32, n, nb int, levels []float64) []float64
}

// liveY is a rows source's share of a live build when it gives each
// block's position itself (rowSource.liveY).
type liveY interface {
	// final extends y, the final positions so far, by the blocks of the n
	// samples of x so far (blocks of bl samples) that no later sample
	// changes.
	final(x []float32, n, bl int, y []float64) []float64
	// all returns the positions of all nb blocks of the n samples so far,
	// as a batch build of them finds them, given the final ones (whose
	// backing array it may extend).
	all(x []float32, n, nb, bl int, y []float64) []float64
}

// liveRows is the rows stage of a live build: the level of every block
// the samples so far decide (its mean, or the tone's amplitude over a
// whole window), smoothed and calibrated as levelRows does once the
// smoothing window after a block is final too.
type liveRows struct {
	src      liveLevels // nil: ys gives the positions
	ys       liveY
	channel  int
	cal      calibration
	half     int
	centre   []float64   // Savitzky–Golay weights at the centre
	ends     [][]float64 // and for the first (and, mirrored, last) half blocks
	levels   []float64   // final levels
	rows     rowsResult  // y of the final blocks
	lvLo     float64     // range of the final smoothed levels
	lvHi     float64
	blockLen int
	rate     float64
}

func newLiveRows(r recipe.Recipe, ch channels, rate float64) (liveRows, error) {
	src, err := sourceOf(r.Rows.Source)
	if err != nil {
		return liveRows{}, err
	}
	lr := liveRows{src: src.liveLevels(r, rate), ys: src.liveY(r, rate), channel: src.channel(ch), blockLen: levelBlockLen(rate), rate: rate,
		lvLo: math.Inf(1), lvHi: math.Inf(-1)}
	if lr.src == nil {
		lr.rows.blockLen = lr.blockLen
		return lr, nil
	}
	lr.blockLen = lr.src.blockLen()
	if lr.cal, err = newCalibration(r.Rows.Calibration); err != nil {
		return lr, err
	}
	lr.rows.blockLen = lr.blockLen
	lr.half = int(math.Round(smoothMS / 2e3 / (float64(lr.blockLen) / rate)))
	if lr.half >= 1 {
		lr.centre, _ = SavitzkyGolay(lr.half, 2, 0)
		for i := 0; i < lr.half; i++ {
			w, _ := SavitzkyGolay(lr.half, 2, float64(i-lr.half))
			lr.ends = append(lr.ends, w)
		}
	}
	return lr, nil
}

// add extends the final levels and y over the n samples so far.
func (lr *liveRows) add(raw [][]float32, n int) {
	if lr.src == nil {
		lr.rows.y = lr.ys.final(lr.channelOf(raw), n, lr.blockLen, lr.rows.y)
		return
	}
	lr.levels = lr.src.final(raw[lr.channel], n, lr.levels)
	final := len(lr.levels)
	if lr.half >= 1 {
		if final < 2*lr.half+1 {
			return
		}
		final -= lr.half
	}
	for j := len(lr.rows.y); j < final; j++ {
		lr.addY(lr.smoothAt(lr.levels, j, -1))
	}
}

func (lr *liveRows) addY(v float64) {
	lr.lvLo, lr.lvHi = math.Min(lr.lvLo, v), math.Max(lr.lvHi, v)
	lr.rows.y = append(lr.rows.y, lr.cal.at(v))
}

// channelOf is the source's channel in raw, or nil for none.
func (lr *liveRows) channelOf(raw [][]float32) []float32 {
	if lr.channel < 0 {
		return nil
	}
	return raw[lr.channel]
}

// smoothAt is smoothSG's value at block j of levels, for a capture of nb
// blocks (nb < 0: one long enough that j is not near its end).
func (lr *liveRows) smoothAt(levels []float64, j, nb int) float64 {
	h := lr.half
	switch {
	case h < 1 || nb >= 0 && nb < 2*h+1:
		return levels[j]
	case j < h:
		return sgDot(lr.ends[j], levels)
	case nb < 0 || j < nb-h:
		return sgDot(lr.centre, levels[j-h:])
	}
	return sgDotBack(lr.ends[nb-1-j], levels[:nb])
}

// final reports whether the rows of every sample of l are final.
func (lr *liveRows) final(l *placedLine) bool {
	bl := float64(lr.rows.blockLen)
	p := (float64(l.last-1) - bl/2) / bl
	return p <= 0 && len(lr.rows.y) > 0 || int(p)+1 < len(lr.rows.y)
}

// tail returns the rows of the n samples so far as a batch build of them
// finds them: the final blocks and the last ones, which later samples may
// still change (nil when the levels cannot be measured yet). Its y shares
// the final blocks with lr.
func (lr *liveRows) tail(raw [][]float32, n int) (*rowsResult, float64, float64) {
	bl := lr.blockLen
	nb := (n + bl - 1) / bl
	out := &rowsResult{blockLen: bl, y: lr.rows.y}
	lo, hi := lr.lvLo, lr.lvHi
	if lr.src == nil {
		out.y = lr.ys.all(lr.channelOf(raw), n, nb, bl, out.y)
		return out, lo, hi
	}
	levels := lr.src.all(raw[lr.channel], n, nb, lr.levels)
	if len(levels) < nb {
		return nil, lo, hi
	}
	for j := len(out.y); j < nb; j++ {
		v := lr.smoothAt(levels, j, nb)
		lo, hi = math.Min(lo, v), math.Max(hi, v)
		out.y = append(out.y, lr.cal.at(v))
	}
	return out, lo, hi
}
