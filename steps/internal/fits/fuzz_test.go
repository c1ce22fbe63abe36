package fits

import (
	"encoding/binary"
	"fmt"
	"math"
	"strings"
	"testing"
)

// header builds header blocks from cards, END included, padded with blanks.
func header(cards ...string) []byte {
	var b strings.Builder
	for _, c := range append(cards, "END") {
		b.WriteString(c + strings.Repeat(" ", 80-len(c)))
	}
	for b.Len()%2880 != 0 {
		b.WriteByte(' ')
	}
	return []byte(b.String())
}

func pad(b []byte) []byte {
	for len(b)%2880 != 0 {
		b = append(b, 0)
	}
	return b
}

// synthTable builds a file with an empty primary HDU and one binary table of rows rows:
// TIME 1D = i/1440, FLUX 1E = 1 + i·1e-6, QUALITY 1J = i % 7 with TNULL3 = 6.
func synthTable(rows int) []byte {
	kw := func(k string, v any) string { return fmt.Sprintf("%-8s= %20v", k, v) }
	out := header(kw("SIMPLE", "T"), kw("BITPIX", 8), kw("NAXIS", 0))
	out = append(out, header(
		kw("XTENSION", "'BINTABLE'"), kw("BITPIX", 8), kw("NAXIS", 2), kw("NAXIS1", 16),
		kw("NAXIS2", rows), kw("PCOUNT", 0), kw("GCOUNT", 1), kw("TFIELDS", 3),
		kw("TTYPE1", "'TIME'"), kw("TFORM1", "'1D'"), kw("TTYPE2", "'FLUX'"), kw("TFORM2", "'1E'"),
		kw("TTYPE3", "'QUALITY'"), kw("TFORM3", "'1J'"), kw("TNULL3", 6), kw("EXTNAME", "'SYNTH'"))...)
	data := make([]byte, 16*rows)
	for i := 0; i < rows; i++ {
		r := data[16*i:]
		binary.BigEndian.PutUint64(r, math.Float64bits(float64(i)/1440))
		binary.BigEndian.PutUint32(r[8:], math.Float32bits(float32(1+float64(i)*1e-6)))
		binary.BigEndian.PutUint32(r[12:], uint32(i%7))
	}
	return pad(append(out, data...))
}

func TestSyntheticTableWithTNULL(t *testing.T) {
	f, err := Open(synthTable(50))
	if err != nil {
		t.Fatal(err)
	}
	tab, _ := f.Table("synth")
	q, _ := tab.Column("quality")
	v, err := q.Floats(0, make([]float64, 0, 50))
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range v {
		if want := float64(i % 7); i%7 == 6 && !math.IsNaN(x) || i%7 != 6 && x != want {
			t.Fatalf("row %d: %v, wrote %d with TNULL3 = 6", i, x, i%7)
		}
	}
}

func FuzzOpen(f *testing.F) {
	for _, name := range fixtureNames {
		b := fixture(f, name)
		f.Add(b)
		f.Add(b[:len(b)/2])
	}
	f.Add(synthTable(3))
	f.Fuzz(func(t *testing.T, data []byte) {
		file, err := Open(data)
		if err != nil {
			if file != nil {
				t.Fatal("a file and an error")
			}
			return
		}
		for _, h := range file.HDUs() {
			_ = h.String()
			tab := h.Table()
			if tab == nil {
				continue
			}
			for _, c := range tab.Columns() {
				for _, elem := range []int{0, c.Repeat - 1, c.Repeat} {
					if v, err := c.Floats(elem, nil); err == nil && len(v) != tab.Rows() {
						t.Fatalf("%d values for %d rows", len(v), tab.Rows())
					}
					c.Bools(elem)
					if tab.Rows() > 0 {
						c.Value(tab.Rows()-1, elem)
					}
				}
				c.Strings()
				tab.Column(c.Name)
			}
		}
	})
}

// BenchmarkColumn100k decodes the three columns of a 100 000-row table.
func BenchmarkColumn100k(b *testing.B) {
	data := synthTable(100000)
	b.SetBytes(int64(len(data)))
	dst := make([]float64, 100000)
	for b.Loop() {
		f, err := Open(data)
		if err != nil {
			b.Fatal(err)
		}
		tab := f.HDUs()[1].Table()
		for _, c := range tab.Columns() {
			if _, err := c.Floats(0, dst); err != nil {
				b.Fatal(err)
			}
		}
	}
}

func TestEmptyTableWithoutPadding(t *testing.T) {
	// A header that ends in a partial block, with no data: nothing is missing, so it reads.
	kw := func(k string, v any) string { return fmt.Sprintf("%-8s= %20v", k, v) }
	b := header(kw("SIMPLE", "T"), kw("BITPIX", 8), kw("NAXIS", 0))
	ext := header(kw("XTENSION", "'BINTABLE'"), kw("BITPIX", 8), kw("NAXIS", 2), kw("NAXIS1", 8),
		kw("NAXIS2", 0), kw("PCOUNT", 0), kw("GCOUNT", 1), kw("TFIELDS", 1), kw("TFORM1", "'1D'"))
	f, err := Open(append(b, ext[:800]...))
	if err != nil {
		t.Fatal(err)
	}
	if tab := f.HDUs()[1].Table(); tab == nil || tab.Rows() != 0 {
		t.Fatalf("table %v", tab)
	}
}
