package transit

import "math"

// QuadraticFromKipping maps Kipping's (2013, MNRAS 435, 2152) parameters q1, q2 ∈ [0, 1]
// to quadratic limb-darkening coefficients: u1 = 2√q1 q2, u2 = √q1 (1 − 2q2). Every point
// of the unit square gives a physical law (positive, decreasing intensity), so uniform
// priors on q1, q2 sample exactly the physical triangle.
func QuadraticFromKipping(q1, q2 float64) (u1, u2 float64) {
	s := math.Sqrt(q1)
	return 2 * s * q2, s * (1 - 2*q2)
}

// KippingFromQuadratic is the inverse map: q1 = (u1+u2)², q2 = u1 / (2(u1+u2)).
// q2 is undefined when u1 + u2 = 0 (q1 = 0); it is then returned as 0.
func KippingFromQuadratic(u1, u2 float64) (q1, q2 float64) {
	s := u1 + u2
	if s == 0 {
		return 0, 0
	}
	return s * s, u1 / (2 * s)
}
