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
	o := Otsu(x)
	if o.Separability < minSeparability {
		return nil, fmt.Errorf("steps channel %s stays between %s and %s: no step pulses; check channels.steps", rec.name, level(o.Min, rec.unit), level(o.Max, rec.unit))
	}
	edges, err := rawEdges(ctx, x, o.Threshold, 0.2*(o.HighMean-o.LowMean), true)
	if err != nil {
		return nil, err
	}
	if len(edges) == 0 {
		return nil, fmt.Errorf("steps channel %s has no step pulses crossing %s", rec.name, level(o.Threshold, rec.unit))
	}
	nb := (n + res.blockLen - 1) / res.blockLen
	res.y = make([]float64, nb)
	k := 0
	for j := range res.y {
		c := float64(j*res.blockLen) + float64(res.blockLen)/2
		for k < len(edges) && edges[k] <= c {
			k++
		}
		// k edges at or before c; between edges the head moves evenly.
		// Edge k−1 is step k; between edges the head moves evenly.
		count := float64(k)
		if k > 0 && k < len(edges) {
			count += (c - edges[k-1]) / (edges[k] - edges[k-1])
		}
		res.y[j] = *p.MMPerStep * count
	}
	res.levelMin, res.levelMax = 0, float64(len(edges))
	res.strokes = []stroke{{0, n}}
	return res, nil
}

func (stepsSource) channel(ch channels) int { return ch.steps }

func (stepsSource) needs() string { return "steps" }

func (stepsSource) readsTone() bool { return false }

func (stepsSource) fromTiming(*recipe.Recipe, *timingResult, float64) []string { return nil }

func (stepsSource) liveCheck(recipe.Recipe) (string, error) {
	return "", &LiveRefusal{"rows.source steps cannot be formed live: the step pulses are found with a threshold from the whole steps channel, known only when the recording ends; build the recording once it is stopped"}
}

func (stepsSource) liveLevels(recipe.Recipe, float64) liveLevels { return nil }
