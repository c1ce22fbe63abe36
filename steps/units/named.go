package units

import "sort"

// Metallicity and SurfaceGravity are the dimensions of [Fe/H] and log g, both in dex.
var (
	Metallicity    = &Dimension{Name: "metallicity [Fe/H]", Base: "dex", Units: map[string]float64{"dex": 1}}
	SurfaceGravity = &Dimension{Name: "surface gravity log10(g / cm s^-2)", Base: "dex", Units: map[string]float64{"dex": 1}}
)

// byTag names each dimension as a step kind's configuration struct names it in its `dim`
// tag (see steps.Param).
var byTag = map[string]*Dimension{
	"time": Time, "density": Density, "radius": Radius, "mass": Mass, "temperature": Temperature,
	"luminosity": Luminosity, "angle": Angle, "distance": Distance, "magnitude": Magnitude,
	"irradiance": Irradiance, "length": Length, "metallicity": Metallicity, "gravity": SurfaceGravity,
	"proper_motion": ProperMotion,
}

// Named returns the dimension a `dim` tag names, or nil.
func Named(tag string) *Dimension { return byTag[tag] }

// Tags lists the names Named knows, sorted.
func Tags() []string {
	out := make([]string, 0, len(byTag))
	for t := range byTag {
		out = append(out, t)
	}
	sort.Strings(out)
	return out
}
