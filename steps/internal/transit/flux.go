package transit

import "math"

// bandZ is the half-width of the tolerance bands around the singular separations z = k,
// z = 1 − k and (k, z) = (½, ½): inside a band the closed form at the point is used. The
// flux has a finite slope there, so the band costs at most ~1e-12 in flux; outside it the
// general formulas keep full precision (measured in TestFluxContinuity).
const bandZ = 1e-12

// Flux returns the relative flux of a star with quadratic limb darkening
// I(μ)/I(1) = 1 − u1(1−μ) − u2(1−μ)² occulted by an opaque disk of radius k (stellar
// radii) at projected centre separations z (stellar radii; the sign of z is ignored).
// It follows Mandel & Agol (2002), ApJ 580, L171, and their Table 1 of cases, every
// case included (k > 1, grazing, z = k, z = 1−k, k = z = ½, z = 0). The result is written
// into dst, which is reallocated only when shorter than z; the loop does not allocate.
func Flux(dst, z []float64, k, u1, u2 float64) []float64 {
	if len(dst) < len(z) {
		dst = make([]float64, len(z))
	}
	dst = dst[:len(z)]
	if !(k > 0) {
		for i := range dst {
			dst[i] = 1
		}
		return dst
	}
	m := newMandelAgol(k, u1, u2)
	for i, zi := range z {
		dst[i] = m.flux(math.Abs(zi))
	}
	return dst
}

// mandelAgol holds what depends on k and the limb darkening only.
type mandelAgol struct {
	p, p2            float64
	c2, c4, invOmega float64 // c2 = u1+2u2, c4 = −u2, invOmega = 1/(4Ω)
	lam3, lam4, lam5 float64 // λ at z = k (k > ½, k < ½) and at z = 1−k (k < ½)
	lam6             float64 // λ at z = 0
	eta2At0          float64
}

func newMandelAgol(p, u1, u2 float64) mandelAgol {
	c0 := 1 - u1 - u2
	m := mandelAgol{p: p, p2: p * p, c2: u1 + 2*u2, c4: -u2}
	m.invOmega = 1 / (c0 + m.c2*2/3 + m.c4/2) // 4Ω = c0 + 2c2/3 + c4/2
	if p > 0.5 {
		k := 1 / (2 * p)
		kc := math.Sqrt((1 - k) * (1 + k))
		m.lam3 = 1.0/3 + 16*p/(9*math.Pi)*(2*p*p-1)*Cel(kc, 1, 1, kc*kc) -
			(1-4*p*p)*(3-8*p*p)/(9*math.Pi*p)*Cel(kc, 1, 1, 1)
	}
	if p < 0.5 {
		k := 2 * p
		kc := math.Sqrt((1 - k) * (1 + k))
		m.lam4 = 1.0/3 + 2/(9*math.Pi)*(4*(2*p*p-1)*Cel(kc, 1, 1, kc*kc)+(1-4*p*p)*Cel(kc, 1, 1, 1))
		m.lam5 = 2/(3*math.Pi)*math.Acos(1-2*p) - 4/(9*math.Pi)*(3+2*p-8*p*p)*math.Sqrt(p*(1-p))
	}
	if p < 1 {
		m.lam6 = -2.0 / 3 * math.Pow(1-p*p, 1.5)
	}
	return m
}

// flux evaluates one separation z ≥ 0, choosing the row of Mandel & Agol's Table 1.
func (m *mandelAgol) flux(z float64) float64 {
	p, p2 := m.p, m.p2
	if z >= 1+p {
		return 1 // case 1
	}
	if p >= 1 && z <= p-1 {
		return 0 // case 11: the star is hidden
	}
	// Uniform-source part λ^e.
	var lamE float64
	var kap0, kap1, root float64 // kept for η1
	ingress := z > math.Abs(1-p)
	switch {
	case !ingress && p < 1:
		lamE = p2
	case !ingress:
		lamE = 1
	default:
		// 4p²z² − (p²+z²−1)² = (1−a)(b−1), factored for precision; with it κ0 and κ1
		// come from atan2, which stays accurate where acos would lose half the digits
		// (arguments near ±1 at the contact points).
		root = math.Sqrt(math.Max(0, (1-z+p)*(1+z-p)*(z+p-1)*(z+p+1)))
		kap0 = math.Atan2(root, (p-1)*(p+1)+z*z)
		kap1 = math.Atan2(root, (1-p)*(1+p)+z*z)
		lamE = (p2*kap0 + kap1 - root/2) / math.Pi
	}

	var lamD, etaD float64
	inside := false // Θ(p − z)
	eta2 := p2 / 2 * (p2 + 2*z*z)
	eta1 := func() float64 { // needs κ0, κ1 and the root of the crossing geometry
		return (kap1 + 2*eta2*kap0 - 0.25*(1+5*p2+z*z)*root) / (2 * math.Pi)
	}
	nearHalf := math.Abs(p-0.5) < bandZ && math.Abs(z-0.5) < bandZ
	nearP := math.Abs(z-p) < bandZ
	nearOneMinusP := math.Abs(z-(1-p)) < bandZ
	switch {
	case nearHalf: // case 6
		lamD, etaD = 1.0/3-4/(9*math.Pi), 3.0/32
	case nearP && p < 0.5: // case 5
		lamD, etaD = m.lam4, eta2
	case nearP: // case 7 (p > ½)
		z = p
		root = math.Sqrt(math.Max(0, 4*p2-1))
		kap0 = math.Atan2(root, 2*p2-1)
		kap1 = math.Atan2(root, 1)
		lamD, etaD = m.lam3, eta1()
	case nearOneMinusP && p < 0.5: // case 4
		lamD, etaD = m.lam5, eta2
	case nearOneMinusP: // case 8 at its lower edge z = 1−p, p > ½: k = 1 exactly
		kap0, kap1, root = math.Pi, 0, 0 // the disks touch internally
		lamD, etaD, inside = m.lambda1(1-p, true), eta1(), true
	case z == 0: // case 10
		lamD, etaD, inside = m.lam6, eta2, true
	case z > math.Max(p, 1-p): // case 2
		lamD, etaD = m.lambda1(z, false), eta1()
	case p > 0.5 && z >= 1-p: // case 8
		lamD, etaD, inside = m.lambda1(z, false), eta1(), true
	case z > p: // case 3
		lamD, etaD = m.lambda2(z), eta2
	default: // case 9
		lamD, etaD, inside = m.lambda2(z), eta2, true
	}
	if inside {
		lamD += 2.0 / 3
	}
	return 1 - m.invOmega*((1-m.c2)*lamE+m.c2*lamD-m.c4*etaD)
}

// lambda1 is Mandel & Agol's λ1 (planet crossing the limb). K and Π are folded into one
// cel call (cel is linear in its last two arguments), E into another. kOne forces k = 1
// (z = 1−p with p > ½), where the divergent K and Π terms cancel exactly.
func (m *mandelAgol) lambda1(z float64, kOne bool) float64 {
	p, p2 := m.p, m.p2
	a := (z - p) * (z - p)
	b := (z + p) * (z + p)
	q := (p - z) * (p + z) // p² − z², without cancellation near z = p
	fourZP := 4 * z * p
	kc := 0.0
	if !kOne {
		kc = math.Sqrt(math.Max(0, (b-1)/fourZP))
	}
	cK := (1-b)*(2*b+a-3) - 3*q*(b-2)
	cE := fourZP * (z*z + 7*p2 - 4)
	cP := 3 * (p + z) / (z - p) // −3q/a
	P := 1 / a                  // 1 − n with n = (a−1)/a
	bb := cK*P + cP
	if kOne {
		bb = 0
	}
	kp := Cel(kc, P, cK+cP, bb)
	e := 1.0
	if kc > 0 {
		e = Cel(kc, 1, 1, kc*kc)
	}
	return (kp + cE*e) / (9 * math.Pi * math.Sqrt(p*z))
}

// lambda2 is Mandel & Agol's λ2 (planet fully inside the disk), with modulus 1/k.
func (m *mandelAgol) lambda2(z float64) float64 {
	p, p2 := m.p, m.p2
	a := (z - p) * (z - p)
	b := (z + p) * (z + p)
	q := (p - z) * (p + z)
	kc := math.Sqrt(math.Max(0, (1-b)/(1-a)))
	cK := 1 - 5*z*z + p2 + q*q
	cE := (1 - a) * (z*z + 7*p2 - 4)
	cP := 3 * (p + z) / (z - p) // −3q/a
	P := b / a                  // 1 − n with n = (a−b)/a
	kp := Cel(kc, P, cK+cP, cK*P+cP)
	e := Cel(kc, 1, 1, kc*kc)
	return 2 * (kp + cE*e) / (9 * math.Pi * math.Sqrt(1-a))
}
