// Package units parses the quantities written in workflow files: a number followed by a
// unit, such as "18 h", "29.4 min" or "5.6 g/cm3". Each dimension converts to one base unit
// that the step kinds use internally (days for time, g/cm³ for density). It does not guess:
// a number without a unit, or a unit of the wrong dimension, is an error that lists the
// units accepted.
package units

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"dipline/steps/internal/astro"
)

// Dimension is a physical dimension with its accepted units, each given as its size in the
// base unit.
type Dimension struct {
	Name  string
	Base  string
	Units map[string]float64
}

// solarDensity is the mean density of the nominal Sun in g/cm³, (GM)☉ / G / (4/3 π R☉³)
// with IAU 2015 Resolution B3 nominal values and CODATA 2018 G (astro.SolarDensity).
var solarDensity = astro.SolarDensity / astro.GramPerCm3

// Time is measured in days; a year is the Julian year.
var Time = &Dimension{Name: "time", Base: "d", Units: map[string]float64{
	"s": 1 / astro.Day, "min": 1.0 / 1440, "h": 1.0 / 24, "d": 1, "yr": astro.JulianYear / astro.Day,
}}

// Density is measured in g/cm³; "rho_sun" is the nominal solar mean density.
var Density = &Dimension{Name: "density", Base: "g/cm3", Units: map[string]float64{
	"g/cm3": 1, "kg/m3": 1e-3, "rho_sun": solarDensity,
}}

// Nominal solar and planetary values (IAU 2015 Resolution B3), the au (IAU 2012
// Resolution B2) and the parsec (IAU 2015 Resolution B2), in SI, from astro's one table.
const (
	rSun     = astro.SolarRadius   // m
	rEarthEq = astro.EarthRadius   // m, equatorial
	rJupEq   = astro.JupiterRadius // m, equatorial
	gmSun    = astro.SolarGM       // m³ s⁻²
	gmEarth  = astro.EarthGM       // m³ s⁻²
	gmJup    = astro.JupiterGM     // m³ s⁻²
	lSun     = astro.SolarLuminosity
	au       = astro.AU
	parsec   = astro.Parsec
)

// Radius (of a star or planet) is measured in nominal solar radii.
var Radius = &Dimension{Name: "radius", Base: "R_sun", Units: map[string]float64{
	"R_sun": 1, "R_earth": rEarthEq / rSun, "R_jup": rJupEq / rSun, "km": 1e3 / rSun,
}}

// Mass is measured in nominal solar masses (ratios of the nominal GM values, so that no
// value of G enters).
var Mass = &Dimension{Name: "mass", Base: "M_sun", Units: map[string]float64{
	"M_sun": 1, "M_earth": gmEarth / gmSun, "M_jup": gmJup / gmSun,
}}

// Temperature is measured in kelvin.
var Temperature = &Dimension{Name: "temperature", Base: "K", Units: map[string]float64{"K": 1}}

// Luminosity is measured in nominal solar luminosities.
var Luminosity = &Dimension{Name: "luminosity", Base: "L_sun", Units: map[string]float64{
	"L_sun": 1, "W": 1 / lSun,
}}

// Angle (a parallax or a separation) is measured in arcseconds.
var Angle = &Dimension{Name: "angle", Base: "arcsec", Units: map[string]float64{
	"uas": 1e-6, "mas": 1e-3, "arcsec": 1, "arcmin": 60, "deg": 3600,
}}

// Distance is measured in parsecs.
var Distance = &Dimension{Name: "distance", Base: "pc", Units: map[string]float64{
	"au": au / parsec, "pc": 1, "kpc": 1e3,
}}

// Magnitude is measured in magnitudes.
var Magnitude = &Dimension{Name: "magnitude", Base: "mag", Units: map[string]float64{"mag": 1}}

// Irradiance (a bolometric flux at Earth) is measured in W/m².
var Irradiance = &Dimension{Name: "irradiance", Base: "W/m2", Units: map[string]float64{
	"W/m2": 1, "erg/s/cm2": 1e-3,
}}

// Length (a wavelength, say the effective wavelength of a photometric band) is measured in
// metres, so that it enters the SI numerics of steps/internal/astro unchanged.
var Length = &Dimension{Name: "length", Base: "m", Units: map[string]float64{
	"nm": 1e-9, "um": 1e-6, "mm": 1e-3, "m": 1,
}}

// ProperMotion (a star's motion across the sky) is measured in mas/yr; μ_α is written as
// μ_α* = μ_α cos δ, as catalogues give it.
var ProperMotion = &Dimension{Name: "proper motion", Base: "mas/yr", Units: map[string]float64{
	"uas/yr": 1e-3, "mas/yr": 1, "arcsec/yr": 1e3,
}}

// Names lists the dimension's units, smallest first.
func (d *Dimension) Names() []string {
	n := make([]string, 0, len(d.Units))
	for u := range d.Units {
		n = append(n, u)
	}
	sort.Slice(n, func(i, j int) bool { return d.Units[n[i]] < d.Units[n[j]] })
	return n
}

// Parse reads "value unit" and returns the value in the base unit.
func (d *Dimension) Parse(s string) (float64, error) {
	t := strings.TrimSpace(s)
	i := strings.IndexFunc(t, func(r rune) bool {
		return !(r >= '0' && r <= '9' || r == '.' || r == '-' || r == '+' || r == 'e' || r == 'E')
	})
	// An exponent letter followed by a unit (e.g. "3e") is not a number; back off to the
	// longest prefix that parses.
	num, unit := t, ""
	if i >= 0 {
		num, unit = t[:i], strings.TrimSpace(t[i:])
	}
	for num != "" {
		if _, err := strconv.ParseFloat(num, 64); err == nil || errors.Is(err, strconv.ErrRange) {
			break
		}
		unit = strings.TrimSpace(num[len(num)-1:] + unit)
		num = num[:len(num)-1]
	}
	if num == "" {
		return 0, fmt.Errorf("%q is not a %s: expected a number and a unit (%s)", s, d.Name, strings.Join(d.Names(), ", "))
	}
	v, _ := strconv.ParseFloat(num, 64)
	if unit == "" {
		return 0, fmt.Errorf("%q has no unit: write it as a %s with one of %s, e.g. \"%s %s\"", s, d.Name, strings.Join(d.Names(), ", "), num, d.Base)
	}
	f, ok := d.Units[unit]
	if !ok {
		return 0, fmt.Errorf("%q: unknown %s unit %q; use one of %s", s, d.Name, unit, strings.Join(d.Names(), ", "))
	}
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, fmt.Errorf("%q is not a finite %s", s, d.Name)
	}
	return v * f, nil
}

// measurementSigns are the ways a workflow may write the sign between a value and its
// uncertainty: the sign itself, and two spellings in plain ASCII for keyboards without it.
// "+/-" is looked for before "+-", which it does not contain.
var measurementSigns = []string{"±", "+/-", "+-"}

// ParseMeasurement reads "value ± sigma unit" (or with "+/-" or "+-" for "±") and returns
// both in the base unit. A value without one of those signs is an error: a measurement
// carries its uncertainty.
func (d *Dimension) ParseMeasurement(s string) (value, sigma float64, err error) {
	sep, i := "", -1
	for _, sign := range measurementSigns {
		if i = strings.Index(s, sign); i >= 0 {
			sep = sign
			break
		}
	}
	if i < 0 {
		return 0, 0, fmt.Errorf("%q has no uncertainty: a measurement is written \"value ± sigma unit\", e.g. \"1.2 ± 0.1 %s\"; \"+/-\" or \"+-\" may stand for \"±\" (units: %s)", s, d.Base, strings.Join(d.Names(), ", "))
	}
	head, tail := strings.TrimSpace(s[:i]), strings.TrimSpace(s[i+len(sep):])
	sigma, err = d.Parse(tail)
	if err != nil {
		return 0, 0, fmt.Errorf("%q: the uncertainty: %w", s, err)
	}
	// The unit is written once, after the uncertainty; it applies to the value too.
	unit := ""
	for u := range d.Units {
		if strings.HasSuffix(tail, u) && len(u) > len(unit) {
			unit = u
		}
	}
	value, err = d.Parse(head + " " + unit)
	if err != nil {
		return 0, 0, fmt.Errorf("%q: the value: %w", s, err)
	}
	if sigma < 0 {
		return 0, 0, fmt.Errorf("%q: the uncertainty must not be negative", s)
	}
	return value, sigma, nil
}

// Format writes a base-unit value back in the given unit.
func (d *Dimension) Format(v float64, unit string) string {
	return strconv.FormatFloat(v/d.Units[unit], 'g', -1, 64) + " " + unit
}
