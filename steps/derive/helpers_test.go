package derive

import (
	"math"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/stellar"
)

// starArtifact stands in for a star step's result.
type starArtifact struct{ s *stellar.Star }

func (a starArtifact) StarDraws() *stellar.Star { return a.s }
func (a starArtifact) Encode() []byte           { return nil }
func (a starArtifact) Figures() []steps.Figure  { return nil }

// dilutionArtifact stands in for a dilution step's result.
type dilutionArtifact struct{ d *stellar.Dilution }

func (a dilutionArtifact) DilutionDraws() *stellar.Dilution { return a.d }
func (a dilutionArtifact) Encode() []byte                   { return nil }
func (a dilutionArtifact) Figures() []steps.Figure          { return nil }

// planetTruth is one invented planet of a synthetic posterior.
type planetTruth struct {
	period, k, b float64
	// sdK, sdB are the posterior's spreads of k and b (b is folded at 0).
	sdK, sdB float64
	e, omega float64 // eccentric columns are written when e > 0; omega in radians
}

// posterior builds a fit artifact the way the fit names its columns, with n samples:
// per planet period, t0, k, b, then log10_star_density, q1, q2, then star_density and per
// planet depth, a_over_rstar, t14. lnRho draws the stellar density's logarithm (g/cm³).
func posterior(n int, pls []planetTruth, lnRho func(r *rng.Stream) float64, seed uint64) *fit.Artifact {
	names := []string{}
	pn := []string{"b", "c", "d"}
	for j := range pls {
		names = append(names, pn[j]+".period", pn[j]+".t0", pn[j]+".k", pn[j]+".b")
	}
	names = append(names, "log10_star_density", "q1", "q2", "star_density")
	for j, p := range pls {
		names = append(names, pn[j]+".depth", pn[j]+".a_over_rstar", pn[j]+".t14")
		if p.e > 0 {
			names = append(names, pn[j]+".e", pn[j]+".omega")
		}
	}
	r := rng.Derive(seed, "derive-test/posterior", 0)
	a := &fit.Artifact{Names: names, Sampled: 4*len(pls) + 3}
	for i := 0; i < n; i++ {
		lr := lnRho(r)
		rho := math.Exp(lr)
		var row, tail []float64
		for _, p := range pls {
			k := p.k + p.sdK*r.Normal()
			b := math.Abs(p.b + p.sdB*r.Normal())
			aR, _ := astro.ScaledAxisFromDensity(rho*1000, p.period*astro.Day)
			t14, _ := astro.TotalDuration(p.period, aR, k, b, p.e, p.omega)
			row = append(row, p.period, 0, k, b)
			tail = append(tail, k*k, aR, t14)
			if p.e > 0 {
				tail = append(tail, p.e, p.omega*180/math.Pi) // the fit writes ω in degrees
			}
		}
		row = append(row, lr/math.Ln10, 0.36, 0.3, rho)
		a.Samples = append(a.Samples, append(row, tail...)...)
	}
	a.Best = a.Samples[:len(names)]
	return a
}

// fixed returns a constant ln ρ draw.
func fixedLnRho(v float64) func(*rng.Stream) float64 {
	return func(*rng.Stream) float64 { return math.Log(v) }
}

// gaussLnRho returns ln ρ ~ N(mu, sd).
func gaussLnRho(mu, sd float64) func(*rng.Stream) float64 {
	return func(r *rng.Stream) float64 { return mu + sd*r.Normal() }
}

// sun returns n identical draws of the IAU 2015 nominal Sun (R = 1 R☉, M = 1 M☉ from
// (GM)☉, Teff = 5772 K, L = 1 L☉) with its mean density, and the given magnitudes.
func sun(n int, mags map[string]float64) *stellar.Star {
	s := &stellar.Star{Mags: mags}
	for i := 0; i < n; i++ {
		s.Radius = append(s.Radius, 1)
		s.Mass = append(s.Mass, 1)
		s.Teff = append(s.Teff, astro.SolarTeff)
		s.Luminosity = append(s.Luminosity, 1)
		s.Density = append(s.Density, solarDensity)
	}
	return s
}

// gaussStar returns n draws with ln ρ ~ N(mu, sd), R = 1 R☉ and M consistent with ρ.
func gaussStar(n int, mu, sd float64, seed uint64) *stellar.Star {
	r := rng.Derive(seed, "derive-test/star", 0)
	s := &stellar.Star{}
	for i := 0; i < n; i++ {
		rho := math.Exp(mu + sd*r.Normal())
		s.Radius = append(s.Radius, 1)
		s.Mass = append(s.Mass, rho/solarDensity)
		s.Teff = append(s.Teff, astro.SolarTeff)
		s.Density = append(s.Density, rho)
	}
	return s
}

// defaultOptions are the kind's defaults as Options.
func defaultOptions() Options {
	return Options{Albedo: defaultAlbedo, Redistribution: astro.RedistributionFull, RedistributionName: "full",
		ESSThreshold: defaultESSThreshold, Draws: 4000, MaxPlanetRadius: defaultMaxPlanetRadius, Seed: 11}
}
