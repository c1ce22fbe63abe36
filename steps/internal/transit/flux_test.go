package transit

import (
	"fmt"
	"math"
	"sort"
	"testing"
)

// Check values (γ1 = 0.4, γ2 = 0.25) computed independently by a 30-digit radial
// integration, against which the Mandel & Agol (2002, ApJ 580, L171) model was verified.
func TestFluxCheckValues(t *testing.T) {
	cases := []struct{ p, z, want float64 }{
		{0.1, 0.0, 0.987890954717},
		{0.1, 0.1, 0.987915612136},
		{0.1, 0.5, 0.988604498522},
		{0.1, 0.9, 0.991803712203},
		{0.1, 0.95, 0.994001442745},
		{0.05, 1.02, 0.999642302155},
		{0.3, 0.1, 0.892168630745},
		{0.5, 0.3, 0.713276289437},
		{0.5, 0.5, 0.73198358118},
		{0.5, 0.7, 0.792408925313},
		{0.7, 0.5, 0.550204260893},
		{0.7, 0.7, 0.651466831548},
		{0.7, 1.2, 0.881738504877},
		{1.5, 0.2, 0.0},
		{1.5, 1.0, 0.233219588842},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("k=%g at z=%g", c.p, c.z), func(t *testing.T) {
			got := Flux(nil, []float64{c.z}, c.p, 0.4, 0.25)[0]
			if math.Abs(got-c.want) > 1e-9 {
				t.Errorf("got %.13f want %.12f", got, c.want)
			}
		})
	}
}

// tanhSinh integrates f over [a, b] by the double-exponential rule (Takahasi & Mori 1974),
// which tolerates the square-root end-point behaviour of the integrands below.
func tanhSinh(f func(float64) float64, a, b float64) float64 {
	if b <= a {
		return 0
	}
	const h = 1.0 / 64
	d := (b - a) / 2
	sum := 0.0
	for j := -6 * 64; j <= 6*64; j++ {
		t := float64(j) * h
		u := math.Pi / 2 * math.Sinh(t)
		x := math.Tanh(u)
		w := math.Pi / 2 * math.Cosh(t) / (math.Cosh(u) * math.Cosh(u))
		if w < 1e-300 {
			continue
		}
		// Distance to the nearer end, computed without cancellation.
		e := 1 / (math.Exp(2*math.Abs(u)) + 1) * 2 // 1 − |x|
		var r float64
		if x < 0 {
			r = a + d*e
		} else {
			r = b - d*e
		}
		sum += w * f(r)
	}
	return sum * h * d
}

// quadFlux is an independent numerical model: the occulted light is the integral over the
// stellar radius r of I(r) times the fraction of the annulus at r that lies behind a disk of
// radius p centred at distance z, split at the kinks |z−p|, z+p and 1.
func quadFlux(p, z, u1, u2 float64) float64 {
	intensity := func(r float64) float64 {
		mu := math.Sqrt(math.Max(0, 1-r*r))
		return 1 - u1*(1-mu) - u2*(1-mu)*(1-mu)
	}
	covered := func(r float64) float64 {
		switch {
		case r <= p-z:
			return 1
		case r <= z-p || r >= z+p:
			return 0
		}
		c := (r*r + z*z - p*p) / (2 * r * z)
		return math.Acos(math.Max(-1, math.Min(1, c))) / math.Pi
	}
	total := func(r float64) float64 { return 2 * math.Pi * r * intensity(r) }
	blocked := func(r float64) float64 { return total(r) * covered(r) }
	br := []float64{0, 1}
	for _, x := range []float64{math.Abs(z - p), z + p} {
		if x > 0 && x < 1 {
			br = append(br, x)
		}
	}
	sort.Float64s(br)
	var lost float64
	for i := 0; i+1 < len(br); i++ {
		lost += tanhSinh(blocked, br[i], br[i+1])
	}
	all := math.Pi * (1 - u1/3 - u2/6) // ∫ I 2πr dr, closed form
	return 1 - lost/all
}

func TestFluxAgainstQuadrature(t *testing.T) {
	ks := []float64{0.01, 0.1, 0.3, 0.4999999, 0.5, 0.5000001, 0.7, 1, 1.5, 3}
	lds := [][2]float64{{0.4, 0.25}, {0, 0}, {1, 0}, {0.1, 0.7}, {1.3, -0.4}}
	maxErr := 0.0
	for _, k := range ks {
		zs := []float64{0, k / 2, k, 1 - k, math.Abs(1 - k), 0.5, 1, (1 + k) / 2, 1 + k - 1e-3, 1 + k + 0.1,
			k + 1e-6, k - 1e-6, 1 - k + 1e-6, 1 - k - 1e-6, k - 1 + 1e-6, k + 1e-11, 1 - k - 1e-11, 0.5 + 1e-10}
		for _, ld := range lds {
			for _, z := range zs {
				if z < 0 {
					continue
				}
				want := quadFlux(k, z, ld[0], ld[1])
				got := Flux(nil, []float64{z}, k, ld[0], ld[1])[0]
				e := math.Abs(got - want)
				maxErr = math.Max(maxErr, e)
				if e > 1e-9 || math.IsNaN(got) {
					t.Errorf("k=%g z=%.9g u=%v: got %.14f quadrature %.14f (diff %.2g)", k, z, ld, got, want, e)
				}
			}
		}
	}
	t.Logf("max |Flux − quadrature| = %.2g", maxErr)
}

// overlapArea is the exact area of the intersection of a unit circle and a circle of
// radius p at centre distance z (elementary geometry: two circular segments).
func overlapArea(p, z float64) float64 {
	switch {
	case z >= 1+p:
		return 0
	case z <= p-1:
		return math.Pi
	case z <= 1-p:
		return math.Pi * p * p
	}
	d1 := (z*z + 1 - p*p) / (2 * z) // distance from the star's centre to the chord
	d2 := z - d1
	seg := func(r, d float64) float64 { return r*r*math.Acos(d/r) - d*math.Sqrt(r*r-d*d) }
	return seg(1, d1) + seg(p, d2)
}

func TestFluxUniformSourceIsCircleOverlap(t *testing.T) {
	for _, k := range []float64{0.05, 0.3, 0.5, 0.8, 1, 2} {
		t.Run(fmt.Sprintf("k=%g matches the overlap area", k), func(t *testing.T) {
			for i := 0; i <= 200; i++ {
				z := float64(i) / 200 * (1 + k) * 1.05
				want := 1 - overlapArea(k, z)/math.Pi
				got := Flux(nil, []float64{z}, k, 0, 0)[0]
				if math.Abs(got-want) > 1e-12 {
					t.Errorf("z=%g: got %.15f want %.15f", z, got, want)
				}
			}
		})
	}
}

// Small-planet limit, Mandel & Agol (2002, ApJ 580, L171) §4, from memory: depth ≈
// k² I(μ)/(4Ω) with I at the planet's centre. Computed independently, it gives 0.01212 vs
// exact 0.01211 at k = 0.1, z = 0 (≈1e-3 relative). The neglected term is the intensity's
// curvature averaged over the planet, O(k²) relative (a Taylor expansion, common practice),
// so going from k = 0.1 to 0.01 must shrink the relative error about a hundredfold.
func TestFluxSmallPlanetLimit(t *testing.T) {
	const u1, u2 = 0.4, 0.25
	relDev := func(k, z float64) float64 {
		mu := math.Sqrt(1 - z*z)
		approx := k * k * (1 - u1*(1-mu) - u2*(1-mu)*(1-mu)) / (1 - u1/3 - u2/6)
		return relErr(1-Flux(nil, []float64{z}, k, u1, u2)[0], approx)
	}
	for _, z := range []float64{0, 0.2, 0.4, 0.6} {
		t.Run(fmt.Sprintf("depth at z=%g follows the local intensity", z), func(t *testing.T) {
			big, small := relDev(0.1, z), relDev(0.01, z)
			t.Logf("relative deviation %.2g at k=0.1, %.2g at k=0.01", big, small)
			if big > 3e-3 {
				t.Errorf("k=0.1: relative deviation %.2g", big)
			}
			if r := big / small; r < 70 || r > 140 {
				t.Errorf("deviation ratio %.3g between k=0.1 and 0.01, want ≈100", r)
			}
		})
	}
}

// Continuity across the singular separations: the model is continuous in z, so values
// at z ± δ must approach the value at the point (its slope is finite there).
func TestFluxContinuity(t *testing.T) {
	for _, k := range []float64{0.01, 0.1, 0.3, 0.4999999, 0.5, 0.5000001, 0.7, 1.3} {
		for _, z0 := range []float64{k, math.Abs(1 - k), 0.5} {
			t.Run(fmt.Sprintf("k=%g is continuous at z=%g", k, z0), func(t *testing.T) {
				at := Flux(nil, []float64{z0}, k, 0.4, 0.25)[0]
				for _, d := range []float64{1e-9, 1e-11, 1e-12, 2e-12, 1e-13, 1e-15} {
					for _, s := range []float64{-1, 1} {
						z := z0 + s*d
						if z < 0 {
							continue
						}
						v := Flux(nil, []float64{z}, k, 0.4, 0.25)[0]
						if math.Abs(v-at) > 1e-8 || math.IsNaN(v) {
							t.Errorf("z=%v: %.15f vs %.15f at the point", z, v, at)
						}
					}
				}
			})
		}
	}
}

func TestFluxWritesIntoDst(t *testing.T) {
	z := []float64{0, 0.3, 0.95, 1.05, 2}
	dst := make([]float64, 8)
	out := Flux(dst, z, 0.1, 0.4, 0.25)
	if len(out) != len(z) || &out[0] != &dst[0] {
		t.Fatalf("dst not reused: len %d", len(out))
	}
	if out[4] != 1 || !(out[0] < 1) {
		t.Errorf("unexpected values %v", out)
	}
	allocs := testing.AllocsPerRun(10, func() { Flux(dst, z, 0.1, 0.4, 0.25) })
	if allocs != 0 {
		t.Errorf("%v allocations per call with a long enough dst", allocs)
	}
}

func BenchmarkFlux(b *testing.B) {
	const n, k = 10000, 0.1
	z := make([]float64, n)
	for i := range z {
		z[i] = (1 + k) * (float64(i) + 0.5) / n
	}
	dst := make([]float64, n)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		Flux(dst, z, k, 0.4, 0.25)
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "points/s")
}

// FuzzFlux checks bounds that hold for every physical limb-darkening law (Kipping 2013
// q1, q2 in the unit square): the flux is finite and between 0 and 1, and 1 off the disk.
func FuzzFlux(f *testing.F) {
	f.Add(0.1, 0.5, 0.36, 0.3)
	f.Add(0.5, 0.5, 1.0, 0.0)
	f.Add(0.7, 0.3, 0.2, 1.0)
	f.Add(1.5, 0.5, 0.5, 0.5)
	f.Fuzz(func(t *testing.T, k, z, q1, q2 float64) {
		if !(k > 0 && k < 10 && z >= 0 && z < 20 && q1 >= 0 && q1 <= 1 && q2 >= 0 && q2 <= 1) {
			return
		}
		u1, u2 := QuadraticFromKipping(q1, q2)
		v := Flux(nil, []float64{z}, k, u1, u2)[0]
		if !(v >= -1e-12 && v <= 1+1e-12) {
			t.Fatalf("k=%v z=%v u=(%v,%v): flux %v", k, z, u1, u2, v)
		}
		if z >= 1+k && v != 1 {
			t.Fatalf("no overlap but flux %v", v)
		}
	})
}
