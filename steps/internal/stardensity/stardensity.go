// Package stardensity reads a host star's mean density from a star step's draws, the one
// way every kind that takes it reads it: the vet step (its density and search-density
// tests) and the search step (the grid and the box durations it builds for the star). It
// also holds the density below which a star is a giant and the one above which no
// main-sequence star is, with which both word their cautions, and the summaries of equal-weight draws (median, 16–84 % range and their Monte
// Carlo errors) the density is read with, which the vet uses for its other draws too.
//
// It knows nothing of workflow files or artifacts: the draws come as a *stellar.Star.
// Main entry points: Draws (the density of each draw), LogSummary (median and σ of ln ρ)
// and Median (the one density a search is built for).
package stardensity

import (
	"math"
	"sort"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/sampler"
	"dipline/steps/internal/stellar"
)

// Giant is the density, in g/cm³, below which a star is a giant's. ρ = ρ☉ M/R³ with
// ρ☉ = 1.41 g/cm³ puts a 1 M☉ star of 3 R☉ at 0.052 g/cm³ and a red giant of 10 R☉ at
// 0.0014 g/cm³ (from memory for the radii).
const Giant = 0.05

// Dense is the density, in g/cm³, above which a star is denser than any main-sequence
// star's (a white dwarf's, about 1e5 to 1e7 g/cm³, is far above it). The densest dwarfs,
// at the hydrogen-burning limit of about 0.08 M☉ in 0.1 R☉ (from memory), reach ρ☉ M/R³ =
// 1.41 × 0.08 / 0.001 = 113 g/cm³; the bound leaves them a margin.
const Dense = 200.0

// Draws returns the star's density draws in g/cm³: its own, or M/R³ in solar units times
// the Sun's density (astro.StellarDensityCGS; NaN for a draw without a positive mass and
// radius) when it gives mass and radius; nil when it gives neither.
func Draws(s *stellar.Star) []float64 {
	if s == nil {
		return nil
	}
	if len(s.Density) > 0 {
		return s.Density
	}
	if len(s.Mass) == 0 || len(s.Mass) != len(s.Radius) {
		return nil
	}
	out := make([]float64, len(s.Mass))
	for i := range out {
		rho, err := astro.StellarDensityCGS(s.Mass[i], s.Radius[i])
		if err != nil {
			rho = math.NaN()
		}
		out[i] = rho
	}
	return out
}

// LogSummary returns the median and σ (half the 16–84 % range) of ln x over the positive
// draws, the median's Monte Carlo error, and the number of draws used.
func LogSummary(x []float64) (med, sigma, mc float64, n int) {
	lx := make([]float64, 0, len(x))
	for _, v := range x {
		if v > 0 && !math.IsInf(v, 0) {
			lx = append(lx, math.Log(v))
		}
	}
	s := FiniteSorted(lx)
	if len(s) == 0 {
		return math.NaN(), math.NaN(), 0, 0
	}
	med, sigma, mc = OneSigma(s)
	return med, sigma, mc, len(s)
}

// Median returns the star's density in g/cm³ that a step takes as the star's one value:
// exp of the median ln ρ of Draws (LogSummary), the value the vet's search-density test
// compares a search's assumed density with; n is the number of draws it rests on, 0 (and
// rho NaN) when the star gives no density, nor mass and radius.
func Median(s *stellar.Star) (rho float64, n int) {
	med, _, _, n := LogSummary(Draws(s))
	if n == 0 {
		return math.NaN(), 0
	}
	return math.Exp(med), n
}

// QuantileMC returns the p-quantile of sorted draws and its Monte Carlo error, estimated
// as half the spread between the quantiles at p ± √(p(1−p)/n) (the binomial scatter of a
// sample quantile's rank; common practice), treating the draws as independent.
func QuantileMC(sorted []float64, p float64) (q, mc float64) {
	n := float64(len(sorted))
	q = sampler.Quantile(sorted, p)
	if n < 2 {
		return q, 0
	}
	s := math.Sqrt(p * (1 - p) / n)
	lo, hi := math.Max(0, p-s), math.Min(1, p+s)
	return q, (sampler.Quantile(sorted, hi) - sampler.Quantile(sorted, lo)) / 2
}

// FiniteSorted returns the finite values of v, sorted, in a new slice.
func FiniteSorted(v []float64) []float64 {
	out := make([]float64, 0, len(v))
	for _, x := range v {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			out = append(out, x)
		}
	}
	sort.Float64s(out)
	return out
}

// OneSigma returns the median of sorted draws, half their 16–84 % range, and the median's
// Monte Carlo error.
func OneSigma(sorted []float64) (med, sigma, mc float64) {
	med, mc = QuantileMC(sorted, 0.5)
	return med, (sampler.Quantile(sorted, 0.84) - sampler.Quantile(sorted, 0.16)) / 2, mc
}
