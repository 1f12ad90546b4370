package measure

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/mat"

	"spotloom/recon"
)

// NPSResult is the noise power spectrum of a uniform region, in mm²
// (frame value² · mm²) against line pairs per mm.
type NPSResult struct {
	// FrequencyLPMM and Radial are the radial average, in rings one
	// frequency step wide, from the first step to the lower Nyquist
	// frequency.
	FrequencyLPMM []float64
	Radial        []float64
	// FrequencyXLPMM/AlongX and FrequencyYLPMM/AlongY are the cuts along
	// each axis, from 0 to that axis's Nyquist frequency.
	FrequencyXLPMM, AlongX []float64
	FrequencyYLPMM, AlongY []float64
	// ROIs is how many square ROIs of ROISize pixels were averaged.
	ROIs, ROISize int
	// Variance is the variance of the detrended region.
	Variance float64
	// PowerSum is the 2-D spectrum summed over every frequency bin times
	// the bin's area, which by Parseval's theorem is the ROIs' mean
	// variance about their own means.
	PowerSum float64
}

// maxROI is the ROI size IEC 62220-1-1:2015 §7.2.3 asks for (256 × 256).
const maxROI = 256

// NPS measures the noise power spectrum of the uniform region r (IEC
// 62220-1-1:2015 §7.2.3–7.2.4): a second-order 2-D polynomial fitted to
// the region is subtracted, square ROIs (the largest power of two up to
// 256 that fits twice into the region) overlapping by half are
// transformed, and px·py/(N·N)·|DFT|² is averaged over them. Every pixel
// of the region must have data.
func NPS(f *recon.Frame, r Rect) (NPSResult, error) {
	b, err := box(f, r)
	if err != nil {
		return NPSResult{}, err
	}
	w, h := b.width(), b.height()
	n := maxROI
	for n > min(w, h)/2 {
		n /= 2
	}
	if n < 16 {
		return NPSResult{}, fmt.Errorf("the noise region %v is %d × %d pixels: give at least 32 × 32", r, w, h)
	}
	vals, err := regionValues(f, b, r)
	if err != nil {
		return NPSResult{}, err
	}
	if err := detrend(vals, w, h); err != nil {
		return NPSResult{}, fmt.Errorf("the noise region %v: %w", r, err)
	}
	res := NPSResult{ROISize: n}
	for _, v := range vals {
		res.Variance += v * v
	}
	res.Variance /= float64(len(vals) - 6)

	power, rois := roiPower(vals, w, h, n)
	res.ROIs = rois
	scale := f.PitchXMM * f.PitchYMM / float64(n*n) / float64(res.ROIs)
	for i := range power {
		power[i] *= scale
	}
	du, dv := 1/(float64(n)*f.PitchXMM), 1/(float64(n)*f.PitchYMM)
	for _, p := range power {
		res.PowerSum += p * du * dv
	}
	res.axisCuts(power, n, du, dv)
	res.radialAverage(power, n, du, dv, math.Min(0.5/f.PitchXMM, 0.5/f.PitchYMM))
	return res, nil
}

// regionValues reads the region's pixels row by row; every one must hold
// data.
func regionValues(f *recon.Frame, b pixelBox, r Rect) ([]float64, error) {
	w, h := b.width(), b.height()
	vals := make([]float64, w*h)
	for row := 0; row < h; row++ {
		for col := 0; col < w; col++ {
			v, ok := f.At(b.c0+col, b.r0+row)
			if !ok {
				return nil, fmt.Errorf("the noise region %v holds pixels without data (first at x %g, y %g mm): draw it inside the covered area: %w", r, xOf(f, float64(b.c0+col)), yOf(f, float64(b.r0+row)), ErrNoData)
			}
			vals[row*w+col] = float64(v)
		}
	}
	return vals, nil
}

// roiPower sums |DFT|² of every n × n region of interest, overlapping by
// half, each with its own mean removed (a row-column 2-D transform through
// gonum's fourier.CmplxFFT), and returns the sum and the number of regions.
func roiPower(vals []float64, w, h, n int) ([]float64, int) {
	fft := fourier.NewCmplxFFT(n)
	power := make([]float64, n*n)
	roi := make([]complex128, n*n)
	col := make([]complex128, n)
	rois := 0
	for r0 := 0; r0+n <= h; r0 += n / 2 {
		for c0 := 0; c0+n <= w; c0 += n / 2 {
			var mean float64
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					mean += vals[(r0+y)*w+c0+x]
				}
			}
			mean /= float64(n * n)
			for y := 0; y < n; y++ {
				for x := 0; x < n; x++ {
					roi[y*n+x] = complex(vals[(r0+y)*w+c0+x]-mean, 0)
				}
				fft.Coefficients(roi[y*n:(y+1)*n], roi[y*n:(y+1)*n])
			}
			for x := 0; x < n; x++ {
				for y := 0; y < n; y++ {
					col[y] = roi[y*n+x]
				}
				fft.Coefficients(col, col)
				for y := 0; y < n; y++ {
					c := col[y]
					power[y*n+x] += real(c)*real(c) + imag(c)*imag(c)
				}
			}
			rois++
		}
	}
	return power, rois
}

// axisCuts sets the cuts along each axis: the mean of the lines 1 … 7
// either side of the axis, the axis itself left out (IEC 62220-1-1:2015
// §7.2.4).
func (res *NPSResult) axisCuts(power []float64, n int, du, dv float64) {
	lines := min(7, n/4)
	for k := 0; k <= n/2; k++ {
		var sx, sy float64
		for m := 1; m <= lines; m++ {
			sx += power[m*n+k] + power[(n-m)*n+k]
			sy += power[k*n+m] + power[k*n+n-m]
		}
		res.FrequencyXLPMM = append(res.FrequencyXLPMM, float64(k)*du)
		res.AlongX = append(res.AlongX, sx/float64(2*lines))
		res.FrequencyYLPMM = append(res.FrequencyYLPMM, float64(k)*dv)
		res.AlongY = append(res.AlongY, sy/float64(2*lines))
	}
}

// radialAverage sets the radial average in rings of the coarser frequency
// step, up to nyquist.
func (res *NPSResult) radialAverage(power []float64, n int, du, dv, nyquist float64) {
	// Frequency of index k of an n-point DFT: k/(n·pitch), k above n/2
	// being negative.
	signed := func(k int) int {
		if k > n/2 {
			return k - n
		}
		return k
	}
	step := math.Max(du, dv)
	rings := int(math.Floor(nyquist/step + 1e-9))
	sums, counts := make([]float64, rings+1), make([]int, rings+1)
	for y := 0; y < n; y++ {
		for x := 0; x < n; x++ {
			rho := math.Hypot(float64(signed(x))*du, float64(signed(y))*dv)
			k := int(math.Round(rho / step))
			if k >= 1 && k <= rings {
				sums[k] += power[y*n+x]
				counts[k]++
			}
		}
	}
	for k := 1; k <= rings; k++ {
		if counts[k] > 0 {
			res.FrequencyLPMM = append(res.FrequencyLPMM, float64(k)*step)
			res.Radial = append(res.Radial, sums[k]/float64(counts[k]))
		}
	}
}

// detrend subtracts the least-squares second-order polynomial in x and y
// (IEC 62220-1-1:2015 §7.2.3), on coordinates scaled to −1 … 1 so the
// normal equations stay well conditioned; they are solved by gonum.
func detrend(vals []float64, w, h int) error {
	terms := func(x, y float64) [6]float64 { return [6]float64{1, x, y, x * x, x * y, y * y} }
	coord := func(i, n int) float64 {
		if n == 1 {
			return 0
		}
		return 2*float64(i)/float64(n-1) - 1
	}
	ata, atb := make([]float64, 36), make([]float64, 6)
	for row := 0; row < h; row++ {
		for col := 0; col < w; col++ {
			t := terms(coord(col, w), coord(row, h))
			v := vals[row*w+col]
			for a := 0; a < 6; a++ {
				for c := 0; c < 6; c++ {
					ata[a*6+c] += t[a] * t[c]
				}
				atb[a] += t[a] * v
			}
		}
	}
	var coef mat.Dense
	if err := coef.Solve(mat.NewDense(6, 6, ata), mat.NewDense(6, 1, atb)); err != nil {
		return fmt.Errorf("the trend fit failed: %w", err)
	}
	for row := 0; row < h; row++ {
		for col := 0; col < w; col++ {
			t := terms(coord(col, w), coord(row, h))
			var fit float64
			for a := 0; a < 6; a++ {
				fit += t[a] * coef.At(a, 0)
			}
			vals[row*w+col] -= fit
		}
	}
	return nil
}
