package main

import "math"

// The transit model: the light of a star with quadratic limb darkening that an opaque disc
// hides. The flux is the quantity of Mandel & Agol (2002, ApJ 580, L171), but computed here
// by quadrature of its defining integral rather than by their closed form, for two reasons:
// dipline's closed-form code lives in an internal package that this program cannot import,
// and a second, independent route to the same numbers means a slip in either one shows up
// as a disagreement between the demo's truth and what the fit recovers, instead of hiding
// in both. The tests hold this quadrature to the Mandel & Agol check values.

// occultNodes is the number of Gauss–Legendre nodes per integral. After the substitutions
// below the integrands are smooth: with 24 nodes the flux already matches the 12-digit
// Mandel & Agol check values of TestOccultedFlux to their last digit; 32 leave a margin.
const occultNodes = 32

// gaussLegendre returns the nodes and weights of the n-point Gauss–Legendre rule on
// [−1, 1], by Newton's method on the Legendre polynomial P_n from the Chebyshev-like
// starting guesses cos(π(i + ¾)/(n + ½)) (the textbook construction; Golub & Welsch 1969
// give the equivalent eigenvalue route).
func gaussLegendre(n int) (x, w []float64) {
	x, w = make([]float64, n), make([]float64, n)
	for i := 0; i < (n+1)/2; i++ {
		z := math.Cos(math.Pi * (float64(i) + 0.75) / (float64(n) + 0.5))
		var dp float64
		for range 100 {
			// P_n(z) and its derivative by the three-term recurrence.
			p0, p1 := 1.0, z
			for j := 2; j <= n; j++ {
				p0, p1 = p1, ((2*float64(j)-1)*z*p1-(float64(j)-1)*p0)/float64(j)
			}
			dp = float64(n) * (z*p1 - p0) / (z*z - 1)
			dz := p1 / dp
			z -= dz
			if math.Abs(dz) < 1e-16 {
				break
			}
		}
		// Recompute the derivative at the converged root for the weight.
		p0, p1 := 1.0, z
		for j := 2; j <= n; j++ {
			p0, p1 = p1, ((2*float64(j)-1)*z*p1-(float64(j)-1)*p0)/float64(j)
		}
		dp = float64(n) * (z*p1 - p0) / (z*z - 1)
		x[i], x[n-1-i] = -z, z
		w[i] = 2 / ((1 - z*z) * dp * dp)
		w[n-1-i] = w[i]
	}
	return x, w
}

// glX and glW are the rule of occultNodes nodes, computed once.
var glX, glW = gaussLegendre(occultNodes)

// limbDarkening is the quadratic law I(μ)/I(1) = 1 − u1(1−μ) − u2(1−μ)².
type limbDarkening struct{ U1, U2 float64 }

// at is the surface brightness at μ = cos(angle from disc centre), relative to the centre.
func (ld limbDarkening) at(mu float64) float64 {
	return 1 - ld.U1*(1-mu) - ld.U2*(1-mu)*(1-mu)
}

// discIntegral is ∫ I dA over the whole disc of unit radius: π(1 − u1/3 − u2/6).
func (ld limbDarkening) discIntegral() float64 {
	return math.Pi * (1 - ld.U1/3 - ld.U2/6)
}

// occultedFlux returns the star's relative flux when an opaque disc of radius k (stellar
// radii) has its centre at projected distance z from the star's centre: 1 minus the
// hidden light over the disc's light.
//
// In polar coordinates about the star's centre the hidden light is ∫ I(r) θ(r) r dr, where
// θ(r) is the angle of the circle of radius r that lies inside the planet's disc:
//   - 2π where the planet covers that whole circle (r < k − z);
//   - 2 acos((r² + z² − k²)/(2rz)) for |z − k| < r < z + k;
//   - 0 elsewhere.
//
// The first part is integrated in μ = √(1 − r²), where I is a polynomial (Gauss–Legendre is
// exact). The second has square-root kinks at both ends (θ at r = |z−k| and r = z+k, μ at
// the limb r = 1); the substitution r = lo + (hi − lo)(1 − cos s)/2, s ∈ [0, π], smooths
// them all, and Gauss–Legendre does the rest.
func occultedFlux(z, k float64, ld limbDarkening) float64 {
	z = math.Abs(z)
	if !(k > 0) || z >= 1+k {
		return 1
	}
	hidden := 0.0
	// The circles the planet covers completely: r from 0 to min(1, k − z), i.e. μ from
	// μ0 to 1, where r dr = −μ dμ.
	if rA := math.Min(1, k-z); rA > 0 {
		mu0 := math.Sqrt(math.Max(0, 1-rA*rA))
		half, mid := (1-mu0)/2, (1+mu0)/2
		s := 0.0
		for i, xi := range glX {
			mu := mid + half*xi
			s += glW[i] * ld.at(mu) * mu
		}
		hidden += 2 * math.Pi * s * half
	}
	// The circles the planet's edge crosses.
	lo, hi := math.Abs(z-k), math.Min(1, z+k)
	if z > 0 && hi > lo {
		half := (hi - lo) / 2
		s := 0.0
		for i, xi := range glX {
			// s ∈ [0, π] mapped from xi ∈ [−1, 1].
			sv := math.Pi / 2 * (xi + 1)
			sn, cs := math.Sincos(sv)
			r := lo + half*(1-cs)
			drds := half * sn
			c := (r*r + z*z - k*k) / (2 * r * z)
			theta := 2 * math.Acos(math.Max(-1, math.Min(1, c)))
			mu := math.Sqrt(math.Max(0, 1-r*r))
			s += glW[i] * ld.at(mu) * theta * r * drds
		}
		hidden += s * math.Pi / 2
	}
	return 1 - hidden/ld.discIntegral()
}
