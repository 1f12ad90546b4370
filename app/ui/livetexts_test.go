package ui

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"
)

// Between the full updates a live update brings the texts (the facts and
// the stage's line count) up to date only liveTextRate times a second:
// one that comes sooner leaves them as they were, and the next one after
// that period shows the newest report.
func TestLiveTextsFollowAtTheirRate(t *testing.T) {
	_, ws, run := replayToFirstImage(t, 1)
	ws.Wait()
	uiDo(func() {
		if !ws.Live() || ws.work.busy() {
			t.Error("the replay ended, or the window is busy, before the check")
			return
		}
		st := liveStatus{rateHz: run.format.RateHz, peak: make([]float32, run.format.Channels)}
		next := func(add int) *Result {
			res := *ws.result
			res.Report.Lines += add
			return &res
		}
		lines := func() (facts, stage string) { return ws.facts.values["Lines"].Text, ws.stage.Text }
		now := time.Now()
		ws.lv.fullAt, ws.lv.textAt = now, now
		before, stageBefore := lines()
		res := next(1000)
		ws.showLive(run, ws.rec, res, st)
		if ws.result != res {
			t.Error("the update's image is not shown")
			return
		}
		if facts, stage := lines(); facts != before || stage != stageBefore {
			t.Errorf("an update right after the texts changed them: facts %q (was %q), stage %q (was %q)", facts, before, stage, stageBefore)
		}
		ws.lv.fullAt, ws.lv.textAt = now, now.Add(-time.Second/liveTextRate)
		res = next(2000)
		ws.showLive(run, ws.rec, res, st)
		want := fmt.Sprint(res.Report.Lines)
		if facts, stage := lines(); facts != want || !strings.HasSuffix(stage, ": "+want+" lines") {
			t.Errorf("an update once the texts were due: facts %q, stage %q; want %s lines", facts, stage, want)
		}
	})
	endOfLive(t, ws)
}

// The live bar shows the time so far, what is on disk and the overruns;
// a status with more overruns gives the longer text, marked as a danger.
func TestLiveBarShowsTheStatus(t *testing.T) {
	test.NewTempApp(t)
	b := newLiveBar(func() {})
	b.start("Recording x.wav", 2)
	st := liveStatus{frames: 96000 * 75, committed: 96000 * 74, rateHz: 96000, peak: []float32{0.5, 1}, writing: true}
	for range 2 { // the same status twice: the same texts
		b.show(st)
		if b.elapsed.Text != "01:15.0" || b.disk.Text != "on disk 01:14.0" || b.overruns.Text != "overruns 0" {
			t.Errorf("bar shows %q, %q, %q; want 01:15.0, on disk 01:14.0, overruns 0", b.elapsed.Text, b.disk.Text, b.overruns.Text)
		}
	}
	st.overruns, st.overrunFrames = 2, 300
	b.show(st)
	if want := "overruns 2 (300 frames marked as zeros)"; b.overruns.Text != want || b.overruns.Importance != widget.DangerImportance {
		t.Errorf("bar shows %q (importance %v); want %q as a danger", b.overruns.Text, b.overruns.Importance, want)
	}
	st.noImage = "no image from the first 2.0 s yet"
	b.show(st)
	if b.note.Text != st.noImage || !b.note.Visible() {
		t.Errorf("note %q (visible %v); want %q shown", b.note.Text, b.note.Visible(), st.noImage)
	}
}
