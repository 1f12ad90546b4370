package ui

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"spotloom/capture"
	"spotloom/sampledata"
)

// A two-input capture (the index pulses and the position tone on one
// channel) opens with that channel in both roles; taking the position off
// it and giving it back shares the channel again instead of swapping the
// index away, and the window builds.
func TestWindowSharesIndexAndPositionTone(t *testing.T) {
	rig := sampledata.StereoSoundCardRig()
	rig.DurationS = 5
	rec, _, err := sampledata.Simulate(context.Background(), rig, "parcel", sampledata.SimOptions{Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "stereo.wav")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := capture.WriteWAV(f, rec, "int16"); err != nil {
		t.Fatal(err)
	}
	f.Close()
	ws, _ := newTestWorkstation(t)
	ws.OpenFile(path, nil)
	ws.Wait()
	det, idx, pos := ws.roleChannels(ws.cur.Recipe)
	if det != 0 || idx != 1 || pos != 1 || ws.result == nil {
		t.Fatalf("roles %d/%d/%d (%s), want 0/1/1", det, idx, pos, ws.Problem())
	}
	ws.source.position.SetSelected(noChannel)
	ws.Wait()
	ws.problem = "" // a failed build leaves its message; a good one does not clear it
	ws.source.position.SetSelected(ws.source.options[1])
	ws.Wait()
	if d, i, p := ws.roleChannels(ws.cur.Recipe); d != 0 || i != 1 || p != 1 || ws.Problem() != "" {
		t.Errorf("roles %d/%d/%d after giving the position back (%s), want 0/1/1", d, i, p, ws.Problem())
	}
}
