// Package codec is the canonical binary encoding of artifacts: little-endian fixed-width
// numbers, length-prefixed strings and slices, NaN and −0 written in one form each, and a
// header naming the artifact type and its format version. Equal science therefore gives
// equal bytes, and a truncated or foreign record is an error, never a panic.
package codec

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"

	"dipline/steps"
)

const magic = "dpl1"

// Writer appends values to a buffer.
type Writer struct{ buf []byte }

// NewWriter starts an encoding of the named artifact type at the given format version.
func NewWriter(tag string, version uint32) *Writer {
	w := &Writer{}
	w.buf = append(w.buf, magic...)
	w.String(tag)
	w.Uint32(version)
	return w
}

// Bytes returns the encoding.
func (w *Writer) Bytes() []byte { return w.buf }

// Uint32 writes v.
func (w *Writer) Uint32(v uint32) { w.buf = binary.LittleEndian.AppendUint32(w.buf, v) }

// Uint64 writes v.
func (w *Writer) Uint64(v uint64) { w.buf = binary.LittleEndian.AppendUint64(w.buf, v) }

// Int writes v.
func (w *Writer) Int(v int64) { w.Uint64(uint64(v)) }

// Bool writes b as one byte.
func (w *Writer) Bool(b bool) {
	if b {
		w.buf = append(w.buf, 1)
	} else {
		w.buf = append(w.buf, 0)
	}
}

// FloatBits returns the canonical bits of v (see steps.FloatBits).
func FloatBits(v float64) uint64 { return steps.FloatBits(v) }

// Float writes v canonically.
func (w *Writer) Float(v float64) { w.Uint64(FloatBits(v)) }

// Floats writes a length and the values.
func (w *Writer) Floats(v []float64) {
	w.Uint64(uint64(len(v)))
	for _, x := range v {
		w.Float(x)
	}
}

// Ints writes a length and the values.
func (w *Writer) Ints(v []int) {
	w.Uint64(uint64(len(v)))
	for _, x := range v {
		w.Int(int64(x))
	}
}

// String writes a length and the bytes.
func (w *Writer) String(s string) {
	w.Uint64(uint64(len(s)))
	w.buf = append(w.buf, s...)
}

// Strings writes a count and the strings.
func (w *Writer) Strings(s []string) {
	w.Uint64(uint64(len(s)))
	for _, x := range s {
		w.String(x)
	}
}

// ErrShort is returned for a record that ends early.
var ErrShort = errors.New("codec: record ends early")

// Reader reads values back. The first error sticks; later reads return zero values.
type Reader struct {
	b   []byte
	err error
}

// NewReader checks the header against the expected tag and version.
func NewReader(b []byte, tag string, version uint32) *Reader {
	r := &Reader{b: b}
	if len(b) < len(magic) || string(b[:len(magic)]) != magic {
		r.err = errors.New("codec: not an artifact record")
		return r
	}
	r.b = b[len(magic):]
	if got := r.String(); r.err == nil && got != tag {
		r.err = fmt.Errorf("codec: record holds %q, not %q", got, tag)
	}
	if got := r.Uint32(); r.err == nil && got != version {
		r.err = fmt.Errorf("codec: %s record has format %d, this build reads %d", tag, got, version)
	}
	return r
}

// Err returns the first error, or an error when bytes are left over.
func (r *Reader) Err() error {
	if r.err == nil && len(r.b) != 0 {
		return fmt.Errorf("codec: %d bytes left over", len(r.b))
	}
	return r.err
}

func (r *Reader) take(n uint64) []byte {
	if r.err != nil {
		return nil
	}
	if uint64(len(r.b)) < n {
		r.err = ErrShort
		return nil
	}
	out := r.b[:n]
	r.b = r.b[n:]
	return out
}

// Uint32 reads a value.
func (r *Reader) Uint32() uint32 {
	if b := r.take(4); b != nil {
		return binary.LittleEndian.Uint32(b)
	}
	return 0
}

// Uint64 reads a value.
func (r *Reader) Uint64() uint64 {
	if b := r.take(8); b != nil {
		return binary.LittleEndian.Uint64(b)
	}
	return 0
}

// Int reads a value.
func (r *Reader) Int() int64 { return int64(r.Uint64()) }

// Bool reads a value.
func (r *Reader) Bool() bool {
	if b := r.take(1); b != nil {
		return b[0] == 1
	}
	return false
}

// Float reads a value.
func (r *Reader) Float() float64 { return math.Float64frombits(r.Uint64()) }

// count reads a length and checks that at least size×n bytes remain, so a corrupt length
// cannot make us allocate a huge slice.
func (r *Reader) count(size uint64) int {
	n := r.Uint64()
	if r.err == nil && (size > 0 && n > uint64(len(r.b))/size) {
		r.err = ErrShort
		return 0
	}
	return int(n)
}

// Floats reads a slice.
func (r *Reader) Floats() []float64 {
	n := r.count(8)
	if r.err != nil {
		return nil
	}
	out := make([]float64, n)
	for i := range out {
		out[i] = r.Float()
	}
	return out
}

// Ints reads a slice.
func (r *Reader) Ints() []int {
	n := r.count(8)
	if r.err != nil {
		return nil
	}
	out := make([]int, n)
	for i := range out {
		out[i] = int(r.Int())
	}
	return out
}

// String reads a string.
func (r *Reader) String() string {
	n := r.count(1)
	return string(r.take(uint64(n)))
}

// Strings reads a slice of strings.
func (r *Reader) Strings() []string {
	n := r.count(8)
	if r.err != nil {
		return nil
	}
	out := make([]string, n)
	for i := range out {
		out[i] = r.String()
	}
	return out
}
