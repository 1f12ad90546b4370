package recon

import "context"

// toneSource is the peak amplitude of a carrier tone on the position
// channel (a potentiometer fed with a sine wave, read by an AC-coupled
// sound card), demodulated by toneAmplitude and mapped to mm by
// rows.calibration.
type toneSource struct{}

func (toneSource) find(ctx context.Context, rec rowsInput, p rowsParams, res *rowsResult) (*rowsResult, error) {
	levels, blockLen, carrier, err := toneAmplitude(rec, p.CarrierHz)
	if err != nil {
		return nil, err
	}
	res.blockLen, res.carrier = blockLen, carrier
	return levelRows(ctx, rec, p, res, levels)
}

func (toneSource) channel(ch channels) int { return ch.position }

func (toneSource) needs() string { return "position" }
