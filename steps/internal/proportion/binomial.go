package proportion

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mathext"
)

// Two-sided confidence levels in common use.
const (
	// OneSigma is the two-sided level of ±1 standard deviation of a normal distribution,
	// erf(1/√2) = 68.27 %.
	OneSigma = 0.6826894921370859
	// Level95 is the two-sided 95 % level.
	Level95 = 0.95
)

// Interval is a confidence interval [Lower, Upper].
type Interval struct {
	Lower, Upper float64
}

// Wilson returns the Wilson (1927) score interval for k successes in n trials at the
// two-sided confidence level (for example OneSigma or Level95). It is the set of
// proportions p whose score test at that level does not reject k.
func Wilson(k, n int, level float64) (Interval, error) {
	if err := checkBinomial(k, n, level); err != nil {
		return Interval{}, err
	}
	z := twoSidedZ(level)
	nf, z2 := float64(n), z*z
	p := float64(k) / nf
	centre := (float64(k) + z2/2) / (nf + z2)
	half := z * math.Sqrt(nf) / (nf + z2) * math.Sqrt(p*(1-p)+z2/(4*nf))
	iv := Interval{Lower: centre - half, Upper: centre + half}
	// At k = 0 and k = n the ends are 0 and 1 analytically; rounding must not move them.
	if k == 0 {
		iv.Lower = 0
	}
	if k == n {
		iv.Upper = 1
	}
	return iv, nil
}

// Jeffreys returns the Jeffreys interval for k successes in n trials at the two-sided
// confidence level: the equal-tailed quantiles of the Beta(k+½, n−k+½) posterior of a
// Jeffreys prior, with the convention of Brown, Cai & DasGupta (2001) that the lower end
// is 0 when k = 0 and the upper end is 1 when k = n.
func Jeffreys(k, n int, level float64) (Interval, error) {
	if err := checkBinomial(k, n, level); err != nil {
		return Interval{}, err
	}
	a, b := float64(k)+0.5, float64(n-k)+0.5
	tail := (1 - level) / 2
	iv := Interval{Lower: 0, Upper: 1}
	if k > 0 {
		iv.Lower = mathext.InvRegIncBeta(a, b, tail)
	}
	if k < n {
		// The upper quantile of Beta(a, b) is one minus the lower quantile of Beta(b, a),
		// which keeps the digits a quantile at 1 − tail would lose.
		iv.Upper = 1 - mathext.InvRegIncBeta(b, a, tail)
	}
	return iv, nil
}

// twoSidedZ returns the standard normal quantile z with P(|Z| < z) = level.
func twoSidedZ(level float64) float64 {
	return -mathext.NormalQuantile((1 - level) / 2)
}

// checkBinomial reports whether k successes in n trials at a two-sided level make sense.
func checkBinomial(k, n int, level float64) error {
	switch {
	case n <= 0:
		return fmt.Errorf("proportion: %d trials; an interval needs at least one trial", n)
	case k < 0 || k > n:
		return fmt.Errorf("proportion: %d successes in %d trials; successes must lie between 0 and %d", k, n, n)
	}
	return checkLevel(level)
}

// checkLevel reports whether level is a confidence level strictly between 0 and 1.
func checkLevel(level float64) error {
	if !(level > 0 && level < 1) {
		return fmt.Errorf("proportion: confidence level %v; give a fraction strictly between 0 and 1, such as 0.95", level)
	}
	return nil
}
