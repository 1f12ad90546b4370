package capture

import (
	"math"
	"sort"
)

// Channel roles GuessRoles can give.
const (
	RoleDetector = "detector"
	RoleIndex    = "index"
	RolePosition = "position"
	RoleSteps    = "steps"
	RoleUnknown  = "unknown"
)

// RoleGuess is the guessed role of one channel and how sure the guess is,
// from 0 (a shrug) to 1.
type RoleGuess struct {
	Channel    int
	Role       string
	Confidence float64
}

// roleSamples caps how many samples of a channel the guess looks at.
const roleSamples = 1 << 22

// signalTraits are the measurements a role guess is made from.
type signalTraits struct {
	constant bool
	// twoLevel is the fraction of samples within 15 % of the range from the
	// low or the high level (levels: the 1st and 99th percentiles).
	twoLevel float64
	// middle is the fraction of samples between 30 % and 70 % of the range:
	// small for a train of sharp-edged pulses.
	middle float64
	// edges is the number of rising crossings of the mid level (with
	// hysteresis), edgeSpread the coefficient of variation of their spacing.
	edges      int
	edgeSpread float64
	// roughness is the RMS of the first difference over the standard
	// deviation: about 2·sin(π f/fs) for a tone of frequency f, √2 for white
	// noise, near 0 for a slow, band-limited signal.
	roughness float64
	// toneLike is how well the channel fits a steady carrier tone (a
	// position read as the amplitude of a tone): its mean crossings come
	// at a steady pace and its roughness is that of a sine at that pace.
	toneLike float64
	// highNoise is the standard deviation of the samples on the high level
	// over the span between the levels: near 0 for an index sensor's clean
	// logic level, larger for a detector's photon noise.
	highNoise float64
	// slowRoughness is the roughness of the signal averaged over blocks of
	// slowBlock samples: white sensor noise drops by √slowBlock, a slow
	// position signal keeps its shape, so it tells a slow signal with a
	// little noise from a busy one.
	slowRoughness float64
}

// slowBlock is the block length of slowRoughness.
const slowBlock = 64

// measureTraits measures one channel.
func measureTraits(s []float32) signalTraits {
	if len(s) > roleSamples {
		s = s[:roleSamples]
	}
	var t signalTraits
	if len(s) < 8 {
		t.constant = true
		return t
	}
	lo, hi := float64(s[0]), float64(s[0])
	var sum, sumSq, diffSq float64
	for i, v := range s {
		x := float64(v)
		if x < lo {
			lo = x
		}
		if x > hi {
			hi = x
		}
		sum += x
		sumSq += x * x
		if i > 0 {
			d := x - float64(s[i-1])
			diffSq += d * d
		}
	}
	n := float64(len(s))
	mean := sum / n
	variance := sumSq/n - mean*mean
	if hi-lo <= 1e-12*math.Max(1, math.Abs(hi)) || variance <= 0 {
		t.constant = true
		return t
	}
	t.roughness = math.Sqrt(diffSq/(n-1)) / math.Sqrt(variance)
	t.slowRoughness = blockRoughness(s, slowBlock)
	// Levels from a 1024-bin histogram, robust to a few outliers.
	const bins = 1024
	var hist [bins]int
	width := (hi - lo) / bins
	for _, v := range s {
		b := int((float64(v) - lo) / width)
		hist[min(max(b, 0), bins-1)]++
	}
	percentile := func(p float64) float64 {
		target := int(p * n)
		acc := 0
		for b, c := range hist {
			acc += c
			if acc > target {
				return lo + (float64(b)+0.5)*width
			}
		}
		return hi
	}
	low, high := percentile(0.01), percentile(0.99)
	if high-low < 0.25*(hi-low) {
		// A pulse train of very low duty (an index pulse once per
		// revolution, a degree wide) spends less than 1 % of the time
		// high: its high level is the mean of the samples in the upper
		// half of the range, if there are enough of them to be a level.
		mid := low + 0.5*(hi-low)
		var sumHigh float64
		nHigh := 0
		for _, v := range s {
			if float64(v) > mid {
				sumHigh += float64(v)
				nHigh++
			}
		}
		if nHigh >= 16 {
			high = sumHigh / float64(nHigh)
		}
	}
	span := high - low
	if span <= 0 {
		span = hi - lo
		low, high = lo, hi
	}
	var near, mid, highCount int
	var highSum, highSumSq float64
	rising := make([]int, 0, 64)
	state := false
	upper, lower := low+0.6*span, low+0.4*span
	for i, v := range s {
		x := float64(v)
		if x <= low+0.15*span || x >= high-0.15*span {
			near++
		}
		if x >= high-0.15*span {
			highCount++
			highSum += x
			highSumSq += x * x
		}
		if x > low+0.3*span && x < low+0.7*span {
			mid++
		}
		if !state && x > upper {
			state = true
			if i > 0 {
				rising = append(rising, i)
			}
		} else if state && x < lower {
			state = false
		}
	}
	t.toneLike = toneFit(s, mean, math.Sqrt(variance), t.roughness)
	t.twoLevel = float64(near) / n
	if highCount > 1 {
		m := highSum / float64(highCount)
		t.highNoise = math.Sqrt(math.Max(0, highSumSq/float64(highCount)-m*m)) / span
	}
	t.middle = float64(mid) / n
	t.edges = len(rising)
	if len(rising) >= 3 {
		gaps := make([]float64, len(rising)-1)
		var gsum float64
		for i := range gaps {
			gaps[i] = float64(rising[i+1] - rising[i])
			gsum += gaps[i]
		}
		gmean := gsum / float64(len(gaps))
		var gvar float64
		for _, g := range gaps {
			gvar += (g - gmean) * (g - gmean)
		}
		t.edgeSpread = math.Sqrt(gvar/float64(len(gaps))) / gmean
	} else {
		t.edgeSpread = 1
	}
	return t
}

// blockRoughness is the roughness (RMS first difference over standard
// deviation) of the means of consecutive blocks of the given length; 0 when
// there are too few blocks to tell.
func blockRoughness(s []float32, block int) float64 {
	nb := len(s) / block
	if nb < 8 {
		return math.Inf(1)
	}
	means := make([]float64, nb)
	var sum float64
	for b := range means {
		var acc float64
		for _, v := range s[b*block : (b+1)*block] {
			acc += float64(v)
		}
		means[b] = acc / float64(block)
		sum += means[b]
	}
	mean := sum / float64(nb)
	var variance, diffSq float64
	for b, m := range means {
		variance += (m - mean) * (m - mean)
		if b > 0 {
			d := m - means[b-1]
			diffSq += d * d
		}
	}
	if variance <= 0 {
		return math.Inf(1)
	}
	return math.Sqrt(diffSq/float64(nb-1)) / math.Sqrt(variance/float64(nb))
}

// toneFit scores a signal as a steady tone: rising crossings of the mean
// (with a hysteresis of a fifth of the standard deviation) evenly spaced,
// and a roughness within 25 % of 2·sin(π f/fs), the closed form for a
// sine at the crossing rate f.
func toneFit(s []float32, mean, std, roughness float64) float64 {
	var crossings []int
	state := false
	hi, lo := mean+0.2*std, mean-0.2*std
	for i, v := range s {
		x := float64(v)
		if !state && x > hi {
			state = true
			crossings = append(crossings, i)
		} else if state && x < lo {
			state = false
		}
	}
	if len(crossings) < 20 {
		return 0
	}
	var sum, sumSq float64
	gaps := len(crossings) - 1
	for i := 1; i < len(crossings); i++ {
		g := float64(crossings[i] - crossings[i-1])
		sum += g
		sumSq += g * g
	}
	gm := sum / float64(gaps)
	cv := math.Sqrt(math.Max(0, sumSq/float64(gaps)-gm*gm)) / gm
	if gm < 3 {
		return 0
	}
	sine := 2 * math.Sin(math.Pi/gm) // roughness of a sine with period gm samples
	ratio := roughness / sine
	return clamp01(1-cv/0.05) * clamp01(1-math.Abs(ratio-1)/0.25)
}

// clamp01 limits x to [0, 1].
func clamp01(x float64) float64 { return math.Max(0, math.Min(1, x)) }

// pulseScore is how much a channel looks like a train of sharp two-level
// pulses (an index or step signal).
func (t signalTraits) pulseScore() float64 {
	if t.constant || t.edges < 4 {
		return 0
	}
	return clamp01((t.twoLevel-0.8)/0.15) * clamp01(1-t.middle/0.1)
}

// smoothScore is how much a channel looks like a slow position signal.
func (t signalTraits) smoothScore() float64 {
	if t.constant {
		return 0
	}
	// A slow signal has small roughness at full rate, or (with sensor
	// noise on it) at least after block averaging. A limit of 0.15 on the
	// averaged signal bounds its bandwidth to a few per cent of the block
	// rate (2·sin(πf/fb) < 0.15), well below a line rate's structure in a
	// detector signal, and far below white noise (√2).
	slow := math.Max(clamp01(1-t.roughness/0.05), clamp01(1-t.slowRoughness/0.15))
	return math.Max(slow, t.toneLike) * (1 - t.pulseScore())
}

// GuessRoles guesses each channel's role from its samples alone: the index
// is the most regular train of sharp two-level pulses, other pulse trains
// are step pulses, the position is the smoothest remaining signal (or a
// steady carrier tone, whose amplitude carries the position), and the
// detector is the busiest remaining one. Constant channels stay unknown.
// The recipe's channel choice always overrides these guesses.
func GuessRoles(rec *Recording) []RoleGuess {
	if rec == nil {
		return nil
	}
	n := len(rec.Channels)
	traits := make([]signalTraits, n)
	for c, ch := range rec.Channels {
		traits[c] = measureTraits(ch.Samples)
	}
	guesses := make([]RoleGuess, n)
	taken := make([]bool, n)
	for c := range guesses {
		guesses[c] = RoleGuess{Channel: c, Role: RoleUnknown}
	}
	// pick gives the untaken channel with the best score, and the best
	// score among the others, for a confidence that falls when two
	// channels look alike.
	pick := func(score func(int) float64) (int, float64, float64) {
		best, second, at := 0.0, 0.0, -1
		for c := 0; c < n; c++ {
			if taken[c] {
				continue
			}
			s := score(c)
			if s > best {
				best, second, at = s, best, c
			} else if s > second {
				second = s
			}
		}
		return at, best, second
	}
	confidence := func(best, second float64) float64 { return clamp01(best * (1 - 0.5*second/best)) }

	if c, best, second := pick(func(c int) float64 {
		// An index sensor gives clean levels; a detector that happens to
		// be two-level (an edge card) carries photon noise on its high
		// level, which shows as roughness.
		t := traits[c]
		return t.pulseScore() * (1 - 0.5*math.Min(t.edgeSpread, 1)) * (1 - 0.5*clamp01(t.highNoise/0.02))
	}); c >= 0 && best >= 0.3 {
		guesses[c] = RoleGuess{c, RoleIndex, confidence(best, second)}
		taken[c] = true
	}
	indexEdges := 0
	for c := range guesses {
		if guesses[c].Role == RoleIndex {
			indexEdges = traits[c].edges
		}
	}
	isPulse := func(c int) bool { return traits[c].pulseScore() >= 0.5 }
	if c, best, second := pick(func(c int) float64 {
		if isPulse(c) {
			return 0
		}
		return traits[c].smoothScore()
	}); c >= 0 && best >= 0.3 {
		guesses[c] = RoleGuess{c, RolePosition, confidence(best, second)}
		taken[c] = true
	}
	if c, best, second := pick(func(c int) float64 {
		t := traits[c]
		if t.constant || isPulse(c) {
			return 0
		}
		return clamp01(t.roughness/0.1) * (1 - t.pulseScore()) * (1 - t.toneLike)
	}); c >= 0 && best > 0 {
		guesses[c] = RoleGuess{c, RoleDetector, confidence(best, second)}
		taken[c] = true
	} else if indexEdges > 0 {
		// Every capture has a detector. When none of the busy kind is left,
		// a scene of few, large contrasts (an edge card, a bar target) makes
		// the detector itself a two-level pulse train: one beam-on burst per
		// line, so about as many edges as the index has. Step pulses keep
		// their own pace.
		c, _, _ := pick(func(c int) float64 {
			if !isPulse(c) || traits[c].edges == 0 {
				return 0
			}
			ratio := math.Abs(math.Log(float64(traits[c].edges) / float64(indexEdges)))
			return 1 / (1 + ratio)
		})
		if c >= 0 {
			guesses[c] = RoleGuess{c, RoleDetector, 0.5 * traits[c].pulseScore()}
			taken[c] = true
		}
	}
	// Further pulse trains are step pulses.
	for c := 0; c < n; c++ {
		if !taken[c] && isPulse(c) {
			guesses[c] = RoleGuess{c, RoleSteps, 0.7 * traits[c].pulseScore()}
			taken[c] = true
		}
	}
	sort.Slice(guesses, func(i, j int) bool { return guesses[i].Channel < guesses[j].Channel })
	return guesses
}
