package capture

import (
	"encoding/binary"
	"math"
)

// sampleKind is a stored sample type.
type sampleKind int

const (
	kindInt8 sampleKind = iota
	kindUint8
	kindInt16
	kindUint16
	kindInt24
	kindInt32
	kindUint32
	kindFloat32
	kindFloat64
)

// kindSize is the stored size in bytes of each kind.
var kindSize = [...]int{kindInt8: 1, kindUint8: 1, kindInt16: 2, kindUint16: 2, kindInt24: 3, kindInt32: 4, kindUint32: 4, kindFloat32: 4, kindFloat64: 8}

// decodeInto converts len(out) samples of one kind into float32, computing
// out[i] = stored·scale + offset. Sample i starts at src[i*stride]. Each
// kind and byte order has its own loop, with the byte order decided outside
// it, so the compiler keeps each loop tight.
func decodeInto(out []float32, src []byte, stride int, kind sampleKind, bigEndian bool, scale, offset float32) {
	n := len(out)
	if n == 0 {
		return
	}
	src = src[:(n-1)*stride+kindSize[kind]] // one bounds check for the whole block
	switch kind {
	case kindInt8:
		for i := range out {
			out[i] = float32(int8(src[i*stride]))*scale + offset
		}
	case kindUint8:
		for i := range out {
			out[i] = float32(src[i*stride])*scale + offset
		}
	case kindInt16, kindUint16:
		signed := kind == kindInt16
		switch {
		case signed && !bigEndian:
			for i := range out {
				j := i * stride
				out[i] = float32(int16(uint16(src[j])|uint16(src[j+1])<<8))*scale + offset
			}
		case signed:
			for i := range out {
				j := i * stride
				out[i] = float32(int16(uint16(src[j])<<8|uint16(src[j+1])))*scale + offset
			}
		case !bigEndian:
			for i := range out {
				j := i * stride
				out[i] = float32(uint16(src[j])|uint16(src[j+1])<<8)*scale + offset
			}
		default:
			for i := range out {
				j := i * stride
				out[i] = float32(uint16(src[j])<<8|uint16(src[j+1]))*scale + offset
			}
		}
	case kindInt24:
		if bigEndian {
			for i := range out {
				j := i * stride
				u := uint32(src[j+2]) | uint32(src[j+1])<<8 | uint32(src[j])<<16
				out[i] = float32(int32(u<<8)>>8)*scale + offset
			}
			return
		}
		for i := range out {
			j := i * stride
			u := uint32(src[j]) | uint32(src[j+1])<<8 | uint32(src[j+2])<<16
			out[i] = float32(int32(u<<8)>>8)*scale + offset
		}
	case kindInt32, kindUint32, kindFloat32:
		// Assemble the words of a batch first, then convert them in a
		// plain loop: keeps both loops free of branches.
		var words [256]uint32
		for start := 0; start < n; start += len(words) {
			w := words[:min(len(words), n-start)]
			if bigEndian {
				for i := range w {
					j := (start + i) * stride
					w[i] = uint32(src[j+3]) | uint32(src[j+2])<<8 | uint32(src[j+1])<<16 | uint32(src[j])<<24
				}
			} else {
				for i := range w {
					j := (start + i) * stride
					w[i] = uint32(src[j]) | uint32(src[j+1])<<8 | uint32(src[j+2])<<16 | uint32(src[j+3])<<24
				}
			}
			dst := out[start : start+len(w)]
			switch kind {
			case kindInt32:
				for i, x := range w {
					dst[i] = float32(float64(int32(x))*float64(scale)) + offset
				}
			case kindUint32:
				for i, x := range w {
					dst[i] = float32(float64(x)*float64(scale)) + offset
				}
			default:
				for i, x := range w {
					dst[i] = math.Float32frombits(x)*scale + offset
				}
			}
		}
	case kindFloat64:
		for i := range out {
			j := i * stride
			var v uint64
			if bigEndian {
				v = binary.BigEndian.Uint64(src[j : j+8])
			} else {
				v = binary.LittleEndian.Uint64(src[j : j+8])
			}
			out[i] = float32(math.Float64frombits(v)*float64(scale) + float64(offset))
		}
	}
}
