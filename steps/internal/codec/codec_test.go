package codec

import (
	"bytes"
	"math"
	"testing"
)

func TestRoundTrip(t *testing.T) {
	w := NewWriter("thing", 3)
	w.Floats([]float64{1.5, math.Inf(-1), 0})
	w.String("héllo")
	w.Int(-7)
	w.Bool(true)
	w.Strings([]string{"a", ""})
	w.Ints([]int{3, -1})
	r := NewReader(w.Bytes(), "thing", 3)
	f := r.Floats()
	s := r.String()
	i := r.Int()
	b := r.Bool()
	ss := r.Strings()
	is := r.Ints()
	if err := r.Err(); err != nil {
		t.Fatal(err)
	}
	if len(f) != 3 || f[0] != 1.5 || !math.IsInf(f[1], -1) || s != "héllo" || i != -7 || !b ||
		len(ss) != 2 || ss[0] != "a" || len(is) != 2 || is[1] != -1 {
		t.Fatalf("round trip gave %v %q %d %v %v %v", f, s, i, b, ss, is)
	}
}

func TestCanonicalFloats(t *testing.T) {
	a, b := NewWriter("x", 1), NewWriter("x", 1)
	a.Float(math.Copysign(0, -1))
	a.Float(math.NaN())
	b.Float(0)
	b.Float(math.Float64frombits(0x7ff0000000000abc)) // another NaN payload
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Fatal("−0 or NaN payloads are not written canonically")
	}
}

func TestRejectsForeignAndTruncated(t *testing.T) {
	w := NewWriter("thing", 1)
	w.Floats([]float64{1, 2, 3})
	full := w.Bytes()
	if err := NewReader(full, "other", 1).Err(); err == nil {
		t.Error("wrong tag accepted")
	}
	if err := NewReader(full, "thing", 2).Err(); err == nil {
		t.Error("wrong version accepted")
	}
	for cut := 0; cut < len(full); cut++ {
		r := NewReader(full[:cut], "thing", 1)
		r.Floats()
		if r.Err() == nil {
			t.Fatalf("record cut at %d bytes accepted", cut)
		}
	}
}

func FuzzReader(f *testing.F) {
	w := NewWriter("thing", 1)
	w.Floats([]float64{1, 2})
	w.String("s")
	f.Add(w.Bytes())
	f.Fuzz(func(t *testing.T, b []byte) {
		r := NewReader(b, "thing", 1)
		r.Floats()
		_ = r.String()
		_ = r.Err()
	})
}
