package recon

// clipBlock is the number of samples a clipTable entry sums up.
const clipBlock = 32

// clipTable answers clipScan's two questions (did the detector sit at an
// extreme for three samples in a row, and how many samples away from the
// extremes repeated the one before) for any span of samples without
// reading all of it: per block of clipBlock samples it keeps the count of
// such repeats (the low seven bits) and whether a third extreme sample in
// a row ends in the block (the top bit). A span then costs its whole
// blocks' entries and at most two part-blocks of samples. It is built once
// per detector in a session that grids again (a delay or pitch moved), so
// a re-grid does not scan every line's samples a second time; its answers
// are clipScan's exactly (TestClipTableMatchesScan). One byte per 32
// samples keeps it under 1 % of the samples' memory.
type clipTable struct {
	test, det []float32
	hi, lo    float32
	blocks    []uint8
}

const clipTriple = 0x80 // a block entry's flag: a triple extreme ends here

// newClipTable builds the table of det (the samples whose repeats count)
// and test (the samples tested against hi and lo, as clipScan's).
func newClipTable(test, det []float32, hi, lo float32) *clipTable {
	ct := &clipTable{test: test, det: det[:len(test)], hi: hi, lo: lo, blocks: make([]uint8, (len(test)+clipBlock-1)/clipBlock)}
	forSpans(len(ct.blocks), 1024, func(a, b int) {
		for blk := a; blk < b; blk++ {
			from, to := blk*clipBlock, min((blk+1)*clipBlock, len(test))
			ties, triple := ct.scan(from, to, 0)
			e := uint8(ties)
			if triple {
				e |= clipTriple
			}
			ct.blocks[blk] = e
		}
	})
	return ct
}

// extreme reports whether test sample j sits at or beyond hi or lo.
func (ct *clipTable) extreme(j int) bool {
	c := ct.test[j]
	return c >= ct.hi || c <= ct.lo
}

// scan counts, over samples [from, to) of a span that starts at sample
// first, the repeats (sample j away from the extremes equal to sample j−1,
// for j > first) and reports whether any j ends three extreme samples in
// a row (j−2, j−1 and j, for j ≥ first+2).
func (ct *clipTable) scan(from, to, first int) (ties int, triple bool) {
	for j := max(from, first); j < to; j++ {
		if ct.extreme(j) {
			triple = triple || j >= first+2 && ct.extreme(j-1) && ct.extreme(j-2)
		} else if j > first {
			ties += b2i(ct.det[j] == ct.det[j-1])
		}
	}
	return ties, triple
}

// span is clipScan of samples [a, b).
func (ct *clipTable) span(a, b int) (clipped bool, ties int) {
	ba := (a + clipBlock + 1) / clipBlock // the first block whose samples all lie at a+2 or later
	bb := b / clipBlock
	if ba >= bb {
		ties, clipped = ct.scan(a, b, a)
		return clipped, ties
	}
	headTies, headTriple := ct.scan(a, ba*clipBlock, a)
	tailTies, tailTriple := ct.scan(bb*clipBlock, b, a)
	ties, clipped = headTies+tailTies, headTriple || tailTriple
	for _, e := range ct.blocks[ba:bb] {
		ties += int(e &^ clipTriple)
		clipped = clipped || e&clipTriple != 0
	}
	return clipped, ties
}
