package recon_test

import (
	"context"
	"fmt"

	"spotloom/recon"
	"spotloom/sampledata"
)

// A build of the built-in demo capture with the demo rig's recipe: the
// automatic values are resolved and reported, and a delay change re-uses
// the timing and rows already found.
func ExampleSession_Build() {
	rec, err := sampledata.Demo()
	if err != nil {
		fmt.Println(err)
		return
	}
	s := recon.NewSession(rec)
	res, err := s.Build(context.Background(), sampledata.DemoRecipe(), nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	rep := res.Report
	fmt.Printf("%d lines at %.0f lines/s, %.0f rev/min\n", rep.Lines, rep.LineRateHz, rep.RPMMean)
	fmt.Printf("delay %.0f°, frame %d × %d at %g mm\n", rep.DelayDeg, rep.Columns, rep.Rows, rep.PitchMM)

	r := res.Recipe
	d := *r.Sweep.DelayDeg + 0.5
	r.Sweep.DelayDeg = &d
	again, err := s.Build(context.Background(), r, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("delay moved by %.2f°, same %d lines\n", again.Report.DelayDeg-rep.DelayDeg, len(again.Lines))
	// Output:
	// 840 lines at 42 lines/s, 420 rev/min
	// delay 9°, frame 269 × 403 at 1 mm
	// delay moved by 0.50°, same 840 lines
}
