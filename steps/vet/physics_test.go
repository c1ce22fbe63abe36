package vet

import (
	"fmt"
	"math"
	"testing"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/boxmodel"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/synth"
	"dipline/steps/internal/transit"
)

func TestDayTemperatureAndPlanckRatioAgainstWorkedValues(t *testing.T) {
	// Worked values from the same formulas evaluated with Python 3 / NumPy and
	// scipy.constants (CODATA 2018, python3-scipy 1.10.1 from Debian):
	//   T_day = Teff √(R*/a) (2/3)^¼ (Cowan & Agol 2011, ApJ 729, 54, ε = 0, A_B = 0; from
	//   memory), B_λ(T) = 2hc²/λ⁵ / (exp(hc/λkT) − 1).
	tDay, err := DayTemperature(5772, 10)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name      string
		got, want float64
		rel       float64
	}{
		{"the hottest day side at a/R* = 10 around a 5772 K star is 1649.3 K", tDay, 1649.314616022147, 1e-12},
		{"its light over the star's at 800 nm is 3.96e-4", PlanckRatio(800e-9, tDay, 5772), 0.00039610335858569746, 1e-9},
		{"a 1500 K day side over a 5000 K star at 4.5 µm is 0.121", PlanckRatio(4.5e-6, 1500, 5000), 0.1205558725831547, 1e-9},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if math.Abs(c.got-c.want) > c.rel*c.want {
				t.Errorf("got %.15g, want %.15g", c.got, c.want)
			}
		})
	}
	t.Run("a planet's thermal depth is k² times the Planck ratio", func(t *testing.T) {
		if d := ThermalDepth(0.1, 800e-9, tDay, 5772); math.Abs(d-0.01*0.00039610335858569746) > 1e-15 {
			t.Errorf("thermal depth %v", d)
		}
	})
	t.Run("Earth's day side would be 394 K", func(t *testing.T) {
		// 278.3 K (the zero-albedo equilibrium temperature of Earth with f = 1/4, from
		// Teff☉ = 5772 K and IAU nominal R☉/au) times (8/3)^¼ = (2/3 / (1/4))^¼ gives 394.4 K.
		aR := astro.AU / astro.SolarRadius
		tDay, _ := DayTemperature(astro.SolarTeff, aR)
		if math.Abs(tDay-278.3*math.Pow(8.0/3, 0.25)) > 0.2 {
			t.Errorf("Earth's hottest day side %v K", tDay)
		}
	})
}

func TestTheSecondaryRatioDefaultHoldsForPlanets(t *testing.T) {
	// A planet's occultation over its transit is A_g (R*/a)² + B_λ(T_day)/B_λ(Teff). At
	// a/R* = 3, A_g = 1, Teff = 6500 K and 800 nm, Python/NumPy with scipy.constants gives
	// 0.18563095144585215: below the 0.2 default, which therefore flags only dips no planet
	// of that reach could give.
	tDay, _ := DayTemperature(6500, 3)
	got := 1.0/9 + PlanckRatio(800e-9, tDay, 6500)
	if math.Abs(got-0.18563095144585215) > 1e-9 {
		t.Errorf("ratio %v, want 0.18563", got)
	}
	if !(got < defaultSecondaryRatio) {
		t.Errorf("the extreme planet's ratio %v is not below the default %v", got, defaultSecondaryRatio)
	}
}

func TestSidakThresholdsAgainstScipy(t *testing.T) {
	// scipy.stats.norm.isf(-expm1(log1p(-alpha)/n)), python3-scipy 1.10.1 (Debian).
	cases := []struct {
		alpha float64
		n     int
		want  float64
	}{
		{0.00135, 1, 2.9999769927033935},
		{0.00135, 3, 3.3199284234331055},
		{0.00135, 100, 4.197245849076615},
		{0.0027, 50, 3.8715552471036356},
	}
	for _, c := range cases {
		if got := SidakThreshold(c.alpha, c.n); math.Abs(got-c.want) > 1e-9 {
			t.Errorf("SidakThreshold(%v, %d) = %.15g, want %.15g", c.alpha, c.n, got, c.want)
		}
	}
}

func TestCommonDepthPValueAgainstScipy(t *testing.T) {
	// scipy.stats.chi2.sf(3.1, 2) and chi2.sf(12, 4), python3-scipy 1.10.1 (Debian). Depths
	// chosen so that χ² about the weighted mean is 3.1 and 12.
	cases := []struct {
		name string
		gs   []groupDepth
		chi2 float64
		p    float64
	}{
		{"three depths with χ² = 3.1", []groupDepth{{"a", 0, 1}, {"b", math.Sqrt(3.1 / 2), 1}, {"c", -math.Sqrt(3.1 / 2), 1}}, 3.1, 0.21224797382674304},
		{"five depths with χ² = 12", []groupDepth{{"a", 0, 2}, {"b", 2 * math.Sqrt(6), 2}, {"c", -2 * math.Sqrt(6), 2}, {"d", 0, 2}, {"e", 0, 2}}, 12, 0.01735126523666451},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			chi2, dof, p := commonDepth(c.gs)
			if math.Abs(chi2-c.chi2) > 1e-12 || dof != len(c.gs)-1 || math.Abs(p-c.p) > 1e-12 {
				t.Errorf("χ² %v (%d dof), p %v; want %v, p %v", chi2, dof, p, c.chi2, c.p)
			}
		})
	}
}

func TestMinEccentricityAgainstABruteForceSearch(t *testing.T) {
	// The least e on a grid of step 1e-5 for which some ω gives ((1 + e sin ω)/√(1−e²))³ = r
	// (Dawson & Johnson 2012), found by a brute-force scan in Python/NumPy.
	for r, want := range map[float64]float64{0.25: 0.4318, 0.5: 0.22703, 2: 0.22703, 4: 0.4318, 8: 0.6} {
		if got := MinEccentricity(r); math.Abs(got-want) > 2e-5 {
			t.Errorf("MinEccentricity(%v) = %v, want %v", r, got, want)
		}
	}
}

// dilutedEclipse returns, for a uniform disc of radius ratio k crossing a star at impact
// parameter b (a/R* = 20, P = 10 d) whose light is diluted by a target Δm brighter, the
// measured T12/T13 and depth of the combined light: contacts read off the Mandel & Agol
// (2002) light curve (transit.Flux without limb darkening) sampled every 1e-6 d.
func dilutedEclipse(k, b, dm float64) (rho, depth float64) {
	const per, aR, step = 10.0, 20.0, 1e-6
	fb := math.Pow(10, -0.4*dm) // F_b/F_t
	n := int(0.5 / step)
	ts := make([]float64, n)
	for i := range ts {
		ts[i] = -0.25 + float64(i)*step
	}
	z := transit.SeparationCircular(nil, ts, per, 0, aR, b)
	f := transit.Flux(nil, z, k, 0, 0)
	lo := math.Inf(1)
	for i := range f {
		f[i] = (1 + fb*f[i]) / (1 + fb)
		lo = math.Min(lo, f[i])
	}
	t1, t2, t3 := math.NaN(), math.NaN(), math.NaN()
	for i, x := range f {
		if math.IsNaN(t1) && x < 1-1e-13 {
			t1 = ts[i]
		}
		if x <= lo+1e-13 {
			if math.IsNaN(t2) {
				t2 = ts[i]
			}
			t3 = ts[i]
		}
	}
	return (t2 - t1) / (t3 - t1), 1 - lo
}

func TestTheBlendBoundFollowsFromTheGeometry(t *testing.T) {
	// The derivation beside MaxBlendDeltaMag, checked on eclipses computed with the Mandel &
	// Agol model, independently of Winn's duration formulas.
	t.Run("the chord ingress ratio matches the one read off a light curve", func(t *testing.T) {
		for _, c := range []struct{ k, b float64 }{{0.1, 0}, {0.1, 0.5}, {0.3, 0.2}, {0.05, 0.8}} {
			rho, _ := dilutedEclipse(c.k, c.b, 0)
			if got := ChordIngressRatio(c.k, c.b, 20, 0, 0); math.Abs(got-rho) > 2e-3*rho {
				t.Errorf("k %v b %v: Winn's T12/T13 %v, light curve's %v", c.k, c.b, got, rho)
			}
		}
	})
	t.Run("a central eclipse diluted by 4 mag gives back 4 mag exactly", func(t *testing.T) {
		rho, depth := dilutedEclipse(0.3, 0, 4)
		if got := MaxBlendDeltaMag(rho, depth); math.Abs(got-4) > 0.01 {
			t.Errorf("bound %v mag, want 4", got)
		}
	})
	t.Run("an off-centre eclipse gives a bound above its true magnitude difference", func(t *testing.T) {
		for _, b := range []float64{0.3, 0.6, 0.8} {
			rho, depth := dilutedEclipse(0.3, b, 4)
			if got := MaxBlendDeltaMag(rho, depth); !(got > 4) {
				t.Errorf("b = %v: bound %v mag, not above 4", b, got)
			}
		}
	})
	t.Run("a source at the bound with the largest body reproduces the observed dip", func(t *testing.T) {
		// A planet on the target, k = 0.1, b = 0.85, undiluted (the eclipsed star 60 mag
		// brighter than any other light): its T12/T13 and depth give a bound near 3 mag.
		rhoObs, depthObs := dilutedEclipse(0.1, 0.85, -60)
		dm := MaxBlendDeltaMag(rhoObs, depthObs)
		if !(dm > 2.5 && dm < 3.5) {
			t.Fatalf("bound %v mag, want near 3", dm)
		}
		// A body of radius ratio ρ crossing a source dm fainter centrally gives the same
		// ingress ratio and depth.
		rho, depth := dilutedEclipse(rhoObs, 0, dm)
		if math.Abs(rho-rhoObs) > 2e-3*rhoObs || math.Abs(depth-depthObs) > 1e-3*depthObs {
			t.Errorf("blend at %v mag: T12/T13 %v, depth %v; observed %v, %v", dm, rho, depth, rhoObs, depthObs)
		}
		// Half a magnitude fainter the same body cannot reach the depth.
		if _, d := dilutedEclipse(rhoObs, 0, dm+0.5); !(d < depthObs) {
			t.Errorf("a source 0.5 mag beyond the bound still reaches %v ≥ %v", d, depthObs)
		}
	})
	t.Run("a nearly central transit of a small planet allows no fainter source", func(t *testing.T) {
		// k = 0.1, b = 0.4: T12/T13 = 4k/(L14 + L23)² = 0.1193 (Winn's contacts), ρ²/δ =
		// 1.42, so the source must give 70 % of the light: brighter than the target.
		rho, depth := dilutedEclipse(0.1, 0.4, -60)
		if dm := MaxBlendDeltaMag(rho, depth); !(dm < 0) {
			t.Errorf("bound %v mag, want negative", dm)
		}
	})
	t.Run("Vanderburg's form measured against the combined light agrees", func(t *testing.T) {
		// Δm_tot = 2.5 log10(ρ²/δ) (Vanderburg et al. 2019, from memory) and Δm against the
		// target differ by the target's share of the combined light: 10^{−0.4Δm_tot} =
		// F_b/(F_t + F_b) = 1/(1 + 10^{0.4Δm}).
		rho, depth := 0.12, 1e-3
		dm := MaxBlendDeltaMag(rho, depth)
		tot := 2.5 * math.Log10(rho*rho/depth)
		if math.Abs(math.Pow(10, -0.4*tot)-1/(1+math.Pow(10, 0.4*dm))) > 1e-12 {
			t.Errorf("target-relative %v and combined-light %v bounds disagree", dm, tot)
		}
	})
}

// trapezoidOf fits the trapezoid to a nearly noise-free 12-day light curve of one dip
// with period 3 d and mid-time 1 d, given the box duration a search would report.
func trapezoidOf(t *testing.T, dip synth.Signal, dur float64) trapFit {
	t.Helper()
	s := synth.Curve{Span: 12, Cadence: cadence, Noise: 1e-6, Seed: 1, Dips: []synth.Signal{dip}}.Make()
	lc := &lightcurve.LightCurve{Segments: []lightcurve.Segment{{ID: "1", Exposure: cadence, Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	v := &vetter{d: Data{Light: lc}}
	v.t, v.f, v.e, v.seg = lc.Flat()
	w := make([]float64, len(v.t))
	for i := range w {
		w[i] = 1 / (v.e[i] * v.e[i])
	}
	tr, ok := v.trapezoid(boxmodel.Ephemeris{Period: 3, Epoch: 1, Duration: dur}, w, 1)
	if !ok {
		t.Fatal("no trapezoid fitted")
	}
	return tr
}

// winnIngress is T12/T14 of a circular chord from Winn's (2010) durations (astro).
func winnIngress(k, b, aR float64) float64 {
	t14, _ := astro.TotalDuration(3, aR, k, b, 0, 0)
	t23, _ := astro.FullDuration(3, aR, k, b, 0, 0)
	return (t14 - t23) / (2 * t14)
}

func TestTheTrapezoidReadsKnownShapes(t *testing.T) {
	disc := synth.Transit{Period: 3, Epoch: 1, K: 0.1, B: 0.8, AR: 15, Exposure: cadence, Sub: 1}
	cases := []struct {
		name     string
		dip      synth.Signal
		dur      float64
		want, by float64
	}{
		// A V (synth's triangle, a grazing binary's eclipse): T12/T14 = 0.5.
		{"a triangle is a V", synth.Binary{Period: 3, Epoch: 1, Duration: 0.15, Primary: 0.01}, 0.09, 0.5, 0.02},
		// A box: T12/T14 = 0.
		{"a box has no ingress", synth.Box{Period: 3, Epoch: 1, Duration: 0.1, Depth: 0.01}, 0.1, 0, 0.02},
		// A uniform disc, k = 0.1 at b = 0.8 (Mandel & Agol through synth): Winn's T12/T14
		// is 0.227; the disc's ingress is not quite linear, hence the tolerance.
		{"a uniform disc's chord has Winn's ingress", disc, 0.8 * disc.T14(), winnIngress(0.1, 0.8, 15), 0.03},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if tr := trapezoidOf(t, c.dip, c.dur); math.Abs(tr.frac-c.want) > c.by {
				t.Errorf("ingress fraction %v, want %v ± %v", tr.frac, c.want, c.by)
			}
		})
	}
}

func TestTheVShapeThresholdSeparatesChordsFromVs(t *testing.T) {
	// The default of v_shape_fraction, 0.35, measured on noise-free Mandel & Agol transits
	// (a/R* = 15): every non-grazing chord up to b = 0.85 (k = 0.03 and 0.1) stays below it
	// with no, Sun-like or strong limb darkening (from memory: u1 ≈ 0.4, u2 ≈ 0.25 in a
	// red band for the Sun); synth's triangle, an eclipsing binary's V, is far above it.
	for _, ld := range [][2]float64{{0, 0}, {0.4, 0.25}, {0.6, 0.2}} {
		for _, b := range []float64{0, 0.5, 0.85} {
			for _, k := range []float64{0.03, 0.1} {
				tr := synth.Transit{Period: 3, Epoch: 1, K: k, B: b, AR: 15, U1: ld[0], U2: ld[1], Exposure: cadence, Sub: 1}
				t.Run(fmt.Sprintf("a chord with k %g, b %g and u %v has a flat bottom", k, b, ld), func(t *testing.T) {
					if f := trapezoidOf(t, tr, 0.8*tr.T14()); !(f.fracLo < defaultVShapeFraction) {
						t.Errorf("ingress fraction %v (≥ %v at 2σ)", f.frac, f.fracLo)
					}
				})
			}
		}
	}
	t.Run("a V is a V", func(t *testing.T) {
		if f := trapezoidOf(t, synth.Binary{Period: 3, Epoch: 1, Duration: 0.15, Primary: 0.01}, 0.09); !(f.fracLo > defaultVShapeFraction+0.1) {
			t.Errorf("ingress fraction %v (≥ %v at 2σ)", f.frac, f.fracLo)
		}
	})
}

func TestNoiseScaleMeasuresWhiteAndCorrelatedNoise(t *testing.T) {
	const n, dt, dur = 20000, cadence, 0.1
	g := rng.New(5)
	tm := make([]float64, n)
	for i := range tm {
		tm[i] = float64(i) * dt
	}
	keep := func(int) bool { return true }
	t.Run("errors stated at half the scatter are stretched by two", func(t *testing.T) {
		f, e := make([]float64, n), make([]float64, n)
		for i := range f {
			f[i], e[i] = 1+2e-3*g.Normal(), 1e-3
		}
		// The scaled MAD of 20,000 normal draws scatters by about 0.5 % (1.36σ/√n for a
		// MAD; common practice), and β by about 4 % over 277 bins.
		if s := noiseScale(tm, f, e, keep, dur); math.Abs(s-2) > 0.1 {
			t.Errorf("scale %v, want 2", s)
		}
	})
	t.Run("noise correlated over three durations is stretched by its excess in bins", func(t *testing.T) {
		// White σ = 1e-3 plus an offset of σ_r = 3e-4 held for three durations: a bin of
		// m = 72 points then scatters by √(σ²/m + σ_r²) instead of σ/√m, so β ≈
		// √(1 + m σ_r²/σ²) = √(1 + 72·0.09) = 2.73 (bins straddling two offsets lower it a
		// little). The per-point scale stays near √(1 + 0.09) = 1.04.
		f, e := make([]float64, n), make([]float64, n)
		off := 0.0
		for i := range f {
			if i%(3*72) == 0 {
				off = 3e-4 * g.Normal()
			}
			f[i], e[i] = 1+off+1e-3*g.Normal(), 1e-3
		}
		s := noiseScale(tm, f, e, keep, dur)
		if s < 2.2 || s > 3.0 {
			t.Errorf("scale %v, want about 1.04 × 2.6", s)
		}
	})
}

func TestNoiseScaleNeverShrinksTheErrors(t *testing.T) {
	// Errors stated at twice the scatter: the scale stays at 1.
	const n = 20000
	g := rng.New(6)
	tm, f, e := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range tm {
		tm[i], f[i], e[i] = float64(i)*cadence, 1+1e-3*g.Normal(), 2e-3
	}
	if s := noiseScale(tm, f, e, func(int) bool { return true }, 0.1); s != 1 {
		t.Errorf("scale %v, want 1", s)
	}
}
