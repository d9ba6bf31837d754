package c3d

import (
	"encoding/binary"
	"math"
)

// Processor is the number format a file was written in, from byte 4 of the
// parameter section.
type Processor byte

// The three processor formats of C3D.
const (
	Intel Processor = 84 // little-endian integers, IEEE-754 little-endian reals
	DEC   Processor = 85 // little-endian integers, VAX F-floating reals
	MIPS  Processor = 86 // big-endian integers and IEEE-754 big-endian reals
)

func (p Processor) String() string {
	switch p {
	case Intel:
		return "Intel"
	case DEC:
		return "DEC"
	case MIPS:
		return "MIPS"
	}
	return "unknown"
}

func (p Processor) valid() bool { return p == Intel || p == DEC || p == MIPS }

// u16 reads an unsigned 16-bit integer from b[0:2].
func (p Processor) u16(b []byte) uint16 {
	if p == MIPS {
		return binary.BigEndian.Uint16(b)
	}
	return binary.LittleEndian.Uint16(b)
}

// i16 reads a signed 16-bit integer from b[0:2].
func (p Processor) i16(b []byte) int16 { return int16(p.u16(b)) }

// f32 reads a 32-bit real from b[0:4] as a float64 (exactly: every value of
// the three real formats is representable). A DEC reserved operand (sign
// set, exponent 0) gives NaN; callers check finiteness where it matters.
func (p Processor) f32(b []byte) float64 {
	switch p {
	case MIPS:
		return float64(math.Float32frombits(binary.BigEndian.Uint32(b)))
	case DEC:
		return decF(b)
	}
	return float64(math.Float32frombits(binary.LittleEndian.Uint32(b)))
}

// decF decodes a VAX F-floating value stored as two little-endian 16-bit
// words, the word holding sign and exponent first. After swapping the two
// words the bit layout is that of an IEEE single (sign, 8-bit exponent,
// 23-bit fraction), but the value is 0.1f × 2^(e-128), that is the IEEE
// reading divided by 4, and there are no infinities, NaNs or subnormals:
// exponent 0 means zero (or, with the sign bit set, a reserved operand).
// The division is done in float64 so that exponents 1 and 2, which would be
// subnormal in float32, and exponent 255, which would be infinite, stay exact.
func decF(b []byte) float64 {
	bits := uint32(binary.LittleEndian.Uint16(b))<<16 | uint32(binary.LittleEndian.Uint16(b[2:]))
	exp := int(bits>>23) & 0xff
	if exp == 0 {
		if bits&0x80000000 != 0 {
			return math.NaN()
		}
		return 0
	}
	frac := float64(bits&0x7fffff|0x800000) / (1 << 23) // 1.f
	v := math.Ldexp(frac, exp-129)
	if bits&0x80000000 != 0 {
		v = -v
	}
	return v
}
