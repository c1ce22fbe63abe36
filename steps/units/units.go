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
)

// Dimension is a physical dimension with its accepted units, each given as its size in the
// base unit.
type Dimension struct {
	Name  string
	Base  string
	Units map[string]float64
}

// solarDensity is the mean density of the nominal Sun in g/cm³:
// (GM)☉ / G / (4/3 π R☉³) with IAU 2015 Resolution B3 nominal values and CODATA 2018 G.
var solarDensity = 1.3271244e20 / 6.67430e-11 / (4.0 / 3 * math.Pi * math.Pow(6.957e8, 3)) / 1000

// Time is measured in days.
var Time = &Dimension{Name: "time", Base: "d", Units: map[string]float64{
	"s": 1.0 / 86400, "min": 1.0 / 1440, "h": 1.0 / 24, "d": 1, "yr": 365.25,
}}

// Density is measured in g/cm³; "rho_sun" is the nominal solar mean density.
var Density = &Dimension{Name: "density", Base: "g/cm3", Units: map[string]float64{
	"g/cm3": 1, "kg/m3": 1e-3, "rho_sun": solarDensity,
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

// Format writes a base-unit value back in the given unit.
func (d *Dimension) Format(v float64, unit string) string {
	return strconv.FormatFloat(v/d.Units[unit], 'g', -1, 64) + " " + unit
}
