package bls

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// gRho returns G·ρ in d⁻² for a mean stellar density in g/cm³: the one combination of the
// star's density that Kepler's third law needs for a/R* (astro.ScaledAxisFromGRho), with
// G and the day from astro's table.
func gRho(density float64) float64 {
	return astro.G * density * astro.GramPerCm3 * astro.Day * astro.Day
}

// ScaledAxis returns a/R*, the orbital semi-major axis in stellar radii, of a circular orbit
// of period p (days) around a star of mean density ρ (g/cm³), from Kepler's third law with a
// negligible planet mass (astro.ScaledAxisFromGRho; Seager & Mallén-Ornelas 2003, ApJ 585,
// 1038); NaN outside the law's domain.
func ScaledAxis(p, density float64) float64 {
	a, err := astro.ScaledAxisFromGRho(gRho(density), p)
	if err != nil {
		return math.NaN()
	}
	return a
}

// CentralDuration returns the duration in days of a central (b = 0) transit of a point-like
// planet on a circular orbit of period p: T(P) = (P/π)·arcsin(R*/a), Winn's (2010) total
// duration with k → 0, b = 0, e = 0 (astro.TotalDuration). For a/R* ≤ 1 the orbit lies
// inside the star and half the period is returned.
func CentralDuration(p, density float64) float64 {
	a := ScaledAxis(p, density)
	if a <= 1 {
		return p / 2
	}
	t, err := astro.TotalDuration(p, a, 0, 0, 0, 0)
	if err != nil {
		return math.NaN()
	}
	return t
}

// PeriodAtAxis returns the period in days at which a/R* equals a: P = sqrt(3π a³/(Gρ))
// (astro.PeriodFromScaledAxis); NaN outside its domain.
func PeriodAtAxis(a, density float64) float64 {
	p, err := astro.PeriodFromScaledAxis(a, gRho(density))
	if err != nil {
		return math.NaN()
	}
	return p
}

// rocheAxis is the orbit, in stellar radii, that Ofir (2014, A&A 561, A138) takes as the
// highest useful search frequency, f_max = (2π)⁻¹·sqrt(GM*/(3R*)³) — a "Roche-type" limit
// that depends on the star's density alone.
const rocheAxis = 3

// RochePeriod returns the period in days of the orbit at a = 3 R*, the shortest period the
// default search range admits: P = sqrt(81π/(Gρ)).
func RochePeriod(density float64) float64 { return PeriodAtAxis(rocheAxis, density) }

// Grid is a frequency grid uniform in f^{1/3} (Ofir 2014, A&A 561, A138).
//
// For a circular orbit the duty cycle of a central transit is q(f) = T/P ≈ R*/(π a), and
// with Kepler's law a = (GM*/(4π²f²))^{1/3} this is
//
//	q(f) = (2π)^{2/3}/π · R*/(GM*)^{1/3} · f^{2/3}.
//
// Since M* = (4π/3) ρ R*³, the ratio R*/(GM*)^{1/3} = (4π G ρ/3)^{-1/3} depends on the mean
// density alone, and q(f) = (3π/(Gρ))^{1/3} f^{2/3} / π. A signal of duty cycle q drifts
// by a whole duration over the span S when the frequency changes by q/S; sampling that at OS
// points gives Δf = q(f)/(S·OS) = A·f^{2/3}, with
//
//	A = (3π/(Gρ))^{1/3} / (π·S·OS)   (Ofir's A written with the density),
//
// which is a constant step of A/3 in f^{1/3}. The grid is f_j = (f_min^{1/3} + j·A/3)³ for
// j = 0 … N−1, N = ⌊(f_max^{1/3} − f_min^{1/3})·3/A⌋ + 1; Ofir's count,
// (f_max^{1/3} − f_min^{1/3} + A/3)·3/A, is the same number before rounding down.
type Grid struct {
	Density      float64 // mean stellar density, g/cm³
	Baseline     float64 // S, the span of the data in days
	Oversampling float64 // OS, frequencies per drift of one transit duration
	FMin, FMax   float64 // frequency limits in 1/d (1/longest and 1/shortest period)
	Step         float64 // A/3, the spacing in f^{1/3}, d^{-1/3}
	N            int     // number of frequencies
}

// NewGrid builds the grid for a star of the given density (g/cm³), a data span (days), the
// period range [pmin, pmax] (days) and an oversampling factor.
func NewGrid(density, baseline, pmin, pmax, oversampling float64) (Grid, error) {
	switch {
	case !(density > 0) || math.IsInf(density, 0):
		return Grid{}, fmt.Errorf("star density %g g/cm³ is not positive", density)
	case !(baseline > 0) || math.IsInf(baseline, 0):
		return Grid{}, fmt.Errorf("data span %g d is not positive", baseline)
	case !(pmin > 0) || !(pmax > pmin) || math.IsInf(pmax, 0):
		return Grid{}, fmt.Errorf("period range [%g, %g] d is empty or not positive", pmin, pmax)
	case !(oversampling >= 1) || oversampling > 100:
		return Grid{}, fmt.Errorf("oversampling %g is outside [1, 100]", oversampling)
	}
	g := Grid{Density: density, Baseline: baseline, Oversampling: oversampling, FMin: 1 / pmax, FMax: 1 / pmin}
	a := math.Cbrt(3*math.Pi/gRho(density)) / (math.Pi * baseline * oversampling)
	g.Step = a / 3
	span := math.Cbrt(g.FMax) - math.Cbrt(g.FMin)
	n := math.Floor(span/g.Step) + 1
	if n > maxFrequencies {
		return Grid{}, fmt.Errorf("the grid would hold %.3g frequencies (more than %d): shorten the period range or lower the oversampling", n, maxFrequencies)
	}
	g.N = int(n)
	return g, nil
}

// maxFrequencies bounds the grid so that a mistaken range cannot exhaust memory: 2×10⁷
// frequencies is fifty times the 4-year, 0.2–100 d grid of a red dwarf.
const maxFrequencies = 20_000_000

// Freq returns the j-th frequency in 1/d.
func (g Grid) Freq(j int) float64 {
	u := math.Cbrt(g.FMin) + float64(j)*g.Step
	return u * u * u
}

// Period returns the j-th trial period in days.
func (g Grid) Period(j int) float64 { return 1 / g.Freq(j) }

// DutyCycle returns q(f) = (3π/(Gρ))^{1/3} f^{2/3}/π, the small-angle duty cycle of a central
// transit on which the grid spacing rests.
func (g Grid) DutyCycle(f float64) float64 {
	return math.Cbrt(3*math.Pi/gRho(g.Density)) * math.Cbrt(f*f) / math.Pi
}
