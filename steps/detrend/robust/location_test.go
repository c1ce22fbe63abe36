package robust

import (
	"encoding/json"
	"math"
	"os"
	"sort"
	"testing"
)

// directBiweight is a slow, literal reading of Mosteller & Tukey's (1977) biweight location:
// sort a copy for the median, sort the deviations for the MAD, then reweight with
// Σw·x/Σw until the location stops moving. It shares no code with BiweightLocation.
func directBiweight(x []float64, c float64) float64 {
	y := append([]float64(nil), x...)
	sort.Float64s(y)
	med := func(v []float64) float64 {
		n := len(v)
		if n%2 == 1 {
			return v[n/2]
		}
		return (v[n/2-1] + v[n/2]) / 2
	}
	m := med(y)
	d := make([]float64, len(y))
	for i, v := range y {
		d[i] = math.Abs(v - m)
	}
	sort.Float64s(d)
	s := c * med(d)
	if s == 0 {
		return m
	}
	for it := 0; it < 10000; it++ {
		var sw, swx float64
		for _, v := range y {
			u := (v - m) / s
			if math.Abs(u) < 1 {
				w := (1 - u*u) * (1 - u*u)
				sw += w
				swx += w * v
			}
		}
		next := swx / sw
		if next == m {
			break
		}
		m = next
	}
	return m
}

func TestBiweightLocationMatchesDirectDefinition(t *testing.T) {
	// Source: the definition (Mosteller & Tukey 1977, from memory), implemented slowly
	// above. Agreement to 1e-9 of the scale c·MAD: our iteration stops at 1e-10 of it.
	rng := newNoise(1)
	cases := []struct {
		name string
		n    int
		out  int
		c    float64
	}{
		{"a single value is its own location", 1, 0, 5},
		{"two values give their mean", 2, 0, 5},
		{"a small odd sample agrees", 7, 0, 5},
		{"a small even sample with an outlier agrees", 10, 1, 5},
		{"a window-sized sample with outliers agrees", 25, 3, 5},
		{"a large sample agrees", 400, 20, 5},
		{"the classical constant 6 agrees", 60, 5, 6},
		{"a scaled-MAD constant 9 agrees", 60, 5, 9},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for rep := 0; rep < 50; rep++ {
				x := make([]float64, tc.n)
				for i := range x {
					x[i] = 1 + 1e-3*rng.normal()
				}
				for i := 0; i < tc.out; i++ {
					x[int(rng.uniform()*float64(tc.n))] += 0.05 * (rng.uniform() - 0.3)
				}
				want := directBiweight(x, tc.c)
				sort.Float64s(x)
				got := BiweightLocation(x, tc.c)
				scale := tc.c * 1e-3
				if math.Abs(got-want) > 1e-9*scale {
					t.Fatalf("rep %d: biweight %.17g, direct %.17g", rep, got, want)
				}
			}
		})
	}
}

func TestBiweightIgnoresAnOutlier(t *testing.T) {
	// A point beyond c·MAD gets zero weight (the biweight's redescending ψ, Mosteller &
	// Tukey 1977, from memory), so adding one moves the location only through the small
	// change it makes to the median and MAD: well under a tenth of σ for 51 points. The
	// mean, as a control, moves by (outlier − mean)/52, over one σ for each case.
	const sigma = 1e-3
	rng := newNoise(7)
	base := make([]float64, 51)
	for i := range base {
		base[i] = 1 + sigma*rng.normal()
	}
	mean := func(v []float64) float64 {
		s := 0.0
		for _, x := range v {
			s += x
		}
		return s / float64(len(v))
	}
	clean := append([]float64(nil), base...)
	sort.Float64s(clean)
	before := BiweightLocation(clean, 5)
	for _, tc := range []struct {
		name    string
		outlier float64
	}{
		{"a point 100 sigma high barely moves it", 1 + 100*sigma},
		{"a point 100 sigma low barely moves it", 1 - 100*sigma},
		{"a wild point barely moves it", 1e6},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x := append(append([]float64(nil), base...), tc.outlier)
			if shift := math.Abs(mean(x) - mean(base)); shift < sigma {
				t.Fatalf("control: the mean moved only %.3g; the outlier is too mild for this test", shift)
			}
			sort.Float64s(x)
			if shift := math.Abs(BiweightLocation(x, 5) - before); shift > 0.1*sigma {
				t.Errorf("biweight moved by %.3g (%.2f sigma)", shift, shift/sigma)
			}
		})
	}
}

func TestMADSortedMatchesSorting(t *testing.T) {
	// Source: the definition median(|x − m|), computed by sorting the deviations.
	rng := newNoise(3)
	for n := 1; n < 60; n++ {
		x := make([]float64, n)
		for i := range x {
			x[i] = math.Round(10 * rng.normal()) // ties on purpose
		}
		sort.Float64s(x)
		for _, m := range []float64{medianSorted(x), x[0] - 1, x[n-1] + 2, 0.5} {
			d := make([]float64, n)
			for i, v := range x {
				d[i] = math.Abs(v - m)
			}
			sort.Float64s(d)
			if got, want := madSorted(x, m), medianSorted(d); got != want {
				t.Fatalf("n=%d m=%v: MAD %v, want %v", n, m, got, want)
			}
		}
	}
}

// reference is the layout of testdata/detrend/biweight_reference.json.
type reference struct {
	NumpyVersion string `json:"numpy_version"`
	Locations    []struct {
		X        []float64 `json:"x"`
		C        float64   `json:"c"`
		Location float64   `json:"location"`
	} `json:"locations"`
	Series struct {
		C         float64    `json:"c"`
		Span      float64    `json:"span"`
		MinPoints int        `json:"min_points"`
		Time      []float64  `json:"time"`
		Flux      []float64  `json:"flux"`
		Biweight  []*float64 `json:"biweight"`
		Median    []*float64 `json:"median"`
	} `json:"series"`
}

func TestAgainstIndependentNumpyScript(t *testing.T) {
	// Source: testdata/detrend/biweight_reference.py, written independently from the
	// definition and run with /usr/bin/python3 and numpy (numpy 1.24.2, Python 3.11.2 as
	// recorded in the JSON).
	b, err := os.ReadFile("../../../testdata/detrend/biweight_reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref reference
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if ref.NumpyVersion == "" || len(ref.Locations) == 0 || len(ref.Series.Time) == 0 {
		t.Fatal("reference file is incomplete")
	}
	t.Run("plain biweight locations agree to 1e-12", func(t *testing.T) {
		for i, c := range ref.Locations {
			x := append([]float64(nil), c.X...)
			sort.Float64s(x)
			if got := BiweightLocation(x, c.C); math.Abs(got-c.Location) > 1e-12 {
				t.Errorf("case %d: %.17g, numpy %s gives %.17g", i, got, ref.NumpyVersion, c.Location)
			}
		}
	})
	s := ref.Series
	n := len(s.Time)
	use := make([]bool, n)
	for i := range use {
		use[i] = true
	}
	check := func(t *testing.T, got []float64, want []*float64, tol float64) {
		t.Helper()
		if len(want) != n {
			t.Fatalf("reference has %d values for %d points", len(want), n)
		}
		nulls := 0
		for i := range got {
			switch {
			case want[i] == nil:
				nulls++
				if !math.IsNaN(got[i]) {
					t.Errorf("point %d: %v where numpy's window is too thin", i, got[i])
				}
			case math.Abs(got[i]-*want[i]) > tol:
				t.Errorf("point %d: %.17g, numpy %.17g", i, got[i], *want[i])
			}
		}
		if nulls == 0 {
			t.Error("the reference series has no thin windows; the min_points rule is untested")
		}
	}
	t.Run("the windowed biweight agrees to 1e-12", func(t *testing.T) {
		got := make([]float64, n)
		BiweightFilter(got, s.Time, s.Flux, use, s.Span/2, s.C, s.MinPoints, 0, n)
		check(t, got, s.Biweight, 1e-12)
	})
	t.Run("the running median agrees exactly", func(t *testing.T) {
		got := make([]float64, n)
		MedianFilter(got, s.Time, s.Flux, use, s.Span/2, s.MinPoints, 0, n)
		check(t, got, s.Median, 0)
	})
}

func TestRobustSigmaMatchesSorting(t *testing.T) {
	// Source: the definition 1.4826·median(|x − median(x)|), computed by full sorts.
	rng := newNoise(17)
	for n := 1; n < 300; n += 7 {
		for _, ties := range []bool{false, true} {
			x := make([]float64, n)
			for i := range x {
				x[i] = rng.normal()
				if ties {
					x[i] = math.Round(3 * x[i])
				}
			}
			y := append([]float64(nil), x...)
			sort.Float64s(y)
			m := medianSorted(y)
			d := make([]float64, n)
			for i, v := range y {
				d[i] = math.Abs(v - m)
			}
			sort.Float64s(d)
			want := 1.4826 * medianSorted(d)
			if got := RobustSigma(x); got != want {
				t.Fatalf("n=%d ties=%v: %v, want %v", n, ties, got, want)
			}
		}
	}
}
