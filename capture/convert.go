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
// kind and byte order has its own loop so the compiler keeps it tight.
func decodeInto(out []float32, src []byte, stride int, kind sampleKind, bigEndian bool, scale, offset float32) {
	n := len(out)
	if n == 0 {
		return
	}
	size := kindSize[kind]
	src = src[:(n-1)*stride+size] // one bounds check for the whole block
	le, be := binary.LittleEndian, binary.BigEndian
	switch kind {
	case kindInt8:
		for i := range out {
			out[i] = float32(int8(src[i*stride]))*scale + offset
		}
	case kindUint8:
		for i := range out {
			out[i] = float32(src[i*stride])*scale + offset
		}
	case kindInt16:
		if stride == 2 && !bigEndian {
			src = src[:2*n]
			for i := range out {
				out[i] = float32(int16(uint16(src[2*i])|uint16(src[2*i+1])<<8))*scale + offset
			}
			return
		}
		for i := range out {
			b := src[i*stride : i*stride+2]
			var v uint16
			if bigEndian {
				v = be.Uint16(b)
			} else {
				v = le.Uint16(b)
			}
			out[i] = float32(int16(v))*scale + offset
		}
	case kindUint16:
		for i := range out {
			b := src[i*stride : i*stride+2]
			var v uint16
			if bigEndian {
				v = be.Uint16(b)
			} else {
				v = le.Uint16(b)
			}
			out[i] = float32(v)*scale + offset
		}
	case kindInt24:
		for i := range out {
			b := src[i*stride : i*stride+3]
			var u uint32
			if bigEndian {
				u = uint32(b[2]) | uint32(b[1])<<8 | uint32(b[0])<<16
			} else {
				u = uint32(b[0]) | uint32(b[1])<<8 | uint32(b[2])<<16
			}
			out[i] = float32(int32(u<<8)>>8)*scale + offset
		}
	case kindInt32:
		for i := range out {
			b := src[i*stride : i*stride+4]
			var v uint32
			if bigEndian {
				v = be.Uint32(b)
			} else {
				v = le.Uint32(b)
			}
			out[i] = float32(float64(int32(v))*float64(scale)) + offset
		}
	case kindUint32:
		for i := range out {
			b := src[i*stride : i*stride+4]
			var v uint32
			if bigEndian {
				v = be.Uint32(b)
			} else {
				v = le.Uint32(b)
			}
			out[i] = float32(float64(v)*float64(scale)) + offset
		}
	case kindFloat32:
		for i := range out {
			b := src[i*stride : i*stride+4]
			var v uint32
			if bigEndian {
				v = be.Uint32(b)
			} else {
				v = le.Uint32(b)
			}
			out[i] = math.Float32frombits(v)*scale + offset
		}
	case kindFloat64:
		for i := range out {
			b := src[i*stride : i*stride+8]
			var v uint64
			if bigEndian {
				v = be.Uint64(b)
			} else {
				v = le.Uint64(b)
			}
			out[i] = float32(math.Float64frombits(v)*float64(scale) + float64(offset))
		}
	}
}
