// Package sampledata simulates flying-spot scanners so that Spotloom has
// captures whose true image and true geometry are known exactly: the
// built-in demo (Demo), the accuracy tests of the engine, and a way for
// users to see what a rig design would record before building it.
//
// A Rig (JSON, "spotloom-rig/1", every quantity with its unit in its key)
// describes the collimator wheel, the index sensor, the cross-scan motion,
// the position sensor, the detector chain and the ADC. A SceneModel is built
// from analytic shapes (signed distances) with a scatter yield per material,
// and renders to a raster at any pitch. Simulate scans a scene with a rig
// and returns a capture.Recording and its Truth: the time of every index
// edge and line, the true speed, delay and aperture offsets, the true y of
// every line, and the scene's measurable features, in the terms of the
// recipe of docs/pipeline.md. Rig.Recipe gives the recipe a builder of the rig
// would write.
//
// Published methods: photon counts are Poisson draws, by inversion below a
// mean of 10 and above it by the transformed rejection method with squeeze
// (PTRS) of W. Hörmann (1993); the beam spot is a Gaussian with
// FWHM = 2·sqrt(2·ln 2)·σ; afterglow, amplifier low-pass and AC coupling
// are single-pole filters discretised by impulse invariance; shapes are
// area-averaged into pixels by their signed distance.
//
// The package imports capture and recon/recipe but never recon, because
// the engine's tests import this package.
package sampledata
