package export

// TIFF LZW (TIFF 6.0 Section 13) differs from the LZW of compress/lzw in
// two ways that make the standard library's writer unusable: codes are
// packed most significant bit first, and the code width grows one code
// earlier ("early change"), because a TIFF decoder widens its codes as soon
// as the entry it is about to define would need the next width.

// lzwHashBits sizes the encoder's open-addressing table; 2^13 slots are
// twice the 4094 entries a TIFF string table can hold.
const lzwHashBits = 13

// lzwEncoder holds the string table between strips so it is allocated
// once per file.
type lzwEncoder struct {
	table [1 << lzwHashBits]uint32 // key<<12 | code, 0 = empty
	out   []byte
	bits  uint64
	nBits uint
}

// lzwWidth is the code width an encoder uses while next is the next free
// code: the decoder widens when the entry it would define reaches
// 2^width − 1, one code before the encoder has used it (TIFF 6.0
// Section 13: the writer switches to 10-bit codes once code 511 is in the
// table, not after it has been written).
func lzwWidth(next uint32) uint {
	switch {
	case next < 512:
		return 9
	case next < 1024:
		return 10
	case next < 2048:
		return 11
	default:
		return lzwMaxWidth
	}
}

func (e *lzwEncoder) emit(code uint32, width uint) {
	e.bits = e.bits<<width | uint64(code)
	e.nBits += width
	for e.nBits >= 8 {
		e.nBits -= 8
		e.out = append(e.out, byte(e.bits>>e.nBits))
	}
	e.bits &= 1<<e.nBits - 1
}

func (e *lzwEncoder) reset() {
	clear(e.table[:])
}

// encode appends the LZW coding of one strip to dst: a Clear code first,
// EndOfInformation last, the final byte padded with zero bits.
func (e *lzwEncoder) encode(dst, src []byte) []byte {
	e.out, e.bits, e.nBits = dst, 0, 0
	e.reset()
	next := uint32(lzwFirstCode)
	width := lzwWidth(next)
	e.emit(lzwClearCode, width)
	if len(src) == 0 {
		e.emit(lzwEOICode, width)
		return e.flush()
	}
	const mask = 1<<lzwHashBits - 1
	prefix := uint32(src[0])
	for _, c := range src[1:] {
		key := prefix<<8 | uint32(c)
		slot := (key>>lzwHashBits ^ key) & mask
		found := false
		for {
			entry := e.table[slot]
			if entry == 0 {
				break
			}
			if entry>>12 == key {
				prefix = entry & 0xfff
				found = true
				break
			}
			slot = (slot + 1) & mask
		}
		if found {
			continue
		}
		e.emit(prefix, width)
		e.table[slot] = key<<12 | next
		next++
		if next == lzwTableFull {
			e.emit(lzwClearCode, width)
			e.reset()
			next = lzwFirstCode
		}
		width = lzwWidth(next)
		prefix = uint32(c)
	}
	e.emit(prefix, width)
	// The decoder defines one more entry after the last code, so the
	// EndOfInformation code is read at the width that entry implies.
	e.emit(lzwEOICode, lzwWidth(next+1))
	return e.flush()
}

func (e *lzwEncoder) flush() []byte {
	if e.nBits > 0 {
		e.out = append(e.out, byte(e.bits<<(8-e.nBits)))
	}
	e.nBits, e.bits = 0, 0
	return e.out
}
