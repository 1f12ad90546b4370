package ui

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"fyne.io/fyne/v2/dialog"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
)

// sessionFormat names the autosaved session file's layout.
const sessionFormat = "spotloom-session/1"

// savedSession is what the window keeps between runs: the capture, the
// settings being tuned and where the view was.
type savedSession struct {
	Format  string          `json:"format"`
	Capture string          `json:"capture"` // "" for the built-in demo
	Recipe  json.RawMessage `json:"recipe"`
	Tone    recon.Tone      `json:"tone"`
	View    viewPlace       `json:"view"`
	// Measurements are the shapes drawn on the frame.
	Measurements []measure.Shape `json:"measurements,omitempty"`
	// Modified says the tuning differs from what was opened or saved.
	Modified bool      `json:"modified"`
	SavedAt  time.Time `json:"saved_at"`
}

// viewPlace is the zoom (units per mm) and centre (mm) of the image view;
// zero zoom means fit.
type viewPlace struct {
	Zoom    float32 `json:"zoom"`
	CentreX float64 `json:"centre_x_mm"`
	CentreY float64 `json:"centre_y_mm"`
}

// DefaultSessionFile is where the window autosaves its session: a file
// in the user's configuration folder ("" when there is none).
func DefaultSessionFile() string {
	dir, err := os.UserConfigDir()
	if err != nil || dir == "" {
		return ""
	}
	return filepath.Join(dir, "spotloom", "session.json")
}

// saveSession writes the session beside nothing else, through a temporary
// file that is synced and renamed, so a crash never leaves half a file.
func (ws *Workstation) saveSession() {
	path := ws.opts.SessionFile
	if path == "" || ws.result == nil || ws.Live() {
		return // a live view is kept once it is a capture
	}
	s := savedSession{
		Format: sessionFormat, Capture: ws.sourcePath, Recipe: ws.cur.Recipe.JSON(), Tone: ws.cur.Tone,
		View: ws.view.place(), Modified: ws.modified(), SavedAt: time.Now().UTC(), Measurements: ws.cur.Measurements,
	}
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o700); err != nil {
		ws.sessionNote = "The session cannot be kept: " + err.Error()
		return
	}
	if err := export.SaveFile(path, append(data, '\n'), true); err != nil {
		ws.sessionNote = "The session cannot be kept: " + err.Error()
		return
	}
	// The session names the user's files: keep it theirs alone.
	_ = os.Chmod(path, 0o600)
	ws.sessionNote = ""
}

// loadSession reads the autosaved session; ok is false when there is
// none worth offering (missing, unreadable, or nothing was tuned).
func loadSession(path string) (s savedSession, r recipe.Recipe, ok bool, err error) {
	if path == "" {
		return s, r, false, nil
	}
	data, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return s, r, false, nil
	}
	if err != nil {
		return s, r, false, err
	}
	if err := json.Unmarshal(data, &s); err != nil || s.Format != sessionFormat {
		return s, r, false, fmt.Errorf("%s is not a session this version can read", path)
	}
	r, err = recipe.Parse(s.Recipe)
	if err != nil {
		return s, r, false, fmt.Errorf("%s: %w", path, err)
	}
	if s.Capture != "" {
		if _, err := os.Stat(s.Capture); err != nil {
			return s, r, false, nil // the capture has gone: nothing to resume
		}
	}
	return s, r, s.Modified, nil
}

// Start opens the capture the window starts on. When an autosaved
// session holds tuning that was not saved, the window first offers it
// back; otherwise (or when declined) it runs fresh.
func (ws *Workstation) Start(fresh func()) {
	s, r, ok, err := loadSession(ws.opts.SessionFile)
	if err != nil {
		ws.settled = "The last session could not be read: " + err.Error()
	}
	if !ok {
		fresh()
		return
	}
	name := "the built-in demo"
	if s.Capture != "" {
		name = filepath.Base(s.Capture)
	}
	d := dialog.NewConfirm("Resume the last session?",
		fmt.Sprintf("The tuning of %s from %s was not saved.\nResume it (capture, settings and view)?", name, s.SavedAt.Local().Format("2 Jan 15:04")),
		func(yes bool) {
			if !yes {
				fresh()
				return
			}
			ws.resume = &s
			if s.Capture == "" {
				ws.OpenDemoWithRecipe(&r)
			} else {
				ws.OpenFile(s.Capture, &r)
			}
		}, ws.win)
	d.SetConfirmText("Resume")
	d.SetDismissText("Start afresh")
	d.Show()
}
