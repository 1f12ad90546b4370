package sampledata

import (
	"fmt"
	"math"
)

// Scatter yields of the scene materials (0 = nothing comes back, 1 = full
// scatter). They are our own round figures chosen so that light elements
// (water, plastic, paper) scatter strongly and metals, which absorb, look
// dark — the contrast a backscatter image shows.
const (
	yieldAir       = 0.02
	yieldWall      = 0.08 // a wall some way behind the parcel
	yieldCardboard = 0.35
	yieldBoxRim    = 0.45 // folded-over cardboard at the box edges
	yieldWater     = 0.85
	yieldPlastic   = 0.65
	yieldSheet     = 0.8 // acrylic sheet of the test scenes
	yieldTape      = 0.6
	yieldCloth     = 0.5
	yieldCloth2    = 0.62 // a fold: two layers of cloth
	yieldPVC       = 0.55
	yieldCopper    = 0.1
	yieldSteel     = 0.04
	yieldCoin      = 0.06
	yieldLead      = 0.02
	yieldCardBack  = 0.05 // dark backing board behind the edge card
)

// parcelScene is a cardboard box (240 × 340 mm) holding a plastic bottle of
// water, a steel spanner, a roll of tape, a coiled cable, coins and a folded
// cloth, in front of a wall that scatters a little.
func parcelScene() SceneModel {
	s := SceneModel{
		Name:            "parcel",
		Description:     "a cardboard box holding a water bottle, a spanner, tape, a coiled cable, coins and a folded cloth",
		BackgroundYield: yieldWall,
	}
	add := func(sh Shape) { s.Shapes = append(s.Shapes, sh) }
	add(shape("box rim", "cardboard", yieldBoxRim, 0, boxDistance(0, 0, 240, 340, 0, 6), -120, -170, 120, 170))
	add(shape("box", "cardboard", yieldCardboard, 0, boxDistance(0, 0, 228, 328, 0, 3), -114, -164, 114, 164))
	// Folded cloth in the lower right, with two folds of double layer.
	add(shape("cloth", "cotton", yieldCloth, 5, boxDistance(45, -105, 120, 80, 8, 10), -20, -150, 110, -60))
	add(shape("cloth fold", "cotton", yieldCloth2, 5, boxDistance(42, -85, 116, 14, 8, 4), -20, -100, 105, -70))
	add(shape("cloth fold", "cotton", yieldCloth2, 5, boxDistance(48, -122, 116, 12, 8, 4), -15, -140, 110, -105))
	// Water bottle standing along y on the left, with its cap.
	add(shape("bottle", "water in PET", yieldWater, 10, capsuleDistance(-62, -110, -62, 85, 34), -96, -144, -28, 119))
	add(shape("bottle neck", "PET", yieldPlastic, 10, boxDistance(-62, 130, 28, 30, 0, 4), -76, 115, -48, 145))
	add(shape("bottle cap", "polypropylene", yieldPlastic, 10, boxDistance(-62, 148, 34, 14, 0, 3), -79, 141, -45, 155))
	// Roll of tape: plastic tape on a cardboard core, hole shows the box.
	add(shape("tape", "polypropylene tape", yieldTape, 15, ringDistance(50, 10, 28, 52), -2, -42, 102, 62))
	add(shape("tape core", "cardboard", yieldBoxRim, 15, ringDistance(50, 10, 24, 28), 26, -14, 74, 34))
	// Coiled cable: three loops of PVC-sheathed copper, each loop a little
	// off-centre from the one before.
	for i := 0; i < 3; i++ {
		cx, cy, r := -15+3*float64(i), -40+2*float64(i), 30+5*float64(i)
		add(shape(fmt.Sprintf("cable loop %d", i+1), "PVC", yieldPVC, 20, ringDistance(cx, cy, r-3.5, r+3.5), cx-r-4, cy-r-4, cx+r+4, cy+r+4))
		add(shape(fmt.Sprintf("cable core %d", i+1), "copper", yieldCopper, 20, ringDistance(cx, cy, r-1.2, r+1.2), cx-r-2, cy-r-2, cx+r+2, cy+r+2))
	}
	// Steel open-ended spanner lying diagonally in the upper right: a
	// handle and a ring at each end, the upper ring cut open as a jaw.
	add(shape("spanner handle", "steel", yieldSteel, 5, capsuleDistance(0, 70, 70, 140, 7), -8, 62, 78, 148))
	add(shape("spanner ring", "steel", yieldSteel, 5, ringDistance(-6, 64, 7, 17), -23, 47, 11, 81))
	jaw := minus(ringDistance(78, 148, 9, 20), boxDistance(88, 158, 18, 40, 45, 0))
	add(shape("spanner jaw", "steel", yieldSteel, 5, jaw, 58, 128, 98, 168))
	// Coins in the lower left corner and one on the cloth.
	for _, c := range [][3]float64{{-90, -150, 11}, {-68, -152, 12.5}, {-95, -128, 10}, {80, -110, 13}} {
		add(shape("coin", "copper-nickel", yieldCoin, 8, circleDistance(c[0], c[1], c[2]), c[0]-c[2], c[1]-c[2], c[0]+c[2], c[1]+c[2]))
	}
	return s
}

// Dot-grid geometry: non-scattering holes in an acrylic sheet.
const (
	dotPitchMM    = 25
	dotDiameterMM = 8
	dotSheetWMM   = 340
	dotSheetHMM   = 480
)

// dotGridScene is a regular grid of non-scattering dots (holes, 8 mm, every
// 25 mm) in a scattering sheet, for geometry calibration. One dot sits at
// the scene centre.
func dotGridScene() SceneModel {
	s := SceneModel{
		Name:            "dot-grid",
		Description:     "8 mm holes every 25 mm in a scattering sheet, for geometry calibration",
		BackgroundYield: yieldAir,
		DotDiameterMM:   dotDiameterMM,
	}
	s.Shapes = append(s.Shapes, shape("sheet", "acrylic", yieldSheet, 0,
		boxDistance(0, 0, dotSheetWMM, dotSheetHMM, 0, 0), -dotSheetWMM/2, -dotSheetHMM/2, dotSheetWMM/2, dotSheetHMM/2))
	r := dotDiameterMM / 2.0
	nx := int((dotSheetWMM/2 - dotPitchMM/2) / dotPitchMM)
	ny := int((dotSheetHMM/2 - dotPitchMM/2) / dotPitchMM)
	for j := -ny; j <= ny; j++ {
		for i := -nx; i <= nx; i++ {
			x, y := float64(i*dotPitchMM), float64(j*dotPitchMM)
			s.Dots = append(s.Dots, [2]float64{x, y})
			s.Shapes = append(s.Shapes, shape("dot", "hole", yieldAir, 0, circleDistance(x, y, r), x-r, y-r, x+r, y+r))
		}
	}
	sortDots(s.Dots)
	return s
}

// Edge-card geometry.
const (
	edgeCardTiltDeg = 5
	edgeCardWMM     = 170
	edgeCardHMM     = 260
)

// edgeCardScene is a scattering card turned 5° on a dark backing, for the
// slanted-edge method: its long sides are edges 5° off the cross-scan axis
// (resolution along the sweep), its short sides 5° off the sweep axis
// (resolution across it).
func edgeCardScene() SceneModel {
	s := SceneModel{
		Name:            "edge-card",
		Description:     "a scattering card turned 5° on a dark backing, for the slanted-edge method",
		BackgroundYield: yieldAir,
	}
	s.Shapes = append(s.Shapes,
		shape("backing", "painted board", yieldCardBack, 0, boxDistance(0, 0, 320, 460, 0, 0), -160, -230, 160, 230),
		shape("card", "acrylic", yieldSheet, 0, boxDistance(0, 0, edgeCardWMM, edgeCardHMM, edgeCardTiltDeg, 0), -110, -150, 110, 150))
	sin, cos := math.Sincos(edgeCardTiltDeg * math.Pi / 180)
	corner := func(u, v float64) (float64, float64) { return u*cos - v*sin, u*sin + v*cos }
	// Midpoints of the four sides and their directions.
	sides := []struct {
		name  string
		u, v  float64
		angle float64
	}{
		{"left edge", -edgeCardWMM / 2, 0, 90 + edgeCardTiltDeg},
		{"right edge", edgeCardWMM / 2, 0, 90 + edgeCardTiltDeg},
		{"top edge", 0, edgeCardHMM / 2, edgeCardTiltDeg},
		{"bottom edge", 0, -edgeCardHMM / 2, edgeCardTiltDeg},
	}
	for _, sd := range sides {
		x, y := corner(sd.u, sd.v)
		s.Features = append(s.Features, Feature{Kind: "edge", Name: sd.name, XMM: x, YMM: y, AngleDeg: sd.angle})
	}
	return s
}

// Uniform-sheet geometry: wider than the demo field and longer than its
// travel, so every line of a scan crosses nothing else.
const (
	uniformSheetWMM = 700
	uniformSheetHMM = 900
)

// uniformSheetScene is one flat scattering sheet filling the field, for
// noise: any structure in its frame is the scanner's.
func uniformSheetScene() SceneModel {
	s := SceneModel{
		Name:            "sheet",
		Description:     "a uniform acrylic sheet filling the field, for noise measurement",
		BackgroundYield: yieldAir,
	}
	s.Shapes = append(s.Shapes, shape("sheet", "acrylic", yieldSheet, 0,
		boxDistance(0, 0, uniformSheetWMM, uniformSheetHMM, 0, 0), -uniformSheetWMM/2, -uniformSheetHMM/2, uniformSheetWMM/2, uniformSheetHMM/2))
	return s
}

// barsLinePairsPerCM are the bar-group frequencies of the bars scene.
var barsLinePairsPerCM = []float64{0.5, 1, 1.5, 2, 2.5, 3}

// barsScene holds groups of five lead bars on an acrylic plate at 0.5 to 3
// line pairs per centimetre: one set with bars along y (resolution along the
// sweep) in the upper half, one with bars along x (resolution across it) in
// the lower half.
func barsScene() SceneModel {
	s := SceneModel{
		Name:            "bars",
		Description:     "groups of five lead bars at 0.5 to 3 line pairs per cm, both orientations",
		BackgroundYield: yieldAir,
	}
	s.Shapes = append(s.Shapes, shape("plate", "acrylic", yieldSheet, 0, boxDistance(0, 0, 260, 440, 0, 0), -130, -220, 130, 220))
	const bars = 5
	const gapMM = 12
	const lengthMM = 45
	// Sweep-resolving groups: bars run along y; two rows of three groups.
	rows := [][]float64{barsLinePairsPerCM[:3], barsLinePairsPerCM[3:]}
	rowY := []float64{165, 100}
	for ri, row := range rows {
		total := -float64(gapMM)
		for _, f := range row {
			total += (2*bars-1)*5/f + gapMM
		}
		x := -total / 2
		for _, f := range row {
			w := 5 / f // bar width = half a period of 10/f mm
			groupW := (2*bars - 1) * w
			cx := x + groupW/2
			s.Features = append(s.Features, Feature{Kind: "bars", Name: fmt.Sprintf("%g lp/cm along x", f),
				XMM: cx, YMM: rowY[ri], AngleDeg: 90, LinePairsPerCM: f, BarWidthMM: w, WidthMM: groupW, HeightMM: lengthMM})
			for b := 0; b < bars; b++ {
				bx := x + w/2 + float64(2*b)*w
				s.Shapes = append(s.Shapes, shape("bar", "lead", yieldLead, 0, boxDistance(bx, rowY[ri], w, lengthMM, 0, 0),
					bx-w/2, rowY[ri]-lengthMM/2, bx+w/2, rowY[ri]+lengthMM/2))
			}
			x += groupW + gapMM
		}
	}
	// Cross-scan-resolving groups: bars run along x; six columns side by
	// side, each group starting at the same top.
	const colW = 32
	const top = 20.0
	x0 := -(6*colW + 5*8.0) / 2
	for i, f := range barsLinePairsPerCM {
		w := 5 / f
		groupH := (2*bars - 1) * w
		cx := x0 + float64(i)*(colW+8) + colW/2
		s.Features = append(s.Features, Feature{Kind: "bars", Name: fmt.Sprintf("%g lp/cm along y", f),
			XMM: cx, YMM: top - groupH/2, AngleDeg: 0, LinePairsPerCM: f, BarWidthMM: w, WidthMM: colW, HeightMM: groupH})
		for b := 0; b < bars; b++ {
			by := top - w/2 - float64(2*b)*w
			s.Shapes = append(s.Shapes, shape("bar", "lead", yieldLead, 0, boxDistance(cx, by, colW, w, 0, 0),
				cx-colW/2, by-w/2, cx+colW/2, by+w/2))
		}
	}
	return s
}
