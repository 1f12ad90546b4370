// Package recon is Spotloom's reconstruction engine: it turns a capture of
// a flying-spot scanner (detector, index pulse and position signals) and a
// recipe into frames on a uniform millimetre grid.
//
// A build runs in stages, each cached in a Session by the parameters it
// depends on: timing (index edges with an automatic threshold by Otsu's
// method, Otsu 1979; hysteresis; sub-sample edge times by linear
// interpolation; missing and spurious pulses repaired against the running
// median period), rows (the cross-scan position from a DC level smoothed by
// a Savitzky–Golay filter, Savitzky & Golay 1964, from the amplitude of a
// carrier tone, from step pulses, or from a constant speed; strokes split at
// reversals), placement (each line's own period turns time into wheel
// angle; the uniform, sine and table sweep laws, the table interpolated with
// gonum/interp; flat x = D·tan θ or angular projection; the delay found from
// the detector's beam-on envelope; baseline from the beam-off interval
// around each line) and gridding (every beam-on sample accumulated at its
// (x, y) with a bilinear kernel, normalised by the weight, with a coverage
// mask and small gaps filled).
package recon
