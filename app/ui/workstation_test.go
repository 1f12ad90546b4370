package ui

import (
	"testing"

	"fyne.io/fyne/v2/test"
)

func TestQuickDemo(t *testing.T) {
	a := test.NewApp()
	w := a.NewWindow("t")
	a.Settings().SetTheme(Theme())
	ws := New(a, w, Options{})
	w.Resize(SnapshotSize)
	ws.OpenDemo()
	ws.Wait()
	if ws.result == nil {
		t.Fatalf("no result: %s", ws.Problem())
	}
	img := w.Canvas().Capture()
	if err := WritePNG("/tmp/q/shot.png", img); err != nil {
		t.Fatal(err)
	}
	t.Logf("report %+v", ws.result.Report)
}
