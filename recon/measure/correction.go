package measure

import (
	"fmt"
	"math"
	"slices"

	"spotloom/recon/recipe"
)

// Correction is a grid fit turned into recipe values that make the frame
// true: x through the projection (the distance, or the field) and y
// through the cross-scan calibration.
type Correction struct {
	// Recipe is the frame's recipe with both corrections applied: the
	// distance for a flat projection (x = D·tan θ scales with D exactly),
	// the field otherwise; the table's x for a measured sweep law; and the
	// cross-scan scale (calibration millimetres, mm per step or speed).
	Recipe recipe.Recipe
	// DistanceMM and FieldDeg are the two ways to make x true: either
	// alone (for a flat projection the field is exact only for small
	// angles, since tan θ is not linear). 0 when not offered.
	DistanceMM, FieldDeg float64
	// Calibration is rows.calibration with its millimetres divided by
	// the y scale (nil when the rows come from steps or an even speed).
	Calibration [][2]float64
	// Steps is what to change, in sentences.
	Steps []string
}

// GridCorrection returns the recipe changes that remove the scale the grid
// fit found. r is the recipe the frame was built with.
func GridCorrection(r recipe.Recipe, g GridResult) (Correction, error) {
	if !(g.ScaleX > 0) || !(g.ScaleY > 0) {
		return Correction{}, fmt.Errorf("the grid fit has no scale (x %g, y %g)", g.ScaleX, g.ScaleY)
	}
	c := Correction{Recipe: r.Clone()}
	sx, sy := g.ScaleX, g.ScaleY
	switch r.Sweep.Law {
	case recipe.LawTable:
		t := slices.Clone(r.Sweep.Table)
		for i := range t {
			t[i][1] /= sx
		}
		c.Recipe.Sweep.Table = t
		c.Steps = append(c.Steps, fmt.Sprintf("divide the x of every sweep.table point by %.5f", sx))
	default:
		c.FieldDeg = r.Sweep.FieldDeg / sx
		c.DistanceMM = r.Sweep.DistanceMM / sx
		if r.Sweep.Projection == "angular" {
			c.Recipe.Sweep.FieldDeg = c.FieldDeg
			c.Steps = append(c.Steps, fmt.Sprintf("set sweep.field_deg to %.4f (or sweep.distance_mm to %.2f)", c.FieldDeg, c.DistanceMM))
		} else {
			c.Recipe.Sweep.DistanceMM = c.DistanceMM
			c.Steps = append(c.Steps, fmt.Sprintf("set sweep.distance_mm to %.2f (or, if the distance is right, sweep.field_deg to about %.4f)", c.DistanceMM, c.FieldDeg))
		}
	}
	switch r.Rows.Source {
	case "steps":
		if r.Rows.MMPerStep != nil {
			v := *r.Rows.MMPerStep / sy
			c.Recipe.Rows.MMPerStep = &v
			c.Steps = append(c.Steps, fmt.Sprintf("set rows.mm_per_step to %.6g", v))
		}
	case "even":
		if r.Rows.SpeedMMS != nil {
			v := *r.Rows.SpeedMMS / sy
			c.Recipe.Rows.SpeedMMS = &v
			c.Steps = append(c.Steps, fmt.Sprintf("set rows.speed_mm_s to %.6g", v))
		}
	default:
		c.Calibration = make([][2]float64, len(r.Rows.Calibration))
		for i, p := range r.Rows.Calibration {
			c.Calibration[i] = [2]float64{p[0], p[1] / sy}
		}
		c.Recipe.Rows.Calibration = c.Calibration
		c.Steps = append(c.Steps, fmt.Sprintf("set rows.calibration to %s", formatPoints(c.Calibration)))
	}
	if math.Abs(g.RotationDeg) > 0.5 || math.Abs(g.ShearDeg) > 0.5 {
		c.Steps = append(c.Steps, fmt.Sprintf("the grid is turned %.2f° and sheared %.2f°: square the target to the scan before trusting the scales", g.RotationDeg, g.ShearDeg))
	}
	return c, nil
}

func formatPoints(p [][2]float64) string {
	s := "["
	for i, v := range p {
		if i > 0 {
			s += ", "
		}
		s += fmt.Sprintf("[%.6g, %.6g]", v[0], v[1])
	}
	return s + "]"
}
