// Package measure takes measurements on a reconstructed frame: resolution,
// geometry, contrast and noise. Every function is a pure function of a
// recon.Frame (its float32 pixels, size, pitch, origin and coverage mask)
// and of positions in millimetres in the frame's own coordinates, the ones
// the window's pointer read-out shows: x across the sweep (x of column c is
// OriginXMM + c·PitchXMM) and y cross-scan (y of row r is OriginYMM −
// r·PitchYMM, so row 0 is the largest y). Pixels without data are never
// used.
//
// The methods:
//
//   - Edge: the spatial frequency response of a slanted edge by the e-SFR
//     method of ISO 12233:2017 (Photography — Electronic still picture
//     imaging — Resolution and spatial frequency responses), clause 6 and
//     Annex D: the edge is located in every row (or column) by the centroid
//     of the windowed first derivative, a straight line is fitted to those
//     locations, every pixel is projected onto the edge normal and binned
//     at a quarter of the pitch into an oversampled edge spread function,
//     which is differentiated (central difference), windowed with a
//     Hamming window centred on the line spread function and transformed
//     with a DFT; the modulus is normalised at zero frequency and the
//     central difference's own response, sinc(2·f·Δ), is divided out.
//   - Grid: dot or hole grid geometry. Dots are found by a threshold
//     between the two classes of Otsu's method (N. Otsu, IEEE Trans. SMC
//     9(1), 1979), 8-connected components and contrast-weighted centroids;
//     the grid indices follow from the two lattice vectors of the nearest
//     neighbours, and an affine map from the nominal grid (spacing given)
//     to the measured centres is fitted by linear least squares. The map
//     gives the scale in x and y, rotation and shear; the residuals give the
//     RMS and the worst dot. GridCorrection turns the scale into recipe
//     values that make the frame true.
//   - Region, CNR, Profile, Distance: mean, sample standard deviation and
//     SNR = mean / SD of a rectangle; contrast-to-noise ratio |m₁ − m₂| /
//     √((s₁² + s₂²)/2); values along a line, averaged across a band, by
//     bilinear interpolation; the Euclidean distance between two points.
//   - NPS: the noise power spectrum after IEC 62220-1-1:2015 (Medical
//     electrical equipment — Characteristics of digital X-ray imaging
//     devices — Part 1-1: Determination of the detective quantum
//     efficiency), §7.2.3 and the formula of §7.2.4 as remembered: a
//     second-order two-dimensional polynomial is fitted to the whole region
//     and subtracted, the region is cut into square ROIs overlapping by
//     half, each ROI's squared DFT modulus is scaled by px·py/(Nx·Ny) and
//     the spectra averaged; the result is given as a radial average and as
//     cuts along both axes (the mean of the seven lines either side of the
//     axis, the axis itself left out), in mm² against lp/mm. The DFT is
//     gonum's dsp/fourier.
package measure
