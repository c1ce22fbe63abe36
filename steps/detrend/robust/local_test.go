package robust

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"dipline/steps/internal/synth"
)

// loessCase is one (degree, family) block of testdata/detrend/loess_reference.csv.
type loessCase struct {
	x, y, want []float64
}

func readLoessReference(t *testing.T) map[string]*loessCase {
	t.Helper()
	fh, err := os.Open("../../../testdata/detrend/loess_reference.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	cases := map[string]*loessCase{}
	sc := bufio.NewScanner(fh)
	for sc.Scan() {
		line := sc.Text()
		if strings.HasPrefix(line, "#") || strings.HasPrefix(line, "x,") {
			continue
		}
		f := strings.Split(line, ",")
		if len(f) != 5 {
			t.Fatalf("bad reference line %q", line)
		}
		num := func(s string) float64 {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatal(err)
			}
			return v
		}
		key := f[2] + "/" + f[3]
		c := cases[key]
		if c == nil {
			c = &loessCase{}
			cases[key] = c
		}
		c.x, c.y, c.want = append(c.x, num(f[0])), append(c.y, num(f[1])), append(c.want, num(f[4]))
	}
	return cases
}

// LocalFilter against R's loess (stats package, r-base-core), a general-purpose
// implementation of Cleveland (1979): testdata/detrend/loess_reference.R explains how the
// reference was made so that loess's nearest-neighbour span equals our time window at
// every point. The plain fits agree to rounding; the robust ones to 1e-9, because loess
// gives a weight of exactly 1 to residuals below 0.001 × 6 s and exactly 0 above
// 0.999 × 6 s (its lowesw routine, from memory of its source), where we evaluate the
// biweight itself: a difference of at most 2e-6 in a weight.
func TestLocalFilterMatchesRLoess(t *testing.T) {
	cases := readLoessReference(t)
	if len(cases) != 4 {
		t.Fatalf("%d reference blocks, want 4", len(cases))
	}
	for _, c := range []struct {
		key         string
		degree, fit int
		tol         float64
	}{
		{"1/gaussian", 1, 1, 1e-12},
		{"2/gaussian", 2, 1, 1e-12},
		{"1/symmetric", 1, 4, 1e-9},
		{"2/symmetric", 2, 4, 1e-9},
	} {
		t.Run("degree "+c.key, func(t *testing.T) {
			ref := cases[c.key]
			n := len(ref.x)
			use := make([]bool, n)
			for i := range use {
				use[i] = true
			}
			got := make([]float64, n)
			half := 90 * (ref.x[1] - ref.x[0]) // the script's k = 90 cadences
			LocalFilter(got, ref.x, ref.y, nil, use, LocalFit{Half: half, Degree: c.degree, Iterations: c.fit, MinPoints: 3}, nil)
			worst, at := 0.0, 0
			for i := range got {
				if d := math.Abs(got[i] - ref.want[i]); d > worst || math.IsNaN(d) {
					worst, at = d, i
				}
			}
			if !(worst <= c.tol) {
				t.Errorf("largest difference from loess %.3g at point %d (tolerance %g)", worst, at, c.tol)
			}
		})
	}
}

// bruteLocal is an independent reference for one point: the weighted least-squares
// polynomial through gonum's QR solve of the √w-scaled design, evaluated at t0.
func bruteLocal(t *testing.T, tt, f, rw []float64, t0, half float64, degree int) float64 {
	t.Helper()
	var rows [][]float64
	var rhs []float64
	for j := range tt {
		u := (tt[j] - t0) / half
		w := tricube(u) * rw[j]
		if w <= 0 {
			continue
		}
		s := math.Sqrt(w)
		row := make([]float64, degree+1)
		p := 1.0
		for k := range row {
			row[k] = s * p
			p *= u
		}
		rows = append(rows, row)
		rhs = append(rhs, s*f[j])
	}
	X := mat.NewDense(len(rows), degree+1, nil)
	for i, r := range rows {
		X.SetRow(i, r)
	}
	var beta mat.VecDense
	if err := beta.SolveVec(X, mat.NewVecDense(len(rhs), rhs)); err != nil {
		t.Fatal(err)
	}
	return beta.AtVec(0)
}

// Masked points get zero weight and the fit is still evaluated at their times; where a
// point's window is one-sided (a masked stretch, the end of the series) the quadratic is
// still fitted. Checked point by point against the brute-force solve above, for the plain
// fit and for the robust one (its weights recomputed here from the definition: biweight of
// the residual over 6 × the median absolute residual, Cleveland 1979).
func TestLocalFilterMaskedAgainstBruteForce(t *testing.T) {
	c := synth.Curve{Span: 2, Cadence: 10.0 / 1440, Noise: 5e-4, Seed: 11,
		Star: synth.Rotation{Period: 1.7, Amplitudes: []float64{0.01}},
		Dips: []synth.Signal{synth.Box{Period: 0.9, Epoch: 0.4, Duration: 0.1, Depth: 0.003}}}
	s := c.Make()
	n := len(s.Time)
	use := make([]bool, n)
	for i, ti := range s.Time {
		x := (ti - 0.4) / 0.9
		use[i] = math.Abs(x-math.Round(x))*0.9 > 0.08 // the dips masked
	}
	half := 0.2
	for _, degree := range []int{0, 1, 2} {
		for _, fits := range []int{1, 3} {
			got := make([]float64, n)
			LocalFilter(got, s.Time, s.Flux, nil, use, LocalFit{Half: half, Degree: degree, Iterations: fits, MinPoints: 3}, nil)
			rw := make([]float64, n)
			for j := range rw {
				if use[j] {
					rw[j] = 1
				}
			}
			want := make([]float64, n)
			for it := 0; it < fits; it++ {
				for i := range want {
					want[i] = bruteLocal(t, s.Time, s.Flux, rw, s.Time[i], half, degree)
				}
				var res []float64
				for j := range want {
					if use[j] {
						res = append(res, math.Abs(s.Flux[j]-want[j]))
					}
				}
				scale := 6 * Median(sortedCopy(res))
				for j := range rw {
					if !use[j] {
						continue
					}
					u := (s.Flux[j] - want[j]) / scale
					rw[j] = 0
					if math.Abs(u) < 1 {
						rw[j] = (1 - u*u) * (1 - u*u)
					}
				}
			}
			for i := range got {
				if d := math.Abs(got[i] - want[i]); !(d < 1e-10) {
					t.Fatalf("degree %d, %d fits, point %d (t = %.4f, masked %v): %.12g, brute force %.12g",
						degree, fits, i, s.Time[i], !use[i], got[i], want[i])
				}
			}
		}
	}
}

func sortedCopy(x []float64) []float64 {
	y := append([]float64(nil), x...)
	for i := 1; i < len(y); i++ {
		for j := i; j > 0 && y[j] < y[j-1]; j-- {
			y[j], y[j-1] = y[j-1], y[j]
		}
	}
	return y
}

// A quadratic in time is reproduced exactly by a local quadratic whatever the weights (the
// weighted least-squares fit of a polynomial that lies in the model space is the
// polynomial), and a line by a local line: the estimator has no bias on slopes, and the
// quadratic none on curvature, beside a mask or at an end.
func TestLocalFilterReproducesPolynomials(t *testing.T) {
	n := 500
	tt := make([]float64, n)
	f := make([]float64, n)
	use := make([]bool, n)
	for i := range tt {
		tt[i] = float64(i) * 0.01
		use[i] = i < 40 || i >= n-40 || i%97 > 20 // masked stretches inside, one-sided windows beside them
	}
	for _, degree := range []int{1, 2} {
		for i, x := range tt {
			f[i] = 1 + 0.01*(x-2)
			if degree == 2 {
				f[i] += 0.003 * (x - 2) * (x - 2)
			}
		}
		got := make([]float64, n)
		LocalFilter(got, tt, f, nil, use, LocalFit{Half: 0.4, Degree: degree, Iterations: 4, MinPoints: 5}, nil)
		for i := range got {
			if d := math.Abs(got[i] - f[i]); !(d < 1e-12) {
				t.Fatalf("degree %d, point %d: %.15g, want %.15g", degree, i, got[i], f[i])
			}
		}
	}
}

// A point whose usable neighbours all lie far to one side (a masked stretch filling the
// near half of its window at the end of the data) gets no trend rather than a quadratic
// extrapolated into the hole: the weight's centroid must lie within half a half-width.
func TestLocalFilterRefusesToExtrapolate(t *testing.T) {
	n := 200
	tt := make([]float64, n)
	f := make([]float64, n)
	use := make([]bool, n)
	for i := range tt {
		tt[i] = float64(i) * 0.01
		f[i] = 1 + 0.05*math.Sin(3*tt[i])
		use[i] = i >= 30 // the first 0.3 d masked, the window's half-width 0.4 d
	}
	got := make([]float64, n)
	LocalFilter(got, tt, f, nil, use, LocalFit{Half: 0.4, Degree: 2, Iterations: 1, MinPoints: 5}, nil)
	for i := 0; i < n; i++ {
		// The centroid of tricube weights over [30, i+40) relative to i, worked directly.
		var s0, s1 float64
		for j := 30; j < n && tt[j] < tt[i]+0.4; j++ {
			if d := tt[j] - tt[i]; d > -0.4 {
				w := tricube(d / 0.4)
				s0 += w
				s1 += w * d / 0.4
			}
		}
		far := s1/s0 > maxCentroid
		if far != math.IsNaN(got[i]) {
			t.Fatalf("point %d: centroid %.3f, trend %v", i, s1/s0, got[i])
		}
		if i == 0 && !far {
			t.Fatalf("the first point's window should lie far to one side (centroid %.3f)", s1/s0)
		}
	}
}

// Windows with too few usable points give NaN; a window whose weight sits on too few
// distinct times for the degree falls back to a lower degree rather than failing.
func TestLocalFilterThinWindows(t *testing.T) {
	tt := []float64{0, 1, 2, 3, 10, 11, 20}
	f := []float64{1, 2, 3, 4, 5, 6, 7}
	use := []bool{true, true, true, true, true, true, true}
	got := make([]float64, len(tt))
	LocalFilter(got, tt, f, nil, use, LocalFit{Half: 2.5, Degree: 2, Iterations: 1, MinPoints: 2}, nil)
	// Point 6 (t = 20) is alone in its window: NaN. Points 4 and 5 see each other only: a
	// line through two points, fitted exactly.
	if !math.IsNaN(got[6]) {
		t.Errorf("a lone point got a trend %v", got[6])
	}
	if math.Abs(got[4]-5) > 1e-12 || math.Abs(got[5]-6) > 1e-12 {
		t.Errorf("two-point windows: %v, %v; want 5 and 6", got[4], got[5])
	}
	if math.Abs(got[1]-2) > 1e-12 {
		t.Errorf("a line through four points: %v, want 2", got[1])
	}
}

// The result does not depend on how the blocks are spread over workers.
func TestLocalFilterParallelIsSerial(t *testing.T) {
	c := synth.Curve{Span: 6, Cadence: 2.0 / 1440, Noise: 8e-4, Seed: 5,
		Star: synth.Rotation{Period: 2.3, Amplitudes: []float64{0.01}}}
	s := c.Make()
	use := make([]bool, len(s.Time))
	for i := range use {
		use[i] = true
	}
	cfg := LocalFit{Half: 0.3, Degree: 2, Iterations: 4, MinPoints: 5}
	a := make([]float64, len(s.Time))
	b := make([]float64, len(s.Time))
	LocalFilter(a, s.Time, s.Flux, s.Err, use, cfg, nil)
	par := func(n int, block func(int)) {
		done := make(chan struct{})
		for i := n - 1; i >= 0; i-- { // reverse order, concurrently
			go func() { block(i); done <- struct{}{} }()
		}
		for i := 0; i < n; i++ {
			<-done
		}
	}
	LocalFilter(b, s.Time, s.Flux, s.Err, use, cfg, par)
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			t.Fatalf("point %d: %v serially, %v in parallel", i, a[i], b[i])
		}
	}
}

// TestAnchoredTrendFollowsTheExactOne fits a spotted star at a 20-second cadence (a 0.7-day
// window holds 3024 points) at anchors AnchorsPerWindow to a window and interpolates
// between them, against the fit at every point. The bound is AnchorsPerWindow's:
// f″d²/8 for a 1 % sinusoid of 2.3 days with d = 0.7 d/64 is 0.01·(2π/2.3)²·d²/8 ≈ 1.1 ppm;
// the robustness weights, taken from residuals to either trend, may differ at a point or
// two, so the test allows 2 ppm, against a noise of 1000 ppm.
func TestAnchoredTrendFollowsTheExactOne(t *testing.T) {
	s, use := spottedAt20s(3, 2.3, 0.01, 23)
	n := len(s.Time)
	half := 0.35
	exact, anchored := make([]float64, n), make([]float64, n)
	cfg := LocalFit{Half: half, Degree: 2, Iterations: 3, MinPoints: 5}
	LocalFilter(exact, s.Time, s.Flux, nil, use, cfg, nil)
	cfg.Step = 2 * half / AnchorsPerWindow
	LocalFilter(anchored, s.Time, s.Flux, nil, use, cfg, nil)
	worst := 0.0
	for i := range exact {
		worst = math.Max(worst, math.Abs(exact[i]-anchored[i]))
	}
	if !(worst < 2e-6) || worst == 0 {
		t.Errorf("the anchored trend departs from the exact one by %.3g ppm, want under 2 (and above 0: else no point was interpolated)", worst*1e6)
	}
	t.Logf("%d points; largest departure %.3g ppm", n, worst*1e6)
}

// BenchmarkLocalFilterDense compares the fit at every point with the anchored one on 27
// days at a 20-second cadence (116,640 points), one robust pass each.
func BenchmarkLocalFilterDense(b *testing.B) {
	s, use := spottedAt20s(27, 4.1, 0.005, 5)
	dst := make([]float64, len(s.Time))
	for _, step := range []float64{0, 0.7 / AnchorsPerWindow} {
		name := "every_point"
		if step > 0 {
			name = "anchored"
		}
		b.Run(name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				LocalFilter(dst, s.Time, s.Flux, nil, use, LocalFit{Half: 0.35, Degree: 2, Iterations: 1, MinPoints: 5, Step: step}, nil)
			}
		})
	}
}

// spottedAt20s is an invented spotted star sampled every 20 s for span days, with 1000 ppm
// of white noise and every point usable.
func spottedAt20s(span, period, amplitude float64, seed uint64) (synth.Series, []bool) {
	s := synth.Curve{Span: span, Cadence: 20.0 / 86400, Noise: 1e-3, Seed: seed,
		Star: synth.Rotation{Period: period, Amplitudes: []float64{amplitude}}}.Make()
	use := make([]bool, len(s.Time))
	for i := range use {
		use[i] = true
	}
	return s, use
}
