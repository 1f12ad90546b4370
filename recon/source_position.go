package recon

import (
	"context"

	"spotloom/recon/recipe"
)

// positionSource is a DC level on the position channel (a potentiometer
// or a linear encoder's analogue output), mapped to mm by
// rows.calibration.
type positionSource struct{}

func (positionSource) find(ctx context.Context, rec rowsInput, p rowsParams, res *rowsResult) (*rowsResult, error) {
	return levelRows(ctx, rec, p, res, blockMeans(rec.channel, res.blockLen))
}

func (positionSource) channel(ch channels) int { return ch.position }

func (positionSource) needs() string { return "position" }

func (positionSource) readsTone() bool { return false }

func (positionSource) fromTiming(*recipe.Recipe, *timingResult, float64) []string { return nil }

func (positionSource) liveNull(recipe.Recipe) string { return "" }

func (positionSource) liveLevels(_ recipe.Recipe, rateHz float64) liveLevels {
	return positionLevels{bl: levelBlockLen(rateHz)}
}

// positionLevels reads a live position channel: a block's level is its
// mean, final once the block is whole.
type positionLevels struct{ bl int }

func (p positionLevels) blockLen() int { return p.bl }

func (p positionLevels) final(x []float32, n int, levels []float64) []float64 {
	bl := p.bl
	for j := len(levels); (j+1)*bl <= n; j++ {
		levels = append(levels, blockMeans(x[j*bl:(j+1)*bl], bl)[0])
	}
	return levels
}

func (p positionLevels) all(x []float32, n, nb int, levels []float64) []float64 {
	if full := n / p.bl; full < nb {
		levels = append(levels, blockMeans(x[full*p.bl:n], p.bl)[0])
	}
	return levels
}

func (positionSource) liveY(recipe.Recipe, float64) liveY { return nil }
