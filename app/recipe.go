package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"

	"spotloom/capture"
	"spotloom/recon"
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
values of --from, or the defaults, and are worth checking by hand.
`

func runRecipe(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("recipe FILE [--from R.json] > R.json", "recipe FILE", recipeHelp, stderr)
	cf := addCaptureFlags(fs)
	from := fs.String("from", "", "start from this recipe `file` and resolve its automatic (null) values")
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
	r := recipe.Default()
	r.Image.PitchMM = 0 // automatic
	if *from != "" {
		if r, err = recipe.Load(*from); err != nil {
			return err
		}
	}
	prog := newProgress(stderr)
	opts.Progress = func(f float64) { prog.Report("reading", f) }
	rec, err := capture.Open(path, opts)
	prog.Done()
	if err != nil {
		return err
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	resolved, err := recon.NewSession(rec).Resolve(ctx, r)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	_, err = stdout.Write(resolved.JSON())
	return err
}
