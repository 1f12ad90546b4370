package capture

import (
	"fmt"
	"strconv"
	"strings"
)

// Units used for Channel.Unit when a reader knows nothing better.
const (
	UnitVolt      = "V"
	UnitFullScale = "FS" // integer WAV/raw samples mapped to ±1.0 full scale
)

// Channel is one recorded signal: its name, the unit of its samples and the
// samples themselves, one per frame.
type Channel struct {
	Name    string
	Unit    string
	Samples []float32
}

// Source says where a Recording came from, for reports and inspect.
type Source struct {
	Path       string // file path, or "" for an in-memory capture
	Format     string // "wav", "csv", "raw" or "memory"
	SampleType string // e.g. "int16", "float32", "text"
	BitDepth   int    // bits per stored sample, 0 when not meaningful (CSV)
}

// Recording is a multi-channel capture with one common sample rate. All
// channels hold the same number of samples (frames).
type Recording struct {
	SampleRateHz float64
	Channels     []Channel
	Source       Source
	// Warnings are plain sentences about things that were read but looked
	// doubtful (uneven time spacing, clipped samples), never errors.
	Warnings []string
}

// Frames is the number of samples in each channel.
func (r *Recording) Frames() int {
	if r == nil || len(r.Channels) == 0 {
		return 0
	}
	return len(r.Channels[0].Samples)
}

// DurationS is the length of the recording in seconds.
func (r *Recording) DurationS() float64 {
	if r == nil || r.SampleRateHz <= 0 {
		return 0
	}
	return float64(r.Frames()) / r.SampleRateHz
}

// Validate checks the invariants every reader and generator must keep: a
// positive finite rate, at least one channel, equal channel lengths.
func (r *Recording) Validate() error {
	if r == nil {
		return fmt.Errorf("no recording")
	}
	if !(r.SampleRateHz >= MinSampleRateHz) || r.SampleRateHz > MaxSampleRateHz {
		return fmt.Errorf("sample rate %g Hz is not between %g and %g Hz", r.SampleRateHz, float64(MinSampleRateHz), MaxSampleRateHz)
	}
	if len(r.Channels) == 0 {
		return fmt.Errorf("recording has no channels")
	}
	n := len(r.Channels[0].Samples)
	for i, c := range r.Channels {
		if len(c.Samples) != n {
			return fmt.Errorf("channel %d (%s) has %d samples, channel 0 has %d", i, c.Name, len(c.Samples), n)
		}
	}
	return nil
}

// Lookup finds a channel by reference: a decimal channel number ("2") or a
// channel name (case-insensitive). It returns the channel's index.
func (r *Recording) Lookup(ref string) (int, error) {
	ref = strings.TrimSpace(ref)
	if n, err := strconv.Atoi(ref); err == nil {
		if n < 0 || n >= len(r.Channels) {
			return -1, fmt.Errorf("channel %d does not exist: the capture has channels 0 to %d", n, len(r.Channels)-1)
		}
		return n, nil
	}
	for i, c := range r.Channels {
		if strings.EqualFold(c.Name, ref) {
			return i, nil
		}
	}
	names := make([]string, len(r.Channels))
	for i, c := range r.Channels {
		names[i] = fmt.Sprintf("%d=%q", i, c.Name)
	}
	return -1, fmt.Errorf("no channel named %q: the capture has %s", ref, strings.Join(names, ", "))
}
