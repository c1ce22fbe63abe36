package bls

import (
	"math"
	"testing"

	"dipline/steps/internal/astro"
)

// Nominal solar values, IAU 2015 Resolution B3 (Prša et al. 2016, AJ 152, 41), from astro's
// table.
const (
	nominalGMSun = astro.SolarGM // m³ s⁻²
	nominalRSun  = astro.SolarRadius
)

// densityOf returns the mean density in g/cm³ of a star of the given mass and radius in
// nominal solar units, ρ = 3M/(4πR³) with M = GM/G (CODATA 2018 G), written out here
// rather than through astro so that the grid is checked against an independent density.
func densityOf(mass, radius float64) float64 {
	gm := mass * nominalGMSun
	r := radius * nominalRSun
	return 3 * gm / astro.G / (4 * math.Pi * r * r * r) / 1000
}

func TestGridFollowsOfir(t *testing.T) {
	cases := []struct {
		name                      string
		mass, radius              float64 // solar units
		span, pmin, pmax, oversam float64 // days
	}{
		{"a Sun-like star over 90 days", 1, 1, 90, 0.6, 45, 3},
		{"a red dwarf over four years", 0.5, 0.5, 1461, 0.2, 100, 3},
		{"a subgiant over 27 days at oversampling 5", 1.2, 2, 27, 1, 13.5, 5},
	}
	for _, c := range cases {
		t.Run(c.name+" has Ofir's frequency count and spacing", func(t *testing.T) {
			g, err := NewGrid(densityOf(c.mass, c.radius), c.span, c.pmin, c.pmax, c.oversam)
			if err != nil {
				t.Fatal(err)
			}
			// Ofir (2014, A&A 561, A138), in SI from R* and GM* directly (no G, no density):
			// A = (2π)^{2/3}/π · R*/(GM*)^{1/3} / (S·OS), N = (f_max^{1/3} − f_min^{1/3} + A/3)·3/A.
			r, gm := c.radius*nominalRSun, c.mass*nominalGMSun
			s := c.span * astro.Day
			a := math.Pow(2*math.Pi, 2.0/3) / math.Pi * r / math.Cbrt(gm) / (s * c.oversam)
			fmin, fmax := 1/(c.pmax*astro.Day), 1/(c.pmin*astro.Day)
			nOfir := (math.Cbrt(fmax) - math.Cbrt(fmin) + a/3) * 3 / a
			if float64(g.N) > nOfir+1e-6 || float64(g.N) <= nOfir-1 {
				t.Errorf("N_freq = %d, Ofir's count is %.4f", g.N, nOfir)
			}
			// The step in f^{1/3}: Ofir's A/3 in s^{-1/3} is A/3·86400^{1/3} in d^{-1/3}.
			if want := a / 3 * math.Cbrt(astro.Day); math.Abs(g.Step/want-1) > 1e-12 {
				t.Errorf("step in f^(1/3) = %.15g d^-1/3, Ofir's A/3 = %.15g", g.Step, want)
			}
			// Uniform in f^{1/3}, inside the requested range.
			for _, j := range []int{0, 1, g.N / 3, g.N / 2, g.N - 2} {
				d := math.Cbrt(g.Freq(j+1)) - math.Cbrt(g.Freq(j))
				if math.Abs(d/g.Step-1) > 1e-8 {
					t.Errorf("f^(1/3) spacing at %d is %.12g, want %.12g", j, d, g.Step)
				}
			}
			if f0, fn := g.Freq(0), g.Freq(g.N-1); math.Abs(f0/g.FMin-1) > 1e-14 || fn > g.FMax*(1+1e-12) || g.Freq(g.N) <= g.FMax {
				t.Errorf("grid runs %g … %g 1/d (next %g), range %g … %g", f0, fn, g.Freq(g.N), g.FMin, g.FMax)
			}
		})
	}
}

func TestGridRefusesNonsense(t *testing.T) {
	cases := []struct {
		name                                 string
		density, span, pmin, pmax, oversampl float64
	}{
		{"a zero density", 0, 90, 1, 10, 3},
		{"a negative span", 1.4, -1, 1, 10, 3},
		{"an inverted period range", 1.4, 90, 10, 1, 3},
		{"an oversampling below one", 1.4, 90, 1, 10, 0.5},
		{"a NaN density", math.NaN(), 90, 1, 10, 3},
		{"a grid of a billion frequencies", 1.4, 1e5, 0.01, 100, 100},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			if _, err := NewGrid(c.density, c.span, c.pmin, c.pmax, c.oversampl); err == nil {
				t.Error("no error")
			}
		})
	}
}

func TestStellarGeometry(t *testing.T) {
	rhoSun := densityOf(1, 1)
	t.Run("the nominal Sun's density is 1.40978 g/cm³", func(t *testing.T) {
		// ρ☉ = 1409.78 kg m⁻³ from IAU B3 GM☉, R☉ and CODATA 2018 G, computed independently.
		if math.Abs(rhoSun-1.40978) > 1e-5 {
			t.Errorf("ρ☉ = %.6f g/cm³", rhoSun)
		}
	})
	t.Run("the Earth's orbit has a/R* = 215.029 and a central duration of 12.9764 h", func(t *testing.T) {
		// a/R* = 215.029 (Seager & Mallén-Ornelas 2003, ApJ 585, 1038; computed independently);
		// T = (P/π)·arcsin(R/a) = 12.976430 h computed independently with python3 from GM☉
		// and R☉ (Winn 2010, k → 0, b = 0).
		if a := ScaledAxis(365.25, rhoSun); math.Abs(a-215.029) > 1e-3 {
			t.Errorf("a/R* = %.4f", a)
		}
		if d := CentralDuration(365.25, rhoSun) * 24; math.Abs(d-12.976430) > 1e-5 {
			t.Errorf("T = %.6f h", d)
		}
	})
	t.Run("the Roche-type limit of the Sun lies at 0.601901 d", func(t *testing.T) {
		// Ofir (2014): f_max = (2π)⁻¹ sqrt(GM/(3R)³); 0.601901 d with python3 from GM☉, R☉.
		if p := RochePeriod(rhoSun); math.Abs(p-0.601901) > 1e-6 {
			t.Errorf("P = %.7f d", p)
		}
	})
	t.Run("the grid's duty cycle is the small-angle central duration over the period", func(t *testing.T) {
		g := Grid{Density: rhoSun}
		for _, p := range []float64{10, 100, 365.25} {
			q := g.DutyCycle(1 / p)
			exact := CentralDuration(p, rhoSun) / p
			// arcsin(x) = x(1 + x²/6 + …): the relative gap is (R/a)²/6.
			a := ScaledAxis(p, rhoSun)
			if gap := exact/q - 1; math.Abs(gap-1/(6*a*a)) > 1/(a*a*a*a) {
				t.Errorf("P = %g d: q = %.8g, exact %.8g", p, q, exact)
			}
		}
	})
	t.Run("durations are never shorter than the cadence", func(t *testing.T) {
		lo, hi := durationRange(0.3, 8*rhoSun, 0.0208)
		if lo < 0.0208 || hi < lo {
			t.Errorf("durations %g … %g d with a 0.0208 d cadence", lo, hi)
		}
		t0 := CentralDuration(5, rhoSun)
		if lo, hi := durationRange(5, rhoSun, 0.0014); lo != durShort*t0 || hi != durLong*t0 {
			t.Errorf("durations %g … %g d, want %g … %g", lo, hi, durShort*t0, durLong*t0)
		}
	})
}
