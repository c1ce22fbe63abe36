package astro

import (
	"errors"
	"math"
	"testing"
)

// Check values computed independently from the Mann et al. (2015, ApJ 804, 64)
// and Mann et al. (2019, ApJ 871, 63) coefficients, which are from memory.
func TestMannRelations(t *testing.T) {
	radius := []struct {
		name    string
		mK, r   float64
		wantErr bool
	}{
		{"the brightest calibrated dwarf, M_K = 4.6, has 0.68779 solar radii", 4.6, 0.68779, false},
		{"a mid-M dwarf, M_K = 6.0, has 0.44430 solar radii", 6.0, 0.44430, false},
		{"an M_K = 7.5 dwarf has 0.25650 solar radii", 7.5, 0.25650, false},
		{"the faintest calibrated dwarf, M_K = 9.8, has 0.115372 solar radii", 9.8, 0.115372, false},
		{"M_K = 4.5 is brighter than the calibration and refused", 4.5, 0, true},
		{"M_K = 10 is fainter than the calibration and refused", 10, 0, true},
	}
	for _, c := range radius {
		t.Run(c.name, func(t *testing.T) {
			r, err := MannRadius(c.mK)
			if c.wantErr {
				if !errors.Is(err, ErrDomain) {
					t.Fatalf("got %g, %v; want ErrDomain", r, err)
				}
				return
			}
			if err != nil || math.Abs(r-c.r) > 0.6e-5 {
				t.Errorf("got %.7g, %v; want %.7g", r, err, c.r)
			}
		})
	}
	mass := []struct {
		name    string
		mK, m   float64
		wantErr bool
	}{
		{"M_K = 4.0 gives 0.7438 solar masses", 4.0, 0.7438, false},
		{"M_K = 6.0 gives 0.4404 solar masses", 6.0, 0.4404, false},
		{"M_K = 7.5 gives 0.2280 solar masses", 7.5, 0.2280, false},
		{"M_K = 9.0 gives 0.1174 solar masses", 9.0, 0.1174, false},
		{"M_K = 11.0 gives 0.0735 solar masses", 11.0, 0.0735, false},
		{"M_K = 3.9 is outside the mass calibration and refused", 3.9, 0, true},
		{"M_K = 11.1 is outside the mass calibration and refused", 11.1, 0, true},
		{"a NaN magnitude is refused", math.NaN(), 0, true},
	}
	for _, c := range mass {
		t.Run(c.name, func(t *testing.T) {
			m, err := MannMass(c.mK)
			if c.wantErr {
				if !errors.Is(err, ErrDomain) {
					t.Fatalf("got %g, %v; want ErrDomain", m, err)
				}
				return
			}
			if err != nil || math.Abs(m-c.m) > 0.6e-4 {
				t.Errorf("got %.5g, %v; want %.5g", m, err, c.m)
			}
		})
	}
	t.Run("the metallicity form scales its own polynomial by 1 + 0.04458 [Fe/H]", func(t *testing.T) {
		// 1.9305 − 0.3466·6 + 0.01647·36 = 0.44382 (hand arithmetic on the from-memory
		// coefficients); +0.3 dex scales it by 1 + 0.04458·0.3 = 1.013374.
		r0, _ := MannRadiusFeH(6, 0)
		r3, _ := MannRadiusFeH(6, 0.3)
		if math.Abs(r0-0.44382) > 1e-9 || math.Abs(r3-0.44382*1.013374) > 1e-9 {
			t.Errorf("got %.8g and %.8g", r0, r3)
		}
		// The two forms of Mann et al. (2015) agree within their 2.9 % scatter at solar metallicity.
		r, _ := MannRadius(6)
		if relErr(r0, r) > 0.029 {
			t.Errorf("forms differ by %.3g", relErr(r0, r))
		}
	})
}

// GJ 411: Boyajian et al. (2012, ApJ 757, 112) interferometric R = 0.3924 R☉; K ≈ 3.34,
// ϖ ≈ 392.6 mas (all from memory) give M_K = 6.31 and a Mann et al. (2015)
// radius of 0.399 R☉, within the relation's 2.9 % scatter.
func TestGJ411AgainstInterferometry(t *testing.T) {
	mK, err := AbsoluteMagnitude(3.34, 392.6)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(mK-6.31) > 0.005 {
		t.Errorf("M_K = %.4f, want 6.31", mK)
	}
	r, err := MannRadius(mK)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(r-0.399) > 0.0005 || relErr(r, 0.3924) > 0.029 {
		t.Errorf("R = %.4f, want 0.399 and within 2.9 %% of 0.3924", r)
	}
}

func TestAbsoluteMagnitudeAndStefanBoltzmann(t *testing.T) {
	t.Run("a star at 10 pc has equal apparent and absolute magnitude (distance modulus, common practice)", func(t *testing.T) {
		m, err := AbsoluteMagnitude(7.25, 100)
		if err != nil || math.Abs(m-7.25) > 1e-12 {
			t.Errorf("got %g, %v", m, err)
		}
	})
	t.Run("a zero parallax is refused", func(t *testing.T) {
		if _, err := AbsoluteMagnitude(7, 0); !errors.Is(err, ErrDomain) {
			t.Errorf("got %v", err)
		}
	})
	t.Run("the nominal Sun has the nominal radius (IAU 2015 B3; 5772.00 K computed independently)", func(t *testing.T) {
		r, err := RadiusFromLuminosity(SolarLuminosity, SolarTeff)
		// 5772.003 K vs 5772 K enters squared: 1.2e-6 relative.
		if err != nil || relErr(r, SolarRadius) > 2e-6 {
			t.Errorf("got %g m, %v", r, err)
		}
	})
	t.Run("a star of 4 L☉ at 5772/√2 K has four solar radii (Stefan–Boltzmann scaling, common practice)", func(t *testing.T) {
		r, _ := RadiusFromLuminosity(4*SolarLuminosity, SolarTeff/math.Sqrt2)
		r0, _ := RadiusFromLuminosity(SolarLuminosity, SolarTeff)
		if relErr(r/r0, 4) > 1e-12 {
			t.Errorf("ratio %g", r/r0)
		}
	})
}

// Torres, Andersen & Giménez (2010, A&ARv 18, 67; coefficients from memory): the Sun
// (5772 K, log g 4.438, [Fe/H] 0) gives M = 1.049 M☉ and R = 1.017 R☉ (computed independently).
func TestTorresSun(t *testing.T) {
	m, err := TorresMass(5772, 4.438, 0)
	if err != nil || math.Abs(m-1.049) > 0.0005 {
		t.Errorf("mass %.4f, %v; want 1.049", m, err)
	}
	r, err := TorresRadius(5772, 4.438, 0)
	if err != nil || math.Abs(r-1.017) > 0.0005 {
		t.Errorf("radius %.4f, %v; want 1.017", r, err)
	}
	// Metal-rich stars are more massive at fixed Teff and log g: +0.2 dex → ×10^(0.1010·0.2).
	m2, _ := TorresMass(5772, 4.438, 0.2)
	if relErr(m2/m, math.Pow(10, 0.0202)) > 1e-12 {
		t.Errorf("metallicity scaling %g", m2/m)
	}
	if _, err := TorresMass(-1, 4.4, 0); !errors.Is(err, ErrDomain) {
		t.Errorf("negative Teff: got %v", err)
	}
}

// Mean densities and the Stefan–Boltzmann luminosity. Check values computed independently at
// 40 digits from IAU 2015 Resolution B3 (GM☉, R☉, (GM)⊕, L☉, Teff☉) and CODATA 2018 G and σ:
// ρ☉ = 1409.7798 kg m⁻³, the Sun's mean density of 1.41 g/cm³ (from memory); the Earth,
// with its mean radius 6371.0 km (IUGG, from memory), 5513.414 kg m⁻³, its mean density of
// 5.51 g/cm³ (from memory); 4πR☉²σTeff☉⁴ = 0.99999762 L☉, the nominal values agreeing
// within B3's rounding.
func TestDensityAndLuminosity(t *testing.T) {
	dwarf := must(StellarDensityCGS(0.5, 0.5))
	mDwarf := must(Luminosity(0.3*SolarRadius, 3300)) / SolarLuminosity
	cases := []struct {
		name      string
		got, want float64
		tol       float64 // relative
	}{
		{"the nominal Sun's mean density is 1409.7798 kg per cubic metre", SolarDensity, 1409.7798, 5e-8},
		{"the Earth's mean density is 5513.414 kg per cubic metre", must(MeanDensity(EarthMass, 6.3710e6)), 5513.414, 5e-7},
		{"a star of one solar mass and radius has the Sun's density in g/cm³", must(StellarDensityCGS(1, 1)), SolarDensity / 1000, 1e-15},
		{"a star of half the Sun's mass and radius is four times as dense", dwarf, 5.6391193, 5e-8},
		{"the nominal Sun radiates 0.99999762 nominal luminosities", must(Luminosity(SolarRadius, SolarTeff)) / SolarLuminosity, 0.99999762, 5e-9},
		{"the nominal Sun has one nominal luminosity", must(NominalLuminosity(1, SolarTeff)), 1, 0},
		{"a star twice the Sun's radius at its temperature has four", must(NominalLuminosity(2, SolarTeff)), 4, 1e-15},
		{"both forms agree within B3's rounding for an M dwarf", must(NominalLuminosity(0.3, 3300)), mDwarf, 3e-6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if e := relErr(c.got, c.want); e > c.tol {
				t.Errorf("got %.12g, want %.12g (rel err %.3g > %.3g)", c.got, c.want, e, c.tol)
			}
		})
	}
	for _, c := range []struct {
		name string
		err  error
	}{
		{"a zero radius has no density", func() error { _, e := MeanDensity(1, 0); return e }()},
		{"a negative stellar mass is refused", func() error { _, e := StellarDensityCGS(-1, 1); return e }()},
		{"a NaN temperature is refused", func() error { _, e := Luminosity(1, math.NaN()); return e }()},
		{"a zero radius has no luminosity", func() error { _, e := NominalLuminosity(0, 5000); return e }()},
	} {
		t.Run(c.name, func(t *testing.T) {
			if !errors.Is(c.err, ErrDomain) {
				t.Errorf("got %v, want ErrDomain", c.err)
			}
		})
	}
}
