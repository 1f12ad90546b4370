package recon

import (
	"context"
	"sync"
)

// minSplitSamples is the channel length from which a whole-channel scan is
// shared between workers; a shorter one is scanned by one goroutine, as
// with GOMAXPROCS=1. Every split scan gives exactly the serial result.
const minSplitSamples = 1 << 20

// splitSpans cuts [0, n) into w contiguous spans of nearly equal length.
func splitSpans(n, w int) [][2]int {
	out := make([][2]int, 0, w)
	per := (n + w - 1) / w
	for a := 0; a < n; a += per {
		out = append(out, [2]int{a, min(a+per, n)})
	}
	return out
}

// forEachSpan calls f(k, a, b) on each span k of spans: in parallel, one
// goroutine a span, when parallel is true, else in turn. Work that writes
// only its own span's results gives the serial result either way.
func forEachSpan(spans [][2]int, parallel bool, f func(k, a, b int)) {
	if !parallel || len(spans) == 1 {
		for k, sp := range spans {
			f(k, sp[0], sp[1])
		}
		return
	}
	var wg sync.WaitGroup
	for k, sp := range spans {
		wg.Add(1)
		go func() {
			defer wg.Done()
			f(k, sp[0], sp[1])
		}()
	}
	wg.Wait()
}

// forSpans calls f on contiguous spans [a, b) covering [0, n), one per
// worker and in parallel when n is at least minN.
func forSpans(n, minN int, f func(a, b int)) {
	forEachSpan(splitSpans(n, workers()), n >= minN, func(_, a, b int) { f(a, b) })
}

// flatRuns finds the stretches of at least minLen samples over which x
// holds exactly one value, keeping at most maxFlatRuns of them (the first
// ones) and counting all. A long channel is cut at value changes into one
// span per worker, so no run is split and the runs, in order, and the count
// are those of flatRunsSerial.
func flatRuns(x []float32, minLen int) ([]flatRun, int) {
	if w := workers(); w > 1 && len(x) >= minSplitSamples {
		return flatRunsSplit(x, minLen, w)
	}
	return flatRunsSerial(x, minLen)
}

// flatRunsSplit is flatRuns shared between w workers.
func flatRunsSplit(x []float32, minLen, w int) ([]flatRun, int) {
	// changeAt is the first sample from a on that differs from the one
	// before it (or len(x)): the start of a run.
	changeAt := func(a int) int {
		for a > 0 && a < len(x) && x[a] == x[a-1] {
			a++
		}
		return a
	}
	sp := splitSpans(len(x), w)
	cuts := make([]int, len(sp)+1)
	for k, s := range sp {
		cuts[k] = changeAt(s[0])
	}
	cuts[len(sp)] = len(x)
	runs := make([][]flatRun, len(sp))
	totals := make([]int, len(sp))
	var wg sync.WaitGroup
	for k := range sp {
		wg.Add(1)
		go func(k int) {
			defer wg.Done()
			from, to := cuts[k], max(cuts[k], cuts[k+1])
			runs[k], totals[k] = flatRunsSerial(x[from:to], minLen)
			for i := range runs[k] {
				runs[k][i].from += from
				runs[k][i].to += from
			}
		}(k)
	}
	wg.Wait()
	var all []flatRun
	total := 0
	for k := range sp {
		total += totals[k]
		all = append(all, runs[k][:min(len(runs[k]), maxFlatRuns-len(all))]...)
	}
	return all, total
}

// rawEdgesSplit is rawEdges with the channel cut into one span per worker.
// The trigger's state where a span begins is that after the last sample
// before it that was above upper or below lower (a sample between them
// leaves the state as it was), or the starting state if there is none;
// with that state each span gives exactly the edges of the serial scan.
// It needs lower ≤ upper (a non-negative hysteresis).
func rawEdgesSplit(ctx context.Context, x []float32, tr trigger, high bool, w int) ([]float64, error) {
	stateBefore := func(a int) bool {
		for i := a - 1; i >= 0; i-- {
			v := tr.sign * x[i]
			switch {
			case v > tr.upper:
				return true
			case v < tr.lower:
				return false
			}
		}
		return high
	}
	sp := splitSpans(len(x), w)
	edges := make([][]float64, len(sp))
	errs := make([]error, len(sp))
	var wg sync.WaitGroup
	for k, s := range sp {
		wg.Add(1)
		go func(k int) {
			defer wg.Done()
			start := high
			if k > 0 {
				start = stateBefore(s[0])
			}
			edges[k], errs[k] = tr.scan(ctx, x, s[0], s[1], start, nil)
		}(k)
	}
	wg.Wait()
	var all []float64
	for k := range sp {
		if errs[k] != nil {
			return nil, errs[k]
		}
		all = append(all, edges[k]...)
	}
	return all, nil
}
