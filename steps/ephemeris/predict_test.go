package ephemeris

import (
	"math"
	"testing"

	"dipline/steps/internal/rng"
)

// gaussian draws n pairs (T0, P) from a bivariate normal with the given means, errors and
// correlation, by our own normal stream (steps/internal/rng).
func gaussian(n int, t0, sT0, p, sP, rho float64, seed uint64) (ts, ps []float64) {
	g := rng.New(seed)
	for i := 0; i < n; i++ {
		a, b := g.Normal(), g.Normal()
		ts = append(ts, t0+sT0*a)
		ps = append(ps, p+sP*(rho*a+math.Sqrt(1-rho*rho)*b))
	}
	return ts, ps
}

// The standard propagation of a linear ephemeris (first-order error propagation of
// T_n = T0 + n·P; common practice), σ²(T_n) = σ²_T0 +
// n²σ²_P + 2n ρ σ_T0 σ_P, with the generating values: the outside check of the percentiles.
func trueSigma(sT0, sP, rho float64, n int64) float64 {
	x := float64(n)
	return math.Sqrt(sT0*sT0 + x*x*sP*sP + 2*x*rho*sT0*sP)
}

func TestPercentilesAgreeWithThePropagationForAGaussianPosterior(t *testing.T) {
	const sT0, sP, rho = 6e-4, 1e-4, 0.3
	ts, ps := gaussian(40000, 12.3456, sT0, 3.7185, sP, rho, 11)
	preds := FromDraws(ts, ps, nil, -20, 300)
	for _, n := range []int64{-20, 0, 7, 50, 300} {
		pr := preds[n+20]
		want := trueSigma(sT0, sP, rho, n)
		// 40,000 draws give the 16–84 % half-range to about 0.6 % (1σ); 3 % is five of them.
		if d := math.Abs(pr.Sigma/want - 1); d > 0.03 {
			t.Errorf("transit %d: σ from the percentiles %.6g, propagation with the true values %.6g (%.1f %% off)", n, pr.Sigma, want, 100*d)
		}
		if d := math.Abs(pr.SigmaAnalytic/want - 1); d > 0.03 {
			t.Errorf("transit %d: σ from the draws' covariance %.6g, true %.6g", n, pr.SigmaAnalytic, want)
		}
		if d := math.Abs(pr.Sigma/pr.SigmaAnalytic - 1); d > 0.03 {
			t.Errorf("transit %d: the percentiles (%.6g) and the analytic propagation (%.6g) disagree", n, pr.Sigma, pr.SigmaAnalytic)
		}
		if mid := 12.3456 + float64(n)*3.7185; math.Abs(pr.Mid-mid) > 3*want/math.Sqrt(40000)*1.25 {
			t.Errorf("transit %d: median %.8f, want %.8f", n, pr.Mid, mid)
		}
	}
}

func TestDroppingTheCovarianceGetsSigmaWrong(t *testing.T) {
	// T0 quoted far from the data's centre: its error is large and strongly anti-correlated
	// with the period's, and the two nearly cancel forty transits later.
	const sT0, sP, rho = 4e-3, 1e-4, -0.95
	const n = 40
	ts, ps := gaussian(40000, 0.5, sT0, 2.25, sP, rho, 12)
	pr := FromDraws(ts, ps, nil, n, n)[0]
	want := trueSigma(sT0, sP, rho, n) // √(1.6e-5 + 1.6e-5 − 3.04e-5) = 1.26e-3 d
	if math.Abs(want-1.2649e-3) > 1e-7 {
		t.Fatalf("hand value: %v", want)
	}
	if d := math.Abs(pr.Sigma/want - 1); d > 0.03 {
		t.Errorf("σ from the draws %.5g, true %.5g", pr.Sigma, want)
	}
	if d := math.Abs(pr.SigmaAnalytic/want - 1); d > 0.03 {
		t.Errorf("σ from the analytic propagation with the draws' covariance %.5g, true %.5g", pr.SigmaAnalytic, want)
	}
	vt, vp, _ := Moments(ts, ps)
	noCov := AnalyticSigma(vt, vp, 0, n) // √(3.2e-5) = 5.66e-3 d
	if noCov < 4*want {
		t.Errorf("without the covariance σ is %.4g, which should be far above the true %.4g", noCov, want)
	}
}

func TestIngressAndEgressAreHalfADurationAway(t *testing.T) {
	ts, ps := gaussian(4000, 1, 1e-3, 2, 1e-4, 0, 3)
	t14 := make([]float64, len(ts))
	for i := range t14 {
		t14[i] = 0.1
	}
	pr := FromDraws(ts, ps, t14, 5, 5)[0]
	if math.Abs(pr.Ingress-(pr.Mid-0.05)) > 1e-12 || math.Abs(pr.Egress-(pr.Mid+0.05)) > 1e-12 {
		t.Errorf("mid %v, ingress %v, egress %v: a fixed 0.1 d duration puts them 0.05 d either side", pr.Mid, pr.Ingress, pr.Egress)
	}
	if math.Abs(pr.SigmaIngress-pr.Sigma) > 1e-12 {
		t.Errorf("a fixed duration leaves the ingress' σ %v equal to the mid-time's %v", pr.SigmaIngress, pr.Sigma)
	}
}

func TestEpochsHoldExactlyTheTransitsInRange(t *testing.T) {
	cases := []struct {
		name                string
		t0, p, from, to     float64
		firstWant, lastWant int64
	}{
		{"a range after the epoch", 0.5, 2, 3, 10, 2, 4},          // 4.5, 6.5, 8.5
		{"a range before the epoch", 0.5, 2, -6, -1, -3, -1},      // −5.5, −3.5, −1.5
		{"ends on transits are included", 0.5, 2, 2.5, 6.5, 1, 3}, // 2.5, 4.5, 6.5
		{"a range between two transits", 0.5, 2, 3, 4, 2, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f, l := Epochs(c.t0, c.p, c.from, c.to)
			if f != c.firstWant || l != c.lastWant {
				t.Errorf("epochs %d to %d, want %d to %d", f, l, c.firstWant, c.lastWant)
			}
		})
	}
}
