package capture

import (
	"fmt"
	"io"
)

// ChannelSummary is what Inspect tells about one channel.
type ChannelSummary struct {
	Name, Unit string
	Stats
	// NonFinite counts NaN or infinite samples; the readers store them as
	// 0, and Stats counts them so.
	NonFinite int
}

// Summary is what Inspect tells about a capture without keeping it.
type Summary struct {
	SampleRateHz float64
	Frames       int
	Source       Source
	Channels     []ChannelSummary
	Roles        []RoleGuess
	Warnings     []string
	// Head is what the roles were guessed from: the start of each channel
	// (Inspect), or the whole recording (Summarize). Read only.
	Head *Recording
}

// DurationS is the length of the capture in seconds.
func (s *Summary) DurationS() float64 {
	if s.SampleRateHz <= 0 {
		return 0
	}
	return float64(s.Frames) / s.SampleRateHz
}

// inspectRoleSamples is how much of the start of each channel Inspect
// keeps for the role guess: 1 M samples (5 s at 192 kHz, 22 s at 48 kHz),
// a quarter of what GuessRoles looks at in a whole recording, so that
// inspecting costs no more than reading. roleBudget bounds the samples
// kept over all channels: 16 MB of float32.
const (
	inspectRoleSamples = 1 << 20
	roleBudget         = 1 << 22
)

// Inspect reads the capture at path as Open does and returns its rate,
// length, per-channel statistics and guessed roles. WAV and raw captures
// are streamed through a fixed buffer: the statistics are gathered block by
// block, and only the start of each channel is kept for GuessRoles
// (inspectRoleSamples, fewer when there are many channels), so memory does
// not grow with the file. Text captures are streamed row by row the same
// way.
func Inspect(path string, opts Options) (*Summary, error) {
	sum := &summarizer{}
	opts.summary = sum
	rec, err := Open(path, opts)
	if err != nil {
		return nil, err
	}
	if !sum.started {
		return Summarize(rec), nil
	}
	out := &Summary{SampleRateHz: rec.SampleRateHz, Frames: sum.frames, Source: rec.Source, Warnings: rec.Warnings}
	sample := &Recording{SampleRateHz: rec.SampleRateHz, Channels: make([]Channel, len(rec.Channels))}
	for c, ch := range rec.Channels {
		a := &sum.channels[c]
		out.Channels = append(out.Channels, ChannelSummary{Name: ch.Name, Unit: ch.Unit, Stats: a.stats(), NonFinite: a.nonFinite})
		sample.Channels[c] = Channel{Name: ch.Name, Unit: ch.Unit, Samples: sum.samples[c]}
	}
	out.Roles, out.Head = GuessRoles(sample), sample
	return out, nil
}

// Summarize gives the Summary of a recording held in memory.
func Summarize(rec *Recording) *Summary {
	out := &Summary{SampleRateHz: rec.SampleRateHz, Frames: rec.Frames(), Source: rec.Source, Warnings: rec.Warnings, Roles: GuessRoles(rec), Head: rec}
	for _, ch := range rec.Channels {
		var a statsAccumulator
		a.add(ch.Samples)
		out.Channels = append(out.Channels, ChannelSummary{Name: ch.Name, Unit: ch.Unit, Stats: a.stats(), NonFinite: a.nonFinite})
	}
	return out
}

// summarizer receives the samples of a streamed read.
type summarizer struct {
	started  bool
	frames   int
	keep     int // samples kept per channel for the role guess
	channels []statsAccumulator
	samples  [][]float32
}

// start prepares for channels channels of frames frames each.
func (s *summarizer) start(channels int, frames int64) {
	s.started = true
	s.frames = int(frames)
	s.keep = int(min(frames, inspectRoleSamples, int64(roleBudget/max(channels, 1))))
	s.channels = make([]statsAccumulator, channels)
	s.samples = make([][]float32, channels)
	for c := range s.samples {
		s.samples[c] = make([]float32, 0, s.keep)
	}
}

// add takes the next samples of channel c.
func (s *summarizer) add(c int, x []float32) {
	s.channels[c].add(x)
	if room := s.keep - len(s.samples[c]); room > 0 {
		kept := len(s.samples[c])
		s.samples[c] = append(s.samples[c], x[:min(room, len(x))]...)
		for i := kept; i < len(s.samples[c]); i++ {
			if v := s.samples[c][i]; v-v != 0 {
				s.samples[c][i] = 0 // as the readers store it
			}
		}
	}
}

// nonFiniteWarning is the readers' warning about NaN and infinite samples
// for a streamed read, which has not stored them.
func (s *summarizer) nonFiniteWarning() []string {
	n := 0
	for _, a := range s.channels {
		n += a.nonFinite
	}
	if n == 0 {
		return nil
	}
	return []string{nonFiniteText(n)}
}

// nonFiniteText is the warning for n NaN or infinite samples set to 0.
func nonFiniteText(n int) string {
	return fmt.Sprintf("%d samples were NaN or infinite and were set to 0", n)
}

// streamFrames reads frames interleaved frames of frameBytes bytes of
// channels channels from start, converts them a block at a time into one
// fixed buffer and hands each channel's block to sum as channel
// first+c. Progress is the fraction of the frames done.
func streamFrames(r io.ReaderAt, start, frames int64, frameBytes, channels, first int, conv frameConverter, progress func(float64), format string, sum *summarizer) error {
	perBlock := int64(max(readBufferBytes/frameBytes, 1))
	buf := make([]byte, perBlock*int64(frameBytes))
	block := make([][]float32, channels)
	for c := range block {
		block[c] = make([]float32, perBlock)
	}
	for at := int64(0); at < frames; {
		n := min(perBlock, frames-at)
		b := buf[:n*int64(frameBytes)]
		if err := readBlock(r, b, start+at*int64(frameBytes), format); err != nil {
			return err
		}
		conv(block, 0, b)
		for c := range block {
			sum.add(first+c, block[c][:n])
		}
		at += n
		if progress != nil {
			progress(float64(at) / float64(frames))
		}
	}
	return nil
}
