package ephemeris

import (
	"math"
	"sort"

	"dipline/steps/internal/sampler"
)

// Prediction is one predicted transit of a linear ephemeris T_n = T0 + n·P. Times are in
// days from the origin the caller's T0 is counted from.
type Prediction struct {
	Epoch int64
	// Mid is the median of the mid-time over the draws; Lower and Upper its distances down
	// to the 16th and up to the 84th percentile, and Sigma half the 16–84 % range.
	Mid, Lower, Upper, Sigma float64
	// SigmaAnalytic is √(σ²_T0 + n²σ²_P + 2n cov(T0, P)) with the variances and covariance
	// of the draws: the standard propagation, which the percentiles must match for a
	// Gaussian posterior.
	SigmaAnalytic float64
	// Ingress and Egress are the medians of T_n ∓ T14/2 over the draws, with half their
	// 16–84 % ranges; NaN without durations.
	Ingress, SigmaIngress, Egress, SigmaEgress float64
	// UTC is the Julian date in UTC at which the mid-transit's light reaches the Earth's
	// centre, NaN when not computed (the step fills it when the target's direction is known).
	UTC float64
}

// Moments returns the variances of t0 and p and their covariance (normalised by N − 1),
// computed about their means in two passes so that times near 2.46e6 d keep their digits.
func Moments(t0, p []float64) (varT0, varP, cov float64) {
	n := len(t0)
	if n < 2 || len(p) != n {
		return math.NaN(), math.NaN(), math.NaN()
	}
	mt, mp := mean(t0), mean(p)
	for i := range t0 {
		dt, dp := t0[i]-mt, p[i]-mp
		varT0 += dt * dt
		varP += dp * dp
		cov += dt * dp
	}
	d := float64(n - 1)
	return varT0 / d, varP / d, cov / d
}

func mean(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// AnalyticSigma is the one-sigma error of T_n = T0 + n·P by first-order propagation:
// σ²(T_n) = σ²_T0 + n²σ²_P + 2n cov(T0, P). A negative sum (impossible for a valid
// covariance, possible from rounding) gives 0.
func AnalyticSigma(varT0, varP, cov float64, n int64) float64 {
	x := float64(n)
	return math.Sqrt(math.Max(0, varT0+x*x*varP+2*x*cov))
}

// Percentiles returns the median of v and its distances to the 16th and 84th percentiles
// (sampler.Quantile, the fit's own summary). v is not modified.
func Percentiles(v []float64) (median, lower, upper float64) {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	lo, mid, hi := sampler.Quantile(s, 0.16), sampler.Quantile(s, 0.5), sampler.Quantile(s, 0.84)
	return mid, mid - lo, hi - mid
}

// FromDraws predicts the transits first..last of the ephemeris whose joint draws are t0 and
// p (equal lengths, one pair per posterior draw, so that their covariance is kept); t14
// holds the draws of the duration, or is nil. Each T_n is computed per draw and
// summarised by its percentiles; the analytic σ comes from the draws' covariance.
func FromDraws(t0, p, t14 []float64, first, last int64) []Prediction {
	if last < first || len(t0) == 0 || len(p) != len(t0) || (t14 != nil && len(t14) != len(t0)) {
		return nil
	}
	varT0, varP, cov := Moments(t0, p)
	tn := make([]float64, len(t0))
	in := make([]float64, len(t0))
	eg := make([]float64, len(t0))
	out := make([]Prediction, 0, last-first+1)
	for n := first; n <= last; n++ {
		x := float64(n)
		for i := range t0 {
			tn[i] = t0[i] + x*p[i]
		}
		var pr Prediction
		pr.Epoch, pr.UTC = n, math.NaN()
		pr.Mid, pr.Lower, pr.Upper = Percentiles(tn)
		pr.Sigma = (pr.Lower + pr.Upper) / 2
		pr.SigmaAnalytic = AnalyticSigma(varT0, varP, cov, n)
		pr.Ingress, pr.SigmaIngress, pr.Egress, pr.SigmaEgress = math.NaN(), math.NaN(), math.NaN(), math.NaN()
		if t14 != nil {
			for i := range t0 {
				in[i] = tn[i] - t14[i]/2
				eg[i] = tn[i] + t14[i]/2
			}
			var lo, hi float64
			pr.Ingress, lo, hi = Percentiles(in)
			pr.SigmaIngress = (lo + hi) / 2
			pr.Egress, lo, hi = Percentiles(eg)
			pr.SigmaEgress = (lo + hi) / 2
		}
		out = append(out, pr)
	}
	return out
}

// FromWritten predicts the transits first..last of an ephemeris written as measurements:
// T0 ± σT0, P ± σP, taken as independent (cov = 0), and, when t14 > 0, ingress and egress
// with σ² = σ²(T_n) + (σT14/2)². Median and analytic σ coincide: there are no draws.
func FromWritten(t0, sigmaT0, p, sigmaP, t14, sigmaT14 float64, first, last int64) []Prediction {
	out := make([]Prediction, 0, max(0, last-first+1))
	for n := first; n <= last; n++ {
		s := AnalyticSigma(sigmaT0*sigmaT0, sigmaP*sigmaP, 0, n)
		pr := Prediction{Epoch: n, Mid: t0 + float64(n)*p, Lower: s, Upper: s, Sigma: s, SigmaAnalytic: s,
			UTC: math.NaN(), Ingress: math.NaN(), SigmaIngress: math.NaN(), Egress: math.NaN(), SigmaEgress: math.NaN()}
		if t14 > 0 {
			se := math.Hypot(s, sigmaT14/2)
			pr.Ingress, pr.SigmaIngress = pr.Mid-t14/2, se
			pr.Egress, pr.SigmaEgress = pr.Mid+t14/2, se
		}
		out = append(out, pr)
	}
	return out
}

// Epochs returns the first and last transit numbers whose mid-time T0 + n·P lies in
// [from, to] (both ends included), for a positive period; last < first when none does.
func Epochs(t0, p, from, to float64) (first, last int64) {
	f := math.Ceil((from - t0) / p)
	l := math.Floor((to - t0) / p)
	// Guard the division's rounding at the ends.
	if t0+(f-1)*p >= from {
		f--
	}
	if t0+(l+1)*p <= to {
		l++
	}
	return int64(f), int64(l)
}

// Scatter is the root mean square of the O−C residuals (any unit): the size of the timing
// variations a linear ephemeris leaves unexplained, measurement noise included.
func Scatter(oc []float64) float64 {
	if len(oc) == 0 {
		return 0
	}
	s := 0.0
	for _, x := range oc {
		s += x * x
	}
	return math.Sqrt(s / float64(len(oc)))
}
