package main

import (
	"fmt"
	"io"
	"math"
	"strings"
	"time"
	"unicode/utf8"

	"spotloom/capture"
	"spotloom/capture/live"
)

func init() {
	register(command{
		name:    "record",
		summary: "record a sound card (or replay a capture) to a WAV, every sample kept",
		run:     runRecord,
	})
}

const recordDescription = `
Records from a sound card into a new WAV file until Ctrl-C, or for --seconds.
Samples go from the card through a ring buffer to the file on a goroutine of
their own; the file's sizes are rewritten and the file synced twice a second,
so after a crash, a kill or a power cut FILE.wav is a valid WAV holding all but
at most the last second. NAME.recording.json beside it (format
"spotloom-recording/1") says which device, rate, channels and sample type,
when it started, why it stopped, and every overrun: frames the program could
not take in time, written as zeros at their place so later samples keep
their time, and listed by frame. An existing file is never overwritten; a
full disk stops the recording and says how much is in the file.

When stderr is a terminal, a line shows the elapsed time, the peak level of
each channel in dBFS and the overruns so far.

--list lists the capture devices; --device takes a name, an ID or a part of
a name that only one device has. --rate and --channels default to the
device's own. --from FILE replays a capture at its own rate (--speed times
faster) instead of a card: for trying the recorder without hardware.
`

type recordFlags struct {
	out, device, format, from string
	rateHz, channels          int
	seconds, speed            float64
	list                      bool
}

// recordFormats maps --format names to WAV sample types.
var recordFormats = map[string]string{"s16": "int16", "s24": "int24", "f32": "float32"}

func runRecord(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("record", "record --out FILE.wav [flags]", recordDescription, stderr)
	var f recordFlags
	fs.StringVar(&f.out, "out", "", "WAV `file` to write (must not exist)")
	fs.StringVar(&f.device, "device", "", "capture device `name` (default: the system's default input)")
	fs.IntVar(&f.rateHz, "rate", 0, "sample rate in `Hz` (default: the device's)")
	fs.IntVar(&f.channels, "channels", 0, "`number` of channels (default: the device's)")
	fs.StringVar(&f.format, "format", "s16", "stored sample `type`: s16, s24 or f32")
	fs.Float64Var(&f.seconds, "seconds", 0, "stop after this many `s` (default: at Ctrl-C)")
	fs.BoolVar(&f.list, "list", false, "list the capture devices and exit")
	fs.StringVar(&f.from, "from", "", "replay this capture `file` instead of a sound card")
	fs.Float64Var(&f.speed, "speed", 1, "replay `factor` for --from (1 = real time)")
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(positional) > 0 {
		return usagef("unexpected argument %q", positional[0])
	}
	if f.list {
		return listDevices(stdout)
	}
	return record(f, stderr)
}

func listDevices(stdout io.Writer) error {
	devices, err := live.Devices()
	if err != nil {
		return err
	}
	if len(devices) == 0 {
		fmt.Fprintln(stdout, "no capture devices")
		return nil
	}
	for _, d := range devices {
		mark := " "
		if d.Default {
			mark = "*"
		}
		if d.ID != "" && d.ID != d.Name {
			fmt.Fprintf(stdout, "%s %s  (%s)\n", mark, d.Name, d.ID)
		} else {
			fmt.Fprintf(stdout, "%s %s\n", mark, d.Name)
		}
	}
	return nil
}

func record(f recordFlags, stderr io.Writer) error {
	if f.out == "" {
		return usagef("--out is required")
	}
	sampleType, ok := recordFormats[f.format]
	if !ok {
		return usagef("--format %q: expected s16, s24 or f32", f.format)
	}
	if f.rateHz < 0 || f.channels < 0 || f.channels > capture.MaxChannels || f.seconds < 0 || math.IsNaN(f.seconds) {
		return usagef("--rate, --channels and --seconds must be positive (at most %d channels)", capture.MaxChannels)
	}
	src, err := recordSource(f)
	if err != nil {
		return err
	}
	defer src.Stop() // Record stops a source it started; this one may not have been
	format := src.Format()
	opts := live.Options{Path: f.out, SampleType: sampleType}
	if f.seconds > 0 {
		opts.MaxFrames = int64(math.Round(f.seconds * float64(format.RateHz)))
	}
	meter := &levelMeter{w: stderr, enabled: isTerminal(stderr)}
	opts.Status = meter.show
	ctx, stop := interruptContext()
	defer stop()
	// Say so once the file is made: a name refused is not a recording.
	opts.Create = func(path string, wf capture.WAVStreamFormat) (*capture.WAVStream, error) {
		s, err := capture.CreateWAVStream(path, wf)
		if err == nil {
			fmt.Fprintf(stderr, "recording %s: %d Hz, %d channels, %s, to %s\n", src.Name(), format.RateHz, format.Channels, f.format, f.out)
		}
		return s, err
	}
	res, err := live.Record(ctx, src, opts)
	meter.done()
	if res != nil {
		s := res.Sidecar
		line := fmt.Sprintf("%s: %.2f s, %d frames", f.out, float64(s.Frames)/float64(s.SampleRateHz), s.Frames)
		if n := len(s.Overruns); n > 0 {
			line += fmt.Sprintf("; %d overruns, %d frames lost and marked as zeros (see %s)", n, s.OverrunFrames, res.SidecarPath)
		}
		fmt.Fprintln(stderr, line)
	}
	return err
}

// recordSource is the sound card, or a replay for --from.
func recordSource(f recordFlags) (live.Source, error) {
	if f.from == "" {
		return live.OpenDevice(f.device, live.Format{RateHz: f.rateHz, Channels: f.channels})
	}
	if f.device != "" || f.rateHz != 0 || f.channels != 0 {
		return nil, usagef("--from replays a file at its own rate and channels; it takes no --device, --rate or --channels")
	}
	if !(f.speed > 0) {
		return nil, usagef("--speed %g: expected above 0", f.speed)
	}
	rec, err := capture.Open(f.from, capture.Options{})
	if err != nil {
		return nil, err
	}
	return live.NewReplay(rec, f.speed)
}

// levelMeter shows the elapsed time, per-channel peaks and overruns on one
// terminal line, kept shorter than the terminal is wide (asked at every
// update, so a resized window is followed) so that it never wraps, and
// cleared to the line's end so that a shorter line leaves nothing behind.
type levelMeter struct {
	w       io.Writer
	enabled bool
	shown   bool
}

func (m *levelMeter) show(s live.Status) {
	if !m.enabled {
		return
	}
	m.shown = true
	fmt.Fprintf(m.w, "\r%s\x1b[K", fitMeterLine(s, terminalWidth(m.w)-1))
}

// fitMeterLine is meterLine in at most width columns: without the bars
// when the full line is too long, cut at the width when even that is.
func fitMeterLine(s live.Status, width int) string {
	width = max(width, 1)
	line := meterLine(s)
	if utf8.RuneCountInString(line) <= width {
		return line
	}
	line = meterText(s, false)
	if r := []rune(line); len(r) > width {
		line = string(r[:width])
	}
	return line
}

func (m *levelMeter) done() {
	if m.shown {
		fmt.Fprintln(m.w)
	}
}

// meterLine is "01:02.5  1 ▮▮▮▮▮▯▯▯ -12 dB  2 ...  overruns 0": a bar of 8
// steps over 48 dB below full scale per channel.
func meterLine(s live.Status) string { return meterText(s, true) }

// meterText is meterLine, or without the bars its short form
// "01:02.5 1:-12 2:-3 dB ovr 0".
func meterText(s live.Status, bars bool) string {
	elapsed := time.Duration(float64(s.Frames) / float64(s.RateHz) * float64(time.Second))
	var b strings.Builder
	fmt.Fprintf(&b, "%02d:%04.1f", int(elapsed.Minutes()), math.Mod(elapsed.Seconds(), 60))
	for c, p := range s.Peak {
		db := 20 * math.Log10(float64(p))
		steps := 0
		if p > 0 {
			steps = max(min(int(math.Round((db+48)/6)), 8), 0)
		}
		label := fmt.Sprintf("%.0f", db)
		if p <= 0 {
			label = "-"
		}
		if p >= 1 {
			label = "CLIP"
		}
		if !bars {
			fmt.Fprintf(&b, " %d:%s", c+1, label)
			continue
		}
		if p > 0 && p < 1 {
			label += " dB"
		}
		fmt.Fprintf(&b, "  %d %s%s %7s", c+1, strings.Repeat("▮", steps), strings.Repeat("▯", 8-steps), label)
	}
	if !bars {
		fmt.Fprintf(&b, " dB ovr %d", s.Overruns)
		return b.String()
	}
	fmt.Fprintf(&b, "  overruns %d", s.Overruns)
	return b.String()
}
