package periodogram

import (
	"encoding/json"
	"math"
	"os"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"dipline/steps/internal/rng"
)

// classicReference is testdata/periodogram/classic_reference.json, written by
// classic_reference.py beside it with scipy.signal.lombscargle.
type classicReference struct {
	Source         string    `json:"source"`
	Time           []float64 `json:"time"`
	Value          []float64 `json:"value"`
	Freq           []float64 `json:"freq"`
	Raw            []float64 `json:"raw"`
	Normalized     []float64 `json:"normalized"`
	PrecenteredRaw []float64 `json:"precentered_raw"`
}

func TestTheClassicPeriodogramMatchesScipy(t *testing.T) {
	// Source: scipy.signal.lombscargle of Debian's python3-scipy 1.10
	// (testdata/periodogram/classic_reference.py). scipy's unnormalised P relates to our
	// power p about zero by p = 2P/Σy², y as passed to it.
	b, err := os.ReadFile("../../../testdata/periodogram/classic_reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref classicReference
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(ref.Source, "scipy") || len(ref.Freq) != len(ref.Raw) {
		t.Fatalf("unexpected reference file: %q, %d frequencies, %d powers", ref.Source, len(ref.Freq), len(ref.Raw))
	}
	sumSq := func(y []float64) float64 {
		s := 0.0
		for _, v := range y {
			s += v * v
		}
		return s
	}
	centred := make([]float64, len(ref.Value))
	mean := 0.0
	for _, v := range ref.Value {
		mean += v / float64(len(ref.Value))
	}
	for i, v := range ref.Value {
		centred[i] = v - mean
	}
	cases := []struct {
		name   string
		values []float64
		want   func(k int) float64
	}{
		{"the power about zero is scipy's normalised periodogram", ref.Value,
			func(k int) float64 { return ref.Normalized[k] }},
		{"the power about zero is 2P/Σy² of scipy's raw periodogram", ref.Value,
			func(k int) float64 { return 2 * ref.Raw[k] / sumSq(ref.Value) }},
		{"the power of the centred values is scipy's precentred periodogram", centred,
			func(k int) float64 { return 2 * ref.PrecenteredRaw[k] / sumSq(centred) }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := Power(nil, Series{Time: ref.Time, Value: c.values}, ref.Freq, Zero)
			if err != nil {
				t.Fatal(err)
			}
			for k, p := range got {
				if math.Abs(p-c.want(k)) > 1e-10 {
					t.Errorf("f = %.5f /d: power %.12f, scipy %.12f", ref.Freq[k], p, c.want(k))
				}
			}
		})
	}
}

// bruteForce is the power by weighted least squares through gonum's QR: the fit of an
// offset (Floating) or none (Zero) plus a cosine and a sine at f, power 1 − χ²/χ²₀ with
// χ²₀ that of the weighted mean (Floating) or of zero (Zero).
func bruteForce(t *testing.T, s Series, f float64, m Mean) float64 {
	t.Helper()
	n := len(s.Time)
	cols := 3
	if m == Zero {
		cols = 2
	}
	x := mat.NewDense(n, cols, nil)
	y := mat.NewVecDense(n, nil)
	mean, wsum := 0.0, 0.0
	for i := range s.Time {
		mean += s.Weight[i] * s.Value[i]
		wsum += s.Weight[i]
	}
	mean /= wsum
	if m == Zero {
		mean = 0
	}
	chi0 := 0.0
	for i, ti := range s.Time {
		r := math.Sqrt(s.Weight[i])
		sn, cs := math.Sincos(2 * math.Pi * f * ti)
		row := []float64{r * cs, r * sn}
		if m == Floating {
			row = append([]float64{r}, row...)
		}
		x.SetRow(i, row)
		y.SetVec(i, r*s.Value[i])
		chi0 += s.Weight[i] * (s.Value[i] - mean) * (s.Value[i] - mean)
	}
	var beta, fit, res mat.VecDense
	if err := beta.SolveVec(x, y); err != nil {
		t.Fatal(err)
	}
	fit.MulVec(x, &beta)
	res.SubVec(y, &fit)
	return 1 - mat.Dot(&res, &res)/chi0
}

// unevenSeries is an invented, unevenly sampled series with unequal weights: a sinusoid at
// 3.3 d, a weaker one at 0.71 d, an offset and white noise.
func unevenSeries(n int, seed uint64) Series {
	g := rng.New(seed)
	s := Series{}
	t := 0.0
	for i := 0; i < n; i++ {
		t += 0.02 + 0.2*g.Float64()
		sigma := 0.05 + 0.1*g.Float64()
		y := 1 + 0.3*math.Sin(2*math.Pi*t/3.3) + 0.1*math.Cos(2*math.Pi*t/0.71) + sigma*g.Normal()
		s.Time, s.Value, s.Weight = append(s.Time, t), append(s.Value, y), append(s.Weight, 1/(sigma*sigma))
	}
	return s
}

func TestTheGeneralisedPeriodogramIsTheWeightedLeastSquaresFit(t *testing.T) {
	// Source: an independent computation, the weighted least-squares fit of offset + cosine
	// + sine solved by gonum's QR at each frequency (Zechmeister & Kürster 2009 define the
	// power as this χ² reduction, their eq. 4–5).
	s := unevenSeries(250, 7)
	freqs := []float64{0.013, 0.1, 1 / 3.3, 0.5, 1 / 0.71, 2.2, 4.9}
	for _, m := range []Mean{Floating, Zero} {
		name := map[Mean]string{Floating: "with a floating mean", Zero: "about zero"}[m]
		t.Run("the power "+name+" equals 1 − χ²(sinusoid)/χ²(constant)", func(t *testing.T) {
			got, err := Power(nil, s, freqs, m)
			if err != nil {
				t.Fatal(err)
			}
			for k, f := range freqs {
				if want := bruteForce(t, s, f, m); math.Abs(got[k]-want) > 1e-10 {
					t.Errorf("f = %v /d: power %.12f, least squares %.12f", f, got[k], want)
				}
			}
		})
	}
}

func TestTheGridIsRotatedWithoutLosingAccuracy(t *testing.T) {
	// The grid path rotates phases (reseeding every 128 steps); the direct path calls
	// Sincos at each frequency. Over four years of times and 20,000 frequencies they
	// agree to 1e-11 (an independent computation of the same sums).
	g := rng.New(3)
	s := Series{}
	for i := 0; i < 400; i++ {
		tt := 1461 * g.Float64()
		s.Time = append(s.Time, tt)
		s.Value = append(s.Value, math.Sin(2*math.Pi*tt/1.37)+g.Normal())
		s.Weight = append(s.Weight, 0.5+g.Float64())
	}
	grid := Grid{Start: 0.05, Step: 0.0005, N: 20000}
	freqs := make([]float64, grid.N)
	for k := range freqs {
		freqs[k] = grid.Freq(k)
	}
	fast, err := PowerOnGrid(nil, s, grid, Floating)
	if err != nil {
		t.Fatal(err)
	}
	slow, err := Power(nil, s, freqs, Floating)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for k := range fast {
		worst = math.Max(worst, math.Abs(fast[k]-slow[k]))
	}
	if worst > 1e-11 {
		t.Errorf("largest difference %g", worst)
	}
}

func TestAPurePeriodHasPowerOne(t *testing.T) {
	// A noise-free sinusoid with an offset is fitted exactly at its own frequency: power 1
	// (Zechmeister & Kürster 2009, their normalisation: p = 1 for a perfect fit).
	s := Series{}
	for i := 0; i < 100; i++ {
		tt := 0.37 * float64(i) * (1 + 0.1*math.Sin(float64(i)))
		s.Time, s.Value = append(s.Time, tt), append(s.Value, 5+2*math.Cos(2*math.Pi*tt/4.1+1))
	}
	p, err := Power(nil, s, []float64{1 / 4.1}, Floating)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(p[0]-1) > 1e-12 {
		t.Errorf("power %v, want 1", p[0])
	}
}

func TestNewGridSpansThePeriodsAsked(t *testing.T) {
	g, err := NewGrid(0.1, 13.5, 27, 5)
	if err != nil {
		t.Fatal(err)
	}
	// 1/13.5 to 10 /d in steps of 1/135: floor((10 − 0.074074)·135) + 1 = 1341 (computed).
	if g.N != 1341 || math.Abs(g.Step-1.0/135) > 1e-15 || math.Abs(g.Start-1/13.5) > 1e-15 {
		t.Errorf("grid %+v", g)
	}
	if last := g.Freq(g.N - 1); last > 10 || 10-last > g.Step {
		t.Errorf("last frequency %v", last)
	}
}

func TestBadInputIsRefusedWithAReason(t *testing.T) {
	ok := []float64{1, 2, 3, 4}
	cases := []struct {
		name string
		s    Series
		says string
	}{
		{"lengths that differ", Series{Time: ok, Value: ok[:3]}, "must match"},
		{"a missing time", Series{Time: []float64{1, math.NaN(), 3, 4}, Value: ok}, "point 2"},
		{"an infinite value", Series{Time: ok, Value: []float64{1, 2, math.Inf(1), 4}}, "point 3"},
		{"a zero weight", Series{Time: ok, Value: ok, Weight: []float64{1, 0, 1, 1}}, "weight 0"},
		{"two points", Series{Time: ok[:2], Value: ok[:2]}, "at least 3"},
		{"values that do not vary", Series{Time: ok, Value: []float64{2, 2, 2, 2}}, "do not vary"},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			_, err := Power(nil, c.s, []float64{0.3}, Floating)
			if err == nil || !strings.Contains(err.Error(), c.says) {
				t.Errorf("error %v, want one saying %q", err, c.says)
			}
		})
	}
	grids := []struct {
		name                          string
		shortest, longest, span, over float64
	}{
		{"a zero shortest period", 0, 10, 27, 5},
		{"a longest period below the shortest", 1, 0.5, 27, 5},
		{"a zero span", 0.1, 10, 0, 5},
		{"an oversampling below one", 0.1, 10, 27, 0.5},
		{"a grid too large to hold", 1e-6, 1e4, 1e4, 10},
	}
	for _, c := range grids {
		t.Run("it refuses a grid with "+c.name, func(t *testing.T) {
			if _, err := NewGrid(c.shortest, c.longest, c.span, c.over); err == nil {
				t.Error("no error")
			}
		})
	}
	t.Run("it refuses a grid with no step", func(t *testing.T) {
		if _, err := PowerOnGrid(nil, Series{Time: ok, Value: ok}, Grid{Start: 1, N: 3}, Floating); err == nil {
			t.Error("no error")
		}
	})
}

func TestPowerWritesIntoTheCallersSlice(t *testing.T) {
	s := unevenSeries(50, 1)
	dst := make([]float64, 0, 8)
	got, err := Power(dst, s, []float64{0.1, 0.2, 0.3}, Floating)
	if err != nil {
		t.Fatal(err)
	}
	if &got[0] != &dst[:1][0] {
		t.Error("a slice with room was not reused")
	}
}
