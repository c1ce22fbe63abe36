package star

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
)

// meas writes a measurement as a user writes it, "v ± s unit"; the numbers are written in
// full, so that in the base unit (arcsec for a parallax) they read back to the same bits.
func meas(v, s float64, unit string) string {
	return strconv.FormatFloat(v, 'g', -1, 64) + " ± " + strconv.FormatFloat(s, 'g', -1, 64) + " " + unit
}

// companionsArtifact stands in for a companions step's result.
type companionsArtifact []stellar.Companion

func (c companionsArtifact) CompanionList() []stellar.Companion { return c }
func (c companionsArtifact) Encode() []byte                     { return []byte(fmt.Sprint([]stellar.Companion(c))) }
func (c companionsArtifact) Figures() []steps.Figure            { return nil }

// runStar configures and runs the kind with the given attributes, inputs and seed.
func runStar(t *testing.T, set map[string]any, in steps.Inputs, seed uint64) (*Artifact, []string, error) {
	t.Helper()
	cfg, err := steptest.Config(New(), set)
	if err != nil {
		return nil, nil, err
	}
	var notes []string
	env := steps.Env{Seed: seed, Notef: func(f string, a ...any) { notes = append(notes, fmt.Sprintf(f, a...)) }}
	art, err := New().Run(context.Background(), cfg, in, env)
	if err != nil {
		return nil, notes, err
	}
	return art.(*Artifact), notes, nil
}

func mustRun(t *testing.T, set map[string]any, in steps.Inputs, seed uint64) (*Artifact, []string) {
	t.Helper()
	a, notes, err := runStar(t, set, in, seed)
	if err != nil {
		t.Fatal(err)
	}
	return a, notes
}

// exactDwarf is a cool dwarf at 10 pc (parallax 100 mas, so M_Ks = Ks) with no input
// errors and no relation scatter: every draw equals the relation's value.
func exactDwarf(mk float64) map[string]any {
	return map[string]any{"method": "cool-dwarf", "parallax": meas(0.1, 0, "arcsec"), "ks": meas(mk, 0, "mag"),
		"teff": meas(3400, 0, "K"), "relation_scatter": false, "draws": minDraws}
}

// Check values computed independently from the Mann et al. (2015, ApJ 804, 64, Table 1)
// and Mann et al. (2019, ApJ 871, 63, Table 6) coefficients (from memory).
func TestCoolDwarfReproducesMannCheckValues(t *testing.T) {
	cases := []struct {
		mk, r, m float64
	}{
		{4.6, 0.68779, math.NaN()},
		{6.0, 0.44430, 0.4404},
		{7.5, 0.25650, 0.2280},
		{9.0, math.NaN(), 0.1174},
		{9.8, 0.115372, math.NaN()},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("a dwarf of absolute Ks %.1f has the published radius and mass", c.mk), func(t *testing.T) {
			a, _ := mustRun(t, exactDwarf(c.mk), steps.Inputs{}, 1)
			r, _ := summary(a.Star.Radius)
			m, _ := summary(a.Star.Mass)
			if !math.IsNaN(c.r) && math.Abs(r-c.r) > 1e-5 {
				t.Errorf("radius %.6f R_sun, want %.6f (Mann et al. 2015)", r, c.r)
			}
			if !math.IsNaN(c.m) && math.Abs(m-c.m) > 1e-4 {
				t.Errorf("mass %.5f M_sun, want %.4f (Mann et al. 2019)", m, c.m)
			}
		})
	}
}

// With [Fe/H] the Mann et al. (2015) form (1.9305 − 0.3466 M_K + 0.01647 M_K²)(1 + 0.04458
// [Fe/H]) is used (Table 1, from memory); at M_K = 6.0 it gives 0.44382 R_sun for solar
// metallicity and 0.449756 R_sun at +0.3 dex (computed from those coefficients with
// python3).
func TestCoolDwarfUsesTheMetallicityForm(t *testing.T) {
	for _, c := range []struct {
		feh, r float64
	}{{0, 0.44382}, {0.3, 0.4497556}} {
		t.Run(fmt.Sprintf("[Fe/H] = %+.1f gives %.5f solar radii", c.feh, c.r), func(t *testing.T) {
			a, _ := mustRun(t, maps(exactDwarf(6.0), "feh", meas(c.feh, 0, "dex")), steps.Inputs{}, 1)
			if r, _ := summary(a.Star.Radius); math.Abs(r-c.r) > 1e-6 {
				t.Errorf("radius %.7f, want %.7f", r, c.r)
			}
			if !strings.Contains(a.Basis.Radius, "[Fe/H]") {
				t.Errorf("basis %q does not name the metallicity form", a.Basis.Radius)
			}
		})
	}
}

// GJ 411: Ks ≈ 3.34, parallax ≈ 392.6 mas (rough recollections, from memory) give M_Ks = 6.31
// and a Mann et al. (2015) radius of 0.399 R_sun (computed independently), within the
// relation's 2.89 % scatter of the interferometric 0.3924 ± 0.0033 R_sun (Boyajian et al.
// 2012, ApJ 757, 112; from memory).
func TestGJ411SanityValue(t *testing.T) {
	a, _ := mustRun(t, map[string]any{"method": "cool-dwarf", "parallax": meas(0.3926, 0, "arcsec"), "ks": meas(3.34, 0, "mag"),
		"teff": meas(3500, 0, "K"), "relation_scatter": false, "draws": minDraws}, steps.Inputs{}, 1)
	r, _ := summary(a.Star.Radius)
	mk, _ := summary(a.Star.MagK)
	if math.Abs(mk-6.31) > 0.005 {
		t.Errorf("M_Ks %.4f, want 6.31", mk)
	}
	if math.Abs(r-0.399) > 0.0005 {
		t.Errorf("radius %.4f R_sun, want 0.399 [V from the Mann 2015 coefficients]", r)
	}
	if d := math.Abs(r/0.3924 - 1); d > 0.0289 {
		t.Errorf("radius %.4f is %.1f %% from the interferometric 0.3924, beyond the 2.89 %% scatter", r, 100*d)
	}
}

// The Monte Carlo spread of R must match first-order propagation,
// σ_R/R = √(s² + (d ln R/dM_K · σ_MK)²), with s = 2.89 % (Mann et al. 2015, from memory)
// and σ_MK² = σ_Ks² + (5/ln 10 · σ_ϖ/ϖ)² (distance modulus, common practice). The
// tolerance, 2 % of σ, covers the Monte Carlo error of a 16–84 % half-range from 200000
// draws (about 0.4 %, for normal draws; asymptotic order-statistic variance) and the
// relation's curvature over ±σ_MK (second order, a few tenths of a per cent here).
func TestRadiusSpreadMatchesFirstOrderPropagation(t *testing.T) {
	cases := []struct {
		name          string
		ks, sks       float64
		plx, splx     float64
		scatter       bool
		relativeLimit float64
	}{
		{"measurement errors and relation scatter add in quadrature", 8.62, 0.05, 35.21, 0.5, true, 0.02},
		{"measurement errors alone propagate through the slope", 8.62, 0.10, 35.21, 0.9, false, 0.02},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a, _ := mustRun(t, map[string]any{"method": "cool-dwarf", "parallax": meas(c.plx/1000, c.splx/1000, "arcsec"),
				"ks": meas(c.ks, c.sks, "mag"), "teff": meas(3400, 50, "K"), "relation_scatter": c.scatter, "draws": 200000}, steps.Inputs{}, 7)
			mk0, _ := astro.AbsoluteMagnitude(c.ks, c.plx)
			slope, err := RadiusSlope(mk0)
			if err != nil {
				t.Fatal(err)
			}
			smk := math.Hypot(c.sks, 5/math.Ln10*c.splx/c.plx)
			s := 0.0
			if c.scatter {
				s = 0.0289 // Mann et al. (2015), Table 1 (from memory)
			}
			want := math.Hypot(s, slope*smk)
			r, sr := summary(a.Star.Radius)
			t.Logf("σ_R/R = %.5f, first-order %.5f", sr/r, want)
			if got := sr / r; math.Abs(got/want-1) > c.relativeLimit {
				t.Errorf("σ_R/R = %.5f, first-order %.5f (%.1f %% apart)", got, want, 100*(got/want-1))
			}
		})
	}
}

// The Sun: L = 1 L_sun and Teff = 5772 K give R = 1 R_sun, since the IAU 2015 B3 nominal
// values satisfy (L/(4πσR²))^¼ = 5772.00 K (computed independently); its log g is
// log10(100·GM_sun/R_sun²) = 4.438 (IAU 2015 B3 values) and its density the nominal solar one.
func TestSunThroughStefanBoltzmann(t *testing.T) {
	a, _ := mustRun(t, map[string]any{"method": "stefan-boltzmann", "luminosity": meas(1, 0, "L_sun"), "teff": meas(5772, 0, "K"),
		"mass": meas(1, 0, "M_sun"), "draws": minDraws}, steps.Inputs{}, 1)
	r, _ := summary(a.Star.Radius)
	g, _ := summary(a.Star.LogG)
	rho, _ := summary(a.Star.Density)
	if math.Abs(r-1) > 1e-4 {
		t.Errorf("radius %.6f R_sun, want 1", r)
	}
	if math.Abs(g-4.43807) > 1e-4 {
		t.Errorf("log g %.5f, want 4.43807", g)
	}
	if math.Abs(rho/1.41-1) > 0.005 {
		t.Errorf("density %.4f g/cm3, want the Sun's 1.41 (from memory)", rho)
	}
	t.Run("a bolometric flux of 1361 W/m2 at 1 au is one solar luminosity (IAU 2015 B3, S and L within 0.01 %)", func(t *testing.T) {
		a, _ := mustRun(t, map[string]any{"method": "stefan-boltzmann", "fbol": meas(1361, 0, "W/m2"), "distance": meas(astro.AU/astro.Parsec, 0, "pc"),
			"teff": meas(5772, 0, "K"), "mass": meas(1, 0, "M_sun"), "draws": minDraws}, steps.Inputs{}, 1)
		l, _ := summary(a.Star.Luminosity)
		if math.Abs(l-1) > 2e-4 {
			t.Errorf("luminosity %.6f L_sun, want 1", l)
		}
	})
	t.Run("the Sun's Teff and log g give 1.049 M_sun by Torres et al. (2010), computed independently", func(t *testing.T) {
		a, notes := mustRun(t, map[string]any{"method": "stefan-boltzmann", "luminosity": meas(1, 0, "L_sun"), "teff": meas(5772, 0, "K"),
			"logg": meas(4.438, 0, "dex"), "relation_scatter": false, "draws": minDraws}, steps.Inputs{}, 1)
		m, _ := summary(a.Star.Mass)
		if math.Abs(m-1.049) > 0.001 {
			t.Errorf("mass %.4f M_sun, want 1.049", m)
		}
		if !hasNote(notes, "solar metallicity") {
			t.Errorf("no note on the assumed [Fe/H]: %q", notes)
		}
	})
}

func hasNote(notes []string, part string) bool {
	return slices.ContainsFunc(notes, func(n string) bool { return strings.Contains(n, part) })
}

// A companion of equal Ks brightness (Δm = 0) halves the host's share of the blend: the host
// is 2.5 log10 2 = 0.7526 mag fainter (Pogson's ratio, common practice).
func TestCompanionLightIsRemovedFromKs(t *testing.T) {
	base := exactDwarf(6.0)
	base["companions"] = "companions.imaging"
	cases := []struct {
		name  string
		comps []stellar.Companion
		shift float64
		note  string
	}{
		{"an equal-brightness companion in Ks makes the host 0.753 mag fainter",
			[]stellar.Companion{{Name: "B", Band: "Ks", DMag: 0}}, 2.5 * math.Log10(2), "0.753 mag fainter"},
		{"a companion measured in another band changes nothing and is listed",
			[]stellar.Companion{{Name: "C", Band: "I", DMag: 0}}, 0, "C (I)"},
		{"two companions 2.5 mag fainter in K add 10 % of the host's flux each",
			[]stellar.Companion{{Name: "B", Band: "K", DMag: 2.5}, {Name: "C", Band: "Ks", DMag: 2.5}}, 2.5 * math.Log10(1.2), "fainter"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			in := steps.Inputs{Refs: map[string][]steps.Artifact{"companions": {companionsArtifact(c.comps)}}}
			a, notes := mustRun(t, base, in, 1)
			mk, _ := summary(a.Star.MagK)
			if math.Abs(mk-6.0-c.shift) > 1e-9 {
				t.Errorf("host M_Ks %.6f, want %.6f", mk, 6.0+c.shift)
			}
			if !hasNote(notes, c.note) {
				t.Errorf("notes %q lack %q", notes, c.note)
			}
			if a.Star.Mags["Ks"] != 6.0 {
				t.Errorf("Mags[Ks] = %v, want the catalogued blend 6.0", a.Star.Mags["Ks"])
			}
		})
	}
}

// benchmark is a GJ 411-like benchmark (radius 0.3924 ± 0.0033 R_sun, Boyajian et al. 2012,
// from memory; mass and M_Ks invented for the test) and a target differing by delta.
func benchmark(delta, sigma float64) map[string]any {
	return map[string]any{"method": "benchmark", "benchmark_radius": meas(0.3924, 0.0033, "R_sun"), "benchmark_mass": meas(0.386, 0.008, "M_sun"),
		"benchmark_abs_k": meas(6.31, 0.02, "mag"), "delta_abs_k": meas(delta, sigma, "mag"),
		"benchmark_teff": meas(3550, 60, "K"), "delta_teff": meas(0, 0, "K")}
}

func TestBenchmarkTransfer(t *testing.T) {
	t.Run("with zero differences it returns the benchmark's own values and errors", func(t *testing.T) {
		a, _ := mustRun(t, benchmark(0, 0), steps.Inputs{}, 3)
		r, sr := summary(a.Star.Radius)
		m, sm := summary(a.Star.Mass)
		// Monte Carlo error of a median from 20000 normal draws: 1.2533 σ/√N ≈ 0.009 σ, and of
		// the 16–84 half-range about 1.3 % of σ (asymptotic order-statistic variance); we
		// allow 4 standard errors.
		for _, c := range []struct {
			name            string
			med, sig, v, sv float64
		}{{"radius", r, sr, 0.3924, 0.0033}, {"mass", m, sm, 0.386, 0.008}} {
			if math.Abs(c.med-c.v) > 4*0.009*c.sv || math.Abs(c.sig/c.sv-1) > 4*0.013 {
				t.Errorf("%s %.5f ± %.5f, want %.4f ± %.4f", c.name, c.med, c.sig, c.v, c.sv)
			}
		}
	})
	t.Run("ΔM_Ks = +0.3 scales R and M as the relations' own ratios, within the transfer uncertainty", func(t *testing.T) {
		set := benchmark(0.3, 0)
		set["benchmark_radius"], set["benchmark_mass"] = meas(0.3924, 0, "R_sun"), meas(0.386, 0, "M_sun")
		a, _ := mustRun(t, set, steps.Inputs{}, 3)
		r, _ := summary(a.Star.Radius)
		m, _ := summary(a.Star.Mass)
		r0, _ := astro.MannRadius(6.31)
		r1, _ := astro.MannRadius(6.61)
		m0, _ := astro.MannMass(6.31)
		m1, _ := astro.MannMass(6.61)
		limit := defaultTransferPerMag * 0.3
		if d := (r / 0.3924) / (r1 / r0); math.Abs(d-1) > limit {
			t.Errorf("radius ratio %.5f, Mann et al. (2015) differential %.5f: %.2f %% apart, beyond %.1f %%", r/0.3924, r1/r0, 100*(d-1), 100*limit)
		}
		if d := (m / 0.386) / (m1 / m0); math.Abs(d-1) > limit {
			t.Errorf("mass ratio %.5f, Mann et al. (2019) differential %.5f: %.2f %% apart, beyond %.1f %%", m/0.386, m1/m0, 100*(d-1), 100*limit)
		}
	})
	t.Run("the target's Teff is the benchmark's plus the difference", func(t *testing.T) {
		set := benchmark(0.1, 0.01)
		set["delta_teff"] = meas(-120, 20, "K")
		a, _ := mustRun(t, set, steps.Inputs{}, 3)
		if te, _ := summary(a.Star.Teff); math.Abs(te-3430) > 3 {
			t.Errorf("Teff %.1f K, want 3430", te)
		}
		if a.Star.Luminosity == nil {
			t.Error("no luminosity although Teff is known")
		}
	})
}

// The local slopes are central differences of the relations; the analytic derivatives of
// the coefficients of Mann et al. 2015 (ApJ 804, 64; quadratic) and Mann et al. 2019 (ApJ
// 871, 63; quintic in log10 M), from memory, must agree to 1e-6.
func TestSlopesMatchAnalyticDerivatives(t *testing.T) {
	a := []float64{-0.642, -0.208, -8.43e-4, 7.87e-3, 1.42e-4, -2.13e-4}
	for _, mk := range []float64{4.6, 5.2, 6.31, 8.0, 9.8} {
		t.Run(fmt.Sprintf("at M_Ks = %.2f", mk), func(t *testing.T) {
			r := 1.9515 - 0.3520*mk + 0.01680*mk*mk
			wantR := (-0.3520 + 2*0.01680*mk) / r
			x, dlog := mk-7.5, 0.0
			for i := 1; i < len(a); i++ {
				dlog += float64(i) * a[i] * math.Pow(x, float64(i-1))
			}
			wantM := dlog * math.Ln10
			gotR, err1 := RadiusSlope(mk)
			gotM, err2 := MassSlope(mk)
			if err1 != nil || err2 != nil {
				t.Fatal(err1, err2)
			}
			if math.Abs(gotR-wantR) > 1e-6 || math.Abs(gotM-wantM) > 1e-6 {
				t.Errorf("d ln R/dM_K %.8f (want %.8f), d ln M/dM_K %.8f (want %.8f)", gotR, wantR, gotM, wantM)
			}
		})
	}
}

// Past its range a relation is continued by its own polynomial: the Mann et al. (2015,
// 2019) coefficients (from memory) give R(4.0) = 1.9515 − 0.3520·4 + 0.0168·16 = 0.8123 and
// M(11.5) = 0.068302 M_sun.
func TestRelationsAreContinuedByTheirOwnPolynomial(t *testing.T) {
	r, err := mannRadius(4.0, 0, false)
	if err != nil || math.Abs(r-0.8123) > 1e-9 {
		t.Errorf("R(4.0) = %.10f, %v; want 0.8123", r, err)
	}
	m, err := mannMass(11.5)
	if err != nil || math.Abs(m-0.0683017766) > 1e-9 {
		t.Errorf("M(11.5) = %.10f, %v; want 0.0683017766", m, err)
	}
	rf, _ := mannRadius(10.2, 0.3, true)
	want := (1.9305 - 0.3466*10.2 + 0.01647*10.2*10.2) * (1 + 0.04458*0.3)
	if math.Abs(rf-want) > 1e-9 {
		t.Errorf("R(10.2, +0.3 dex) = %.10f, want %.10f", rf, want)
	}
}

func TestOutsideTheRange(t *testing.T) {
	t.Run("a dwarf brighter than M_Ks 4.6 is refused with the value and the range", func(t *testing.T) {
		_, _, err := runStar(t, exactDwarf(4.2), steps.Inputs{}, 1)
		if err == nil || !steps.IsInputError(err) || !strings.Contains(err.Error(), "4.200") || !strings.Contains(err.Error(), "4.6–9.8") {
			t.Fatalf("got %v", err)
		}
	})
	t.Run("a dwarf just inside the range is drawn, and the share of draws past the edge is noted", func(t *testing.T) {
		set := exactDwarf(4.62)
		set["ks"] = meas(4.62, 0.05, "mag")
		_, notes, err := runStar(t, set, steps.Inputs{}, 1)
		if err != nil {
			t.Fatal(err)
		}
		if !hasNote(notes, "fall outside the 4.6–9.8 range") {
			t.Errorf("no note on the draws past the edge: %q", notes)
		}
	})
	t.Run("with allow_extrapolation the same dwarf is drawn with a warning", func(t *testing.T) {
		set := exactDwarf(4.2)
		set["allow_extrapolation"] = true
		a, notes, err := runStar(t, set, steps.Inputs{}, 1)
		if err != nil {
			t.Fatal(err)
		}
		if r, _ := summary(a.Star.Radius); math.Abs(r-(1.9515-0.3520*4.2+0.0168*4.2*4.2)) > 1e-9 {
			t.Errorf("radius %.8f is not the continued Mann et al. (2015) polynomial", r)
		}
		if !hasNote(notes, "allow_extrapolation") {
			t.Errorf("no warning: %q", notes)
		}
	})
}

// V−J colours of K7–M7 dwarfs run from about 3 to 6 and redder is cooler (common practice);
// an M3 dwarf with V−J ≈ 4.5 has Teff near 3400 K (from memory, ±200 K).
func TestColourTemperature(t *testing.T) {
	prev := math.Inf(1)
	for vj := colourLo; vj <= colourHi; vj += 0.25 {
		te := ColourTeff(vj)
		if te >= prev {
			t.Fatalf("Teff(%.2f) = %.0f K is not below Teff(%.2f) = %.0f K", vj, te, vj-0.25, prev)
		}
		prev = te
	}
	if te := ColourTeff(4.5); math.Abs(te-3400) > 200 {
		t.Errorf("Teff(V−J = 4.5) = %.0f K", te)
	}
	t.Run("the cool-dwarf method takes Teff from V and J when teff is absent", func(t *testing.T) {
		set := exactDwarf(6.0)
		delete(set, "teff")
		set["v"], set["j"] = meas(12.5, 0, "mag"), meas(8.0, 0, "mag")
		a, _ := mustRun(t, set, steps.Inputs{}, 1)
		if te, _ := summary(a.Star.Teff); math.Abs(te-ColourTeff(4.5)) > 1e-9 {
			t.Errorf("Teff %.2f, want %.2f", te, ColourTeff(4.5))
		}
		if a.Star.Mags["V"] != 12.5 || a.Star.Mags["J"] != 8.0 {
			t.Errorf("magnitudes not carried: %v", a.Star.Mags)
		}
	})
}

// row is a catalogue row as the engine hands it (invented star).
func row(vals map[string]float64) steps.Row {
	cols := map[string]string{}
	for _, q := range rowColumns {
		cols[q], cols[q+"_err"] = "cat_"+q, "cat_"+q+"_err"
	}
	return steps.Row{File: "nearby.csv", Line: 4, ID: "FW-3318", Values: vals, Columns: cols}
}

func goodRow() map[string]float64 {
	return map[string]float64{"parallax": 35.21, "parallax_err": 0.04, "ks": 8.62, "ks_err": 0.02,
		"teff": 3350, "teff_err": 70, "j": 9.45, "j_err": 0.02}
}

func TestCatalogueRow(t *testing.T) {
	set := map[string]any{"method": "cool-dwarf", "row": `catalogue.nearby["FW-3318"]`}
	t.Run("the columns asked for are the method's, minus those written inline", func(t *testing.T) {
		cfg, err := steptest.Config(New(), map[string]any{"method": "cool-dwarf", "row": "r", "teff": meas(3300, 50, "K")})
		if err != nil {
			t.Fatal(err)
		}
		req, opt := cfg.(steps.ColumnReader).Columns("row")
		if !slices.Equal(req, []string{"parallax", "parallax_err", "ks", "ks_err"}) {
			t.Errorf("required %v", req)
		}
		if slices.Contains(opt, "teff") || !slices.Contains(opt, "feh") || !slices.Contains(opt, "j_err") {
			t.Errorf("optional %v", opt)
		}
		if r, o := cfg.(steps.ColumnReader).Columns("companions"); r != nil || o != nil {
			t.Errorf("columns for another parameter: %v %v", r, o)
		}
	})
	t.Run("an inline value wins over the row's", func(t *testing.T) {
		s := maps(set, "ks", meas(8.0, 0.02, "mag"))
		a, _ := mustRun(t, s, steps.Inputs{Rows: map[string]steps.Row{"row": row(goodRow())}}, 1)
		if a.Star.Mags["Ks"] != 8.0 {
			t.Errorf("Ks %v, want the inline 8.0", a.Star.Mags["Ks"])
		}
	})
	bad := []struct {
		name   string
		edit   func(map[string]float64)
		expect []string
	}{
		{"a blank required parallax names the row and column", func(m map[string]float64) { delete(m, "parallax") }, []string{"nearby.csv:4 (FW-3318)", "cat_parallax", "blank"}},
		{"a negative parallax is refused", func(m map[string]float64) { m["parallax"] = -3 }, []string{"cat_parallax", "positive"}},
		{"a zero error is refused", func(m map[string]float64) { m["ks_err"] = 0 }, []string{"cat_ks_err", "must be positive"}},
		{"a value without its error is refused", func(m map[string]float64) { delete(m, "teff_err") }, []string{"cat_teff_err", "blank"}},
		{"no teff and no colours is refused", func(m map[string]float64) { delete(m, "teff"); delete(m, "teff_err") }, []string{"cat_teff", "v and j"}},
		{"a parallax of low significance is refused", func(m map[string]float64) { m["parallax_err"] = 10 }, []string{"signal-to-noise"}},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			vals := goodRow()
			c.edit(vals)
			_, _, err := runStar(t, set, steps.Inputs{Rows: map[string]steps.Row{"row": row(vals)}}, 1)
			if err == nil || !steps.IsInputError(err) {
				t.Fatalf("got %v, want an input error", err)
			}
			for _, e := range c.expect {
				if !strings.Contains(err.Error(), e) {
					t.Errorf("%q lacks %q", err, e)
				}
			}
			// dipline check inspects the row's cells before anything runs; only the
			// parallax's significance is judged later, in the draw.
			cfg := steptest.MustConfig(New(), set).(*Config)
			ierr := Kind{}.Inspect(cfg, steps.Inputs{Rows: map[string]steps.Row{"row": row(vals)}})
			if atCheck := !strings.Contains(c.name, "low significance"); atCheck != (ierr != nil) {
				t.Errorf("inspection gave %v (caught at check: %v)", ierr, atCheck)
			}
		})
	}
}

func maps(m map[string]any, kv ...any) map[string]any {
	out := map[string]any{}
	for k, v := range m {
		out[k] = v
	}
	for i := 0; i+1 < len(kv); i += 2 {
		out[kv[i].(string)] = kv[i+1]
	}
	return out
}

func TestCheckNamesTheAttributeAtFault(t *testing.T) {
	cases := []struct {
		name, attr string
		set        map[string]any
	}{
		{"an unknown method", "method", map[string]any{"method": "isochrone"}},
		{"too few draws", "draws", maps(exactDwarf(6), "draws", 10)},
		{"a cool dwarf without a parallax or row", "parallax", map[string]any{"method": "cool-dwarf", "ks": meas(8, 0.1, "mag"), "teff": meas(3300, 50, "K")}},
		{"a cool dwarf without teff or colours", "teff", map[string]any{"method": "cool-dwarf", "ks": meas(8, 0.1, "mag"), "parallax": meas(0.03, 1e-5, "arcsec")}},
		{"a negative inline parallax", "parallax", maps(exactDwarf(6), "parallax", meas(-0.01, 0.001, "arcsec"))},
		{"a bolometric flux for the cool-dwarf method", "fbol", maps(exactDwarf(6), "fbol", meas(1e-10, 1e-12, "W/m2"))},
		{"stefan-boltzmann with neither mass nor log g", "mass", map[string]any{"method": "stefan-boltzmann", "luminosity": meas(1, 0.1, "L_sun"), "teff": meas(5772, 50, "K")}},
		{"stefan-boltzmann with a flux but no distance", "parallax", map[string]any{"method": "stefan-boltzmann", "fbol": meas(1e-10, 1e-12, "W/m2"), "teff": meas(5772, 50, "K"), "mass": meas(1, 0.1, "M_sun")}},
		{"both a parallax and a distance", "distance", map[string]any{"method": "given", "radius": meas(1, 0.1, "R_sun"), "mass": meas(1, 0.1, "M_sun"), "parallax": meas(0.1, 0.001, "arcsec"), "distance": meas(10, 0.1, "pc")}},
		{"a benchmark without its mass", "benchmark_mass", maps(benchmark(0, 0), "benchmark_mass", nil)},
		{"a benchmark Teff without the difference", "delta_teff", maps(benchmark(0, 0), "delta_teff", nil)},
		{"given without a mass", "mass", map[string]any{"method": "given", "radius": meas(1, 0.1, "R_sun")}},
		{"companions for a method that ignores them", "companions", map[string]any{"method": "given", "radius": meas(1, 0.1, "R_sun"), "mass": meas(1, 0.1, "M_sun"), "companions": "companions.x"}},
		{"a transfer uncertainty outside the benchmark method", "transfer_uncertainty", maps(exactDwarf(6), "transfer_uncertainty", 0.1)},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			set := map[string]any{}
			for k, v := range c.set {
				if v != nil {
					set[k] = v
				}
			}
			_, err := steptest.Config(New(), set)
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Fatalf("got %v, want an error on %s", err, c.attr)
			}
		})
	}
	t.Run("the defaults are accepted", func(t *testing.T) {
		// The tags' defaults are the constants whose reasons are given beside them.
		c := steptest.MustConfig(New(), benchmark(0, 0)).(*Config)
		if c.Draws != defaultDraws || c.TransferPerMag != defaultTransferPerMag || !c.Scatter || c.AllowExtrapolation {
			t.Fatalf("defaults decoded as draws %d, transfer_uncertainty %v, relation_scatter %v, allow_extrapolation %v",
				c.Draws, c.TransferPerMag, c.Scatter, c.AllowExtrapolation)
		}
	})
	t.Run("a parallax written in mas is held in mas", func(t *testing.T) {
		c := steptest.MustConfig(New(), maps(exactDwarf(6), "parallax", "35.21 ± 0.04 mas")).(*Config)
		if p := c.inline["parallax"]; math.Abs(p.Value-35.21) > 1e-12 || math.Abs(p.Sigma-0.04) > 1e-15 {
			t.Errorf("parallax held as %v ± %v, want 35.21 ± 0.04 mas", p.Value, p.Sigma)
		}
	})
}

func TestDrawsAreSeeded(t *testing.T) {
	set := map[string]any{"method": "cool-dwarf", "parallax": meas(0.03521, 0.00004, "arcsec"), "ks": meas(8.62, 0.02, "mag"),
		"teff": meas(3350, 70, "K"), "feh": meas(-0.1, 0.1, "dex"), "draws": 2000}
	a1, _ := mustRun(t, set, steps.Inputs{}, 42)
	a2, _ := mustRun(t, set, steps.Inputs{}, 42)
	a3, _ := mustRun(t, set, steps.Inputs{}, 43)
	t.Run("the same seed gives the same bytes", func(t *testing.T) {
		if !bytes.Equal(a1.Encode(), a2.Encode()) {
			t.Error("bytes differ")
		}
	})
	t.Run("another seed gives other draws", func(t *testing.T) {
		if bytes.Equal(a1.Encode(), a3.Encode()) {
			t.Error("bytes equal")
		}
	})
	t.Run("the radius draws do not depend on whether V is given", func(t *testing.T) {
		a4, _ := mustRun(t, maps(set, "v", meas(13, 0.05, "mag")), steps.Inputs{}, 42)
		if !slices.Equal(a1.Star.Radius, a4.Star.Radius) {
			t.Error("radius draws changed")
		}
	})
}

func TestArtifact(t *testing.T) {
	a, _ := mustRun(t, map[string]any{"method": "cool-dwarf", "parallax": meas(0.03521, 0.00004, "arcsec"), "ks": meas(8.62, 0.02, "mag"),
		"teff": meas(3350, 70, "K"), "j": meas(9.45, 0.02, "mag"), "draws": minDraws}, steps.Inputs{}, 4711)
	b := a.Encode()
	t.Run("it decodes to the same bytes", func(t *testing.T) {
		back, err := Kind{}.Decode(b)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(back.Encode(), b) {
			t.Error("round trip changed the bytes")
		}
	})
	t.Run("truncated or padded records are refused", func(t *testing.T) {
		for _, cut := range []int{0, 5, len(b) / 2, len(b) - 1} {
			if _, err := Decode(b[:cut]); err == nil {
				t.Errorf("cut at %d accepted", cut)
			}
		}
		if _, err := Decode(append(slices.Clone(b), 0)); err == nil {
			t.Error("padding accepted")
		}
	})
	t.Run("figures give every quantity with its unit", func(t *testing.T) {
		names := map[string]string{}
		for _, f := range a.Figures() {
			names[f.Name] = f.Unit
			if !(f.Sigma > 0) || f.Doc == "" {
				t.Errorf("%s: σ %v, doc %q", f.Name, f.Sigma, f.Doc)
			}
		}
		want := map[string]string{"radius": "R_sun", "mass": "M_sun", "teff": "K", "luminosity": "L_sun",
			"logg": "dex", "density": "g/cm3", "distance": "pc", "abs_k": "mag"}
		for k, u := range want {
			if names[k] != u {
				t.Errorf("figure %s has unit %q, want %q", k, names[k], u)
			}
		}
	})
	t.Run("its bytes match the golden record", func(t *testing.T) {
		golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), a)
	})
}

func FuzzDecode(f *testing.F) {
	a := &Artifact{Method: MethodGiven, Star: &stellar.Star{Radius: []float64{1, 1.1}, Mass: []float64{1, 0.9},
		Mags: map[string]float64{"J": 9}}}
	f.Add(a.Encode())
	f.Fuzz(func(t *testing.T, b []byte) {
		d, err := Decode(b)
		if err != nil {
			return
		}
		again, err := Decode(d.Encode())
		if err != nil || !bytes.Equal(again.Encode(), d.Encode()) {
			t.Fatalf("re-encoding changed: %v", err)
		}
	})
}

// A Sun at 10 pc (parallax 100 mas) has a bolometric flux L☉/(4π (10 pc)²) (IAU 2015 B3 L☉,
// IAU 2015 B2 parsec); read from a catalogue row with Teff 5772 K it gives 1 R_sun.
func TestStefanBoltzmannFromARow(t *testing.T) {
	d := 10 * astro.Parsec
	fbol := astro.SolarLuminosity / (4 * math.Pi * d * d)
	vals := map[string]float64{"parallax": 100, "parallax_err": 0.01, "fbol": fbol, "fbol_err": fbol * 1e-4,
		"teff": 5772, "teff_err": 1, "ks": 3.3, "ks_err": 0.02}
	set := map[string]any{"method": "stefan-boltzmann", "row": "r", "mass": meas(1, 0.01, "M_sun"), "draws": minDraws}
	t.Run("it reads the flux, the parallax and Teff from the row", func(t *testing.T) {
		a, _ := mustRun(t, set, steps.Inputs{Rows: map[string]steps.Row{"row": row(vals)}}, 5)
		if r, _ := summary(a.Star.Radius); math.Abs(r-1) > 5e-4 {
			t.Errorf("radius %.5f R_sun, want 1", r)
		}
		if dist, _ := summary(a.Star.Distance); math.Abs(dist-10) > 1e-3 {
			t.Errorf("distance %.5f pc, want 10", dist)
		}
	})
	t.Run("with a luminosity written inline it asks the row for no flux and only optionally for a parallax", func(t *testing.T) {
		cfg, err := steptest.Config(New(), maps(set, "luminosity", meas(1, 0.01, "L_sun")))
		if err != nil {
			t.Fatal(err)
		}
		req, opt := cfg.(steps.ColumnReader).Columns("row")
		if !slices.Equal(req, []string{"teff", "teff_err"}) || slices.Contains(opt, "fbol") || !slices.Contains(opt, "parallax") {
			t.Errorf("required %v, optional %v", req, opt)
		}
	})
	t.Run("a blank flux names the row and column", func(t *testing.T) {
		bad := map[string]float64{}
		for k, x := range vals {
			if k != "fbol" {
				bad[k] = x
			}
		}
		_, _, err := runStar(t, set, steps.Inputs{Rows: map[string]steps.Row{"row": row(bad)}}, 5)
		if err == nil || !strings.Contains(err.Error(), "nearby.csv:4 (FW-3318), column cat_fbol") {
			t.Fatalf("got %v", err)
		}
	})
}

// The given method passes R and M through: their medians and σ are the measurements'
// (Monte Carlo error of a median 1.2533 σ/√N, of the 16–84 % half-range about 1.3 % of σ
// for N = 20000; 4 standard errors allowed), and log g and density follow from them.
func TestGivenValues(t *testing.T) {
	a, _ := mustRun(t, map[string]any{"method": "given", "radius": meas(0.80, 0.02, "R_sun"), "mass": meas(0.85, 0.03, "M_sun"),
		"teff": meas(5100, 80, "K"), "distance": meas(42, 0.5, "pc")}, steps.Inputs{}, 9)
	r, sr := summary(a.Star.Radius)
	m, sm := summary(a.Star.Mass)
	if math.Abs(r-0.80) > 4*0.009*0.02 || math.Abs(sr/0.02-1) > 4*0.013 {
		t.Errorf("radius %.4f ± %.4f, want 0.80 ± 0.02", r, sr)
	}
	if math.Abs(m-0.85) > 4*0.009*0.03 || math.Abs(sm/0.03-1) > 4*0.013 {
		t.Errorf("mass %.4f ± %.4f, want 0.85 ± 0.03", m, sm)
	}
	for i := range a.Star.Radius {
		// log g = log10(100 GM☉ M/(R R☉)²), cgs (IAU 2015 B3 nominal values).
		want := math.Log10(100 * astro.SolarGM * a.Star.Mass[i] / math.Pow(a.Star.Radius[i]*astro.SolarRadius, 2))
		if math.Abs(a.Star.LogG[i]-want) > 1e-12 {
			t.Fatalf("draw %d: log g %.6f, want %.6f", i, a.Star.LogG[i], want)
		}
	}
}

func TestSchema(t *testing.T) {
	schema := New().Schema()
	t.Run("the registry accepts the schema", func(t *testing.T) {
		if _, err := steps.NewRegistry(New()); err != nil {
			t.Fatal(err)
		}
	})
	t.Run("the method's choices are the methods", func(t *testing.T) {
		if p := schema.Param("method"); p == nil || !slices.Equal(p.Choices, Methods) {
			t.Errorf("method choices %v, want %v", p, Methods)
		}
	})
	t.Run("every name in the tables is a parameter, and a measurement where it must be", func(t *testing.T) {
		param := func(table, name string, measured bool) {
			t.Helper()
			p := schema.Param(name)
			switch {
			case p == nil:
				t.Errorf("%s names %q, which is not a parameter", table, name)
			case measured && p.Type != steps.Measured:
				t.Errorf("%s names %q, which is a %s, not a measurement", table, name, p.Type)
			}
		}
		for _, q := range (&Config{}).measurements() {
			param("measurements", q.name, true)
		}
		for method, names := range methodAttrs {
			for _, n := range names {
				param("methodAttrs["+method+"]", n, true)
			}
		}
		for n := range inlineUnit {
			param("inlineUnit", n, true)
		}
		for n := range positiveAttrs {
			param("positiveAttrs", n, true)
		}
		for _, n := range rowColumns {
			param("rowColumns", n, true)
		}
	})
	t.Run("each measurement names its own field", func(t *testing.T) {
		// Writing one attribute must set the field its name is listed with, and only that.
		for _, q := range (&Config{}).measurements() {
			cfg, err := schema.New()
			if err != nil {
				t.Fatal(err)
			}
			if err := schema.Set(cfg, schema.Param(q.name), steps.Written{Kind: steps.WrittenString, Str: "1 ± 0.1 " + schema.Param(q.name).Dim.Base}); err != nil {
				t.Fatal(err)
			}
			for _, o := range cfg.(*Config).measurements() {
				if (o.m != nil) != (o.name == q.name) {
					t.Errorf("writing %s sets %s: %v", q.name, o.name, o.m)
				}
			}
		}
	})
	t.Run("every parameter is documented and every measurement has a unit", func(t *testing.T) {
		n := 0
		for _, p := range New().Params() {
			if p.Doc == "" {
				t.Errorf("%s has no doc", p.Name)
			}
			if p.Type == steps.Measured {
				n++
				if inlineUnit[p.Name] == "" {
					t.Errorf("%s has no unit for notes", p.Name)
				}
			}
		}
		if m := len((&Config{}).measurements()); n != m || n != len(inlineUnit) {
			t.Errorf("%d measurement parameters, %d listed by measurements, %d units", n, m, len(inlineUnit))
		}
	})
}
