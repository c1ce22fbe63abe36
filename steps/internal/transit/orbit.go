package transit

import "math"

// SeparationCircular writes into dst the projected star–planet separation z (stellar radii)
// at times t for a circular orbit of period P, mid-transit time t0, scaled semi-major axis
// aR = a/R* and impact parameter b (same time unit for t, P, t0). On the far half of the
// orbit (planet behind the star) z is +Inf, so Flux gives 1: occultations are not modelled.
// Geometry after Winn (2010), arXiv:1001.2010, with e = 0.
func SeparationCircular(dst, t []float64, period, t0, aR, b float64) []float64 {
	if len(dst) < len(t) {
		dst = make([]float64, len(t))
	}
	dst = dst[:len(t)]
	for i, ti := range t {
		phi := 2 * math.Pi * (ti - t0) / period
		s, c := math.Sincos(phi)
		if c <= 0 {
			dst[i] = math.Inf(1)
			continue
		}
		dst[i] = math.Hypot(aR*s, b*c) // y = aR cos i cos φ with aR cos i = b
	}
	return dst
}

// SeparationEccentric is SeparationCircular for an eccentric orbit with eccentricity e
// (0 ≤ e < 1) and argument of periastron omega (radians). t0 is the time of inferior
// conjunction, where the true anomaly is f = π/2 − ω; b = aR cos i (1−e²)/(1 + e sin ω)
// (Winn 2010, eqs. 1–3 and 7, from memory).
func SeparationEccentric(dst, t []float64, period, t0, aR, b, e, omega float64) []float64 {
	if len(dst) < len(t) {
		dst = make([]float64, len(t))
	}
	dst = dst[:len(t)]
	cosI := b * (1 + e*math.Sin(omega)) / (aR * (1 - e*e))
	sinI := math.Sqrt(math.Max(0, 1-cosI*cosI))
	fc := math.Pi/2 - omega
	ec := 2 * math.Atan(math.Sqrt((1-e)/(1+e))*math.Tan(fc/2))
	mc := ec - e*math.Sin(ec)
	sq := math.Sqrt((1 + e) / (1 - e))
	for i, ti := range t {
		m := mc + 2*math.Pi*(ti-t0)/period
		ea := EccentricAnomaly(m, e)
		f := 2 * math.Atan(sq*math.Tan(ea/2))
		r := aR * (1 - e*math.Cos(ea))
		s, c := math.Sincos(omega + f)
		if s*sinI <= 0 {
			dst[i] = math.Inf(1) // behind the star
			continue
		}
		dst[i] = r * math.Hypot(c, s*cosI)
	}
	return dst
}

// EccentricAnomaly solves Kepler's equation E − e sin E = M for 0 ≤ e < 1 by Newton steps
// kept inside a bracket that always holds the root (for M reduced to [0, π],
// M ≤ E ≤ M + e), so it converges for every e and M. The result lies in [−π, π];
// e outside [0, 1) gives NaN.
func EccentricAnomaly(m, e float64) float64 {
	if !(e >= 0 && e < 1) {
		return math.NaN()
	}
	m = math.Remainder(m, 2*math.Pi) // [−π, π]
	sign := 1.0
	if m < 0 {
		m, sign = -m, -1
	}
	if e == 0 || m == 0 || m == math.Pi {
		return sign * m
	}
	lo, hi := m, math.Min(m+e, math.Pi)
	ea := m + 0.85*e // Danby (1987) start, clipped to the bracket (from memory)
	if ea > hi {
		ea = hi
	}
	for iter := 0; iter < 100; iter++ {
		s, c := math.Sincos(ea)
		g := ea - e*s - m
		if g > 0 {
			hi = ea
		} else {
			lo = ea
		}
		next := ea - g/(1-e*c)
		if !(next > lo && next < hi) {
			next = (lo + hi) / 2
		}
		if math.Abs(next-ea) <= 1e-15*math.Max(1, math.Abs(ea)) {
			ea = next
			break
		}
		ea = next
	}
	return sign * ea
}

// SubexposureTimes writes n sub-exposure mid-times for each time in t into dst
// (len(t)·n values, exposure by exposure): t + exposure·((j+½)/n − ½), j = 0 … n−1.
// Evaluating a model at these times and averaging them with AverageBlocks integrates it
// over each exposure by the midpoint rule (Kipping 2010, MNRAS 408, 1758), with an error
// that falls as 1/n² where the model is smooth.
func SubexposureTimes(dst, t []float64, exposure float64, n int) []float64 {
	if n < 1 {
		n = 1
	}
	if len(dst) < len(t)*n {
		dst = make([]float64, len(t)*n)
	}
	dst = dst[:len(t)*n]
	for i, ti := range t {
		for j := 0; j < n; j++ {
			dst[i*n+j] = ti + exposure*((float64(j)+0.5)/float64(n)-0.5)
		}
	}
	return dst
}

// AverageBlocks writes into dst the mean of each consecutive block of n values of fine
// (len(fine)/n results), the second half of SubexposureTimes.
func AverageBlocks(dst, fine []float64, n int) []float64 {
	if n < 1 {
		n = 1
	}
	m := len(fine) / n
	if len(dst) < m {
		dst = make([]float64, m)
	}
	dst = dst[:m]
	for i := range dst {
		s := 0.0
		for _, v := range fine[i*n : (i+1)*n] {
			s += v
		}
		dst[i] = s / float64(n)
	}
	return dst
}
