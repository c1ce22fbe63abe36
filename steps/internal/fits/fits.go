// Package fits reads FITS files (Flexible Image Transport System, FITS Standard 4.0) from a
// byte slice: the header of every HDU (header and data unit), and the columns of binary-table
// extensions (XTENSION = 'BINTABLE'). Numeric columns come back as float64 with TSCALn and
// TZEROn applied and TNULLn values as NaN; character columns as strings; logical columns as
// booleans with a definedness mask.
//
// It does not write FITS, decode images, ASCII tables, bit (X) or complex (C, M) columns, or
// the variable-length arrays of P and Q columns: those are recognised, sized and skipped,
// heap included, so that the rest of the file reads correctly. CONTINUE long strings and
// HIERARCH cards are kept as commentary. It never panics on malformed input; every error
// names the HDU, keyword or column at fault.
//
// HDUs are numbered from 0, the primary HDU, so HDU n is the n-th extension, as in the
// extended file-name syntax common to FITS tools ("file.fits[1]").
//
// Entry point: Open, then File.Table (by EXTNAME or number) and Table.Column.
package fits

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"
)

const (
	// blockSize is the FITS logical record: headers and data occupy whole blocks
	// (FITS 4.0 §3.1).
	blockSize = 2880
	// cardSize is the length of one header record (FITS 4.0 §4.1.1).
	cardSize = 80
	// maxAxes is the largest NAXIS allowed (FITS 4.0 §4.4.1.1).
	maxAxes = 999
)

// Kind is the type of an HDU.
type Kind int

// The HDU types this reader tells apart.
const (
	PrimaryHDU    Kind = iota // the primary HDU (SIMPLE = T)
	ImageHDU                  // XTENSION = 'IMAGE'
	ASCIITableHDU             // XTENSION = 'TABLE', an ASCII table (not decoded)
	BinTableHDU               // XTENSION = 'BINTABLE'
	OtherHDU                  // any other extension type (not decoded)
)

func (k Kind) String() string {
	return [...]string{"the primary HDU", "an image extension", "an ASCII table extension",
		"a binary table", "a non-standard extension"}[k]
}

// HDU is one header and data unit.
type HDU struct {
	// Index counts HDUs from 0 (the primary).
	Index int
	// Kind is the HDU type.
	Kind Kind
	// Header holds the cards.
	Header *Header
	// Offset is the byte position of the header in the file; DataOffset and DataSize place
	// the data (unpadded, heap included).
	Offset, DataOffset, DataSize int64

	table *BinaryTable
}

// Name returns EXTNAME, or "" when there is none.
func (h *HDU) Name() string {
	if h.Header == nil {
		return ""
	}
	s, _ := h.Header.String("EXTNAME")
	return s
}

// String names the HDU for messages: "HDU 1 (LIGHTCURVE)".
func (h *HDU) String() string {
	if n := h.Name(); n != "" {
		return fmt.Sprintf("HDU %d (%s)", h.Index, n)
	}
	if h.Index == 0 {
		return "HDU 0 (primary)"
	}
	return fmt.Sprintf("HDU %d", h.Index)
}

// Table returns the decoded binary table, or nil when the HDU is not one.
func (h *HDU) Table() *BinaryTable { return h.table }

// File is an opened FITS file. It keeps a reference to the bytes it was opened from.
type File struct {
	hdus []*HDU
}

// HDUs returns all HDUs in file order.
func (f *File) HDUs() []*HDU { return f.hdus }

// Open reads the structure of a FITS file: every header, the position of every data unit,
// and the column layout of every binary table. Values are decoded later, on request.
func Open(data []byte) (*File, error) {
	if len(data) < cardSize || !bytes.HasPrefix(data, []byte("SIMPLE  =")) {
		return nil, fmt.Errorf("not a FITS file: it does not start with a SIMPLE card")
	}
	f := &File{}
	off := int64(0)
	for idx := 0; off < int64(len(data)); idx++ {
		if idx > 0 {
			rest := data[off:]
			if !bytes.HasPrefix(rest, []byte("XTENSION")) {
				if blank(rest) {
					break
				}
				return nil, fmt.Errorf("%d bytes after HDU %d (from byte %d) do not start a FITS extension: no XTENSION card", len(rest), idx-1, off)
			}
		}
		h, next, err := readHDU(data, off, idx)
		if err != nil {
			return nil, err
		}
		f.hdus = append(f.hdus, h)
		off = next
	}
	return f, nil
}

// blank reports whether b holds only NUL bytes or spaces (padding some writers leave).
func blank(b []byte) bool {
	for _, c := range b {
		if c != 0 && c != ' ' {
			return false
		}
	}
	return true
}

// readHDU reads the HDU whose header starts at off and returns the offset of the next one.
func readHDU(data []byte, off int64, idx int) (*HDU, int64, error) {
	h := &HDU{Index: idx, Offset: off, Header: &Header{index: map[string]int{}}}
	end := false
	pos := off
	for n := 1; !end; n++ {
		if pos+cardSize > int64(len(data)) {
			return nil, 0, fmt.Errorf("file ends inside HDU %d's header: no END card in its %d bytes", idx, int64(len(data))-off)
		}
		rec := data[pos : pos+cardSize]
		pos += cardSize
		for col, ch := range rec {
			if ch < 0x20 || ch > 0x7e {
				return nil, 0, fmt.Errorf("HDU %d header, card %d: byte 0x%02X in column %d is not printable ASCII; the header is corrupt", idx, n, ch, col+1)
			}
		}
		if string(rec[:8]) == "END     " {
			end = true
			break
		}
		c := parseCard(rec, h)
		if _, seen := h.Header.index[c.Key]; !seen && c.Type != NoValue {
			h.Header.index[c.Key] = len(h.Header.cards)
		}
		h.Header.cards = append(h.Header.cards, c)
	}
	hdrLen := roundUp(pos - off)
	h.DataOffset = off + hdrLen

	if err := h.classify(); err != nil {
		return nil, 0, err
	}
	size, err := h.dataSize()
	if err != nil {
		return nil, 0, err
	}
	h.DataSize = size
	avail := int64(len(data)) - h.DataOffset
	if avail < 0 {
		avail = 0
	}
	if size > avail {
		return nil, 0, fmt.Errorf("file ends inside HDU %d's data: %d of %d bytes", idx, avail, size)
	}
	if h.Kind == BinTableHDU {
		var body []byte
		if size > 0 {
			body = data[h.DataOffset : h.DataOffset+size]
		}
		t, err := newBinaryTable(h, body)
		if err != nil {
			return nil, 0, err
		}
		h.table = t
	}
	// The last HDU may lack its padding; nothing of the data is missing then.
	next := h.DataOffset + roundUp(size)
	if next > int64(len(data)) {
		next = int64(len(data))
	}
	return h, next, nil
}

func roundUp(n int64) int64 { return (n + blockSize - 1) / blockSize * blockSize }

// classify checks the first card and sets Kind.
func (h *HDU) classify() error {
	if len(h.Header.cards) == 0 {
		return fmt.Errorf("HDU %d: empty header", h.Index)
	}
	first := &h.Header.cards[0]
	if h.Index == 0 {
		if first.Key != "SIMPLE" || first.Type != Logical || !first.Bool {
			return fmt.Errorf("HDU 0: the first card must be SIMPLE = T, found %s = %s", first.Key, first.Text)
		}
		h.Kind = PrimaryHDU
		return nil
	}
	if first.Key != "XTENSION" || first.Type != Str {
		return fmt.Errorf("HDU %d: the first card must be XTENSION = '<type>', found %s = %s", h.Index, first.Key, first.Text)
	}
	switch strings.ToUpper(first.Str) {
	case "IMAGE", "IUEIMAGE":
		h.Kind = ImageHDU
	case "TABLE":
		h.Kind = ASCIITableHDU
	case "BINTABLE", "A3DTABLE":
		h.Kind = BinTableHDU
	default:
		h.Kind = OtherHDU
	}
	return nil
}

// need returns a mandatory integer keyword within [lo, hi].
func (h *HDU) need(key string, lo, hi int64) (int64, error) {
	c := h.Header.Card(key)
	if c == nil {
		return 0, fmt.Errorf("%s: mandatory keyword %s is missing", h, key)
	}
	v, err := c.AsInt()
	if err != nil {
		return 0, err
	}
	if v < lo || v > hi {
		return 0, fmt.Errorf("%s: keyword %s = %d is outside [%d, %d]", h, key, v, lo, hi)
	}
	return v, nil
}

// dataSize applies FITS 4.0 eq. (1) (primary), (2) (extensions) and §6 (random groups), in
// bytes and without padding. A size that overflows saturates; the caller then reports it as
// larger than the file.
func (h *HDU) dataSize() (int64, error) {
	bitpix, err := h.need("BITPIX", -64, 64)
	if err != nil {
		return 0, err
	}
	switch bitpix {
	case 8, 16, 32, 64, -32, -64:
	default:
		return 0, fmt.Errorf("%s: BITPIX = %d is not one of 8, 16, 32, 64, -32, -64", h, bitpix)
	}
	naxis, err := h.need("NAXIS", 0, maxAxes)
	if err != nil {
		return 0, err
	}
	axes := make([]int64, naxis)
	for i := range axes {
		if axes[i], err = h.need("NAXIS"+strconv.Itoa(i+1), 0, math.MaxInt64); err != nil {
			return 0, err
		}
	}
	pcount, gcount := int64(0), int64(1)
	groups, _ := h.Header.Bool("GROUPS")
	randomGroups := h.Kind == PrimaryHDU && groups && naxis > 0 && axes[0] == 0
	if h.Kind != PrimaryHDU || randomGroups {
		if pcount, err = h.need("PCOUNT", 0, math.MaxInt64); err != nil {
			return 0, err
		}
		if gcount, err = h.need("GCOUNT", 0, math.MaxInt64); err != nil {
			return 0, err
		}
	}
	prod := int64(0)
	switch {
	case randomGroups:
		prod = 1
		for _, a := range axes[1:] {
			prod = mulSat(prod, a)
		}
	case naxis > 0:
		prod = 1
		for _, a := range axes {
			prod = mulSat(prod, a)
		}
	}
	bytesPer := bitpix
	if bytesPer < 0 {
		bytesPer = -bytesPer
	}
	bytesPer /= 8
	return mulSat(mulSat(bytesPer, gcount), addSat(pcount, prod)), nil
}

func mulSat(a, b int64) int64 {
	if a == 0 || b == 0 {
		return 0
	}
	if a > math.MaxInt64/b {
		return math.MaxInt64
	}
	return a * b
}

func addSat(a, b int64) int64 {
	if a > math.MaxInt64-b {
		return math.MaxInt64
	}
	return a + b
}

// HDU finds an HDU by number ("0" is the primary, "1" the first extension) or by EXTNAME,
// matched without regard to case; the first HDU of that name wins.
func (f *File) HDU(sel string) (*HDU, error) {
	sel = strings.TrimSpace(sel)
	if n, err := strconv.Atoi(sel); err == nil {
		if n < 0 || n >= len(f.hdus) {
			return nil, fmt.Errorf("no HDU %d: the file has HDUs 0 to %d", n, len(f.hdus)-1)
		}
		return f.hdus[n], nil
	}
	for _, h := range f.hdus {
		if strings.EqualFold(strings.TrimSpace(h.Name()), sel) {
			return h, nil
		}
	}
	var names []string
	for _, h := range f.hdus[1:] {
		names = append(names, h.String())
	}
	list := "the file has no extensions"
	if len(names) > 0 {
		list = "extensions: " + strings.Join(names, ", ")
	}
	return nil, fmt.Errorf("no extension named %q (%s)", sel, list)
}

// Table finds a binary table by number or EXTNAME, as HDU does.
func (f *File) Table(sel string) (*BinaryTable, error) {
	h, err := f.HDU(sel)
	if err != nil {
		return nil, err
	}
	if h.table == nil {
		return nil, fmt.Errorf("%s is %s, not a binary table", h, h.Kind)
	}
	return h.table, nil
}
