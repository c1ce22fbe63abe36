package fit

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps/internal/transit"
)

// PriorShape is the family of a prior on one parameter.
type PriorShape int

// The prior families a workflow can ask for.
const (
	// Flat is the fit's own prior: uniform within the parameter's support (see Model).
	Flat PriorShape = iota
	// Uniform is uniform on [A, B].
	Uniform
	// Normal is Gaussian with mean A and standard deviation B.
	Normal
	// LogUniform is uniform in ln x on [A, B], 0 < A < B.
	LogUniform
	// Fixed holds the parameter at A; it is not sampled.
	Fixed
	// LogNormal is Gaussian in ln x with mean A and standard deviation B (used in coupled
	// mode for the star's density and the dilution; not written by users).
	LogNormal
)

// Prior is a prior density on one parameter, in the parameter's documented unit.
type Prior struct {
	Shape PriorShape
	A, B  float64
}

// String is the prior as a workflow writes it.
func (p Prior) String() string {
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	switch p.Shape {
	case Uniform:
		return "uniform(" + g(p.A) + ", " + g(p.B) + ")"
	case Normal:
		return "normal(" + g(p.A) + ", " + g(p.B) + ")"
	case LogUniform:
		return "log_uniform(" + g(p.A) + ", " + g(p.B) + ")"
	case Fixed:
		return "fixed(" + g(p.A) + ")"
	case LogNormal:
		return "log_normal(" + g(p.A) + ", " + g(p.B) + ")"
	}
	return "flat"
}

// LogPDF is the log density at x up to a constant, −Inf where the prior is zero. A fixed
// prior has no density; it gives 0 at its value and −Inf elsewhere.
func (p Prior) LogPDF(x float64) float64 {
	switch p.Shape {
	case Uniform:
		if x >= p.A && x <= p.B {
			return 0
		}
	case Normal:
		d := (x - p.A) / p.B
		return -0.5 * d * d
	case LogUniform:
		if x >= p.A && x <= p.B {
			return -math.Log(x)
		}
	case LogNormal:
		if x > 0 {
			d := (math.Log(x) - p.A) / p.B
			return -0.5*d*d - math.Log(x)
		}
	case Fixed:
		if x == p.A {
			return 0
		}
	default:
		return 0
	}
	return math.Inf(-1)
}

// centre is a value of high prior density: the start for a parameter whose search-based
// start the prior excludes.
func (p Prior) centre() float64 {
	switch p.Shape {
	case Uniform, Fixed:
		return p.A/2 + p.B/2
	case Normal:
		return p.A
	case LogUniform:
		return math.Exp((math.Log(p.A) + math.Log(p.B)) / 2)
	case LogNormal:
		return math.Exp(p.A)
	}
	return math.NaN()
}

// width is a typical spread of the prior (a start scale for the optimiser), +Inf for Flat.
func (p Prior) width() float64 {
	switch p.Shape {
	case Uniform:
		return (p.B - p.A) / 4
	case Normal:
		return p.B
	case LogUniform:
		return p.centre() * math.Log(p.B/p.A) / 4
	case LogNormal:
		return p.centre() * p.B
	}
	return math.Inf(1)
}

// ParsePrior reads "uniform(a, b)", "normal(mean, sigma)", "log_uniform(a, b)" or
// "fixed(v)". Spaces are free; numbers are Go floats.
func ParsePrior(s string) (Prior, error) {
	s = strings.TrimSpace(s)
	open := strings.IndexByte(s, '(')
	if open < 0 || !strings.HasSuffix(s, ")") {
		return Prior{}, fmt.Errorf("%q is not of the form name(numbers), e.g. normal(3.7185, 0.0004)", s)
	}
	name := strings.TrimSpace(s[:open])
	var args []float64
	for _, a := range strings.Split(s[open+1:len(s)-1], ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(a), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return Prior{}, fmt.Errorf("%q: %q is not a finite number", s, strings.TrimSpace(a))
		}
		args = append(args, v)
	}
	want := 2
	p := Prior{}
	switch name {
	case "uniform":
		p.Shape = Uniform
	case "normal":
		p.Shape = Normal
	case "log_uniform":
		p.Shape = LogUniform
	case "fixed":
		p.Shape, want = Fixed, 1
	default:
		return Prior{}, fmt.Errorf("%q: unknown prior %q; use uniform(a, b), normal(mean, sigma), log_uniform(a, b) or fixed(value)", s, name)
	}
	if len(args) != want {
		return Prior{}, fmt.Errorf("%q: %s takes %d number(s), not %d", s, name, want, len(args))
	}
	p.A = args[0]
	if want == 2 {
		p.B = args[1]
	} else {
		p.B = p.A
	}
	switch {
	case p.Shape == Uniform && !(p.A < p.B):
		return Prior{}, fmt.Errorf("%q: the lower bound must be below the upper", s)
	case p.Shape == LogUniform && !(p.A > 0 && p.A < p.B):
		return Prior{}, fmt.Errorf("%q: the bounds must be positive, the lower below the upper", s)
	case p.Shape == Normal && !(p.B > 0):
		return Prior{}, fmt.Errorf("%q: the standard deviation must be positive", s)
	}
	return p, nil
}

// priorKeys are the parameters a workflow may put a prior on, after the planet's name and
// a dot, with the unit the values are in.
var priorKeys = map[string]string{"period": "d", "k": "", "b": ""}

// checkPriorKey reports whether key names a parameter that takes a prior: "star_density"
// or "<planet>.period|k|b" with planet b, c or d.
func checkPriorKey(key string) error {
	if key == "star_density" {
		return nil
	}
	pl, par, ok := strings.Cut(key, ".")
	if ok && planetIndex(pl) >= 0 {
		if _, ok := priorKeys[par]; ok {
			return nil
		}
		if par == "t0" {
			return fmt.Errorf("the mid-transit time takes no prior: it is fitted uniformly around the search's epoch")
		}
	}
	return fmt.Errorf("no such parameter; priors apply to star_density and <planet>.period, <planet>.k, <planet>.b for planets b, c, d")
}

// planetIndex is the index of the planet named name, or −1.
func planetIndex(name string) int {
	for j, n := range planetNames {
		if n == name {
			return j
		}
	}
	return -1
}

// LimbPrior is a Gaussian prior on the quadratic coefficients u1, u2 of one band.
type LimbPrior struct {
	U1, U1Sigma, U2, U2Sigma float64
}

// ParseLimbPrior reads "u1 = 0.35 ± 0.05, u2 = 0.25 ± 0.05" ("+/-" may stand for "±").
func ParseLimbPrior(s string) (LimbPrior, error) {
	var lp LimbPrior
	seen := map[string]bool{}
	for _, part := range strings.Split(s, ",") {
		name, val, ok := strings.Cut(part, "=")
		if !ok {
			return LimbPrior{}, fmt.Errorf("%q: write u1 = value ± sigma, u2 = value ± sigma", s)
		}
		name = strings.TrimSpace(name)
		val = strings.ReplaceAll(val, "+/-", "±")
		m, sg, ok := strings.Cut(val, "±")
		if !ok {
			return LimbPrior{}, fmt.Errorf("%q: %s has no ± sigma", s, name)
		}
		mv, err1 := strconv.ParseFloat(strings.TrimSpace(m), 64)
		sv, err2 := strconv.ParseFloat(strings.TrimSpace(sg), 64)
		if err1 != nil || err2 != nil || math.IsNaN(mv) || math.IsInf(mv, 0) || !(sv > 0) || math.IsInf(sv, 0) {
			return LimbPrior{}, fmt.Errorf("%q: %s needs a finite value and a positive finite sigma", s, name)
		}
		switch name {
		case "u1":
			lp.U1, lp.U1Sigma = mv, sv
		case "u2":
			lp.U2, lp.U2Sigma = mv, sv
		default:
			return LimbPrior{}, fmt.Errorf("%q: unknown coefficient %q; give u1 and u2", s, name)
		}
		if seen[name] {
			return LimbPrior{}, fmt.Errorf("%q: %s given twice", s, name)
		}
		seen[name] = true
	}
	if !seen["u1"] || !seen["u2"] {
		return LimbPrior{}, fmt.Errorf("%q: give both u1 and u2", s)
	}
	return lp, nil
}

// LogPDF is the log prior density in (q1, q2) up to a constant:
// ln N(u1; μ1, σ1) + ln N(u2; μ2, σ2) + ln |∂(u1,u2)/∂(q1,q2)|, with u from Kipping's
// (2013) map u1 = 2√q1 q2, u2 = √q1 (1 − 2q2). The Jacobian's determinant is
// (q2/√q1)(−2√q1) − (2√q1)(1 − 2q2)/(2√q1) = −2q2 − 1 + 2q2 = −1 (our derivation; it
// agrees with the map taking the unit square onto the triangle of area 1 with corners
// (0,0), (0,1), (2,−1)), so the correction ln|J| is 0 and the density in q is the
// Gaussian in u evaluated at u(q). JacobianQ keeps the general expression for the tests.
func (lp LimbPrior) LogPDF(q1, q2 float64) float64 {
	if !(q1 >= 0 && q1 <= 1 && q2 >= 0 && q2 <= 1) {
		return math.Inf(-1)
	}
	u1, u2 := transit.QuadraticFromKipping(q1, q2)
	d1 := (u1 - lp.U1) / lp.U1Sigma
	d2 := (u2 - lp.U2) / lp.U2Sigma
	return -0.5*(d1*d1+d2*d2) + math.Log(math.Abs(JacobianQ(q1, q2)))
}

// JacobianQ is the determinant ∂(u1,u2)/∂(q1,q2) of Kipping's map at (q1, q2), q1 > 0,
// from the partial derivatives: ∂u1/∂q1 = q2/√q1, ∂u1/∂q2 = 2√q1,
// ∂u2/∂q1 = (1 − 2q2)/(2√q1), ∂u2/∂q2 = −2√q1. It is −1 everywhere.
func JacobianQ(q1, q2 float64) float64 {
	s := math.Sqrt(q1)
	if s == 0 {
		return -1 // the limit q1 → 0; the map itself is singular there
	}
	return q2/s*(-2*s) - 2*s*(1-2*q2)/(2*s)
}
