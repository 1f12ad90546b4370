package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
)

func init() {
	register(command{
		name:    "build",
		summary: "reconstruct a capture with a recipe and write a calibrated TIFF or PNG",
		run:     runBuild,
	})
}

const buildSynopsis = "build FILE --recipe R.json --out F.tiff|F.png [--report REP.json] [--depth 8|16|32] [--scale-bar] [--caption TEXT] [--force]"

const buildDescription = `
Reconstructs the capture FILE with the recipe R.json and writes the frame to
F.tiff or F.png (the extension chooses the format), with its pitch as the
file's resolution and the recipe inside, plus F.recipe.json beside it holding
the recipe and the build report.

TIFF: --depth 32 (default) writes the frame values themselves as 32-bit
float; 16 or 8 writes them tone-mapped. With rows.strokes "split" every
stroke is a page of the TIFF. PNG: 16 (default) or 8 bits, one frame.

Tone-mapped output uses --window and --level in frame units (default: from
the 0.5th to the 99.5th percentile of the frame), then --gamma and --invert.
--scale-bar burns a bar of a round length into the lower left (none, with a
note, on a frame too small for a bar and its label), --caption a line of
text into the upper left (8 and 16 bits only).

An existing file is never replaced without --force. F.tiff and F.png of the
same recipe share F.recipe.json, which lists both; a sidecar holding another
recipe needs --force. No output may be the capture, its layout, the recipe
or another output, even with --force. Ctrl-C stops the build and leaves the
previous files as they were.`

// buildFlags are the export settings of the build command.
type buildFlags struct {
	recipePath, outPath, reportPath string
	depth                           int
	scaleBar                        bool
	scaleBarMM                      float64
	caption                         string
	force                           bool
	compression                     string
	window, level, gamma            float64
	invert                          bool
	noData                          float64
}

func runBuild(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("build", buildSynopsis, buildDescription, stderr)
	cf := addCaptureFlags(fs)
	var bf buildFlags
	fs.StringVar(&bf.recipePath, "recipe", "", "recipe JSON `file` (required; \"spotloom recipe FILE\" writes a starting one)")
	fs.StringVar(&bf.outPath, "out", "", "output `file`, .tiff, .tif or .png (required)")
	fs.StringVar(&bf.reportPath, "report", "", "also write the build report as JSON to this `file`")
	fs.IntVar(&bf.depth, "depth", 0, "bits per sample: 8, 16 or 32 (float, TIFF only); default 32 for TIFF, 16 for PNG")
	fs.BoolVar(&bf.scaleBar, "scale-bar", false, "burn in a scale bar of a round length")
	fs.Float64Var(&bf.scaleBarMM, "scale-bar-mm", 0, "burn in a scale bar of this `length` in mm")
	fs.StringVar(&bf.caption, "caption", "", "burn this `text` into the upper left")
	fs.BoolVar(&bf.force, "force", false, "replace the output, its sidecar and the report if they exist")
	fs.StringVar(&bf.compression, "compress", "", "TIFF strip `compression`: none (default), deflate or lzw; PNG: deflate (default) or none")
	fs.Float64Var(&bf.window, "window", 0, "tone window `width` in frame units (default automatic)")
	fs.Float64Var(&bf.level, "level", 0, "tone window `centre` in frame units (with --window)")
	fs.Float64Var(&bf.gamma, "gamma", 1, "tone `gamma`: above 1 lifts the mid-tones")
	fs.BoolVar(&bf.invert, "invert", false, "tone: bright becomes dark")
	fs.Float64Var(&bf.noData, "no-data", 0, "`value` for pixels without data: a frame value at depth 32 (default NaN), else a brightness from 0 (black, the default) to 1")
	positional, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(positional) != 1:
		return usagef("expected one capture FILE, got %d arguments", len(positional))
	case bf.recipePath == "":
		return usagef("--recipe R.json is required")
	case bf.outPath == "":
		return usagef("--out F.tiff or F.png is required")
	}
	opts, err := bf.exportOptions(fs)
	if err != nil {
		return err
	}
	captureOpts, err := cf.options()
	if err != nil {
		return err
	}
	inputs := append(captureInputs(positional[0], cf), export.Role{What: "the recipe", Path: bf.recipePath})
	outputs := []export.Role{{What: "--out", Path: bf.outPath}, {What: "the sidecar", Path: export.SidecarPath(bf.outPath)},
		{What: "--report", Path: bf.reportPath}}
	if err := export.CheckClashes(inputs, outputs); err != nil {
		return err
	}
	if bf.reportPath != "" {
		// The report is written with the image and its sidecar, all or none.
		opts.Also = []export.File{{Path: bf.reportPath}}
	}
	// Refuse bad output settings and folders before the long part.
	if err := export.Check(bf.outPath, opts); err != nil {
		return forceHint(err)
	}

	r, err := loadRecipe(bf.recipePath)
	if err != nil {
		return err
	}
	ctx, stop := interruptContext()
	defer stop()
	progress := newProgress(stderr)
	defer progress.Done()
	captureOpts.Progress = func(fraction float64) { progress.Report("reading", fraction) }
	rec, err := openCapture(ctx, positional[0], captureOpts)
	if err != nil {
		return err
	}
	session := recon.NewSession(rec)
	// The recipe resolved (which the build then reuses) decides whether
	// a sidecar already there may list this export too.
	resolved, err := session.Resolve(ctx, r)
	if err != nil {
		return interrupted(ctx, fmt.Errorf("%s: %w", positional[0], err))
	}
	if err := export.CheckSidecar(bf.outPath, resolved, bf.force); err != nil {
		return forceHint(err)
	}
	res, err := session.Build(ctx, r, progress.Report)
	if err != nil {
		return interrupted(ctx, fmt.Errorf("%s: %w", positional[0], err))
	}
	progress.Report("writing", 0)
	if len(opts.Also) > 0 {
		data, err := json.MarshalIndent(res.Report, "", "  ")
		if err != nil {
			return fmt.Errorf("%s: the build report: %w", bf.reportPath, err)
		}
		opts.Also[0].Data = append(data, '\n')
	}
	var notes []string
	opts.Note = func(s string) { notes = append(notes, s) }
	if err := export.WriteContext(ctx, bf.outPath, res.Frames, opts); err != nil {
		return interrupted(ctx, forceHint(err))
	}
	progress.Done()
	f := res.Frames[0]
	pages := ""
	if len(res.Frames) > 1 {
		pages = fmt.Sprintf(", %d pages", len(res.Frames))
	}
	fmt.Fprintf(stdout, "wrote %s (%d × %d px at %g mm: %.4g × %.4g mm%s) and %s\n",
		bf.outPath, f.Width, f.Height, f.PitchXMM, float64(f.Width)*f.PitchXMM, float64(f.Height)*f.PitchYMM,
		pages, filepath.Base(export.SidecarPath(bf.outPath)))
	for _, n := range notes {
		fmt.Fprintf(stderr, "note: %s\n", n)
	}
	for _, w := range res.Report.Warnings {
		fmt.Fprintf(stderr, "warning: %s\n", w)
	}
	return nil
}

// exportOptions turns the flags into export.Options; the defaults depend
// on the format.
func (bf *buildFlags) exportOptions(fs *flag.FlagSet) (export.Options, error) {
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	if err := positiveFlags(fs, "window", "gamma", "scale-bar-mm"); err != nil {
		return export.Options{}, err
	}
	if err := finiteFlags(fs, "level"); err != nil {
		return export.Options{}, err
	}
	switch bf.depth {
	case 0, 8, 16, 32:
	default:
		return export.Options{}, usagef("--depth %d: expected 8, 16 or 32", bf.depth)
	}
	switch strings.ToLower(bf.compression) {
	case "", "none", "deflate", "lzw":
	default:
		return export.Options{}, usagef("--compress %q: expected none, deflate or lzw (PNG: deflate or none)", bf.compression)
	}
	opts := export.Options{
		Depth:       bf.depth,
		Caption:     bf.caption,
		Force:       bf.force,
		Compression: bf.compression,
		Tone:        recon.Tone{Gamma: bf.gamma, Invert: bf.invert},
	}
	toned := set["window"] || set["gamma"] || set["invert"]
	drawn := bf.scaleBar || set["scale-bar-mm"] || bf.caption != ""
	isPNG := strings.EqualFold(filepath.Ext(bf.outPath), ".png")
	if opts.Depth == 0 && !isPNG && !toned && !drawn {
		opts.Depth = 32 // a TIFF keeps the measured values unless a report image is asked for
	}
	if opts.Depth == 32 && toned {
		return opts, usagef("--window, --level, --gamma and --invert map values to 8 or 16 bits; --depth 32 writes the frame values themselves")
	}
	if set["window"] != set["level"] {
		return opts, usagef("--window and --level go together (or leave both out for an automatic tone)")
	}
	if set["window"] {
		if !(bf.window > 0) {
			return opts, usagef("--window %g: expected a width above 0 in frame units", bf.window)
		}
		opts.Tone.Window, opts.Tone.Level = bf.window, bf.level
	}
	if !(bf.gamma > 0) {
		return opts, usagef("--gamma %g: expected a number above 0", bf.gamma)
	}
	switch {
	case set["scale-bar-mm"]:
		if !(bf.scaleBarMM > 0) {
			return opts, usagef("--scale-bar-mm %g: expected a length above 0 mm", bf.scaleBarMM)
		}
		opts.ScaleBarMM = bf.scaleBarMM
	case bf.scaleBar:
		opts.ScaleBarMM = -1
	}
	switch {
	case set["no-data"]:
		opts.NoData = bf.noData
	case opts.Depth == 32:
		opts.NoData = math.NaN()
	}
	return opts, nil
}

// loadRecipe reads a recipe file and checks it, naming the file in any
// error.
func loadRecipe(path string) (recipe.Recipe, error) {
	r, err := recipe.Load(path)
	if err != nil {
		return r, err
	}
	if err := r.Validate(); err != nil {
		return r, fmt.Errorf("%s: %w", path, err)
	}
	return r, nil
}

// forceHint adds what to do when the output exists.
func forceHint(err error) error {
	if errors.Is(err, export.ErrExists) {
		return fmt.Errorf("%w: add --force to replace it", err)
	}
	return err
}
