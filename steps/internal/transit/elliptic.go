package transit

import "math"

// celTol stops Bulirsch's iteration: it converges quadratically, so a relative step of
// 1e-9 leaves an error near 1e-18, below float64 rounding (Bulirsch 1969: ca = 10^(-D/2)).
const celTol = 1e-9

// Cel is Bulirsch's general complete elliptic integral
//
//	cel(kc, p, a, b) = ∫_0^{π/2} (a cos²φ + b sin²φ) / [(cos²φ + p sin²φ) √(cos²φ + kc² sin²φ)] dφ,
//
// computed by his AGM-like iteration (Bulirsch 1969, Numer. Math. 13, 305). kc is the
// complementary modulus √(1−k²); kc = 0 gives +Inf (or a finite value when b = 0 and
// p > 0, see celKc0). For p < 0 the result is the Cauchy principal value.
// Cel is linear in (a, b), which lets callers fold several integrals into one call.
func Cel(kc, p, a, b float64) float64 {
	if kc == 0 {
		if b == 0 && p > 0 {
			return celKc0(p, a)
		}
		return math.Inf(1)
	}
	kc = math.Abs(kc)
	e := kc
	m := 1.0
	if p > 0 {
		p = math.Sqrt(p)
		b /= p
	} else {
		f := kc * kc
		q := 1 - f
		g := 1 - p
		f -= p
		q *= b - a*p
		p = math.Sqrt(f / g)
		a = (a - b) / g
		b = -q/(g*g*p) + a*p
	}
	for i := 0; i < 64; i++ {
		f := a
		a += b / p
		g := e / p
		b += f * g
		b += b
		p += g
		g = m
		m += kc
		if math.Abs(g-kc) <= g*celTol {
			break
		}
		kc = 2 * math.Sqrt(e)
		e = kc * m
	}
	return math.Pi / 2 * (a*m + b) / (m * (m + p))
}

// celKc0 is cel(0, p, a, 0) = a ∫_0^1 ds / (1 + (p−1) s²) with s = sin φ, p > 0.
func celKc0(p, a float64) float64 {
	d := p - 1
	switch {
	case d > 0:
		s := math.Sqrt(d)
		return a * math.Atan(s) / s
	case d < 0:
		s := math.Sqrt(-d)
		return a * math.Atanh(s) / s
	}
	return a
}

// EllipticK is the complete elliptic integral of the first kind for modulus k
// (parameter m = k²): K(k) = ∫_0^{π/2} dθ / √(1 − k² sin²θ). K(1) = +Inf.
func EllipticK(k float64) float64 {
	return Cel(math.Sqrt((1-k)*(1+k)), 1, 1, 1)
}

// EllipticE is the complete elliptic integral of the second kind for modulus k:
// E(k) = ∫_0^{π/2} √(1 − k² sin²θ) dθ.
func EllipticE(k float64) float64 {
	if math.Abs(k) == 1 {
		return 1
	}
	kc := math.Sqrt((1 - k) * (1 + k))
	return Cel(kc, 1, 1, kc*kc)
}

// EllipticPi is the complete elliptic integral of the third kind with the sign convention
// Π(n, k) = ∫_0^{π/2} dθ / [(1 − n sin²θ) √(1 − k² sin²θ)] (Mandel & Agol 2002); for n > 1
// it is the Cauchy principal value.
func EllipticPi(n, k float64) float64 {
	return Cel(math.Sqrt((1-k)*(1+k)), 1-n, 1, 1)
}
