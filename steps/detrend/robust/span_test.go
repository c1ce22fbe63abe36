package robust

import (
	"math"
	"testing"

	"dipline/steps/internal/rng"
	"dipline/steps/internal/synth"
)

// The equivalent kernel is the row of the plain fit's hat matrix: feeding LocalFilter a
// unit impulse at offset j gives ℓ_j at the centre. Checked on an even grid against the
// filter itself (whose plain fit matches R's loess, local_test.go), for every degree.
func TestKernelIsTheHatMatrixRow(t *testing.T) {
	step, half := 0.01, 0.137
	n := 101
	tt := make([]float64, n)
	use := make([]bool, n)
	for i := range tt {
		tt[i] = float64(i-n/2) * step
		use[i] = true
	}
	for _, degree := range []int{0, 1, 2} {
		k := kernel(half, step, degree)
		sum := 0.0
		for j, off := range k.off {
			y := make([]float64, n)
			y[n/2+int(math.Round(off/step))] = 1
			got := make([]float64, n)
			LocalFilter(got, tt, y, nil, use, LocalFit{Half: half, Degree: degree, Iterations: 1, MinPoints: 1}, nil)
			if math.Abs(got[n/2]-k.ell[j]) > 1e-12 {
				t.Fatalf("degree %d, offset %.3f: kernel %.15g, filter %.15g", degree, off, k.ell[j], got[n/2])
			}
			sum += k.ell[j]
		}
		// A local polynomial reproduces a constant: the weights sum to one.
		if math.Abs(sum-1) > 1e-12 {
			t.Errorf("degree %d: the kernel sums to %.15g", degree, sum)
		}
	}
}

// kept and sumSq on worked cases: a constant fit (degree 0) with uniform-ish weights keeps
// 1 − (weight inside the box); a window narrower than the box keeps nothing of the middle.
func TestKeptAndNoise(t *testing.T) {
	k := kernel(0.05, 0.01, 0) // offsets −0.04 … 0.04, tricube weights
	var in, all, sq float64
	for _, off := range k.off {
		w := tricube(off / 0.05)
		all += w
		if math.Abs(off) < 0.025 {
			in += w
		}
	}
	for _, v := range k.ell {
		sq += v * v
	}
	if got, want := k.kept(0.05), 1-in/all; math.Abs(got-want) > 1e-12 {
		t.Errorf("kept %.15g, want %.15g", got, want)
	}
	if got := k.sumSq(); math.Abs(got-sq) > 1e-15 {
		t.Errorf("sumSq %.15g, want %.15g", got, sq)
	}
	if got := k.kept(1); math.Abs(got) > 1e-12 {
		t.Errorf("a box wider than the window keeps %g, want 0", got)
	}
	// The difference of a kernel with itself is nothing; with a delta at the centre it is
	// Σℓ² − 2ℓ₀ + 1.
	if d := k.diffSq(k); d != 0 {
		t.Errorf("diffSq with itself %g", d)
	}
	delta := equivKernel{off: []float64{0}, ell: []float64{1}}
	mid := k.ell[len(k.ell)/2]
	if got, want := k.diffSq(delta), k.sumSq()-2*mid+1; math.Abs(got-want) > 1e-12 {
		t.Errorf("diffSq with a delta %.15g, want %.15g", got, want)
	}
}

// Second differences measure white noise whatever the smooth trend: for σ = 500 ppm on a
// 2 % sinusoid the estimate must be within 5 % of σ (the MAD's own error for 10,000 draws
// is about 1 %, common practice).
func TestSecondDifferenceScatterIgnoresTheTrend(t *testing.T) {
	c := synth.Curve{Span: 20, Cadence: 2.0 / 1440, Noise: 500e-6, Seed: 3,
		Star: synth.Rotation{Period: 2, Amplitudes: []float64{0.02}}}
	s := c.Make()
	got, ok := secondDifferenceScatter([]binned{{t: s.Time, f: s.Flux}}, 2.0/1440)
	if !ok || math.Abs(got/500e-6-1) > 0.05 {
		t.Errorf("scatter %.1f ppm (ok %v), want 500 ± 5 %%", got*1e6, ok)
	}
}

// The trimming constants, by Monte Carlo with our own stream: the mean of the lower 90 %
// of χ²₁ over its mean, and of sin² over a period (the values in span.go come from
// python3-scipy and python3-numpy).
func TestTrimConstants(t *testing.T) {
	r := rng.New(9)
	x := make([]float64, 400000)
	for i := range x {
		z := r.Normal()
		x[i] = z * z
	}
	if got := trimmedMean(x, trimShare); math.Abs(got-trimNoise) > 0.005 {
		t.Errorf("χ²₁ trimmed mean %.4f, want %.4f", got, trimNoise)
	}
	y := make([]float64, 200000)
	for i := range y {
		s := math.Sin(2 * math.Pi * (float64(i) + 0.5) / float64(len(y)))
		y[i] = 2 * s * s // mean 1
	}
	if got := trimmedMean(y, trimShare); math.Abs(got-trimSmooth) > 0.001 {
		t.Errorf("sin² trimmed mean %.4f, want %.4f", got, trimSmooth)
	}
}

// The choice follows the star: a quiet star gets the widest window, a star rotating in a
// day a narrow one.
func TestChooseSpanFollowsTheStar(t *testing.T) {
	cases := []struct {
		name      string
		rot, amp  float64
		lo, hi    float64 // the chosen span must lie in [lo, hi]
		goal      SpanGoal
		noiseFree bool
	}{
		{"a quiet star gets the widest window", 10, 1e-4, 4, 4, KeepTransits, false},
		{"a day's rotation gets a narrow window", 1, 0.02, 0.25, 0.5, KeepTransits, false},
		{"a 4.2-day rotation unmasked gets a day or so", 4.2, 0.015, 1, 2, KeepTransits, false},
		{"a 4.2-day rotation masked gets a negligible bias", 4.2, 0.015, 0.7, 1.41, FollowStar, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cv := synth.Curve{Span: 30, Cadence: 2.0 / 1440, Noise: 800e-6, Seed: 21,
				Star: synth.Rotation{Period: c.rot, Amplitudes: []float64{c.amp}}}
			if c.noiseFree {
				cv.Noise = 0
			}
			s := cv.Make()
			for i := range s.Err {
				s.Err[i] = 800e-6
			}
			ch, ok := ChooseSpan([]Series{{Time: s.Time, Flux: s.Flux, Err: s.Err}}, 2, c.goal, 2.0/24, 0, 0.5, nil)
			if !ok {
				t.Fatal("no choice")
			}
			if ch.Span < c.lo || ch.Span > c.hi {
				t.Errorf("span %.3g d, want %.3g–%.3g; trials %+v", ch.Span, c.lo, c.hi, ch.Trials)
			}
		})
	}
}

// On data too short or too sparse to judge, there is no choice and the caller keeps its
// default.
func TestChooseSpanNeedsData(t *testing.T) {
	s := Series{Time: []float64{0, 1, 2, 3}, Flux: []float64{1, 1, 1, 1}}
	if _, ok := ChooseSpan([]Series{s}, 2, KeepTransits, 2.0/24, 0, 0.5, nil); ok {
		t.Error("a choice from four points")
	}
}

// The bias estimate tracks the true bias: on a noise-free spotted star the rms of each
// window's trend against the truth (computed at full cadence) must match the estimate
// within a third wherever it exceeds 5 ppm (the estimate is made on bins of 10 min with a
// tenth of the points trimmed; measured within 15 %).
func TestChooseSpanBiasTracksTheTruth(t *testing.T) {
	cv := synth.Curve{Span: 15, Cadence: 2.0 / 1440, Star: synth.Rotation{Period: 2.5, Amplitudes: []float64{0.01, 0.003}}}
	s := cv.Make()
	for i := range s.Err {
		s.Err[i] = 800e-6
	}
	ch, ok := ChooseSpan([]Series{{Time: s.Time, Flux: s.Flux, Err: s.Err}}, 2, FollowStar, 2.0/24, 0, 0.5, nil)
	if !ok {
		t.Fatal("no choice")
	}
	use := make([]bool, len(s.Time))
	for i := range use {
		use[i] = true
	}
	checked := 0
	for _, tr := range ch.Trials {
		got := make([]float64, len(s.Time))
		LocalFilter(got, s.Time, s.Flux, s.Err, use, LocalFit{Half: tr.Span / 2, Degree: 2, Iterations: 4, MinPoints: 5}, nil)
		var ss float64
		var n int
		for i := range got {
			if finite(got[i]) {
				d := got[i] - s.Trend[i]
				ss += d * d
				n++
			}
		}
		truth := math.Sqrt(ss / float64(n))
		t.Logf("span %.3g d: bias estimated %.1f ppm, true rms %.1f ppm", tr.Span, tr.Bias*1e6, truth*1e6)
		if truth > 5e-6 {
			checked++
			if r := tr.Bias / truth; !(r > 0.75 && r < 1.33) {
				t.Errorf("span %.3g d: estimate %.1f ppm against a true %.1f ppm", tr.Span, tr.Bias*1e6, truth*1e6)
			}
		}
	}
	if checked < 3 {
		t.Errorf("only %d spans with a bias above 5 ppm: the test has no teeth", checked)
	}
}
