package main

import (
	"fmt"
	"io"
	"strings"

	"spotloom/capture"
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
Reads a capture and prints a recipe (JSON) to start from: the channels from
the guessed roles, the index threshold and hysteresis, the delay from the
detector's beam-on stretch, and a pixel pitch near the line spacing. The
geometry (apertures, field, distance) and the position calibration keep the
values of --from, or the defaults, and are worth checking by hand; what
looks wrong is said on stderr. Without --from, a capture with no position
channel gets rows.source "steps" when it has step pulses, else "even".
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
	r.Image.PitchMM = 0 // automatic
	if *from != "" {
		if r, err = recipe.Load(*from); err != nil {
			return err
		}
		if err := r.Validate(); err != nil {
			// One line on stderr, however many keys are wrong.
			return fmt.Errorf("%s: %s", *from, strings.ReplaceAll(err.Error(), "\n", "; "))
		}
	}
	if *apertures < 0 {
		return usagef("--apertures %d: expected a count of 1 or more", *apertures)
	}
	if *apertures > 0 {
		if r.Timing.PulsesPerRev != 1 {
			r.Timing.PulsesPerRev = *apertures
		}
		r.Sweep.Apertures = *apertures
	}
	if *pulses < 0 || *field < 0 || *distance < 0 {
		return usagef("--pulses-per-rev, --field and --distance take positive values")
	}
	if *pulses > 0 {
		r.Timing.PulsesPerRev = *pulses
	}
	if *field > 0 {
		r.Sweep.FieldDeg = *field
	}
	if *distance > 0 {
		r.Sweep.DistanceMM = *distance
	}
	if *law != "" {
		if r.Sweep.Law, err = recipe.ParseLaw(*law); err != nil {
			return usagef("--law: %v", err)
		}
	}
	if *source != "" {
		if r.Rows.Source, err = recipe.ParseRowSource(*source); err != nil {
			return usagef("--source: %v", err)
		}
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
	if *from == "" && *source == "" {
		r.Rows.Source = rowsSourceFor(capture.GuessRoles(rec))
	}
	// A trial build resolves every value and finds what looks wrong (a
	// calibration outside the position's range, a field that does not
	// match the beam-on stretch); those warnings go to stderr.
	session := recon.NewSession(rec)
	res, err := session.Build(ctx, r, func(stage string, f float64) { prog.Report(stage, f) })
	prog.Done()
	if err != nil {
		return interrupted(ctx, fmt.Errorf("%s: %w", path, err))
	}
	if *from == "" {
		// Nobody has described this capture: let the trial build fill in
		// the aperture count (unless given) and a calibration that fits.
		rep := res.Report
		if *apertures > 0 {
			rep.AperturesSuggested = 0
		}
		if started, notes := recon.Start(r, rep); len(notes) > 0 {
			again, err := session.Build(ctx, started, func(stage string, f float64) { prog.Report(stage, f) })
			prog.Done()
			if err == nil {
				res = again
				for _, n := range notes {
					fmt.Fprintf(stderr, "spotloom recipe: %s: %s\n", path, n)
				}
			}
		}
	}
	if ctx.Err() != nil {
		return errInterrupted
	}
	for _, w := range res.Report.Warnings {
		fmt.Fprintf(stderr, "spotloom recipe: %s: %s\n", path, w)
	}
	if *outPath != "" {
		err := export.WriteFiles(ctx, []export.File{{Path: *outPath, Data: res.Recipe.JSON()}}, *force)
		return interrupted(ctx, forceHint(err))
	}
	_, err = stdout.Write(res.Recipe.JSON())
	return err
}

// rowsSourceFor picks the cross-scan source a starting recipe uses: the
// position channel when one is seen, else step pulses, else an even motion
// (whose speed the engine then assumes and says so).
func rowsSourceFor(guesses []capture.RoleGuess) recipe.RowSource {
	has := map[string]bool{}
	for _, g := range guesses {
		has[g.Role] = true
	}
	switch {
	case has[capture.RolePosition]:
		return recipe.SourcePosition
	case has[capture.RoleSteps]:
		return recipe.SourceSteps
	}
	return recipe.SourceEven
}
