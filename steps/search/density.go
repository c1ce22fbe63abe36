package search

import (
	"fmt"
	"math"
	"strconv"

	"dipline/steps/internal/stardensity"
	"dipline/steps/units"
)

// This file words the caution on a star_density that makes the star a giant's. Such a
// density moves the star's Roche-type limit (the orbit at 3 stellar radii, P ∝ ρ^(−1/2);
// bls.RochePeriod, after Ofir 2014) far out: 7 kg/m³, meant as 7 g/cm³, is a giant's
// 0.007 g/cm³ and puts it at 8.5 d instead of 0.27 d, and every planet inside is not
// searched for. Nothing else would say so in plain words: the search finds nothing there,
// and the vet never runs.

// The caution's constants, each with its reason.
const (
	// cutShare is the share of the period range the light curve supports without the limit
	// (defaultShortest to the longest period searched), in the logarithm of the period,
	// that the periods below the limit must make up for the caution: planets are spread
	// about evenly in ln P beyond a few days (common practice), so it is about the share of
	// them not looked for. A third catches the slip of any dwarf's density (below 50
	// g/cm³, a limit beyond 3.2 d) on light curves up to about four and a half years long
	// (longest period searched 835 d: ln(3.2/0.2)/ln(835/0.2) = 1/3).
	cutShare = 1.0 / 3
	// dwarfLow and dwarfHigh bound a typical dwarf's density, g/cm³: a star_density that is
	// one of these in kg/m³ is named as a likely unit slip. ρ = ρ☉ M/R³ with ρ☉ = 1.41
	// g/cm³ puts an F dwarf of 1.4 M☉ and 1.5 R☉ at 0.58 g/cm³ and an M dwarf of 0.15 M☉
	// and 0.17 R☉ at 43 g/cm³ (from memory for the masses and radii).
	dwarfLow, dwarfHigh = 0.5, 50.0
)

// kgPerM3 is one kg/m³ in g/cm³, the unit a density meant in g/cm³ is slipped into.
var kgPerM3 = units.Density.Units["kg/m3"]

// densityCaution says, when star_density (not a star step) made the star a giant's
// (stardensity.Giant) and its Roche-type limit, the shortest period searched, cuts at
// least cutShare of the range from defaultShortest to the longest period searched (in ln
// P), which periods could not be searched and what to write instead, naming a likely
// kg/m³ slip (slipWords). "" otherwise: a density from a star step is the catalogue's, and
// a written period range is searched as asked.
func (a *Artifact) densityCaution() string {
	rho := a.Grid.Density
	if !a.FromStar && rho > stardensity.Dense {
		return denseCaution(rho, a.Grid.N)
	}
	if a.FromStar || !a.RocheCut || !(rho < stardensity.Giant) || !(a.Grid.FMax > 0) || !(a.Grid.FMin > 0) {
		return ""
	}
	lo, hi := 1/a.Grid.FMax, 1/a.Grid.FMin
	share := math.Log(lo/defaultShortest) / math.Log(hi/defaultShortest)
	if !(share >= cutShare) {
		return ""
	}
	dwarf := "If the star is a dwarf"
	if s := slipWords(rho); s != "" {
		dwarf += ", or the value was meant in g/cm3 " + s
	}
	return fmt.Sprintf("star_density is %s g/cm3, a giant's: periods below %s d could not be searched (its Roche-type limit, the orbit at 3 stellar radii: %.0f %% of the %s–%s d range this light curve supports, counted in the logarithm of the period). %s, write its density or star = star.<label>",
		plain(rho), plain2(lo), 100*share, plain2(defaultShortest), plain2(hi), dwarf)
}

// denseCaution is densityCaution's mirror for a written star_density above any
// main-sequence star's (stardensity.Dense): the grid, finer as ρ^(1/3), and the boxes,
// shorter as ρ^(−1/3), are built for it, so a dwarf's transits are searched with boxes far
// shorter than they last, at a cost that grows with the grid (n trial frequencies). It
// names a likely g/cm³-for-kg/m³ slip (slipWords).
func denseCaution(rho float64, n int) string {
	advice := "If it was meant for a main-sequence star, write its density or star = star.<label>"
	if s := slipWords(rho); s != "" {
		advice = "If the value was meant in kg/m3 " + s + ", write " + plain(rho*kgPerM3) + " g/cm3 or star = star.<label>"
	}
	return fmt.Sprintf("star_density is %s g/cm3, denser than any main-sequence star (the densest dwarfs reach about a hundred g/cm3; a white dwarf's, if that is meant, is fine): the search's grid (%d trial periods) and its transit durations are built for such a star, so a dwarf's transits, far longer, are searched with boxes too short for them. %s",
		plain(rho), n, advice)
}

// slipAdvice is what the search's refusal of a light curve too short for the star's
// Roche-type limit adds when that limit comes from a written giant's star_density.
func slipAdvice(rho float64, fromStar bool) string {
	if fromStar || !(rho < stardensity.Giant) {
		return ""
	}
	dwarf := "if the star is a dwarf"
	if s := slipWords(rho); s != "" {
		dwarf += ", or star_density was meant in g/cm3 " + s
	}
	return fmt.Sprintf("; star_density is %s g/cm3, a giant's: %s, write its density or star = star.<label>", plain(rho), dwarf)
}

// slipWords names a unit slip between kg/m³ and g/cm³ that makes a typical dwarf's density
// (dwarfLow to dwarfHigh g/cm³) a giant's or one above any main-sequence star's: for a
// giant's rho (g/cm³), a dwarf's density written in kg/m³ where g/cm³ was meant, "(7 kg/m3
// is 0.007 g/cm3)"; for one above stardensity.Dense, a density in kg/m³ written in g/cm³,
// "(7000 kg/m3 is 7 g/cm3)". "" when neither reading gives a dwarf's density.
func slipWords(rho float64) string {
	var kg, g float64 // the slip's value in kg/m³, and the same density in g/cm³
	switch {
	case rho < stardensity.Giant:
		kg, g = rho/kgPerM3, rho // the dwarf's g/cm³ figure written as kg/m³
	case rho > stardensity.Dense:
		kg, g = rho, rho*kgPerM3 // the dwarf's kg/m³ figure written as g/cm³
	default:
		return ""
	}
	dwarf := kg
	if rho > stardensity.Dense {
		dwarf = g
	}
	if !(dwarf >= dwarfLow && dwarf <= dwarfHigh) {
		return ""
	}
	return fmt.Sprintf("(%s kg/m3 is %s g/cm3)", plain(kg), plain(g))
}

// plain writes x to three significant figures as a user writes it: no exponent and no
// trailing zeros ("0.007", "7", "1.41").
func plain(x float64) string { return sigFigs(x, 3) }

// plain2 writes a period to two significant figures ("8.5", "0.2", "40").
func plain2(x float64) string { return sigFigs(x, 2) }

func sigFigs(x float64, n int) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', n, 64)
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', n, 64), 64)
	return strconv.FormatFloat(r, 'f', -1, 64)
}
