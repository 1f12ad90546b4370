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
