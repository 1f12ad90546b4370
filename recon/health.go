package recon

import (
	"fmt"
	"math"
	"strings"

	"spotloom/capture"
	"spotloom/internal/strictjson"
)

// A build says what it could not use: stretches of the capture without
// lines, stretches where the detector stood still, and what the reader
// changed. The thresholds below are common practice, no published source.
const (
	// minQuietLines is how many line periods a stretch without lines, or
	// with a constant detector, must last to be reported: far more than
	// the beam-off gap of one line, which is part of every line.
	minQuietLines = 5
	// minQuietS is the shortest stretch reported, whatever the line rate.
	minQuietS = 0.05
	// maxStretchesNamed is how many stretches a warning names before it
	// counts the rest.
	maxStretchesNamed = 3
	// minUsefulSide is the fewest pixels a frame side should have to be a
	// picture; a smaller frame is built but warned about.
	minUsefulSide = 8
	// maxFlatRuns bounds the constant runs kept per channel.
	maxFlatRuns = 1000
)

// stretch is a span of samples [from, to).
type stretch struct{ from, to int }

// flatRun is a stretch over which a channel holds one value.
type flatRun struct {
	stretch
	value float32
}

// flatRunsSerial finds the stretches of at least minLen samples over which x
// holds exactly one value, keeping at most maxFlatRuns of them (the first
// ones) and counting all, in one pass. A run of minLen or more samples
// holds two samples s = minLen/2 apart of which the first is a multiple of
// s, so the pass looks at every s-th sample and walks out a run only where
// such a pair is equal: a noisy channel costs 1/s of a sample-by-sample
// scan.
func flatRunsSerial(x []float32, minLen int) (runs []flatRun, total int) {
	minLen = max(minLen, 2)
	s := minLen / 2
	for i := 0; i+s < len(x); {
		v := x[i]
		if x[i+s] != v { // NaN too: a NaN is no run
			i += s
			continue
		}
		// The run of v round i: runs do not overlap, so the walk back
		// stops at the end of the one before.
		from, to := i, i+1
		for from > 0 && x[from-1] == v {
			from--
		}
		for to < len(x) && x[to] == v {
			to++
		}
		if to-from >= minLen {
			total++
			if len(runs) < maxFlatRuns {
				runs = append(runs, flatRun{stretch{from, to}, v})
			}
		}
		i = (to + s - 1) / s * s // the next multiple of s from the end on
	}
	return runs, total
}

// refuseFlatDetector refuses a detector that holds one value over the
// whole capture (all zero, all NaN set to 0 by the reader, stuck at a
// rail): there is nothing to image, and every later stage would report
// something misleading (every line "clipped").
func refuseFlatDetector(rec *capture.Recording, ch int, st *channelStats) error {
	if st.lo != st.hi {
		return nil
	}
	c := rec.Channels[ch]
	msg := fmt.Sprintf("the detector (channel %d %s) is %g in all %s samples: nothing to image; check channels.detector, or the detector and its cable",
		ch, strictjson.Quote(c.Name), st.lo, strictjson.Count(len(c.Samples)))
	for _, w := range rec.Warnings {
		if strings.Contains(w, "NaN") {
			msg += "; when read, " + w
			break
		}
	}
	return fmt.Errorf("%s", msg)
}

// quietSamples is the length in samples a stretch must have to be named.
func quietSamples(periodSamples, rateHz float64) int {
	return int(math.Max(minQuietLines*periodSamples, minQuietS*rateHz))
}

// lineGaps returns the stretches of the capture (n samples) that no
// line's field touches and that last at least minLen samples: no index
// pulses there, or pulses the timing could not use.
func lineGaps(lines []placedLine, n, minLen int) []stretch {
	var gaps []stretch
	at := 0
	for _, l := range lines {
		if l.first-at >= minLen {
			gaps = append(gaps, stretch{at, l.first})
		}
		at = max(at, l.last)
	}
	if n-at >= minLen {
		gaps = append(gaps, stretch{at, n})
	}
	return gaps
}

// describeStretches names the first stretches in seconds and counts the
// rest: "0.0–12.5 s, 50.0–60.0 s".
func describeStretches(spans []stretch, total int, rateHz float64) string {
	var parts []string
	for i, s := range spans {
		if i == maxStretchesNamed {
			break
		}
		parts = append(parts, fmt.Sprintf("%.2f–%.2f s", float64(s.from)/rateHz, float64(s.to)/rateHz))
	}
	text := strings.Join(parts, ", ")
	if more := total - len(parts); more > 0 {
		text += fmt.Sprintf(" and %s more", strictjson.Count(more))
	}
	return text
}

// coverageWarning says which seconds of the capture have no lines.
func coverageWarning(lines []placedLine, n int, periodSamples, rateHz float64) string {
	gaps := lineGaps(lines, n, quietSamples(periodSamples, rateHz))
	if len(gaps) == 0 {
		return ""
	}
	missing := 0
	for _, g := range gaps {
		missing += g.to - g.from
	}
	return fmt.Sprintf("lines cover only part of the capture: no lines in %s (%s of the %.2f s): no usable index pulses there",
		describeStretches(gaps, len(gaps), rateHz), percentText(float64(missing)/float64(n)), float64(n)/rateHz)
}

// flatWarning says where the detector held one value for longer than a
// few lines: dead, disconnected, saturated, or NaN samples set to 0.
func flatWarning(runs []flatRun, total int, periodSamples, rateHz float64) string {
	minLen := quietSamples(periodSamples, rateHz)
	var spans []stretch
	var values []float32
	for _, r := range runs {
		if r.to-r.from >= minLen {
			spans = append(spans, r.stretch)
			values = append(values, r.value)
		}
	}
	// Runs beyond the kept ones are counted as long enough: they were at
	// least the shortest length flatRuns was asked for.
	named := len(spans) + (total - len(runs))
	if named == 0 {
		return ""
	}
	same := len(values) > 0
	for _, v := range values {
		same = same && v == values[0]
	}
	what := "one value"
	if same {
		what = fmt.Sprintf("the value %g", values[0])
	}
	return fmt.Sprintf("the detector holds %s without noise over %s: a dead or disconnected detector, a saturated one, or NaN samples set to 0; those lines are dark or flat",
		what, describeStretches(spans, named, rateHz))
}

// percentText prints a fraction as a percentage a person reads at once:
// "0.25 %", "37 %", "100 %", never in exponent form.
func percentText(fraction float64) string {
	p := 100 * fraction
	switch {
	case p == 0:
		return "0 %"
	case p < 0.01:
		return "under 0.01 %"
	case p < 10:
		return strings.TrimSuffix(strings.TrimRight(fmt.Sprintf("%.2f", p), "0"), ".") + " %"
	}
	return fmt.Sprintf("%.0f %%", p)
}
