package lightcurve

import (
	"bytes"
	"math"
	"testing"
)

func sample() *LightCurve {
	return &LightCurve{
		TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5,
		Dropped: Dropped{Unusable: 2, Flagged: 1},
		Segments: []Segment{
			{ID: "1", Band: "red", Exposure: 29.4 / 1440, Contamination: math.NaN(),
				Time: []float64{0, 1, 2}, Flux: []float64{1, 0.99, 1.01}, Err: []float64{1e-3, 1e-3, 1e-3}},
			{ID: "2", Exposure: 2.0 / 1440, Contamination: 0.1,
				Time: []float64{1.5, 3}, Flux: []float64{1, 1}, Err: []float64{2e-3, 2e-3}},
		},
	}
}

func TestEncodeRoundTrip(t *testing.T) {
	lc := sample()
	b := lc.Encode()
	back, err := Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), b) {
		t.Fatal("decode then encode changed the bytes")
	}
	if back.Segments[1].Contamination != 0.1 || back.Dropped.Total() != 3 {
		t.Fatalf("fields lost: %+v", back)
	}
}

func TestFlatSortsAcrossSegments(t *testing.T) {
	tm, _, _, seg := sample().Flat()
	want := []float64{0, 1, 1.5, 2, 3}
	wantSeg := []int{0, 0, 1, 0, 1}
	for i := range want {
		if tm[i] != want[i] || seg[i] != wantSeg[i] {
			t.Fatalf("Flat() times %v segs %v, want %v %v", tm, seg, want, wantSeg)
		}
	}
	if b := sample().Baseline(); b != 3 {
		t.Errorf("baseline %v, want 3", b)
	}
}

func TestSinceNamesTheTimeAxis(t *testing.T) {
	for _, c := range []struct {
		ref  int64
		frac float64
		want string
	}{
		{2460000, 0.5, "days since BJD_TDB 2460000.5"},
		{2457000, 0, "days since BJD_TDB 2457000"},
		{2454833, 0.0007428, "days since BJD_TDB 2454833.0007428"},
	} {
		if got := (Frame{"BJD_TDB", c.ref, c.frac}).Since(); got != c.want {
			t.Errorf("Since(%d, %v) = %q, want %q", c.ref, c.frac, got, c.want)
		}
	}
}
