package recon

import (
	"context"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/gonum/mat"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// carrierTone tells a position read as the amplitude of a carrier tone (a
// potentiometer fed with a sine wave and read by an AC-coupled sound card)
// from a DC level: most of the channel's power (DC excluded) sits in one
// line of the spectrum well above mains hum (200 Hz), and the level
// averaged over 10 ms blocks, which follows a DC position, barely moves
// against the swing within a block. It returns the tone's frequency.
func carrierTone(x []float32, rateHz float64) (float64, bool) {
	sp, err := toneSpectrum(x, rateHz)
	if err != nil || sp.total == 0 || sp.nearShare < 0.5 || sp.peakHz < 200 {
		return 0, false
	}
	block := max(int(rateHz/100), 16)
	var means []float64
	within := 0.0
	for a := 0; a+block <= len(x); a += block {
		m := 0.0
		for _, v := range x[a : a+block] {
			m += float64(v)
		}
		m /= float64(block)
		for _, v := range x[a : a+block] {
			within += (float64(v) - m) * (float64(v) - m)
		}
		means = append(means, m)
	}
	if len(means) < 8 {
		return 0, false
	}
	within = math.Sqrt(within / float64(len(means)*block))
	_, between := meanStd(means)
	return sp.peakHz, between < 0.5*within
}

// acCornerFromBaselines estimates the corner of a single-pole high-pass
// the detector went through on its way to the recorder from the beam-off
// level of every line. The inverse of H(s) = s/(s+ωc) is x = y + ωc∫y dt;
// with the beam off the input x is the dark level, a constant, so the
// recorded beam-off level of line k is off_k = C − ωc·I_k, where I_k is
// the integral of the recorded signal up to that line: the level drifts
// down after bright stretches and back after dark ones. A least-squares
// fit of off_k on [1, t_k, I_k] (t_k takes up a recorder offset, which
// integrates to a ramp) gives ωc. It reports a corner only when the fit's
// ωc stands well clear of its own standard error (more than 10 σ).
func acCornerFromBaselines(det []float32, rateHz float64, lines []Line) (float64, bool) {
	var off, tk, ik []float64
	integral, pos := 0.0, 0
	for _, l := range lines {
		a, b := int(math.Ceil(l.BaselineStartS*rateHz)), int(math.Floor(l.BaselineEndS*rateHz))
		a, b = max(a, pos), min(b, len(det))
		if b-a < 4 {
			continue
		}
		mid := (a + b) / 2
		for ; pos < mid; pos++ {
			integral += float64(det[pos]) / rateHz
		}
		sum := 0.0
		for _, v := range det[a:b] {
			sum += float64(v)
		}
		off = append(off, sum/float64(b-a))
		tk = append(tk, float64(mid)/rateHz)
		ik = append(ik, integral)
	}
	n := len(off)
	if n < 30 {
		return 0, false
	}
	// Centred and scaled columns keep the normal equations well
	// conditioned however long the capture.
	mt, st := meanStd(tk)
	mi, si := meanStd(ik)
	if st == 0 || si == 0 {
		return 0, false
	}
	a := mat.NewDense(n, 3, nil)
	y := mat.NewVecDense(n, off)
	for k := 0; k < n; k++ {
		a.Set(k, 0, 1)
		a.Set(k, 1, (tk[k]-mt)/st)
		a.Set(k, 2, (ik[k]-mi)/si)
	}
	var qr mat.QR
	qr.Factorize(a)
	var coef mat.VecDense
	if err := qr.SolveVecTo(&coef, false, y); err != nil {
		return 0, false
	}
	var fit mat.VecDense
	fit.MulVec(a, &coef)
	rss := 0.0
	for k := 0; k < n; k++ {
		d := off[k] - fit.AtVec(k)
		rss += d * d
	}
	var ata, inv mat.Dense
	ata.Mul(a.T(), a)
	if err := inv.Inverse(&ata); err != nil {
		return 0, false
	}
	se := math.Sqrt(rss / float64(n-3) * inv.At(2, 2))
	wc := -coef.AtVec(2) / si
	if !(wc > 0) || coef.AtVec(2) == 0 || math.Abs(coef.AtVec(2)) < 10*se {
		return 0, false
	}
	hz := wc / (2 * math.Pi)
	return hz, hz > 0.05 && hz <= 1000
}

// beamOnFraction folds about a thousand of the build's lines (from each
// line's start to the next's) onto 720 bins of line time, from the
// detector the engine works on (AC coupling undone), and measures the
// share of the line the beam is on: one less the longest circular run of
// quiet bins, whose level is the beam-off level and whose spread across
// lines is the least (no photon noise, no scene). ok is false when no
// stretch is quiet: the beam never leaves the field.
func (s *Session) beamOnFraction(ctx context.Context, r recipe.Recipe, lines []Line) (fraction float64, ok bool, err error) {
	s.mu.Lock()
	ch, err := s.resolveChannels(&r)
	var det []float32
	if err == nil {
		det, _, err = s.detector(ctx, ch.detector, r.Signal)
	}
	s.mu.Unlock()
	if err != nil {
		return 0, false, err
	}
	rate := s.rec.SampleRateHz
	if len(lines) < 3 {
		return 0, true, nil
	}
	periods := make([]float64, 0, len(lines)-1)
	for i := 1; i < len(lines); i++ {
		periods = append(periods, lines[i].EdgeS-lines[i-1].EdgeS)
	}
	pMed := median(periods)
	const bins = 720
	sum, sumSq, diffSq, cnt := make([]float64, bins), make([]float64, bins), make([]float64, bins), make([]float64, bins)
	stride := 1 + len(lines)/1000
	for i := 0; i+1 < len(lines); i += stride {
		p := lines[i+1].EdgeS - lines[i].EdgeS
		if !(p > 0.5*pMed && p < 1.5*pMed) {
			continue // a gap or a repaired pulse
		}
		from, to := int(math.Ceil(lines[i].EdgeS*rate)), int(math.Floor(lines[i+1].EdgeS*rate))
		for j := max(from, 0); j < min(to, len(det)); j++ {
			b := min(int((float64(j)/rate-lines[i].EdgeS)/p*bins), bins-1)
			v := float64(det[j])
			sum[b] += v
			sumSq[b] += v * v
			if j+1 < len(det) {
				d := float64(det[j+1]) - v
				diffSq[b] += d * d
			}
			cnt[b]++
		}
	}
	prof, spread, rough := make([]float64, bins), make([]float64, bins), make([]float64, bins)
	for b := range prof {
		if cnt[b] == 0 {
			return 0, true, nil // lines too short to tell
		}
		prof[b] = sum[b] / cnt[b]
		spread[b] = math.Max(0, sumSq[b]/cnt[b]-prof[b]*prof[b])
		rough[b] = diffSq[b] / cnt[b]
	}
	// Two signs of the beam being off: the level does not change from
	// line to line (no scene), or it does not change from sample to sample
	// (no photon noise; this one survives a beam-off level that wanders
	// from line to line, as through AC coupling).
	quietOf := func(v []float64) (float64, bool) {
		sorted := slices.Clone(v)
		slices.Sort(sorted)
		q := sorted[bins/10]
		return q, q < 0.25*sorted[bins/2]
	}
	quiet, ok := quietOf(spread)
	byRoughness := false
	if !ok {
		if quiet, ok = quietOf(rough); !ok {
			return 1, false, nil
		}
		spread, byRoughness = rough, true
	}
	var offLevels []float64
	for b, v := range spread {
		if v <= quiet {
			offLevels = append(offLevels, prof[b])
		}
	}
	offLevel := median(offLevels)
	steps := make([]float64, bins)
	for b := range steps {
		steps[b] = math.Abs(prof[(b+1)%bins] - prof[b])
	}
	noise := 1.4826 * median(steps) / math.Sqrt2
	isOff := func(b int) bool {
		b %= bins
		// A wandering beam-off level is told by its roughness alone.
		return spread[b] <= 4*quiet && (byRoughness || math.Abs(prof[b]-offLevel) <= 8*noise)
	}
	longest, run := 0, 0
	for b := 0; b < 2*bins; b++ {
		if isOff(b) {
			run++
			longest = max(longest, min(run, bins))
		} else {
			run = 0
		}
	}
	if longest == 0 {
		return 1, false, nil
	}
	return 1 - float64(longest)/bins, true, nil
}

// GuessChannels returns r with the channel roles the capture suggests:
// the likeliest index channel, then the likeliest position (or step)
// channel, then the likeliest detector; when no channel looks like a
// detector, the first channel left over plays it, since every capture has
// one. rows.source follows: position when a position channel is seen,
// steps for step pulses, else even.
func GuessChannels(r recipe.Recipe, rec *capture.Recording) recipe.Recipe {
	r = r.Clone()
	guesses := capture.GuessRoles(rec)
	used := map[int]bool{}
	best := func(role string) (int, bool) {
		ch, conf := -1, -1.0
		for _, g := range guesses {
			if g.Role == role && !used[g.Channel] && g.Confidence > conf {
				ch, conf = g.Channel, g.Confidence
			}
		}
		if ch >= 0 {
			used[ch] = true
		}
		return ch, ch >= 0
	}
	ref := func(ch int) recipe.ChannelRef { return recipe.ChannelRef(strconv.Itoa(ch)) }
	if ch, ok := best(capture.RoleIndex); ok {
		r.Channels.Index = ref(ch)
	}
	if ch, ok := best(capture.RolePosition); ok {
		r.Channels.Position, r.Channels.Steps = ref(ch), ""
		if !r.Rows.Source.ReadsPosition() {
			r.Rows.Source = recipe.SourcePosition
		}
	} else if n, err := strconv.Atoi(string(r.Channels.Position)); err != nil || n < 0 || n >= len(rec.Channels) || used[n] {
		// The settings' position channel is not in this capture (or is
		// the index): leave it out rather than build from a wrong one.
		r.Channels.Position = ""
	} else {
		used[n] = true
	}
	det, ok := best(capture.RoleDetector)
	if !ok {
		for i := range rec.Channels {
			if !used[i] && (r.Channels.Position.IsSet() || !isGuessed(guesses, i, capture.RoleSteps)) {
				det, ok = i, true
				used[i] = true
				break
			}
		}
	}
	if ok {
		r.Channels.Detector = ref(det)
	}
	if !r.Channels.Position.IsSet() {
		if ch, ok := best(capture.RoleSteps); ok {
			r.Channels.Steps = ref(ch)
			r.Rows.Source = recipe.SourceSteps
		} else if r.Rows.Source.ReadsPosition() {
			// No cross-scan signal at all: an even motion, whose speed the
			// engine assumes (one pitch per line) and says so.
			r.Rows.Source = recipe.SourceEven
		}
	}
	return r
}

func isGuessed(guesses []capture.RoleGuess, ch int, role string) bool {
	for _, g := range guesses {
		if g.Channel == ch && g.Role == role {
			return true
		}
	}
	return false
}
