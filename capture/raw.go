package capture

import (
	"fmt"
	"io"
	"math"
)

// readRaw decodes a raw binary capture of the given size with layout l.
func readRaw(r io.ReaderAt, size int64, l RawLayout, opts Options) (*Recording, error) {
	bad := func(off int64, problem, expected string) error {
		return &FormatError{Format: "raw", Place: AtByte(off), Problem: problem, Expected: expected}
	}
	if err := l.Validate(); err != nil {
		return nil, &FormatError{Format: "raw", Place: wholeFile, Problem: "layout: " + err.Error()}
	}
	rate := l.SampleRateHz
	if opts.SampleRateHz > 0 {
		rate = opts.SampleRateHz
	}
	if !(rate > 0) {
		return nil, &FormatError{Format: "raw", Place: wholeFile, Problem: "no sample rate", Expected: "sample_rate_hz in the layout or a rate given with the command"}
	}
	kind, big := l.kind()
	sampleBytes := kindSize[kind]
	frameBytes := int64(sampleBytes * l.Channels)
	if l.HeaderBytes >= size {
		return nil, bad(0, fmt.Sprintf("header_bytes %d leaves no samples in a %d-byte file", l.HeaderBytes, size), fmt.Sprintf("fewer than %d header bytes", size))
	}
	body := size - l.HeaderBytes
	frames := body / frameBytes
	if rest := body % frameBytes; rest != 0 {
		return nil, bad(l.HeaderBytes+frames*frameBytes, fmt.Sprintf("%d bytes after the %d-byte header are not a whole number of %d-byte frames (%d bytes left over)", body, l.HeaderBytes, frameBytes, rest),
			fmt.Sprintf("a multiple of %d bytes (%d channels × %s); check channels, sample_type and header_bytes", frameBytes, l.Channels, l.SampleType))
	}
	rec := &Recording{
		SampleRateHz: rate,
		Channels:     make([]Channel, l.Channels),
		Source:       Source{Format: "raw", SampleType: l.SampleType, BitDepth: 8 * sampleBytes},
	}
	dst := make([][]float32, l.Channels)
	scales := make([]float32, l.Channels)
	offsets := make([]float32, l.Channels)
	sum := opts.summary
	if sum != nil {
		sum.start(l.Channels, frames)
	}
	for c := range dst {
		if sum == nil {
			dst[c] = make([]float32, frames)
		}
		s, o, unit := l.channelScale(c)
		if kind != kindFloat32 && kind != kindFloat64 {
			if peak := math.Abs(s)*math.Ldexp(1, 8*sampleBytes) + math.Abs(o); peak > math.MaxFloat32 {
				return nil, &FormatError{Format: "raw", Place: wholeFile, Problem: fmt.Sprintf("layout scale %g and offset %g for channel %d reach %g", s, o, c, peak),
					Expected: "values within the float32 range (about ±3.4e38)"}
			}
		}
		scales[c], offsets[c] = float32(s), float32(o)
		name := fmt.Sprintf("ch%d", c)
		if len(l.Names) > 0 {
			name = l.Names[c]
		}
		rec.Channels[c] = Channel{Name: name, Unit: unit, Samples: dst[c]}
	}
	if l.Interleaved {
		conv := func(dst [][]float32, at int, src []byte) {
			n := len(src) / int(frameBytes)
			for c := range dst {
				decodeInto(dst[c][at:at+n], src[c*sampleBytes:], int(frameBytes), kind, big, scales[c], offsets[c])
			}
		}
		var err error
		if sum != nil {
			err = streamFrames(r, l.HeaderBytes, frames, int(frameBytes), l.Channels, 0, conv, opts.Progress, "raw", sum)
		} else {
			err = readFrames(r, l.HeaderBytes, frames, int(frameBytes), dst, conv, opts.Progress, "raw")
		}
		if err != nil {
			return nil, err
		}
	} else {
		for c := range dst {
			one := dst[c : c+1]
			conv := func(d [][]float32, at int, src []byte) {
				decodeInto(d[0][at:at+len(src)/sampleBytes], src, sampleBytes, kind, big, scales[c], offsets[c])
			}
			var progress func(float64)
			if opts.Progress != nil {
				progress = func(f float64) { opts.Progress((float64(c) + f) / float64(len(dst))) }
			}
			start := l.HeaderBytes + int64(c)*frames*int64(sampleBytes)
			var err error
			if sum != nil {
				err = streamFrames(r, start, frames, sampleBytes, 1, c, conv, progress, "raw", sum)
			} else {
				err = readFrames(r, start, frames, sampleBytes, one, conv, progress, "raw")
			}
			if err != nil {
				return nil, err
			}
		}
	}
	if sum != nil {
		rec.Warnings = append(rec.Warnings, sum.nonFiniteWarning()...)
	} else if kind == kindFloat32 || kind == kindFloat64 {
		if n := replaceNonFinite(dst); n > 0 {
			rec.Warnings = append(rec.Warnings, nonFiniteText(n))
		}
	}
	return rec, nil
}
