package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"text/tabwriter"

	"spotloom/capture"
	"spotloom/recon"
)

func init() {
	register(command{
		name:    "inspect",
		summary: "show a capture's format, rate, duration, channel statistics and guessed roles",
		run:     runInspect,
	})
}

// captureFlags are the flags every command that reads a capture shares: a
// sample rate for files without one, and a raw layout given on the command
// line instead of a NAME.layout.json sidecar.
type captureFlags struct {
	fs          *flag.FlagSet
	rateHz      float64
	layoutPath  string
	sampleType  string
	channels    int
	byteOrder   string
	planar      bool
	headerBytes int64
	scale       float64
	offset      float64
}

// addCaptureFlags defines the capture flags on fs.
func addCaptureFlags(fs *flag.FlagSet) *captureFlags {
	cf := &captureFlags{fs: fs}
	fs.Float64Var(&cf.rateHz, "rate", 0, "sample rate in `Hz` (CSV without a time column, raw files; overrides the file's rate)")
	fs.StringVar(&cf.layoutPath, "layout", "", "raw layout JSON `file` (default: NAME.layout.json beside the capture)")
	fs.StringVar(&cf.sampleType, "raw", "", "read as raw samples of this `type`: int8, uint8, int16, uint16, int32, uint32, float32, float64")
	fs.IntVar(&cf.channels, "channels", 1, "raw: number of `channels`")
	fs.StringVar(&cf.byteOrder, "byte-order", "little", "raw: byte `order`, little or big")
	fs.BoolVar(&cf.planar, "planar", false, "raw: channels stored one after another instead of interleaved")
	fs.Int64Var(&cf.headerBytes, "header-bytes", 0, "raw: `bytes` to skip at the start")
	fs.Float64Var(&cf.scale, "scale", 0, "raw: `volts` per stored unit, for every channel (default: integers on ±1.0 full scale)")
	fs.Float64Var(&cf.offset, "offset", 0, "raw: `volts` added after scaling")
	return cf
}

// options turns the flags into capture.Options.
func (cf *captureFlags) options() (capture.Options, error) {
	opts := capture.Options{SampleRateHz: cf.rateHz}
	if err := positiveFlags(cf.fs, "rate", "scale", "channels"); err != nil {
		return opts, err
	}
	if err := finiteFlags(cf.fs, "offset"); err != nil {
		return opts, err
	}
	if cf.rateHz < 0 || cf.rateHz > capture.MaxSampleRateHz {
		return opts, usagef("--rate %g: expected a rate above 0 Hz and at most %g Hz", cf.rateHz, capture.MaxSampleRateHz)
	}
	switch {
	case cf.layoutPath != "" && cf.sampleType != "":
		return opts, usagef("give either --layout or --raw, not both")
	case cf.layoutPath != "":
		l, err := capture.LoadLayout(cf.layoutPath)
		if err != nil {
			return opts, err
		}
		opts.Layout = &l
	case cf.sampleType != "":
		l := capture.RawLayout{SampleType: cf.sampleType, ByteOrder: cf.byteOrder, Channels: cf.channels,
			Interleaved: !cf.planar, HeaderBytes: cf.headerBytes, SampleRateHz: cf.rateHz}
		if cf.scale != 0 {
			l.Scale = []float64{cf.scale}
		}
		if cf.offset != 0 {
			l.Offset = []float64{cf.offset}
		}
		if err := l.Validate(); err != nil {
			return opts, usagef("raw layout: %v", err)
		}
		opts.Layout = &l
	}
	return opts, nil
}

// inspectChannel is one channel in inspect's JSON output.
type inspectChannel struct {
	Name           string  `json:"name"`
	Unit           string  `json:"unit"`
	Min            float64 `json:"min"`
	Max            float64 `json:"max"`
	Mean           float64 `json:"mean"`
	RMS            float64 `json:"rms"`
	Role           string  `json:"role"`
	RoleConfidence float64 `json:"role_confidence"`
	// CarrierHz is the position tone's carrier on a channel that carries
	// the index pulses too (role "index+tone").
	CarrierHz float64 `json:"carrier_hz,omitempty"`
}

// roleSharedInput is inspect's role of a channel that carries both the
// index pulses and the position tone (recon.SharedInput).
const roleSharedInput = "index+tone"

// inspectReport is inspect's JSON output.
type inspectReport struct {
	Format       string           `json:"format"`
	SampleType   string           `json:"sample_type"`
	SampleRateHz float64          `json:"sample_rate_hz"`
	Frames       int              `json:"frames"`
	DurationS    float64          `json:"duration_s"`
	Channels     []inspectChannel `json:"channels"`
	Notes        []string         `json:"notes,omitempty"`
	Warnings     []string         `json:"warnings"`
}

func runInspect(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("inspect", "inspect FILE [--json] [--rate HZ] [--layout L.json | --raw TYPE --channels N ...]", `
Inspect reads a capture (WAV, CSV or raw binary with a layout) and prints its
format, sample type, sample rate, number of frames, duration, and for each
channel its name, unit, minimum, maximum, mean, RMS and the role Spotloom
guesses for it (detector, index, position, steps or unknown) with a
confidence from 0 to 1; "index+tone" is a channel that carries both the
index pulses and the position tone (a two-input sound card), with the
carrier it found.`, stderr)
	asJSON := fs.Bool("json", false, "print JSON instead of a table")
	cf := addCaptureFlags(fs)
	rest, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(rest) != 1 {
		return usagef("expected one capture file, got %d arguments", len(rest))
	}
	opts, err := cf.options()
	if err != nil {
		return err
	}
	progress := newProgress(stderr)
	opts.Progress = func(f float64) { progress.Report("reading", f) }
	sum, err := capture.Inspect(rest[0], opts)
	progress.Done()
	if err != nil {
		return err
	}
	report := inspectReport{
		Format:       sum.Source.Format,
		SampleType:   sum.Source.SampleType,
		SampleRateHz: sum.SampleRateHz,
		Frames:       sum.Frames,
		DurationS:    sum.DurationS(),
		Channels:     []inspectChannel{},
		Warnings:     append([]string{}, sum.Warnings...),
	}
	for c, ch := range sum.Channels {
		report.Channels = append(report.Channels, inspectChannel{Name: ch.Name, Unit: ch.Unit, Min: ch.Min, Max: ch.Max,
			Mean: ch.Mean, RMS: ch.RMS, Role: sum.Roles[c].Role, RoleConfidence: sum.Roles[c].Confidence})
	}
	// The index pulses and the position tone on one input, as the first
	// look (spotloom recipe, the window) finds them.
	if c, hz, conf := recon.SharedInput(sum.Head, sum.Roles); c >= 0 {
		ch := &report.Channels[c]
		ch.Role, ch.CarrierHz, ch.RoleConfidence = roleSharedInput, hz, conf
		report.Notes = append(report.Notes, fmt.Sprintf("channel %d carries the index pulses and a %.4g Hz position tone (a two-input sound card): a recipe reads it as channels.index and channels.position with rows.source tone", c, hz))
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(report)
	}
	tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', 0)
	bits := ""
	if sum.Source.BitDepth > 0 {
		bits = fmt.Sprintf(", %d-bit", sum.Source.BitDepth)
	}
	fmt.Fprintf(tw, "file\t%s\n", sum.Source.Path)
	fmt.Fprintf(tw, "format\t%s (%s%s)\n", report.Format, report.SampleType, bits)
	fmt.Fprintf(tw, "sample rate\t%.10g Hz\n", report.SampleRateHz)
	fmt.Fprintf(tw, "frames\t%d\n", report.Frames)
	fmt.Fprintf(tw, "duration\t%.6g s\n", report.DurationS)
	tw.Flush()
	fmt.Fprintln(stdout)
	tw = tabwriter.NewWriter(stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "channel\tname\tunit\tmin\tmax\tmean\trms\trole\t\n")
	for c, ch := range report.Channels {
		unit := ch.Unit
		if unit == "" {
			unit = "-"
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%.6g\t%.6g\t%.6g\t%.6g\t%s (%.2f)\t\n", c, ch.Name, unit, ch.Min, ch.Max, ch.Mean, ch.RMS, ch.Role, ch.RoleConfidence)
	}
	tw.Flush()
	for _, n := range report.Notes {
		fmt.Fprintf(stdout, "note: %s\n", n)
	}
	for _, w := range report.Warnings {
		fmt.Fprintf(stdout, "warning: %s\n", w)
	}
	return nil
}
