package live

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// SidecarFormat names the layout of a recording's sidecar file.
const SidecarFormat = "spotloom-recording/1"

// Sidecar describes a recording made by Record; it is written as JSON
// beside the WAV (NAME.recording.json) when the recording starts, brought
// up to date at every commit, and finished when the recording ends, so a
// killed recording still says what it was and where samples were lost.
type Sidecar struct {
	Format       string    `json:"format"`
	File         string    `json:"file"`
	Device       string    `json:"device"`
	SampleRateHz int       `json:"sample_rate_hz"`
	Channels     int       `json:"channels"`
	SampleType   string    `json:"sample_type"`
	Started      time.Time `json:"started"`
	// Frames is the number of frames in the WAV at the last update,
	// including the zero frames that mark lost samples.
	Frames int64 `json:"frames"`
	// Finished is false while recording and in a recording that was cut off.
	Finished bool   `json:"finished"`
	Stopped  string `json:"stopped,omitempty"` // why the recording ended
	// Overruns lists every stretch of frames that could not be taken in
	// time; each is in the WAV as zero frames at its place.
	Overruns      []Overrun `json:"overruns"`
	OverrunFrames int64     `json:"overrun_frames"`
}

// Overrun is one stretch of lost frames: Frames zero frames starting at
// frame AtFrame of the WAV.
type Overrun struct {
	AtFrame int64 `json:"at_frame"`
	Frames  int64 `json:"frames"`
}

// SidecarPath is the sidecar of a recording: NAME.recording.json beside
// NAME.wav.
func SidecarPath(wavPath string) string {
	return strings.TrimSuffix(wavPath, filepath.Ext(wavPath)) + ".recording.json"
}

// ReadSidecar reads a recording's sidecar.
func ReadSidecar(path string) (*Sidecar, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var s Sidecar
	if err := json.Unmarshal(b, &s); err != nil {
		return nil, fmt.Errorf("%s: %v", path, err)
	}
	if s.Format != SidecarFormat {
		return nil, fmt.Errorf("%s: format %q: expected %q", path, s.Format, SidecarFormat)
	}
	return &s, nil
}

// createSidecar writes the first version of the sidecar; it fails if the
// file exists, as a recording never overwrites a file.
func createSidecar(path string, s *Sidecar) error {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, os.ErrExist) {
			return fmt.Errorf("%s already exists; a recording never overwrites a file, choose another name", path)
		}
		return err
	}
	_, err = f.Write(sidecarJSON(s))
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

// updateSidecar replaces the sidecar (which this recording made) in one
// step: a temporary file beside it, synced, then renamed over it, so a kill
// leaves the old or the new version, never half of one.
func updateSidecar(path string, s *Sidecar) error {
	f, err := os.CreateTemp(filepath.Dir(path), ".recording-*.json")
	if err != nil {
		return err
	}
	_, err = f.Write(sidecarJSON(s))
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(f.Name(), path)
	}
	if err != nil {
		os.Remove(f.Name())
		return fmt.Errorf("update %s: %w", path, err)
	}
	return nil
}

func sidecarJSON(s *Sidecar) []byte {
	b, _ := json.MarshalIndent(s, "", "  ")
	return append(b, '\n')
}
