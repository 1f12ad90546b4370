package ui

import (
	"context"

	"spotloom/capture"
	"spotloom/recon"
	"spotloom/recon/recipe"
)

// sessionEngine is the production Engine: a recon.Session, which keeps
// each stage's result and re-runs only what a changed parameter touches.
type sessionEngine struct{ s *recon.Session }

// NewSessionEngine wraps a new recon.Session on rec.
func NewSessionEngine(rec *capture.Recording) Engine {
	return sessionEngine{s: recon.NewSession(rec)}
}

func (e sessionEngine) Recording() *capture.Recording { return e.s.Recording() }

func (e sessionEngine) Build(ctx context.Context, r recipe.Recipe, progress func(string, float64)) (*Result, error) {
	res, err := e.s.Build(ctx, r, recon.Progress(progress))
	if err != nil {
		return nil, err
	}
	return fromRecon(res), nil
}

func (e sessionEngine) FirstLook(ctx context.Context, start recipe.Recipe, known recon.Known, progress func(string, float64)) (*Look, error) {
	look, err := recon.FirstLook(ctx, e.s, start, known, recon.Progress(progress))
	if err != nil {
		return nil, err
	}
	return &Look{Result: fromRecon(look.Result), Settings: look.Settings, Notes: look.Notes}, nil
}

func (e sessionEngine) EstimateApertureOffsets(ctx context.Context, r recipe.Recipe) ([]float64, error) {
	return recon.EstimateApertureOffsets(ctx, e.s, r)
}

// fromRecon copies an engine result into the window's own types.
func fromRecon(res *recon.Result) *Result {
	out := &Result{Frames: res.Frames, Report: res.Report, Recipe: res.Recipe, Lines: make([]Line, len(res.Lines))}
	for i, l := range res.Lines {
		out.Lines[i] = Line{
			Number: l.Number, Aperture: l.Aperture, Stroke: l.Stroke,
			EdgeS: l.EdgeS, Repaired: l.Repaired,
			FieldStartS: l.FieldStartS, FieldEndS: l.FieldEndS,
			BaselineStartS: l.BaselineStartS, BaselineEndS: l.BaselineEndS,
			YMM: l.YMM,
		}
	}
	return out
}
