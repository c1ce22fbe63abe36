package proportion

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mathext"
)

// maxSigma bounds the Gaussian-equivalent significance S accepted for Poisson limits: at
// S = 8 the tail probability is 6e-16, the smallest that double precision still tells
// apart from zero and one.
const maxSigma = 8.0

// SingleSidedLevel returns the single-sided confidence level Φ(S) of a Gaussian-equivalent
// significance S, as Gehrels (1986) uses it: S = 1 gives 0.8413, S = 2 gives 0.9772 and
// S = 3 gives 0.99865.
func SingleSidedLevel(s float64) float64 {
	return 0.5 * math.Erfc(-s/math.Sqrt2)
}

// PoissonLimits returns Gehrels' (1986, ApJ 303, 336) exact single-sided lower and upper
// confidence limits on the mean of a Poisson distribution of which n events were seen, each
// at the level Φ(S). Upper is ½ χ²_CL(2n+2) and Lower is ½ χ²_{1−CL}(2n), computed as
// quantiles of the regularised incomplete gamma function; Lower is 0 at n = 0.
func PoissonLimits(n int, s float64) (Interval, error) {
	if err := checkPoisson(n, s); err != nil {
		return Interval{}, err
	}
	// tail = 1 − CL, computed directly so its digits survive at large S.
	tail := 0.5 * math.Erfc(s/math.Sqrt2)
	nf := float64(n)
	iv := Interval{Upper: mathext.GammaIncRegCompInv(nf+1, tail)}
	if n > 0 {
		iv.Lower = mathext.GammaIncRegInv(nf, tail)
	}
	return iv, nil
}

// lowerConstants holds β and γ of Gehrels' (1986) Table 3 for his lower-limit
// approximation, keyed by S. From memory; the tests hold the approximation to the exact
// limits, which checks them.
var lowerConstants = map[float64]struct{ beta, gamma float64 }{
	1: {beta: 0, gamma: 0},
	2: {beta: 0.062, gamma: -2.19},
	3: {beta: 0.222, gamma: -1.88},
}

// PoissonApprox returns Gehrels' (1986) closed-form approximations to the limits of
// PoissonLimits, for S = 1, 2 or 3:
//
//	upper ≈ (n+1) [1 − 1/(9(n+1)) + S/(3√(n+1))]³                 (his eq. 9)
//	lower ≈ n [1 − 1/(9n) − S/(3√n) + β n^γ]³,  lower = 0 at n = 0  (his eq. 14)
//
// with β and γ from his Table 3. They are for checks and quick estimates; use
// PoissonLimits for results.
func PoissonApprox(n int, s float64) (Interval, error) {
	if err := checkPoisson(n, s); err != nil {
		return Interval{}, err
	}
	c, ok := lowerConstants[s]
	if !ok {
		return Interval{}, fmt.Errorf("proportion: Gehrels' approximation is tabulated here for S = 1, 2 and 3, not %v; use PoissonLimits", s)
	}
	n1 := float64(n + 1)
	iv := Interval{Upper: n1 * math.Pow(1-1/(9*n1)+s/(3*math.Sqrt(n1)), 3)}
	if n > 0 {
		nf := float64(n)
		iv.Lower = nf * math.Pow(1-1/(9*nf)-s/(3*math.Sqrt(nf))+c.beta*math.Pow(nf, c.gamma), 3)
	}
	return iv, nil
}

// checkPoisson reports whether n observed events at significance S make sense.
func checkPoisson(n int, s float64) error {
	switch {
	case n < 0:
		return fmt.Errorf("proportion: %d events observed; a count cannot be negative", n)
	case !(s > 0 && s <= maxSigma):
		return fmt.Errorf("proportion: significance S = %v; give S above 0 and at most %v (S = 1 is the 84.13 %% level)", s, maxSigma)
	}
	return nil
}
