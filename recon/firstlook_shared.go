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
// the role guess takes for an index channel. It returns the carrier.
func indexWithTone(x []float32, rateHz float64) (float64, bool) {
	sp, err := toneSpectrum(x, rateHz)
	if err != nil || sp.total == 0 || sp.nearShare < 0.3 || sp.peakHz < 200 || sp.peakHz >= rateHz/2 {
		return 0, false
	}
	pulses := notchZeroPhase(x, sp.peakHz, sp.peakHz*notchBandwidthFraction, rateHz)
	alone := &capture.Recording{SampleRateHz: rateHz, Channels: []capture.Channel{{Name: "pulses", Samples: pulses}}}
	for _, g := range capture.GuessRoles(alone) {
		if g.Role == capture.RoleIndex {
			return sp.peakHz, true
		}
	}
	return 0, false
}

// guessSharedInput is the step after the channel guess for a capture whose
// index pulses and position tone share one channel: when no index channel
// was seen (or no position channel beside it) and a channel other than the
// detector carries both, it becomes the index and the position channel,
// read as a tone.
func (d *lookDraft) guessSharedInput(rec *capture.Recording) {
	r := &d.r
	if r.Channels.Index.IsSet() && r.Channels.Position.IsSet() {
		return
	}
	for ch := range rec.Channels {
		ref := recipe.ChannelRef(strconv.Itoa(ch))
		if ref == r.Channels.Detector || r.Channels.Index.IsSet() && ref != r.Channels.Index {
			continue
		}
		hz, ok := indexWithTone(rec.Channels[ch].Samples, rec.SampleRateHz)
		if !ok {
			continue
		}
		r.Channels.Index, r.Channels.Position, r.Channels.Steps = ref, ref, ""
		r.Rows.Source = recipe.SourceTone
		d.note("channel %d carries the index pulses and a %.4g Hz tone whose amplitude moves with the head (a two-input sound card): it is both channels.index and channels.position, and rows.source is tone", ch, hz)
		return
	}
}
