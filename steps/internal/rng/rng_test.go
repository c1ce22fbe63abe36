package rng

import (
	"math"
	"testing"
)

// Golden outputs computed by testdata/goldens.py (our own Python implementation of the
// published reference algorithms; run with /usr/bin/python3 testdata/goldens.py). The
// SplitMix64 values for seeds 0 and 1234567 also agree with commonly quoted test vectors
// (0xe220a8397b1dcdaf, 6457827717110365317 = 0x599ed017fb08fc85; from memory).
func TestGeneratorsMatchReferenceOutputs(t *testing.T) {
	cases := []struct {
		name string
		seed uint64
		gen  func(seed uint64) func() uint64
		want []uint64
	}{
		{"splitmix64 from state 0", 0, splitGen,
			[]uint64{0xe220a8397b1dcdaf, 0x6e789e6aa1b965f4, 0x06c45d188009454f, 0xf88bb8a8724c81ec, 0x1b39896a51a8749b}},
		{"splitmix64 from state 1234567", 1234567, splitGen,
			[]uint64{0x599ed017fb08fc85, 0x2c73f08458540fa5, 0x883ebce5a3f27c77, 0x3fbef740e9177b3f, 0xe3b8346708cb5ecd}},
		{"xoshiro256** seeded by splitmix64 from 0", 0, xoGen,
			[]uint64{0x99ec5f36cb75f2b4, 0xbf6e1f784956452a, 0x1a5f849d4933e6e0, 0x6aa594f1262d2d2c, 0xbba5ad4a1f842e59}},
		{"xoshiro256** seeded by splitmix64 from 1234567", 1234567, xoGen,
			[]uint64{0x30a3a1c363600467, 0x19405f0f579929ca, 0x115beaac046ddbd9, 0xeb17caf48f27d7f6, 0xa0c94fe1cce9d136}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			next := c.gen(c.seed)
			for i, w := range c.want {
				if got := next(); got != w {
					t.Errorf("output %d = %#016x, want %#016x", i, got, w)
				}
			}
		})
	}
}

func splitGen(seed uint64) func() uint64 { s := SplitMix64{State: seed}; return s.Next }
func xoGen(seed uint64) func() uint64    { return New(seed).Uint64 }

// moments returns mean, variance and excess kurtosis of n draws.
func moments(n int, draw func() float64) (mean, variance, kurt float64) {
	var s1, s2, s3, s4 float64
	xs := make([]float64, n)
	for i := range xs {
		xs[i] = draw()
		s1 += xs[i]
	}
	mean = s1 / float64(n)
	for _, x := range xs {
		d := x - mean
		d2 := d * d
		s2 += d2
		s3 += d2 * d
		s4 += d2 * d2
	}
	variance = s2 / float64(n)
	kurt = s4/float64(n)/(variance*variance) - 3
	return
}

// Moments of U(0,1): mean 1/2, variance 1/12, excess kurtosis −6/5; of N(0,1): 0, 1, 0
// (standard results). Monte Carlo standard errors for n draws: mean sqrt(var/n); variance
// sqrt((μ4 − σ⁴)/n) with μ4 = 1/80 (uniform) or 3 (normal); excess kurtosis of a normal
// sample sqrt(24/n) (large-sample result, e.g. Kendall & Stuart). We allow 5 standard errors.
func TestTransformsHaveTheRightMoments(t *testing.T) {
	const n = 1_000_000
	cases := []struct {
		name                  string
		draw                  func(r *Stream) float64
		mean, vr, kurt        float64
		seMean, seVar, seKurt float64
	}{
		{"uniform draws have mean 1/2 and variance 1/12", (*Stream).Float64,
			0.5, 1.0 / 12, -1.2,
			math.Sqrt(1.0 / 12 / n), math.Sqrt((1.0/80 - 1.0/144) / n), 0}, // kurtosis not checked
		{"normal draws have mean 0, variance 1 and no excess kurtosis", (*Stream).Normal,
			0, 1, 0,
			math.Sqrt(1.0 / n), math.Sqrt(2.0 / n), math.Sqrt(24.0 / n)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := New(20260101)
			m, v, k := moments(n, func() float64 { return c.draw(r) })
			if math.Abs(m-c.mean) > 5*c.seMean {
				t.Errorf("mean = %.6f, want %.6f ± %.2g", m, c.mean, 5*c.seMean)
			}
			if math.Abs(v-c.vr) > 5*c.seVar {
				t.Errorf("variance = %.6f, want %.6f ± %.2g", v, c.vr, 5*c.seVar)
			}
			if c.seKurt > 0 && math.Abs(k-c.kurt) > 5*c.seKurt {
				t.Errorf("excess kurtosis = %.4f, want %.4f ± %.2g", k, c.kurt, 5*c.seKurt)
			}
		})
	}
}

func TestUniformStaysInsideTheOpenInterval(t *testing.T) {
	r := New(7)
	for i := 0; i < 100000; i++ {
		if u := r.Float64(); !(u > 0 && u < 1) {
			t.Fatalf("draw %d = %v, outside (0, 1)", i, u)
		}
	}
	// The extremes of the transform itself: 1·2⁻⁵³ and (2⁵³ − 1)·2⁻⁵³.
	lo, hi := 1.0/twoTo53, float64(twoTo53-1)/twoTo53
	if !(lo > 0 && hi < 1) {
		t.Errorf("transform extremes %v, %v leave (0, 1)", lo, hi)
	}
}

// A χ² test of Intn over 7 bins (not a power of two); 99.9 % point of χ²(6) is 22.46
// (standard table).
func TestIntnIsUniformOverItsRange(t *testing.T) {
	const bins, n = 7, 700_000
	r := New(99)
	var count [bins]float64
	for i := 0; i < n; i++ {
		count[r.Intn(bins)]++
	}
	var chi2 float64
	for _, c := range count {
		d := c - n/bins
		chi2 += d * d / (n / bins)
	}
	if chi2 > 22.46 {
		t.Errorf("χ² = %.2f over %d bins, above the 99.9 %% point 22.46", chi2, bins)
	}
}

func TestStreamsAreReproducibleAndDistinct(t *testing.T) {
	first := func(r *Stream) [4]uint64 {
		var out [4]uint64
		for i := range out {
			out[i] = r.Uint64()
		}
		return out
	}
	t.Run("the same seed, label and index give the same stream", func(t *testing.T) {
		if a, b := first(Derive(42, "walker", 3)), first(Derive(42, "walker", 3)); a != b {
			t.Errorf("%x != %x", a, b)
		}
		if a, b := first(New(42)), first(New(42)); a != b {
			t.Errorf("%x != %x", a, b)
		}
	})
	t.Run("different labels, indices or seeds give different streams", func(t *testing.T) {
		seen := map[[4]uint64]string{}
		for _, seed := range []uint64{0, 1, 42} {
			for _, label := range []string{"walker", "walkers", "block", ""} {
				for idx := uint64(0); idx < 64; idx++ {
					key := first(Derive(seed, label, idx))
					name := label + "/" + string(rune('0'+seed%10))
					if prev, ok := seen[key]; ok {
						t.Fatalf("stream %s/%d repeats %s", name, idx, prev)
					}
					seen[key] = name
				}
			}
		}
	})
	t.Run("neighbouring sub-streams are uncorrelated", func(t *testing.T) {
		// Sample correlation of 10⁵ paired uniforms; standard error 1/sqrt(n) ≈ 0.0032.
		a, b := Derive(5, "walker", 0), Derive(5, "walker", 1)
		const n = 100000
		var sab, sa, sb, saa, sbb float64
		for i := 0; i < n; i++ {
			x, y := a.Float64(), b.Float64()
			sa += x
			sb += y
			sab += x * y
			saa += x * x
			sbb += y * y
		}
		cov := sab/n - sa/n*sb/n
		rho := cov / math.Sqrt((saa/n-sa*sa/n/n)*(sbb/n-sb*sb/n/n))
		if math.Abs(rho) > 5/math.Sqrt(n) {
			t.Errorf("correlation %.4f between streams 0 and 1", rho)
		}
	})
	t.Run("reseeding clears the cached normal", func(t *testing.T) {
		r := New(3)
		want := r.Normal()
		r.Seed(3)
		if got := r.Normal(); got != want {
			t.Errorf("after Seed, Normal() = %v, want %v", got, want)
		}
	})
}

func BenchmarkNormal(b *testing.B) {
	r := New(1)
	var s float64
	for i := 0; i < b.N; i++ {
		s += r.Normal()
	}
	_ = s
}
