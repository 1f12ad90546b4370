package main

import (
	"fmt"
	"io"
	"os"
	"strings"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
)

func init() {
	register(command{
		name:    "recipe",
		summary: "print a starting recipe for a capture with every automatic value resolved",
		run:     runRecipe,
	})
}

const recipeHelp = `
Reads a capture and prints a recipe (JSON) to start from, made by the same
first look the window makes: the channels from the guessed roles, a
position read as a DC level or as the amplitude of a carrier tone, the
detector's AC-coupling corner when its beam-off level drifts back after
bright stretches, the index threshold and hysteresis, the delay from the
detector's beam-on stretch, and a pixel pitch near the line spacing. What
you state (the flags, and the keys --from names; a partial recipe is fine,
null meaning "find it") is kept; the rest is fitted to the capture: the
aperture count the beam-on fraction implies, signal.invert for a
negative-going detector, a calibration spanning the position levels seen.
Each choice, and whatever disagrees (a field and aperture count that do not
match the beam-on fraction, a capture with no beam-off stretch), is said on
stderr.
`

func runRecipe(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("recipe", "recipe FILE [--from R.json] [--apertures N] [--pulses-per-rev N] [--field DEG] [--distance MM] [--law LAW] [--source SOURCE] [--out R.json] > R.json", recipeHelp, stderr)
	cf := addCaptureFlags(fs)
	from := fs.String("from", "", "start from this recipe `file` and resolve its automatic (null) values")
	apertures := fs.Int("apertures", 0, "the wheel's aperture `count` (also the index pulses per revolution unless --from says 1)")
	pulses := fs.Int("pulses-per-rev", 0, "index pulses per wheel revolution: the aperture count, or 1 for a once-per-revolution sensor")
	field := fs.Float64("field", 0, "the field of view in `degrees` of beam swing")
	distance := fs.Float64("distance", 0, "the source-to-scene distance in `mm`")
	law := fs.String("law", "", "the sweep law: "+recipe.Allowed(recipe.Laws))
	source := fs.String("source", "", "where the cross-scan position comes from: "+recipe.Allowed(recipe.RowSources)+" (default: from the channels seen)")
	outPath := fs.String("out", "", "write the recipe to this `file` (only when it could be made) instead of stdout")
	force := fs.Bool("force", false, "with --out: replace an existing file")
	rest, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(rest) != 1 {
		return usagef("expected one capture file, got %d arguments", len(rest))
	}
	path := rest[0]
	opts, err := cf.options()
	if err != nil {
		return err
	}
	inputs := append(captureInputs(path, cf), export.Role{What: "--from", Path: *from})
	if err := export.CheckClashes(inputs, []export.Role{{What: "--out", Path: *outPath}}); err != nil {
		return err
	}
	if *outPath != "" {
		if err := export.CheckFile(*outPath, *force); err != nil {
			return forceHint(err)
		}
	}
	r := recipe.Default()
	known := recon.Known{}
	if *from != "" {
		data, err := os.ReadFile(*from)
		if err != nil {
			return err
		}
		if r, err = recipe.Parse(data); err != nil {
			return fmt.Errorf("%s: %w", *from, err)
		}
		if err := r.Validate(); err != nil {
			// One line on stderr, however many keys are wrong.
			return fmt.Errorf("%s: %s", *from, strings.ReplaceAll(err.Error(), "\n", "; "))
		}
		// The keys the file states are what the user knows; those it
		// leaves out (or null) the first look may choose.
		if known, err = recipe.GivenKeys(data); err != nil {
			return fmt.Errorf("%s: %w", *from, err)
		}
	}
	if err := positiveFlags(fs, "apertures", "pulses-per-rev", "field", "distance"); err != nil {
		return err
	}
	if *apertures > 0 {
		if r.Timing.PulsesPerRev != 1 {
			r.Timing.PulsesPerRev = *apertures
		}
		r.Sweep.Apertures = *apertures
		known["sweep.apertures"] = true
	}
	if *pulses > 0 {
		r.Timing.PulsesPerRev = *pulses
		known["timing.pulses_per_rev"] = true
	}
	if *field > 0 {
		r.Sweep.FieldDeg = *field
		known["sweep.field_deg"] = true
	}
	if *distance > 0 {
		r.Sweep.DistanceMM = *distance
		known["sweep.distance_mm"] = true
	}
	if *law != "" {
		if r.Sweep.Law, err = recipe.ParseLaw(*law); err != nil {
			return usagef("--law: %v", err)
		}
		known["sweep.law"] = true
	}
	if *source != "" {
		if r.Rows.Source, err = recipe.ParseRowSource(*source); err != nil {
			return usagef("--source: %v", err)
		}
		known["rows.source"] = true
	}
	if err := r.Validate(); err != nil {
		return usagef("%s", strings.ReplaceAll(err.Error(), "\n", "; "))
	}
	ctx, stop := interruptContext()
	defer stop()
	prog := newProgress(stderr)
	opts.Progress = func(f float64) { prog.Report("reading", f) }
	rec, err := openCapture(ctx, path, opts)
	prog.Done()
	if err != nil {
		return err
	}
	// The same first look as the window's: trial builds resolve every
	// value, fit what the user did not state to the capture, and find
	// what looks wrong; the notes and warnings go to stderr.
	look, err := recon.FirstLook(ctx, recon.NewSession(rec), r, known, func(stage string, f float64) { prog.Report(stage, f) })
	prog.Done()
	if err != nil {
		return interrupted(ctx, fmt.Errorf("%s: %w", path, err))
	}
	res := look.Result
	for _, n := range look.Notes {
		fmt.Fprintf(stderr, "spotloom recipe: %s: %s\n", path, n)
	}
	if ctx.Err() != nil {
		return errInterrupted
	}
	for _, w := range res.Report.Warnings {
		fmt.Fprintf(stderr, "spotloom recipe: %s: %s\n", path, w)
	}
	if *outPath != "" {
		err := export.WriteFiles(ctx, []export.File{{Path: *outPath, Data: look.Recipe.JSON()}}, *force)
		return interrupted(ctx, forceHint(err))
	}
	_, err = stdout.Write(look.Recipe.JSON())
	return err
}
