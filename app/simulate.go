package main

import (
	"encoding/json"
	"fmt"
	"io"
	"path/filepath"
	"strconv"
	"strings"

	"spotloom/capture"
	"spotloom/recon/export"
	"spotloom/sampledata"
)

func init() {
	register(command{
		name:    "simulate",
		summary: "write a synthetic capture of a built-in scene and its ground truth",
		run:     runSimulate,
	})
}

const simulateDescription = `
Scans one of the built-in scenes (parcel, dot-grid, edge-card, bars, sheet) with a
simulated flying-spot scanner and writes the capture as WAV, CSV or raw
binary (with FILE.layout.json beside it). The rig is the demo rig unless
--rig gives one, or --preset names a built-in one (demo; sound-card, the
position a tone on an AC-coupled card; stereo-sound-card, the same on a card
with two inputs, the tone added to the index pulses on one; mirror, a
resonant mirror); "spotloom simulate --print-rig" prints the demo rig (or
the --preset) as a starting point. --truth writes the ground truth (line times, true speed,
delay, aperture offsets, y of every line, dot centres) as JSON and the
scene's true image as a 16-bit PNG beside it. The same flags and seed always
give the same file.

WAV stores volts divided by the rig's adc.full_scale_v (full scale = ±1.0).
`

// simulateFlags are the flags of the simulate command.
type simulateFlags struct {
	scene, out, rigPath, preset, format, sampleType, truthPath, recipePath string
	seconds, rateHz, truthPitchMM                                          float64
	seed                                                                   uint64
	printRig, noiseless, force                                             bool
}

func runSimulate(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("simulate", "simulate --scene NAME --out FILE [flags]", simulateDescription, stderr)
	var f simulateFlags
	fs.StringVar(&f.scene, "scene", "", "scene `name`: "+strings.Join(sampledata.SceneNames(), ", "))
	fs.StringVar(&f.out, "out", "", "capture `file` to write")
	fs.StringVar(&f.rigPath, "rig", "", "rig JSON `file` (default: the demo rig)")
	fs.StringVar(&f.preset, "preset", "", "built-in rig `name`: "+strings.Join(sampledata.RigPresetNames(), ", ")+" (default demo)")
	fs.Float64Var(&f.seconds, "seconds", 0, "capture length in `s` (default: the rig's duration_s)")
	fs.Float64Var(&f.rateHz, "rate", 0, "sample rate in `Hz` (default: the rig's sample_rate_hz)")
	fs.StringVar(&f.format, "format", "", "file `format`: wav, csv or raw (default: from the --out extension)")
	fs.StringVar(&f.sampleType, "sample-type", "", "stored `type`: wav int16, int24 or float32; raw int16, int32 or float32 (default int16)")
	fs.StringVar(&f.truthPath, "truth", "", "ground-truth JSON `file` to write (and the truth PNG beside it)")
	fs.Float64Var(&f.truthPitchMM, "truth-pitch", 0.5, "pixel pitch of the truth PNG in `mm`")
	fs.StringVar(&f.recipePath, "recipe", "", "also write the rig's starting recipe to this JSON `file`")
	fs.Uint64Var(&f.seed, "seed", 1, "random `seed`")
	fs.BoolVar(&f.noiseless, "noiseless", false, "write expected values: no photon, electronics or timing noise")
	fs.BoolVar(&f.printRig, "print-rig", false, "print the demo rig (or the --preset) JSON and exit")
	fs.BoolVar(&f.force, "force", false, "replace files that already exist (never the rig file)")
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(positional) > 0 {
		return usagef("unexpected argument %q", positional[0])
	}
	rig, err := presetRig(f)
	if err != nil {
		return err
	}
	if f.printRig {
		_, err := stdout.Write(rig.JSON())
		return err
	}
	if err := positiveFlags(fs, "seconds", "rate", "truth-pitch"); err != nil {
		return err
	}
	return simulate(f, stderr)
}

// presetRig is the --preset rig, or the demo rig.
func presetRig(f simulateFlags) (sampledata.Rig, error) {
	if f.preset == "" {
		return sampledata.DemoRig(), nil
	}
	if f.rigPath != "" {
		return sampledata.Rig{}, usagef("give --rig or --preset, not both")
	}
	rig, err := sampledata.RigPreset(f.preset)
	if err != nil {
		return rig, usagef("--preset: %v", err)
	}
	return rig, nil
}

// simulate checks the flags, runs the simulator and writes the files.
func simulate(f simulateFlags, stderr io.Writer) error {
	if f.scene == "" {
		return usagef("--scene is required (one of %s)", strings.Join(sampledata.SceneNames(), ", "))
	}
	if f.out == "" {
		return usagef("--out is required")
	}
	if f.seconds < 0 {
		return usagef("--seconds %g: expected a length above 0 s", f.seconds)
	}
	if f.rateHz < 0 {
		return usagef("--rate %g: expected a rate above 0 Hz", f.rateHz)
	}
	if !(f.truthPitchMM > 0) {
		return usagef("--truth-pitch %g: expected a pitch above 0 mm", f.truthPitchMM)
	}
	format := f.format
	if format == "" {
		switch strings.ToLower(filepath.Ext(f.out)) {
		case ".wav":
			format = "wav"
		case ".csv", ".txt":
			format = "csv"
		case ".bin", ".raw", ".dat":
			format = "raw"
		default:
			return usagef("cannot tell the format from %q: give --format wav, csv or raw", f.out)
		}
	}
	sampleType := f.sampleType
	switch format {
	case "wav":
		if sampleType == "" {
			sampleType = "int16"
		}
		if sampleType != "int16" && sampleType != "int24" && sampleType != "float32" {
			return usagef("--sample-type %q: for wav expected int16, int24 or float32", sampleType)
		}
	case "raw":
		if sampleType == "" {
			sampleType = "int16"
		}
		if sampleType != "int16" && sampleType != "int32" && sampleType != "float32" {
			return usagef("--sample-type %q: for raw expected int16, int32 or float32", sampleType)
		}
	case "csv":
		if sampleType != "" {
			return usagef("--sample-type does not apply to csv")
		}
	default:
		return usagef("--format %q: expected wav, csv or raw", format)
	}

	if err := checkSimulateOutputs(f, format); err != nil {
		return err
	}
	rig, err := presetRig(f)
	if err != nil {
		return err
	}
	if f.rigPath != "" {
		if rig, err = sampledata.LoadRig(f.rigPath); err != nil {
			return err
		}
	}
	if _, err := sampledata.Scene(f.scene); err != nil {
		return usagef("--scene: %v", err)
	}
	opts := sampledata.SimOptions{Seed: f.seed, DurationS: f.seconds, SampleRateHz: f.rateHz, Noiseless: f.noiseless}
	if f.truthPath != "" {
		opts.TruthPitchMM = f.truthPitchMM
	}
	ctx, stop := interruptContext()
	defer stop()
	progress := newProgress(stderr)
	defer progress.Done()
	opts.Progress = func(fraction float64) { progress.Report("simulating", fraction) }
	rec, truth, err := sampledata.Simulate(ctx, rig, f.scene, opts)
	if err != nil {
		if f.rigPath != "" {
			err = fmt.Errorf("%s: %w", f.rigPath, err)
		}
		return interrupted(ctx, err)
	}
	rec.Source.Path = f.out

	// Every file is written to a temporary first and all are placed
	// together, so an interrupted or failed run leaves none of them.
	var files []export.File
	fullScale := truth.Rig.ADC.FullScaleV
	switch format {
	case "wav":
		// A sound card maps its full scale to ±1.0.
		scaled := scaleRecording(rec, 1/fullScale, capture.UnitFullScale)
		files = append(files, export.File{Path: f.out, Encode: func(w io.Writer) error { return capture.WriteWAV(w, scaled, sampleType) }})
	case "csv":
		preamble := []string{
			"Made by,spotloom simulate",
			"Scene," + f.scene,
			"Rig," + csvField(truth.Rig.Name),
			"Seed," + strconv.FormatUint(f.seed, 10),
		}
		files = append(files, export.File{Path: f.out, Encode: func(w io.Writer) error { return capture.WriteCSV(w, rec, preamble) }})
	case "raw":
		layout := rawLayoutFor(rec, sampleType, fullScale)
		if err := layout.Validate(); err != nil {
			return fmt.Errorf("%s: layout: %v", f.out, err)
		}
		data, err := json.MarshalIndent(layout, "", "  ")
		if err != nil {
			return err
		}
		// NAME.EXT.layout.json, the first name capture.Open looks for,
		// so the layout never claims a NAME.csv or NAME.wav beside it.
		files = append(files, export.File{Path: f.out, Encode: func(w io.Writer) error { return capture.WriteRaw(w, rec, layout) }},
			export.File{Path: f.out + ".layout.json", Data: append(data, '\n')})
	}
	if f.truthPath != "" {
		pngPath := truthImagePath(f.truthPath)
		truth.Image.Path = filepath.Base(pngPath)
		data, err := truth.JSON()
		if err != nil {
			return fmt.Errorf("%s: %w", f.truthPath, err)
		}
		files = append(files, export.File{Path: pngPath, Encode: truth.WritePNG}, export.File{Path: f.truthPath, Data: data})
	}
	if f.recipePath != "" {
		r := truth.Rig.Recipe()
		if format == "wav" {
			// The position calibration is in full-scale units in a WAV file.
			for i := range r.Rows.Calibration {
				r.Rows.Calibration[i][0] /= fullScale
			}
		}
		files = append(files, export.File{Path: f.recipePath, Data: r.JSON()})
	}
	progress.Done()
	if err := export.WriteFiles(ctx, files, f.force); err != nil {
		return interrupted(ctx, err)
	}
	others := make([]string, 0, len(files)-1)
	for _, file := range files[1:] {
		others = append(others, file.Path)
	}
	wrote := fmt.Sprintf("wrote %s (%s, %.4g s: %d channels at %g Hz)", f.out, format, rec.DurationS(), len(rec.Channels), rec.SampleRateHz)
	if len(others) > 0 {
		wrote += ", " + strings.Join(others, ", ")
	}
	fmt.Fprintf(stderr, "spotloom simulate: %s\n", wrote)
	return nil
}

// truthImagePath is the truth PNG written beside the truth JSON.
func truthImagePath(truthPath string) string {
	return strings.TrimSuffix(truthPath, filepath.Ext(truthPath)) + ".png"
}

// checkSimulateOutputs refuses, before the simulation, outputs that are
// the rig file or one another, and folders that are missing or refuse
// new files.
func checkSimulateOutputs(f simulateFlags, format string) error {
	outputs := []export.Role{{What: "--out", Path: f.out}}
	if format == "raw" {
		outputs = append(outputs, export.Role{What: "the layout", Path: f.out + ".layout.json"})
	}
	if f.truthPath != "" {
		outputs = append(outputs, export.Role{What: "--truth", Path: f.truthPath},
			export.Role{What: "the truth image", Path: truthImagePath(f.truthPath)})
	}
	outputs = append(outputs, export.Role{What: "--recipe", Path: f.recipePath})
	if err := export.CheckClashes([]export.Role{{What: "--rig", Path: f.rigPath}}, outputs); err != nil {
		return err
	}
	for _, o := range outputs {
		if o.Path == "" {
			continue
		}
		if err := export.CheckFile(o.Path, f.force); err != nil {
			return forceHint(err)
		}
	}
	return nil
}

// csvField keeps a preamble value on one CSV field.
func csvField(s string) string {
	if strings.ContainsAny(s, ",\"\r\n") {
		return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
	}
	return s
}

// scaleRecording returns a copy of rec with every sample multiplied by k.
func scaleRecording(rec *capture.Recording, k float64, unit string) *capture.Recording {
	out := *rec
	out.Channels = make([]capture.Channel, len(rec.Channels))
	for i, c := range rec.Channels {
		s := make([]float32, len(c.Samples))
		for j, v := range c.Samples {
			s[j] = float32(float64(v) * k)
		}
		out.Channels[i] = capture.Channel{Name: c.Name, Unit: unit, Samples: s}
	}
	return &out
}

// rawLayoutFor describes the raw file the simulator writes: interleaved,
// little-endian, integer samples scaled so that the ADC's full scale fills
// the type.
func rawLayoutFor(rec *capture.Recording, sampleType string, fullScaleV float64) capture.RawLayout {
	l := capture.RawLayout{
		SampleType:   sampleType,
		ByteOrder:    "little",
		Channels:     len(rec.Channels),
		Interleaved:  true,
		SampleRateHz: rec.SampleRateHz,
	}
	switch sampleType {
	case "int16":
		l.Scale = []float64{fullScaleV / 32768}
	case "int32":
		l.Scale = []float64{fullScaleV / 2147483648}
	}
	for _, c := range rec.Channels {
		l.Names = append(l.Names, c.Name)
		l.Units = append(l.Units, c.Unit)
	}
	return l
}
