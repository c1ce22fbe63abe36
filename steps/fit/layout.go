package fit

import (
	"math"
	"strings"
)

// The full parameter vector holds, per planet j, six entries: period (d), mid-transit time at
// the reference epoch (d), k = Rp/R*, impact parameter b, √e cos ω and √e sin ω (fixed at 0
// for circular orbits). Then two global entries: log10 of the stellar density (g/cm³) and
// the dilution D (fixed at 0 unless sampled); then q1, q2 per band; then, when jitter is on,
// one ln σ_jitter per segment. The sampled vector is the full one without the fixed entries,
// in the same order (Model.free). While sampling, some entries hold another coordinate of
// the same quantity (a depth-like δ for k, a chord for b, logits for q1, q2; see
// Model.physical); the layout says only where each quantity lives.
//
// The offsets below are the layout type's building blocks; code outside this file names an
// entry through layout (lay.K(j), not perPlanet*j+iK).
const (
	perPlanet = 6 // entries per planet
	iPeriod   = 0
	iT0       = 1
	iK        = 2
	iB        = 3
	iSecosw   = 4
	iSesinw   = 5
	gDensity  = 0 // offsets of the global entries after the planets'
	gDilution = 1
	nGlobal   = 2 // global entries
)

// layout names the entries of the full parameter vector of a fit with planets planets and
// bands distinct segment bands. Each method returns an index into the full vector.
type layout struct {
	planets int // planets fitted
	bands   int // distinct segment bands, each with its q1, q2
}

// Period is the index of planet j's period (d).
func (l layout) Period(j int) int { return perPlanet*j + iPeriod }

// T0 is the index of planet j's mid-transit time at its reference epoch (d).
func (l layout) T0(j int) int { return perPlanet*j + iT0 }

// K is the index of planet j's radius ratio k (or the depth-like δ that stands for it).
func (l layout) K(j int) int { return perPlanet*j + iK }

// B is the index of planet j's impact parameter (or the chord coordinate that stands for it).
func (l layout) B(j int) int { return perPlanet*j + iB }

// Secosw is the index of planet j's √e cos ω.
func (l layout) Secosw(j int) int { return perPlanet*j + iSecosw }

// Sesinw is the index of planet j's √e sin ω.
func (l layout) Sesinw(j int) int { return perPlanet*j + iSesinw }

// global is the index of the first entry after the planets'.
func (l layout) global() int { return perPlanet * l.planets }

// Density is the index of log10 of the star's density (g/cm³).
func (l layout) Density() int { return l.global() + gDensity }

// Dilution is the index of the dilution D.
func (l layout) Dilution() int { return l.global() + gDilution }

// Q1 is the index of band b's Kipping q1 (or its logit).
func (l layout) Q1(b int) int { return l.global() + nGlobal + 2*b }

// Q2 is the index of band b's Kipping q2 (or its logit).
func (l layout) Q2(b int) int { return l.Q1(b) + 1 }

// Jitter is the index of segment s's ln σ_jitter.
func (l layout) Jitter(s int) int { return l.global() + nGlobal + 2*l.bands + s }

// eccentricOrbit is planet j's eccentricity e = (√e cos ω)² + (√e sin ω)² and argument of
// periastron ω (rad) in the full vector x.
func (l layout) eccentricOrbit(x []float64, j int) (e, omega float64) {
	c, s := x[l.Secosw(j)], x[l.Sesinw(j)]
	return c*c + s*s, math.Atan2(s, c)
}

// eccentricity reports whether entry i is one of a planet's √e cos ω, √e sin ω.
func (l layout) eccentricity(i int) bool {
	if i < 0 || i >= l.global() {
		return false
	}
	r := i % perPlanet
	return r == iSecosw || r == iSesinw
}

// priorEntry is the index of the entry that the prior key names ("star_density" or
// "<planet>.period|k|b", as checkPriorKey accepts).
func (l layout) priorEntry(key string) int {
	if key == "star_density" {
		return l.Density()
	}
	pl, par, _ := strings.Cut(key, ".")
	j := planetIndex(pl)
	switch par {
	case "k":
		return l.K(j)
	case "b":
		return l.B(j)
	}
	return l.Period(j)
}

// layout is the model's parameter layout.
func (m *Model) layout() layout { return layout{planets: m.planets, bands: len(m.bands)} }
