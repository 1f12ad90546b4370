package ui

import (
	"context"
	"fmt"
	"testing"
	"time"

	"spotloom/recon/recipe"
	"spotloom/sampledata"
)

// BenchmarkDelayChange times a delay change on the demo through the
// engine path the window uses (sessionEngine.Build on a warm session, as
// after the first image): the stages before placement come from the
// session's cache.
func BenchmarkDelayChange(b *testing.B) {
	rec, err := sampledata.Demo()
	if err != nil {
		b.Fatal(err)
	}
	eng := NewSessionEngine(rec)
	r := sampledata.DemoRecipe()
	res, err := eng.Build(context.Background(), r, nil)
	if err != nil {
		b.Fatal(err)
	}
	d0 := res.Report.DelayDeg
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		r.Sweep.DelayDeg = recipe.Float(d0 + 0.25*float64(i%2+1))
		if _, err := eng.Build(context.Background(), r, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Milliseconds())/float64(b.N), "ms/change")
}

// BenchmarkDelayChangeInWindow times the whole way from typing a delay to
// the new image in the view: change, build off the UI goroutine, hand-back,
// tone mapping, trace strip and facts.
func BenchmarkDelayChangeInWindow(b *testing.B) {
	ws, _ := newTestWorkstation(b)
	d0 := ws.result.Report.DelayDeg
	start := time.Now()
	for i := 0; b.Loop(); i++ {
		ws.controls.number(ctlDelay).typed(fmt.Sprintf("%.3f", d0+0.25*float64(i%2+1)))
		ws.Wait()
		if ws.Problem() != "" {
			b.Fatal(ws.Problem())
		}
	}
	b.ReportMetric(float64(time.Since(start).Milliseconds())/float64(b.N), "ms/change")
}
