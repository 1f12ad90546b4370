package recon

import (
	"context"
	"fmt"

	"spotloom/recon/recipe"
)

// stepsSource counts a stepper's step pulses on the steps channel: each
// pulse moves the head rows.mm_per_step, evenly between pulses.
type stepsSource struct{}

func (stepsSource) find(ctx context.Context, rec rowsInput, p rowsParams, res *rowsResult) (*rowsResult, error) {
	n := rec.n
	if p.MMPerStep == nil {
		return nil, fmt.Errorf("rows.mm_per_step is null: source steps needs the head travel per step pulse in mm")
	}
	x := rec.channel
	p, err := p.withStepLevels(x, rec.name, rec.unit)
	if err != nil {
		return nil, err
	}
	thr := *p.StepsThreshold
	edges, err := rawEdges(ctx, x, thr, *p.StepsHysteresis, true)
	if err != nil {
		return nil, err
	}
	if len(edges) == 0 {
		return nil, fmt.Errorf("steps channel %s has no step pulses crossing %s", rec.name, level(thr, rec.unit))
	}
	nb := (n + res.blockLen - 1) / res.blockLen
	res.y = make([]float64, nb)
	k := 0
	for j := range res.y {
		res.y[j] = *p.MMPerStep * stepCount(edges, j, res.blockLen, &k)
	}
	res.levelMin, res.levelMax = 0, float64(len(edges))
	res.stepsThreshold, res.stepsHysteresis = thr, *p.StepsHysteresis
	res.strokes = []stroke{{0, n}}
	return res, nil
}

// withStepLevels returns p with an automatic (nil) step threshold and
// hysteresis resolved from the steps channel x: Otsu's split of its two
// levels and a fifth of the step between them.
func (p rowsParams) withStepLevels(x []float32, name, unit string) (rowsParams, error) {
	if p.StepsThreshold != nil && p.StepsHysteresis != nil {
		return p, nil
	}
	o := Otsu(x)
	if p.StepsThreshold == nil {
		if o.Separability < minSeparability {
			return p, fmt.Errorf("steps channel %s stays between %s and %s: no step pulses; check channels.steps", name, level(o.Min, unit), level(o.Max, unit))
		}
		p.StepsThreshold = &o.Threshold
	}
	if p.StepsHysteresis == nil {
		h := 0.2 * (o.HighMean - o.LowMean)
		p.StepsHysteresis = &h
	}
	return p, nil
}

// stepCount is the head's position at the centre c of block j in steps:
// the edges at or before c, and between two edges the share of the way
// from one to the next (the head moves evenly between step pulses). k is
// the number of edges at or before the centre of an earlier block (0 at
// first), and is moved on.
func stepCount(edges []float64, j, blockLen int, k *int) float64 {
	c := float64(j*blockLen) + float64(blockLen)/2
	for *k < len(edges) && edges[*k] <= c {
		*k++
	}
	count := float64(*k)
	if *k > 0 && *k < len(edges) {
		count += (c - edges[*k-1]) / (edges[*k] - edges[*k-1])
	}
	return count
}

func (stepsSource) channel(ch channels) int { return ch.steps }

func (stepsSource) needs() string { return "steps" }

func (stepsSource) readsTone() bool { return false }

func (stepsSource) fromTiming(*recipe.Recipe, *timingResult, float64) []string { return nil }

// liveNull needs the step pulses' trigger resolved (from the first
// seconds, as Session.Resolve gives it), since a threshold from the whole
// channel is known only at its end.
func (stepsSource) liveNull(r recipe.Recipe) string {
	switch {
	case !r.Channels.Steps.IsSet():
		return "channels.steps"
	case r.Rows.StepsThreshold == nil:
		return "rows.steps_threshold"
	case r.Rows.StepsHysteresis == nil:
		return "rows.steps_hysteresis"
	}
	return ""
}

func (stepsSource) liveLevels(recipe.Recipe, float64) liveLevels { return nil }

func (stepsSource) liveY(r recipe.Recipe, _ float64) liveY {
	return &stepsY{trig: newTrigger(*r.Rows.StepsThreshold, *r.Rows.StepsHysteresis, true), mm: *r.Rows.MMPerStep}
}

// stepsY counts live step pulses: the trigger's state after the samples
// scanned, the edges so far and the edges at or before the last final
// block's centre. A block is final once an edge after its centre is
// found: every edge before it is then found too (edges come in time
// order).
type stepsY struct {
	trig    trigger
	high    bool
	scanned int
	edges   []float64
	k       int
	mm      float64
}

func (s *stepsY) final(x []float32, n, bl int, y []float64) []float64 {
	if s.scanned == 0 && n > 0 {
		s.high = s.trig.sign*x[0] > s.trig.t
	}
	s.edges, s.high, _ = s.trig.scanState(context.Background(), x, s.scanned, n, s.high, s.edges)
	s.scanned = n
	for j := len(y); len(s.edges) > 0 && float64(j*bl)+float64(bl)/2 < s.edges[len(s.edges)-1]; j++ {
		y = append(y, s.mm*stepCount(s.edges, j, bl, &s.k))
	}
	return y
}

func (s *stepsY) all(_ []float32, _, nb, bl int, y []float64) []float64 {
	k := s.k
	for j := len(y); j < nb; j++ {
		y = append(y, s.mm*stepCount(s.edges, j, bl, &k))
	}
	return y
}
