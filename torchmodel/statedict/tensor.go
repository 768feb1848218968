package statedict

import (
	"encoding/binary"
	"math"
)

// Dtype is the element type of a stored tensor.
type Dtype int

// The element types of the torch.*Storage classes.
const (
	Float32 Dtype = iota + 1
	Float64
	Float16
	BFloat16
	Int64
	Int32
	Int16
	Int8
	Uint8
	Bool
)

var dtypeNames = map[Dtype]string{Float32: "float32", Float64: "float64", Float16: "float16", BFloat16: "bfloat16",
	Int64: "int64", Int32: "int32", Int16: "int16", Int8: "int8", Uint8: "uint8", Bool: "bool"}

func (d Dtype) String() string { return dtypeNames[d] }

// Size is the number of bytes of one element.
func (d Dtype) Size() int {
	switch d {
	case Float64, Int64:
		return 8
	case Float32, Int32:
		return 4
	case Float16, BFloat16, Int16:
		return 2
	}
	return 1
}

// IsFloat reports whether d holds floating-point numbers.
func (d Dtype) IsFloat() bool { return d == Float32 || d == Float64 || d == Float16 || d == BFloat16 }

// Tensor is one named tensor of a state_dict, made contiguous (row-major).
type Tensor struct {
	Shape []int
	Dtype Dtype // the element type in the file
	// Data holds the values as float32, row-major: float64 values are
	// rounded to the nearest float32, float16 and bfloat16 ones are exact.
	// It is nil for tensors of integers or booleans, which a sentence CNN
	// does not have as weights (their presence is reported by name).
	Data []float32
	// Ints holds the values of an int64 tensor (a module's integer
	// buffer), row-major; nil for every other type.
	Ints []int64
}

// Numel is the number of elements.
func (t *Tensor) Numel() int {
	n := 1
	for _, s := range t.Shape {
		n *= s
	}
	return n
}

// decoder converts element i of a storage's bytes to float32.
func decoder(d Dtype, order binary.ByteOrder) func(b []byte, i int64) float32 {
	switch d {
	case Float32:
		return func(b []byte, i int64) float32 { return math.Float32frombits(order.Uint32(b[4*i:])) }
	case Float64:
		return func(b []byte, i int64) float32 { return float32(math.Float64frombits(order.Uint64(b[8*i:]))) }
	case Float16:
		return func(b []byte, i int64) float32 { return halfToFloat(order.Uint16(b[2*i:])) }
	case BFloat16:
		return func(b []byte, i int64) float32 { return math.Float32frombits(uint32(order.Uint16(b[2*i:])) << 16) }
	}
	return nil
}

// halfToFloat converts an IEEE 754 binary16 value to float32 exactly.
func halfToFloat(h uint16) float32 {
	sign := uint32(h>>15) << 31
	exp := uint32(h>>10) & 0x1f
	frac := uint32(h) & 0x3ff
	switch {
	case exp == 0x1f: // infinity or NaN
		return math.Float32frombits(sign | 0xff<<23 | frac<<13)
	case exp != 0: // normal
		return math.Float32frombits(sign | (exp+127-15)<<23 | frac<<13)
	case frac == 0:
		return math.Float32frombits(sign)
	}
	// subnormal: frac·2⁻²⁴
	v := float32(frac) * (1.0 / (1 << 24))
	if sign != 0 {
		v = -v
	}
	return v
}

// materialize copies the strided view t of the storage bytes b into a new
// row-major float32 slice. The view was checked against the storage size
// when it was built (tensorOf) and b holds the whole storage.
func materialize(t *tensorRef, b []byte, order binary.ByteOrder) []float32 {
	n := int64(1)
	for _, s := range t.shape {
		n *= s
	}
	out := make([]float32, n)
	if n == 0 {
		return out
	}
	if t.storage.dtype == Float32 && order == binary.LittleEndian && contiguous(t.shape, t.stride) {
		src := b[4*t.offset : 4*(t.offset+n)]
		for i := range out {
			out[i] = math.Float32frombits(binary.LittleEndian.Uint32(src[4*i:]))
		}
		return out
	}
	dec := decoder(t.storage.dtype, order)
	gather(t, out, func(pos int64) float32 { return dec(b, pos) })
	return out
}

// materializeInts copies the strided view t of an int64 storage's bytes b
// into a new row-major slice.
func materializeInts(t *tensorRef, b []byte, order binary.ByteOrder) []int64 {
	n := int64(1)
	for _, s := range t.shape {
		n *= s
	}
	out := make([]int64, n)
	gather(t, out, func(pos int64) int64 { return int64(order.Uint64(b[8*pos:])) })
	return out
}

// gather fills out with the elements of the strided view t, row-major,
// element at storage position pos being at(pos).
func gather[T any](t *tensorRef, out []T, at func(pos int64) T) {
	rank := len(t.shape)
	idx := make([]int64, rank)
	pos := t.offset
	for i := range out {
		out[i] = at(pos)
		// advance the multi-index, last dimension fastest
		for k := rank - 1; k >= 0; k-- {
			idx[k]++
			pos += t.stride[k]
			if idx[k] < t.shape[k] {
				break
			}
			pos -= idx[k] * t.stride[k]
			idx[k] = 0
		}
	}
}

// contiguous reports whether stride is the row-major stride of shape
// (dimensions of size 1 may have any stride).
func contiguous(shape, stride []int64) bool {
	want := int64(1)
	for k := len(shape) - 1; k >= 0; k-- {
		if shape[k] != 1 && stride[k] != want {
			return false
		}
		want *= shape[k]
	}
	return true
}
