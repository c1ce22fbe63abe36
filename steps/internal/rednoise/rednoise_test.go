package rednoise

import (
	"errors"
	"math"
	"sort"
	"testing"

	"dipline/steps/internal/rng"
)

const minute = 1.0 / 1440 // days

// series returns n times at a cadence of dt from 0.
func series(n int, dt float64) []float64 {
	t := make([]float64, n)
	for i := range t {
		t[i] = float64(i) * dt
	}
	return t
}

// white fills a slice with normal deviates of standard deviation sigma.
func white(r *rng.Stream, n int, sigma float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = sigma * r.Normal()
	}
	return x
}

// ar1 is a stationary AR(1) sequence x_i = φ x_{i−1} + e_i of unit marginal variance:
// e_i has variance 1 − φ² and x_0 is drawn from the stationary law.
func ar1(r *rng.Stream, n int, phi float64) []float64 {
	x := make([]float64, n)
	s := math.Sqrt(1 - phi*phi)
	x[0] = r.Normal()
	for i := 1; i < n; i++ {
		x[i] = phi*x[i-1] + s*r.Normal()
	}
	return x
}

// varMeanAR1 is the variance of the mean of n consecutive values of a stationary AR(1)
// sequence of unit variance: (1/n)[1 + 2 Σ_{k=1}^{n−1} (1 − k/n) φ^k]. Derivation: Var(Σx_i) =
// Σ_i Σ_j φ^|i−j| and there are n − k pairs at lag k (standard; derived for this test).
func varMeanAR1(n int, phi float64) float64 {
	s, pk := 1.0, 1.0
	for k := 1; k < n; k++ {
		pk *= phi
		s += 2 * (1 - float64(k)/float64(n)) * pk
	}
	return s / float64(n)
}

func median(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	m := len(s) / 2
	if len(s)%2 == 0 {
		return 0.5 * (s[m-1] + s[m])
	}
	return s[m]
}

// TestWhiteNoise: for white noise β is 1 up to Monte Carlo scatter.
func TestWhiteNoise(t *testing.T) {
	// 5000 points at a 2-min cadence (~7 d), widths 10 min to 6 h: per width the ratio has a
	// relative error ≈ 1/√(2M), M from ~700 down to ~28 bins. Over R = 100 seeds the mean of
	// the unfloored median ratio must be 1 within 4 standard errors (measured spread) plus
	// the known low bias of a standard deviation, ≤ 1/(4(M−1)) ≈ 0.01 at M = 28 (Gurland &
	// Tripathi 1971's c4 correction, from memory).
	const R, n = 100, 5000
	tm := series(n, 2*minute)
	raws := make([]float64, R)
	floored := 0
	for s := range raws {
		res := white(rng.Derive(1, "white", uint64(s)), n, 1e-3)
		beta, per, err := Beta(tm, res, nil, 10*minute, 360*minute)
		if err != nil {
			t.Fatal(err)
		}
		ratios := make([]float64, len(per))
		for i, b := range per {
			ratios[i] = b.Ratio
		}
		raws[s] = median(ratios)
		if beta < 1 {
			t.Fatalf("β = %v below the floor 1", beta)
		}
		if beta == 1 {
			floored++
		}
	}
	var mean, ss float64
	for _, v := range raws {
		mean += v
	}
	mean /= R
	for _, v := range raws {
		ss += (v - mean) * (v - mean)
	}
	se := math.Sqrt(ss/(R-1)) / math.Sqrt(R)
	t.Logf("white noise: mean median ratio %.4f ± %.4f (se), spread %.4f; β floored to 1 in %d of %d", mean, se, se*math.Sqrt(R), floored, R)
	if math.Abs(mean-1) > 4*se+0.01 {
		t.Errorf("mean median ratio %.4f, want 1 within %.4f", mean, 4*se+0.01)
	}
	// Roughly half of the raw medians fall below 1, so a fair share is floored; demand a
	// quarter at least (binomial with p ≈ ½ over 100: 25 is > 5σ below 50).
	if floored < R/4 {
		t.Errorf("β floored in %d of %d white-noise sets, want ≥ %d", floored, R, R/4)
	}
}

// TestAR1BinnedScatter: the binned scatter of AR(1) noise follows the variance of a mean of
// an AR(1) sequence.
func TestAR1BinnedScatter(t *testing.T) {
	// Unit cadence, one segment of N = 64000 points, bins of exactly n points. The bin means
	// m_j are taken about their mean m̄ = the mean of all N points, so exactly
	// E[σ_n²] = M/(M−1)·[V(n) − V(N)], V(k) = varMeanAR1(k, φ) (derived: E Σ(m_j − m̄)² =
	// Σ Var m_j − M Var m̄). The mean of σ_n² over R = 20 realisations must match it within 4
	// standard errors measured from the realisations themselves.
	const N, R = 64000, 20
	tm := series(N, 1)
	for _, tc := range []struct {
		name string
		phi  float64
	}{
		{"moderately correlated noise (φ = 0.5) follows the AR(1) variance of a mean", 0.5},
		{"strongly correlated noise (φ = 0.8) follows the AR(1) variance of a mean", 0.8},
		{"anticorrelated noise (φ = −0.5) bins down faster than white noise", -0.5},
	} {
		t.Run(tc.name, func(t *testing.T) {
			sets := make([][]float64, R)
			for r := range sets {
				sets[r] = ar1(rng.Derive(2, "ar1", uint64(r)), N, tc.phi)
			}
			for _, n := range []int{2, 4, 8, 16, 32, 64} {
				M := float64(N / n)
				want := M / (M - 1) * (varMeanAR1(n, tc.phi) - varMeanAR1(N, tc.phi))
				var mean, ss float64
				v := make([]float64, R)
				for r := range sets {
					b, err := Scatter(tm, sets[r], nil, float64(n))
					if err != nil {
						t.Fatal(err)
					}
					if b.Bins != N/n || b.Points != float64(n) {
						t.Fatalf("n = %d: %d bins of %v points, want %d of %d", n, b.Bins, b.Points, N/n, n)
					}
					v[r] = b.Scatter * b.Scatter
					mean += v[r]
				}
				mean /= R
				for _, x := range v {
					ss += (x - mean) * (x - mean)
				}
				se := math.Sqrt(ss/(R-1)) / math.Sqrt(R)
				if math.Abs(mean-want) > 4*se {
					t.Errorf("n = %d: mean σ_n² %.5g, want %.5g ± %.2g (4 se)", n, mean, want, 4*se)
				}
				// The white-noise expectation differs from the AR(1) one by the bracket.
				if n == 16 {
					t.Logf("φ = %v, n = 16: σ_n² %.5g ± %.2g, AR(1) %.5g, white 1/n %.5g", tc.phi, mean, se, want, 1.0/16)
				}
			}
		})
	}
}

// TestSinusoidRaisesBeta: a slow sinusoid under the noise is red and gives β well above 1.
func TestSinusoidRaisesBeta(t *testing.T) {
	// Amplitude equal to the point scatter, period 12 h: bins up to 6 h average the noise
	// down but keep most of the sinusoid (mean over a bin of width w keeps a share
	// sinc(w/P) of its amplitude), so σ_n/expected grows like √n; at 1 h (n = 30) it is
	// about √(0.5 + 1/30)/√(1.5/30) ≈ 3.3 (our estimate). Demand β > 2.
	tm := series(5000, 2*minute)
	res := white(rng.New(3), len(tm), 1e-3)
	for i, x := range tm {
		res[i] += 1e-3 * math.Sin(2*math.Pi*x/0.5)
	}
	beta, _, err := Beta(tm, res, nil, 10*minute, 360*minute)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("sinusoid: β = %.3f", beta)
	if !(beta > 2) {
		t.Errorf("β = %v for a sinusoid of the noise's amplitude, want > 2", beta)
	}
}

// TestBinsRespectSegmentsAndGaps checks the bin bookkeeping on hand-counted layouts.
func TestBinsRespectSegmentsAndGaps(t *testing.T) {
	r := rng.New(4)
	// Segment 1: 100 points at t = 0…99; segment 2: 100 points at t = 1000.5…1099.5.
	two := make([]float64, 200)
	for i := range two {
		two[i] = float64(i)
		if i >= 100 {
			two[i] = 1000.5 + float64(i-100)
		}
	}
	// One segment, 100 points with t = 0…49 and 53…102: the bin [50, 60) holds 7 points
	// (53…59), kept (need 5); with width 10 from 0 the bin [100, 110) holds 3, dropped.
	gap := make([]float64, 100)
	for i := range gap {
		gap[i] = float64(i)
		if i >= 50 {
			gap[i] = float64(i + 3)
		}
	}
	for _, tc := range []struct {
		name   string
		time   []float64
		starts []int
		width  float64
		bins   int
		points float64
	}{
		{"two segments bin separately, ten full bins each", two, []int{0, 100}, 10, 20, 10},
		{"a segment start ends a bin; the part-filled last bin is dropped", two, []int{0, 100}, 30, 6, 30},
		{"a bin cut short by a gap is kept when at least half full", gap, nil, 10, 10, 9.7},
		{"bins narrower than two cadences are not formed", two, []int{0, 100}, 1.5, 0, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			b, err := Scatter(tc.time, white(r, len(tc.time), 1), tc.starts, tc.width)
			if err != nil {
				t.Fatal(err)
			}
			if b.Bins != tc.bins || math.Abs(b.Points-tc.points) > 1e-12 {
				t.Errorf("%d bins of %v points, want %d of %v", b.Bins, b.Points, tc.bins, tc.points)
			}
		})
	}
}

// TestBadInput: bad input gives an error wrapping ErrInput, never a panic.
func TestBadInput(t *testing.T) {
	tm := series(100, 1)
	res := white(rng.New(5), 100, 1)
	nanAt := func(v []float64, i int) []float64 {
		c := append([]float64(nil), v...)
		c[i] = math.NaN()
		return c
	}
	back := append([]float64(nil), tm...)
	back[50] = back[48]
	for _, tc := range []struct {
		name     string
		time     []float64
		resid    []float64
		starts   []int
		min, max float64
	}{
		{"mismatched lengths are refused", tm, res[:99], nil, 5, 20},
		{"an empty series is refused", nil, nil, nil, 5, 20},
		{"a NaN time is refused", nanAt(tm, 10), res, nil, 5, 20},
		{"a NaN residual is refused", tm, nanAt(res, 10), nil, 5, 20},
		{"times going back within a segment are refused", back, res, nil, 5, 20},
		{"segments not starting at 0 are refused", tm, res, []int{3}, 5, 20},
		{"decreasing segment starts are refused", tm, res, []int{0, 50, 40}, 5, 20},
		{"a segment start past the end is refused", tm, res, []int{0, 100}, 5, 20},
		{"a zero bin width is refused", tm, res, nil, 0, 20},
		{"a maximum width below the minimum is refused", tm, res, nil, 20, 5},
		{"an infinite width is refused", tm, res, nil, 5, math.Inf(1)},
		{"constant residuals are refused", tm, make([]float64, 100), nil, 5, 20},
		{"widths too wide for five bins are refused", tm, res, nil, 30, 60},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, _, err := Beta(tc.time, tc.resid, tc.starts, tc.min, tc.max)
			if !errors.Is(err, ErrInput) {
				t.Errorf("error %v, want one wrapping ErrInput", err)
			}
		})
	}
}

// TestScatterDoesNotAllocate: the per-width pass allocates nothing.
func TestScatterDoesNotAllocate(t *testing.T) {
	tm := series(2000, 1)
	d, err := prepare(tm, white(rng.New(6), 2000, 1), []int{0, 700})
	if err != nil {
		t.Fatal(err)
	}
	if a := testing.AllocsPerRun(10, func() { d.scatter(12) }); a != 0 {
		t.Errorf("%v allocations per width, want 0", a)
	}
}

func BenchmarkBeta(b *testing.B) {
	tm := series(20000, 2*minute)
	res := white(rng.New(7), len(tm), 1e-3)
	for b.Loop() {
		if _, _, err := Beta(tm, res, nil, 10*minute, 360*minute); err != nil {
			b.Fatal(err)
		}
	}
}

// FuzzBeta: arbitrary input never panics, and a result is either an error or β ≥ 1.
func FuzzBeta(f *testing.F) {
	f.Add(0.0, 1.0, 0.5, 2.0, 3.0, 7, uint64(1))
	f.Fuzz(func(t *testing.T, t0, dt, minW, maxW, jump float64, n int, seed uint64) {
		n = n % 500
		if n < 0 {
			n = -n
		}
		r := rng.New(seed)
		tm := make([]float64, n)
		for i := range tm {
			tm[i] = t0 + float64(i)*dt
			if i > n/2 {
				tm[i] += jump
			}
		}
		beta, _, err := Beta(tm, white(r, n, 1), []int{0, n / 2}, minW, maxW)
		if err == nil && !(beta >= 1) {
			t.Errorf("β = %v without an error", beta)
		}
	})
}
