package fits

import (
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// maxFields is the largest TFIELDS allowed (FITS 4.0 §7.3.1).
const maxFields = 999

// BinaryTable is the layout of one binary-table extension and the bytes of its rows.
type BinaryTable struct {
	hdu    *HDU
	rows   int
	rowLen int
	cols   []*Column
	main   []byte // rows × rowLen bytes; the gap and heap after them are not kept
}

// HDU returns the HDU the table belongs to.
func (t *BinaryTable) HDU() *HDU { return t.hdu }

// Rows is NAXIS2.
func (t *BinaryTable) Rows() int { return t.rows }

// Columns returns the columns in TFIELDS order.
func (t *BinaryTable) Columns() []*Column { return t.cols }

// Column is one field of a binary table (TTYPEn, TFORMn, TUNITn, TSCALn, TZEROn, TNULLn).
type Column struct {
	// Number is n in TTYPEn, from 1.
	Number int
	// Name (TTYPEn) and Unit (TUNITn) are "" when absent; Form is TFORMn as written.
	Name, Unit, Form string
	// Type is the data type letter: L X B I J K A E D C M. For a P or Q column it is the
	// type of the heap elements.
	Type byte
	// Descriptor is 'P' or 'Q' for a variable-length column (a heap descriptor), else 0.
	Descriptor byte
	// Repeat is the element count r of rT.
	Repeat int
	// Offset is the byte position within a row; Width the bytes the column takes.
	Offset, Width int
	// Scale and Zero convert stored to physical values: physical = Zero + Scale × stored.
	Scale, Zero float64
	// Null is the stored integer that marks an undefined value, when HasNull.
	Null    int64
	HasNull bool

	t *BinaryTable
}

// where names the column for messages.
func (c *Column) where() string {
	name := c.Name
	if name == "" {
		name = fmt.Sprintf("#%d", c.Number)
	}
	return fmt.Sprintf("%s: column %s", c.t.hdu, name)
}

// elemSize is the stored size of one element of each type (FITS 4.0 Table 18); X is in
// bits and handled apart.
func elemSize(code byte) int {
	switch code {
	case 'L', 'B', 'A':
		return 1
	case 'I':
		return 2
	case 'J', 'E':
		return 4
	case 'K', 'D', 'C':
		return 8
	case 'M':
		return 16
	}
	return 0
}

// parseForm reads a TFORMn value "rTa" (FITS 4.0 §7.3.3.1): an optional repeat count, the
// type letter and free text; for P and Q, "rPt(max)" with t the heap element type.
func parseForm(form string) (repeat int64, typ, desc byte, width int64, err error) {
	s := strings.TrimSpace(form)
	i := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
	}
	repeat = 1
	if i > 0 {
		repeat, err = strconv.ParseInt(s[:i], 10, 64)
		if err != nil || repeat > math.MaxInt32 {
			return 0, 0, 0, 0, fmt.Errorf("repeat count %q is too large", s[:i])
		}
	}
	if i == len(s) {
		return 0, 0, 0, 0, fmt.Errorf("no data type letter")
	}
	typ = s[i]
	switch typ {
	case 'P', 'Q':
		desc = typ
		if i+1 >= len(s) || elemSize(s[i+1]) == 0 && s[i+1] != 'X' {
			return 0, 0, 0, 0, fmt.Errorf("variable-length column without a valid element type")
		}
		if repeat > 1 {
			return 0, 0, 0, 0, fmt.Errorf("repeat count %d of a %c column must be 0 or 1", repeat, desc)
		}
		typ = s[i+1]
		size := int64(8)
		if desc == 'Q' {
			size = 16
		}
		return repeat, typ, desc, repeat * size, nil
	case 'X':
		return repeat, typ, 0, (repeat + 7) / 8, nil
	}
	size := elemSize(typ)
	if size == 0 {
		return 0, 0, 0, 0, fmt.Errorf("unknown data type %q", string(typ))
	}
	return repeat, typ, 0, repeat * int64(size), nil
}

// newBinaryTable reads the column layout of a BINTABLE HDU whose data (rows, gap and heap)
// are body.
func newBinaryTable(h *HDU, body []byte) (*BinaryTable, error) {
	if _, err := h.need("BITPIX", 8, 8); err != nil {
		return nil, err
	}
	if _, err := h.need("NAXIS", 2, 2); err != nil {
		return nil, err
	}
	if _, err := h.need("GCOUNT", 1, 1); err != nil {
		return nil, err
	}
	rowLen, err := h.need("NAXIS1", 0, math.MaxInt64)
	if err != nil {
		return nil, err
	}
	rows, err := h.need("NAXIS2", 0, math.MaxInt64)
	if err != nil {
		return nil, err
	}
	pcount, err := h.need("PCOUNT", 0, math.MaxInt64)
	if err != nil {
		return nil, err
	}
	nf, err := h.need("TFIELDS", 0, maxFields)
	if err != nil {
		return nil, err
	}
	if rowLen == 0 && rows > 0 {
		return nil, fmt.Errorf("%s: NAXIS2 = %d rows of NAXIS1 = 0 bytes", h, rows)
	}
	mainLen := rowLen * rows // both bounded by the data size already checked against the file
	if c := h.Header.Card("THEAP"); c != nil {
		theap, err := c.AsInt()
		if err != nil {
			return nil, err
		}
		if theap < mainLen || theap > mainLen+pcount {
			return nil, fmt.Errorf("%s: THEAP = %d puts the heap outside the data (rows end at byte %d, data at %d)", h, theap, mainLen, mainLen+pcount)
		}
	}
	t := &BinaryTable{hdu: h, rows: int(rows), rowLen: int(rowLen), main: body[:mainLen]}
	offset := int64(0)
	for n := 1; n <= int(nf); n++ {
		c := &Column{Number: n, t: t, Scale: 1}
		key := func(k string) string { return k + strconv.Itoa(n) }
		fc := h.Header.Card(key("TFORM"))
		if fc == nil {
			return nil, fmt.Errorf("%s: keyword %s is missing (TFIELDS = %d)", h, key("TFORM"), nf)
		}
		if c.Form, err = fc.AsString(); err != nil {
			return nil, err
		}
		repeat, typ, desc, width, err := parseForm(strings.ToUpper(c.Form))
		if err != nil {
			return nil, fmt.Errorf("%s: %s = '%s': %v", h, key("TFORM"), c.Form, err)
		}
		c.Repeat, c.Type, c.Descriptor = int(repeat), typ, desc
		if width > rowLen-offset {
			return nil, fmt.Errorf("%s: the columns up to %s are wider than NAXIS1 = %d bytes", h, key("TFORM"), rowLen)
		}
		c.Offset, c.Width = int(offset), int(width)
		offset += width
		if k := h.Header.Card(key("TTYPE")); k != nil {
			if c.Name, err = k.AsString(); err != nil {
				return nil, err
			}
		}
		if k := h.Header.Card(key("TUNIT")); k != nil {
			if c.Unit, err = k.AsString(); err != nil {
				return nil, err
			}
		}
		if k := h.Header.Card(key("TSCAL")); k != nil {
			if c.Scale, err = k.AsFloat(); err != nil {
				return nil, err
			}
		}
		if k := h.Header.Card(key("TZERO")); k != nil {
			if c.Zero, err = k.AsFloat(); err != nil {
				return nil, err
			}
		}
		if k := h.Header.Card(key("TNULL")); k != nil && integerType(c.Type) {
			if c.Null, err = k.AsInt(); err != nil {
				return nil, err
			}
			c.HasNull = true
		}
		t.cols = append(t.cols, c)
	}
	if offset != rowLen {
		return nil, fmt.Errorf("%s: the columns take %d bytes but NAXIS1 = %d", h, offset, rowLen)
	}
	return t, nil
}

func integerType(code byte) bool { return code == 'B' || code == 'I' || code == 'J' || code == 'K' }

// Column finds a column by TTYPEn, without regard to case or trailing blanks.
func (t *BinaryTable) Column(name string) (*Column, error) {
	want := strings.TrimSpace(name)
	var found *Column
	for _, c := range t.cols {
		if c.Name != "" && strings.EqualFold(strings.TrimSpace(c.Name), want) {
			if found != nil {
				return nil, fmt.Errorf("%s: columns %d and %d are both named %q (ignoring case)", t.hdu, found.Number, c.Number, want)
			}
			found = c
		}
	}
	if found == nil {
		names := make([]string, 0, len(t.cols))
		for _, c := range t.cols {
			names = append(names, c.Name)
		}
		return nil, fmt.Errorf("%s: no column named %q (columns: %s)", t.hdu, want, strings.Join(names, ", "))
	}
	return found, nil
}

// numeric checks that element elem of the column can be read as a number.
func (c *Column) numeric(elem int) error {
	if c.Descriptor != 0 {
		return fmt.Errorf("%s (TFORM%d = '%s') holds variable-length arrays in the heap, which this reader does not decode", c.where(), c.Number, c.Form)
	}
	switch c.Type {
	case 'B', 'I', 'J', 'K', 'E', 'D':
	default:
		return fmt.Errorf("%s (TFORM%d = '%s') is not a numeric column", c.where(), c.Number, c.Form)
	}
	if elem < 0 || elem >= c.Repeat {
		return fmt.Errorf("%s has %d elements per row; there is no element %d", c.where(), c.Repeat, elem)
	}
	return nil
}

// Floats returns element elem (from 0) of every row as float64, with TNULLn values as NaN and
// TSCALn/TZEROn applied. It writes into dst when dst has room.
func (c *Column) Floats(elem int, dst []float64) ([]float64, error) {
	if err := c.numeric(elem); err != nil {
		return nil, err
	}
	if cap(dst) >= c.t.rows {
		dst = dst[:c.t.rows]
	} else {
		dst = make([]float64, c.t.rows)
	}
	b, step := c.t.main, c.t.rowLen
	p := c.Offset + elem*elemSize(c.Type)
	be := binary.BigEndian
	// One loop per type keeps the type switch out of the per-row work.
	switch c.Type {
	case 'B':
		for i := range dst {
			dst[i] = float64(b[p])
			p += step
		}
	case 'I':
		for i := range dst {
			dst[i] = float64(int16(be.Uint16(b[p:])))
			p += step
		}
	case 'J':
		for i := range dst {
			dst[i] = float64(int32(be.Uint32(b[p:])))
			p += step
		}
	case 'K':
		for i := range dst {
			dst[i] = float64(int64(be.Uint64(b[p:])))
			p += step
		}
	case 'E':
		for i := range dst {
			dst[i] = float64(math.Float32frombits(be.Uint32(b[p:])))
			p += step
		}
	case 'D':
		for i := range dst {
			dst[i] = math.Float64frombits(be.Uint64(b[p:]))
			p += step
		}
	}
	if c.HasNull {
		// Compare the stored integers, not their float64 images: a K null beyond 2^53
		// must not match its neighbours.
		p = c.Offset + elem*elemSize(c.Type)
		for i := range dst {
			var x int64
			switch c.Type {
			case 'B':
				x = int64(b[p])
			case 'I':
				x = int64(int16(be.Uint16(b[p:])))
			case 'J':
				x = int64(int32(be.Uint32(b[p:])))
			case 'K':
				x = int64(be.Uint64(b[p:]))
			}
			if x == c.Null {
				dst[i] = math.NaN()
			}
			p += step
		}
	}
	if c.Scale != 1 || c.Zero != 0 {
		for i, v := range dst {
			dst[i] = c.Zero + c.Scale*v
		}
	}
	return dst, nil
}

// Value returns element elem of one row (both from 0), as Floats does.
func (c *Column) Value(row, elem int) (float64, error) {
	if err := c.numeric(elem); err != nil {
		return 0, err
	}
	if row < 0 || row >= c.t.rows {
		return 0, fmt.Errorf("%s: there is no row %d (NAXIS2 = %d)", c.where(), row, c.t.rows)
	}
	// A one-row view of the table keeps the decoding in one place.
	one := *c.t
	one.rows = 1
	one.main = c.t.main[row*c.t.rowLen : (row+1)*c.t.rowLen]
	cc := *c
	cc.t = &one
	var v [1]float64
	out, err := cc.Floats(elem, v[:0])
	if err != nil {
		return 0, err
	}
	return out[0], nil
}

// Strings returns a character (A) column, one string per row: the row's bytes up to the
// first NUL, trailing blanks removed (FITS 4.0 §7.3.3.1).
func (c *Column) Strings() ([]string, error) {
	if c.Type != 'A' || c.Descriptor != 0 {
		return nil, fmt.Errorf("%s (TFORM%d = '%s') is not a character column", c.where(), c.Number, c.Form)
	}
	out := make([]string, c.t.rows)
	for i := range out {
		p := i*c.t.rowLen + c.Offset
		s := c.t.main[p : p+c.Repeat]
		for j, ch := range s {
			if ch == 0 {
				s = s[:j]
				break
			}
		}
		out[i] = strings.TrimRight(string(s), " ")
	}
	return out, nil
}

// Bools returns element elem of a logical (L) column: 'T' is true, 'F' false, and any other
// byte (0 is the FITS null) leaves the value undefined, false in defined.
func (c *Column) Bools(elem int) (vals, defined []bool, err error) {
	if c.Type != 'L' || c.Descriptor != 0 {
		return nil, nil, fmt.Errorf("%s (TFORM%d = '%s') is not a logical column", c.where(), c.Number, c.Form)
	}
	if elem < 0 || elem >= c.Repeat {
		return nil, nil, fmt.Errorf("%s has %d elements per row; there is no element %d", c.where(), c.Repeat, elem)
	}
	vals, defined = make([]bool, c.t.rows), make([]bool, c.t.rows)
	for i := range vals {
		switch c.t.main[i*c.t.rowLen+c.Offset+elem] {
		case 'T':
			vals[i], defined[i] = true, true
		case 'F':
			defined[i] = true
		}
	}
	return vals, defined, nil
}
