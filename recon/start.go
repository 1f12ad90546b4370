package recon

import (
	"fmt"
	"math"
	"slices"

	"spotloom/recon/recipe"
)

// assumedTravelMM is the cross-scan travel a first look assumes when the
// position calibration is unknown: DESIGN.md's example calibration spans
// it, and it keeps the frame near square for a bench head.
const assumedTravelMM = 400

// Start adjusts a recipe made from defaults to what a trial build of the
// capture found, for a first look at a capture nobody has described yet:
// the aperture count the beam-on stretch implies for the field (taking
// sweep.field_deg as right), signal.invert for a negative-going detector,
// and, when rows.calibration misses most of the position levels seen, a
// calibration that spans them over an assumed 400 mm of travel. It returns the adjusted recipe and one note for each
// change, saying what to measure instead; with no notes, r is unchanged.
func Start(r recipe.Recipe, rep Report) (recipe.Recipe, []string) {
	out := r.Clone()
	var notes []string
	if n := rep.AperturesSuggested; n > 0 && n != r.Sweep.Apertures && r.Sweep.Law != recipe.LawSine {
		if out.Timing.PulsesPerRev != 1 {
			out.Timing.PulsesPerRev = n
		}
		out.Sweep.Apertures = n
		out.Sweep.ApertureOffsetsDeg = []float64{}
		out.Sweep.DelayDeg = nil
		notes = append(notes, fmt.Sprintf("sweep.apertures is set to %d, the count the beam-on stretch implies for a %g° field: check it against the wheel", n, r.Sweep.FieldDeg))
	}
	if slices.Contains(rep.Warnings, WarnNegativeDetector) && !r.Signal.Invert {
		out.Signal.Invert = true
		notes = append(notes, "the detector is negative-going: signal.invert is set, so more scatter shows brighter")
	}
	if lv := rep.PositionLevels; len(lv) == 2 && lv[1] > lv[0] && len(r.Rows.Calibration) >= 2 {
		cal := slices.Clone(r.Rows.Calibration)
		slices.SortFunc(cal, func(a, b [2]float64) int {
			switch {
			case a[0] < b[0]:
				return -1
			case a[0] > b[0]:
				return 1
			}
			return 0
		})
		lo, hi := cal[0][0], cal[len(cal)-1][0]
		if overlap := math.Min(hi, lv[1]) - math.Max(lo, lv[0]); overlap < 0.5*(lv[1]-lv[0]) {
			out.Rows.Calibration = [][2]float64{{lv[0], 0}, {lv[1], assumedTravelMM}}
			notes = append(notes, fmt.Sprintf("rows.calibration is a guess: the position levels seen (%.4g to %.4g) are spread over %d mm; measure two head positions and their levels for a true cross-scan scale", lv[0], lv[1], assumedTravelMM))
		}
	}
	if len(notes) == 0 {
		return r, nil
	}
	return out, notes
}
