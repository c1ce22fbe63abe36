package fit

import (
	"math"
	"testing"

	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/transit"
)

// ttvCurve is synthetic's light curve with each transit n moved by amp·sin(2πn/cycle) days,
// and extra correlated noise red·sin(2πt/0.37 d) on top of white noise sigma.
func ttvCurve(tr truth, span, sigma, amp, cycle, red float64, seed uint64) *lightcurve.LightCurve {
	const exposure = 30.0 / 1440
	seg := lightcurve.Segment{ID: "1", Exposure: exposure, Contamination: math.NaN()}
	for t := 0.0; t < span; t += exposure {
		seg.Time = append(seg.Time, t)
	}
	const n = 41
	aR := ScaledAxis(tr.period, tr.rho)
	u1, u2 := transit.QuadraticFromKipping(tr.q1, tr.q2)
	r := rng.Derive(seed, "fit-test/ttv-noise", 0)
	fine := make([]float64, n)
	z := make([]float64, n)
	fl := make([]float64, n)
	for _, t := range seg.Time {
		k := math.Round((t - tr.t0) / tr.period)
		t0 := tr.t0 + amp*math.Sin(2*math.Pi*k/cycle)
		fine = transit.SubexposureTimes(fine, []float64{t}, exposure, n)
		z = transit.SeparationCircular(z, fine, tr.period, t0, aR, tr.b)
		fl = transit.Flux(fl, z, tr.k, u1, u2)
		f := transit.AverageBlocks(nil, fl, n)[0]
		seg.Flux = append(seg.Flux, f+sigma*r.Normal()+red*math.Sin(2*math.Pi*t/0.37))
		seg.Err = append(seg.Err, sigma)
	}
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5, Segments: []lightcurve.Segment{seg}}
}

func postfitModel(t *testing.T, lc *lightcurve.LightCurve, tr truth) (*Model, []float64, Options) {
	t.Helper()
	o := Options{Signals: []signals.Signal{start(tr)}, Window: defaultWindow, Supersample: true, Jitter: true}
	m, art, _, _, _, err := setup(lc, o)
	if err != nil {
		t.Fatal(err)
	}
	return m, truthVector(m, art, []truth{tr}), o
}

func TestBetaFactorOfTheResiduals(t *testing.T) {
	// White noise: β is floored at 1 and the median binned ratio stays near 1 (Pont, Zucker
	// & Queloz 2006); a sinusoid of twice the noise's amplitude on a 9-hour scale raises it
	// well above 1: binned over n points its variance stays near A²/2 while the white part
	// falls as σ²/n, and the expectation is the total scatter over √n, so the ratio is
	// √((σ²/n + A²/2)/((σ² + A²/2)/n)): 1.29 at n = 2, 1.73 at n = 4 (30-min points, bins of
	// 1 h to a transit duration). The check asks for more than 1.3.
	m, x, _ := postfitModel(t, ttvCurve(hot, 120, 1e-3, 0, 1, 0, 1), hot)
	white, err := m.beta(x)
	if err != nil {
		t.Fatal(err)
	}
	m, x, _ = postfitModel(t, ttvCurve(hot, 120, 1e-3, 0, 1, 2e-3, 1), hot)
	red, err := m.beta(x)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("β: %.3f for white noise, %.3f with a sinusoid twice as large as the noise", white, red)
	if !(white >= 1 && white < 1.25) {
		t.Errorf("β = %.3f on white noise, want 1 to 1.25", white)
	}
	if !(red > 1.3) {
		t.Errorf("β = %.3f with correlated noise, want above 1.3", red)
	}
}

func TestTransitTimesFollowInjectedVariations(t *testing.T) {
	const amp, cycle = 4.0 / 1440, 9.0 // 4-minute timing variations over 9 transits
	cases := []struct {
		name    string
		amp     float64
		caution bool
	}{
		{"a strictly periodic planet keeps its linear ephemeris", 0, false},
		{"a planet with 4-minute timing variations is flagged", amp, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m, x, o := postfitModel(t, ttvCurve(hot, 90, 1e-3, c.amp, cycle, 0, 2), hot)
			pts, err := m.transitTimes(x, o)
			if err != nil {
				t.Fatal(err)
			}
			pt := pts[0]
			if pt.Err != "" {
				t.Fatal(pt.Err)
			}
			timed, inside := 0, 0
			for _, tt := range pt.Times {
				if tt.Skipped != "" {
					continue
				}
				timed++
				// The injected mid-time of this transit (epochs count from the reference transit).
				n := math.Round((tt.Predicted - hot.t0) / hot.period)
				want := hot.t0 + n*hot.period + c.amp*math.Sin(2*math.Pi*n/cycle)
				if math.Abs(tt.Time-want) < 2*tt.Sigma() {
					inside++
				}
			}
			// 29 or 30 transits in 90 days of a 3-day planet; all have full coverage.
			if timed < 28 {
				t.Fatalf("%d of %d transits timed", timed, len(pt.Times))
			}
			// Within 2σ: 95 % expected; 85 % leaves room for 30 binomial draws (3σ below).
			if float64(inside) < 0.85*float64(timed) {
				t.Errorf("%d of %d measured times within 2σ of the injected ones", inside, timed)
			}
			e := pt.Ephemeris
			t.Logf("χ² %.1f for %d dof, p = %.3g; σ of one time ≈ %.2f min", e.Chi2, e.Dof, e.PValue, pt.Times[0].Sigma()*1440)
			if got := e.Caution != ""; got != c.caution {
				t.Errorf("caution %q, want one: %v", e.Caution, c.caution)
			}
			if !c.caution && math.Abs(e.Period-hot.period) > 4*e.SigmaPeriod {
				t.Errorf("ephemeris period %.7f ± %.7f d, truth %.7f", e.Period, e.SigmaPeriod, hot.period)
			}
		})
	}
}
