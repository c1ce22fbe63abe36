package bls

import (
	"math"
	"testing"

	"dipline/steps/internal/boxmodel"
	"dipline/steps/internal/rng"
)

// handGrid is the noise-free series the hand-worked checks use: 1000 points at t = 0.00,
// 0.01, …, 9.99 d with σ = 1000 ppm; boxes of P = 1 d, epoch 0.5 d and duration 0.105 d
// (no point lies on an edge) each hold 11 points (t = k + 0.45 … k + 0.55), 110 in all,
// 55 in even and 55 in odd cycles. The boxes half-way between (around t = 0, 1, …, 10) hold
// 6 + 9·11 + 5 = 110 points. depth(i, cycle, half) gives each point's drop.
func handGrid(depth func(cycle int, half bool) float64) *prepared {
	var s Series
	eph := boxmodel.Ephemeris{Period: 1, Epoch: 0.5, Duration: 0.105}
	for i := 0; i < 1000; i++ {
		t := float64(i) / 100
		f := 1.0
		if n, in := eph.Inside(t); in {
			f -= depth(int(n), false)
		} else if _, in := eph.Shifted(0.5).Inside(t); in {
			f -= depth(0, true)
		}
		s.Time = append(s.Time, t)
		s.Flux = append(s.Flux, f)
		s.Err = append(s.Err, 1e-3)
	}
	return prepare(s, nil, 0.01)
}

const (
	handN, handIn, handHalf = 1000.0, 110.0, 110.0
	handEach                = 55.0 // points in odd (or even) boxes
)

func near(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if !(math.Abs(got-want) <= tol) {
		t.Errorf("%s = %.10g, worked by hand %.10g", name, got, want)
	}
}

// TestRivalsOfNoiseFreeBoxes checks the ratios, their errors and ΔBIC against values worked
// out by hand for boxes on handGrid. With unit weights w = 1/σ², every depth is a difference
// of means and its error σ√(1/N_g + 1/N_out); noise-free points outside every box give
// χ²/ν = 0, so the error scale stays 1.
func TestRivalsOfNoiseFreeBoxes(t *testing.T) {
	const d, sigma = 2e-3, 1e-3
	lnN := math.Log(handN)
	t.Run("a box at P gives half its depth at P/2, equal odd and even depths, and prefers P", func(t *testing.T) {
		p := handGrid(func(_ int, half bool) float64 {
			if half {
				return 0
			}
			return d
		})
		r, _ := checkDetection(p, 1, 0.5, 0.105)
		// P/2: the group holds the 110 box points at 1 − d and 110 at 1, so its depth is
		// d·110/220 = d/2 and χ² = 220·(d/2)²/σ² = 220; at P χ² = 0.
		near(t, "ratio at P/2", r.Half.Ratio, 0.5, 1e-12)
		near(t, "ΔBIC(P/2)", r.HalfDeltaBIC, 220, 1e-9)
		// 2P: both groups of depth d, χ² = 0 as at P, one parameter more: ΔBIC = ln n.
		near(t, "odd ratio", r.Odd.Ratio, 1, 1e-12)
		near(t, "even ratio", r.Even.Ratio, 1, 1e-12)
		near(t, "ΔBIC(2P)", r.DoubleDeltaBIC, lnN, 1e-9)
		// Errors of the ratios, by first-order propagation with the covariance of the two
		// linear estimates (each depth is Σ c_i f_i; cov = Σ c_i c'_i σ²):
		// at P/2, σ_R² = (σ/d)²·[1/(N − 2N_in) − 1/(4(N − N_in)) + 1/(4N_in)];
		// odd at 2P, cov(odd, P) = var(P), so σ_R² = (σ/d)²·(1/N_odd − 1/N_in).
		half := sigma / d * math.Sqrt(1/(handN-2*handIn)-1/(4*(handN-handIn))+1/(4*handIn))
		near(t, "σ of the ratio at P/2", r.Half.RatioSigma, half, 1e-12)
		odd := sigma / d * math.Sqrt(1/handEach-1/handIn)
		near(t, "σ of the odd ratio", r.Odd.RatioSigma, odd, 1e-12)
		near(t, "σ of the even ratio", r.Even.RatioSigma, odd, 1e-12)
		near(t, "σ of the depth at P/2", r.Half.DepthSigma, sigma*math.Sqrt(1/(handIn+handHalf)+1/(handN-handIn-handHalf)), 1e-15)
		near(t, "error scale", r.ErrorScale(), 1, 0)
		if r.Preferred != PreferFound {
			t.Errorf("preferred %d, want P", r.Preferred)
		}
	})
	t.Run("unequal odd and even boxes prefer twice the period", func(t *testing.T) {
		const d1, d2 = 3e-3, 1e-3
		p := handGrid(func(n int, half bool) float64 {
			switch {
			case half:
				return 0
			case n%2 != 0:
				return d1
			}
			return d2
		})
		r, _ := checkDetection(p, 1, 0.5, 0.105)
		// At P the depth is the mean (d1 + d2)/2 = 2000 ppm, off by 1000 ppm = σ in each of
		// 110 points: χ²_P = 110. At 2P χ² = 0, so ΔBIC(2P) = −110 + ln n.
		near(t, "odd ratio", r.Odd.Ratio, 1.5, 1e-12)
		near(t, "even ratio", r.Even.Ratio, 0.5, 1e-12)
		near(t, "odd depth", r.Odd.Depth, d1, 1e-15)
		near(t, "ΔBIC(2P)", r.DoubleDeltaBIC, -110+lnN, 1e-9)
		// At P/2 the group's mean drop is (55·3 + 55·1)/220 = 1 (×1000 ppm): χ² = 55·2² +
		// 55·0² + 110·1² = 330 against 110 at P.
		near(t, "ratio at P/2", r.Half.Ratio, 0.5, 1e-12)
		near(t, "ΔBIC(P/2)", r.HalfDeltaBIC, 330-110, 1e-9)
		if r.Preferred != PreferDouble {
			t.Errorf("preferred %d, want 2P", r.Preferred)
		}
	})
	t.Run("boxes every P/2 found at P prefer half the period", func(t *testing.T) {
		p := handGrid(func(int, bool) float64 { return d })
		r, _ := checkDetection(p, 1, 0.5, 0.105)
		// At P the 110 half-way points lower the level outside the boxes to
		// 1 − d·110/890, so the depth at P is d·780/890 and the ratio at P/2 is 890/780.
		// χ²_P = (d/σ)²·[110·(780/890)² + 780·(110/890)²] = 4·110·780/890; at P/2 χ² = 0.
		near(t, "ratio at P/2", r.Half.Ratio, 890.0/780, 1e-12)
		near(t, "ΔBIC(P/2)", r.HalfDeltaBIC, -4*110*780.0/890, 1e-9)
		if r.Preferred != PreferHalf {
			t.Errorf("preferred %d, want P/2", r.Preferred)
		}
	})
}

// TestSpreadOfNoiseFreeTransits: ten equal transits of 11 points share the evidence
// equally (1/10 each); doubling one transit's depth quadruples its SNR², so it carries
// 4/(4 + 9) = 4/13 and the two strongest 5/13 (worked by hand).
func TestSpreadOfNoiseFreeTransits(t *testing.T) {
	p := handGrid(func(_ int, half bool) float64 {
		if half {
			return 0
		}
		return 2e-3
	})
	_, s := checkDetection(p, 1, 0.5, 0.105)
	near(t, "share of the strongest", s.Strongest, 0.1, 1e-12)
	near(t, "share of the two strongest", s.TwoStrongest, 0.2, 1e-12)
	if s.Counted != 10 {
		t.Errorf("%d transits counted, want 10", s.Counted)
	}
	p = handGrid(func(n int, half bool) float64 {
		switch {
		case half:
			return 0
		case n == 3:
			return 4e-3
		}
		return 2e-3
	})
	_, s = checkDetection(p, 1, 0.5, 0.105)
	near(t, "share of the doubled transit", s.Strongest, 4.0/13, 1e-12)
	near(t, "share of the two strongest", s.TwoStrongest, 5.0/13, 1e-12)
	near(t, "its mid-time", s.StrongestTime, 3.5, 1e-12)
}

// TestRatioErrorEqualsFiniteDifferenceCovariance checks the analytic covariance behind the
// ratio errors on uneven weights and noisy data against an independent computation that
// treats boxmodel.Fit as a black box: every depth is linear in the fluxes, so its gradient
// from a unit change of each flux in turn gives cov = Σ ∂a/∂f_i ∂b/∂f_i σ_i².
func TestRatioErrorEqualsFiniteDifferenceCovariance(t *testing.T) {
	g := rng.New(71)
	var s Series
	for i := 0; i < 300; i++ {
		s.Time = append(s.Time, float64(i)*0.02)
		s.Err = append(s.Err, 1e-3*(0.5+g.Float64()))
		s.Flux = append(s.Flux, 1+s.Err[i]*g.Normal())
	}
	p := prepare(s, nil, 0.02)
	b := newBoxes(p, boxmodel.Ephemeris{Period: 0.7, Epoch: 0.31, Duration: 0.09})
	one := b.fit(1, b.atPeriod)
	half := b.fit(1, b.atHalf)
	odd := b.fit(2, b.byParity)
	grad := func(m fitted, g int) []float64 {
		out := make([]float64, len(p.flux))
		for i := range p.flux {
			keep := p.flux[i]
			p.flux[i] += 1
			out[i] = boxmodel.Fit(p.flux, p.invVar, len(m.Depth), m.group).Depth[g] - m.Depth[g]
			p.flux[i] = keep
		}
		return out
	}
	cov := func(a, c []float64) float64 {
		var v float64
		for i := range a {
			v += a[i] * c[i] / p.invVar[i]
		}
		return v
	}
	gp := grad(one, 0)
	for _, c := range []struct {
		name string
		m    fitted
		g    int
	}{{"the depth at P/2", half, 0}, {"the even depth at 2P", odd, 0}, {"the odd depth at 2P", odd, 1}} {
		t.Run("the covariance of "+c.name+" with the depth at P", func(t *testing.T) {
			want := cov(grad(c.m, c.g), gp)
			got := b.depthCov(c.m, c.g, one, 0)
			if math.Abs(got/want-1) > 1e-6 {
				t.Errorf("analytic %.8g, from gradients %.8g", got, want)
			}
		})
	}
}

func TestPreferPicksTheLowestBICBeyondTheThreshold(t *testing.T) {
	for _, c := range []struct {
		name         string
		half, double float64
		want         Choice
	}{
		{"neither alternative wins by 10: P", -9.9, -9.9, PreferFound},
		{"half wins by 12: P/2", -12, 5, PreferHalf},
		{"double wins by 10 exactly: 2P", 3, -10, PreferDouble},
		{"both win, double by more: 2P", -20, -30, PreferDouble},
		{"both win, half by more: P/2", -30, -20, PreferHalf},
		{"undefined differences: P", math.NaN(), math.NaN(), PreferFound},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := prefer(c.half, c.double); got != c.want {
				t.Errorf("prefer(%g, %g) = %d, want %d", c.half, c.double, got, c.want)
			}
		})
	}
}

// TestPointScatterFollowsTheScatter: with errors stated at half the true scatter, the point
// scatter is √(χ²/ν) ≈ 2 (to a few times the relative error 1/√(2ν) of a standard
// deviation from ν ≈ 780 points; common practice); the ΔBIC are then χ² differences of
// boxmodel.Fit divided by the square of the error scale, plus Δk·ln n (Schwarz 1978).
func TestPointScatterFollowsTheScatter(t *testing.T) {
	g := rng.New(5)
	p0 := handGrid(func(_ int, half bool) float64 {
		if half {
			return 0
		}
		return 4e-3
	})
	for i := range p0.flux {
		p0.flux[i] += 2e-3 * g.Normal()
	}
	r, _ := checkDetection(p0, 1, 0.5, 0.105)
	if math.Abs(r.PointScatter-2) > 4*2/math.Sqrt(2*780) {
		t.Errorf("point scatter %.4f, want about 2", r.PointScatter)
	}
	s := r.ErrorScale()
	if s != math.Max(r.PointScatter, r.TransitScatter) {
		t.Errorf("error scale %g from scatters %g and %g", s, r.PointScatter, r.TransitScatter)
	}
	b := newBoxes(p0, boxmodel.Ephemeris{Period: 1, Epoch: 0.5, Duration: 0.105})
	one := boxmodel.Fit(p0.flux, p0.invVar, 1, b.atPeriod)
	two := boxmodel.Fit(p0.flux, p0.invVar, 2, b.byParity)
	near(t, "ΔBIC(2P)", r.DoubleDeltaBIC, (two.Chi2-one.Chi2)/(s*s)+math.Log(1000), 1e-9)
	near(t, "σ of the odd depth", r.Odd.DepthSigma, s*two.Sigma[1], 1e-15)
}

// TestTransitScatterWidensTheErrors: on handGrid, nine transits 2000 ppm deep and one odd
// transit (cycle 3) 6000 ppm deeper, noise-free. Worked by hand, with σ_j = σ√(1/11 + 1/890)
// for every transit (11 points in it, 890 outside every box at P):
//   - the odd transits' mean is d + δ/5; residuals 4δ/5 once and −δ/5 four times, so
//     χ² = 0.8 δ²/σ_j² on ν = 10 − 2 = 8: TransitScatter = √0.1·δ/σ_j;
//   - χ²_P = 11·(9·(δ/10)² + (9δ/10)²)/σ² = 9.9 (δ/σ)² and χ²_2P = 11·(4·(δ/5)² +
//     (4δ/5)²)/σ² = 8.8 (δ/σ)², so ΔBIC(2P) = −1.1 (δ/σ)²/s² + ln n.
//
// Without the transit scatter the 2P model would win (ΔBIC = −39.6 + ln 1000 = −32.7); with
// it, it does not.
func TestTransitScatterWidensTheErrors(t *testing.T) {
	const d, delta, sigma = 2e-3, 6e-3, 1e-3
	p := handGrid(func(n int, half bool) float64 {
		switch {
		case half:
			return 0
		case n == 3:
			return d + delta
		}
		return d
	})
	r, _ := checkDetection(p, 1, 0.5, 0.105)
	sj := sigma * math.Sqrt(1.0/11+1.0/890)
	s := math.Sqrt(0.1) * delta / sj
	near(t, "transit scatter", r.TransitScatter, s, 1e-9)
	near(t, "error scale", r.ErrorScale(), s, 1e-9)
	near(t, "ΔBIC(2P)", r.DoubleDeltaBIC, -1.1*(delta/sigma)*(delta/sigma)/(s*s)+math.Log(1000), 1e-9)
	if r.Preferred != PreferFound {
		t.Errorf("preferred %d, want P", r.Preferred)
	}
}
