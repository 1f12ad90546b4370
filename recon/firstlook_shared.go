package recon

import (
	"strconv"

	"spotloom/capture"
	"spotloom/recon/recipe"
)

// indexWithTone tells a channel that carries both the index pulses and a
// position tone (a two-input sound card): a strong narrow carrier, at least
// 30 % of the power (DC excluded) within ±4 bins of one line well above
// mains hum (200 Hz), and, with that line notched out, a train of pulses
// the role guess takes for an index channel. It returns the carrier and
// the role guess's confidence in those pulses.
func indexWithTone(x []float32, rateHz float64) (float64, float64, bool) {
	sp, err := toneSpectrum(x, rateHz)
	if err != nil || sp.total == 0 || sp.nearShare < 0.3 || sp.peakHz < 200 || sp.peakHz >= rateHz/2 {
		return 0, 0, false
	}
	pulses := notchZeroPhase(x, sp.peakHz, sp.peakHz*notchBandwidthFraction, rateHz)
	alone := &capture.Recording{SampleRateHz: rateHz, Channels: []capture.Channel{{Name: "pulses", Samples: pulses}}}
	for _, g := range capture.GuessRoles(alone) {
		if g.Role == capture.RoleIndex {
			return sp.peakHz, g.Confidence, true
		}
	}
	return 0, 0, false
}

// SharedInput finds, among the channels of rec that roles (capture.GuessRoles
// of rec) leaves open, one that carries both the index pulses and a
// position tone (a two-input sound card), as the first look does: when no
// index channel was guessed, or no position or steps channel beside it,
// a channel other than the detector (the index channel itself, when one
// was guessed) whose samples hold a strong narrow carrier and, with it
// notched out, index pulses. It returns the channel (−1 for none), the
// carrier and the role guess's confidence (0 to 1) in the pulses.
func SharedInput(rec *capture.Recording, roles []capture.RoleGuess) (channel int, carrierHz, confidence float64) {
	detector, index, rows := -1, -1, false
	for _, g := range roles {
		switch g.Role {
		case capture.RoleDetector:
			if detector < 0 {
				detector = g.Channel
			}
		case capture.RoleIndex:
			if index < 0 {
				index = g.Channel
			}
		case capture.RolePosition, capture.RoleSteps:
			rows = true
		}
	}
	return sharedChannel(rec, detector, index, rows)
}

// sharedChannel is the channel of rec (−1 for none) that carries both the
// index pulses and a position tone, with the carrier and the confidence
// in the pulses (indexWithTone), given the detector and index channels
// found so far (−1 for none) and whether a rows channel was: none is
// looked for when both the index and a rows channel are there; else every
// channel but the detector, or the index channel alone when there is one.
func sharedChannel(rec *capture.Recording, detector, index int, rows bool) (channel int, carrierHz, confidence float64) {
	if index >= 0 && rows {
		return -1, 0, 0
	}
	for ch := range rec.Channels {
		if ch == detector || index >= 0 && ch != index {
			continue
		}
		if hz, conf, ok := indexWithTone(rec.Channels[ch].Samples, rec.SampleRateHz); ok {
			return ch, hz, conf
		}
	}
	return -1, 0, 0
}

// guessSharedInput is the step after the channel guess for a capture whose
// index pulses and position tone share one channel: when no index channel
// was seen (or no position channel beside it) and a channel other than the
// detector carries both, it becomes the index and the position channel,
// read as a tone.
func (d *lookDraft) guessSharedInput(rec *capture.Recording) {
	r := &d.r
	lookup := func(ref recipe.ChannelRef) int {
		if !ref.IsSet() {
			return -1
		}
		i, err := rec.Lookup(string(ref))
		if err != nil {
			return -1
		}
		return i
	}
	ch, hz, _ := sharedChannel(rec, lookup(r.Channels.Detector), lookup(r.Channels.Index), r.Channels.Position.IsSet())
	if ch < 0 {
		return
	}
	ref := recipe.ChannelRef(strconv.Itoa(ch))
	r.Channels.Index, r.Channels.Position, r.Channels.Steps = ref, ref, ""
	r.Rows.Source = recipe.SourceTone
	d.note("channel %d carries the index pulses and a %.4g Hz tone whose amplitude moves with the head (a two-input sound card): it is both channels.index and channels.position, and rows.source is tone", ch, hz)
}
