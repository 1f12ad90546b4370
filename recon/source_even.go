package recon

import (
	"context"
	"fmt"

	"spotloom/recon/recipe"
)

// evenSource is a head moving at a constant rows.speed_mm_s from the
// first sample, read by no sensor.
type evenSource struct{}

func (evenSource) find(_ context.Context, rec rowsInput, p rowsParams, res *rowsResult) (*rowsResult, error) {
	n, rate := rec.n, rec.rateHz
	if p.SpeedMMS == nil {
		return nil, fmt.Errorf("rows.speed_mm_s is null: source even needs the head speed in mm/s")
	}
	nb := (n + res.blockLen - 1) / res.blockLen
	res.y = make([]float64, nb)
	for j := range res.y {
		res.y[j] = *p.SpeedMMS * (float64(j*res.blockLen) + float64(res.blockLen)/2) / rate
	}
	res.strokes = []stroke{{0, n}}
	return res, nil
}

func (evenSource) channel(channels) int { return -1 }

func (evenSource) needs() string { return "" }

func (evenSource) readsTone() bool { return false }

func (evenSource) liveNull(r recipe.Recipe) string {
	if r.Rows.SpeedMMS == nil {
		return "rows.speed_mm_s"
	}
	return ""
}

// liveLevels is nil: an even motion's rows come from its speed alone.
func (evenSource) liveLevels(recipe.Recipe, float64) liveLevels { return nil }

func (evenSource) liveY(r recipe.Recipe, rateHz float64) liveY {
	return evenY{speed: *r.Rows.SpeedMMS, rate: rateHz}
}

// evenY is a live even motion: every block's position is final at once.
type evenY struct{ speed, rate float64 }

func (e evenY) final(_ []float32, n, bl int, y []float64) []float64 {
	return e.all(nil, n, (n+bl-1)/bl, bl, y)
}

func (e evenY) all(_ []float32, _, nb, bl int, y []float64) []float64 {
	for j := len(y); j < nb; j++ {
		y = append(y, e.speed*(float64(j*bl)+float64(bl)/2)/e.rate)
	}
	return y
}

// fromTiming sets an automatic rows.speed_mm_s to one pitch per line, and
// warns that it is assumed.
func (evenSource) fromTiming(r *recipe.Recipe, t *timingResult, rateHz float64) []string {
	if r.Rows.SpeedMMS != nil {
		return nil
	}
	speed, w := automaticSpeed(t, *r, rateHz)
	r.Rows.SpeedMMS = recipe.Float(speed)
	return []string{w}
}
