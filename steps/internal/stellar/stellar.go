// Package stellar holds the shapes in which the star, companions and dilution step kinds
// hand their results to the kinds that read them (dilution, fit in coupled mode, derive),
// so that those kinds depend on a small interface rather than on each other's artifacts.
// It holds no numerics of its own: the relations are in steps/internal/astro, and the
// sampling in the kinds.
//
// Draws are equal-weight Monte Carlo samples. The slices of one Star are drawn jointly: index
// i of every slice belongs to the same realisation, so correlations (a radius and a mass that
// share one parallax draw) are kept.
package stellar

// Star holds joint draws of a host star's properties. Every slice has the same length; a
// quantity a method cannot give is nil.
type Star struct {
	Radius     []float64 // R☉ (IAU 2015 nominal)
	Mass       []float64 // M☉ (nominal, from (GM)☉)
	Teff       []float64 // K
	Luminosity []float64 // L☉ (nominal)
	LogG       []float64 // log10 of cgs surface gravity
	Density    []float64 // mean density, g/cm³
	Distance   []float64 // pc
	// MagK is the star's own absolute Ks magnitude after removing companions' light, when
	// known (cool-dwarf and analog methods); the dilution step uses it to estimate a
	// companion's radius from the same relation.
	MagK []float64
	// Relation names the radius relation used for MagK (e.g. "Mann et al. 2015"), so that
	// a companion's radius is estimated consistently; empty when none.
	Relation string
	// Mags holds apparent magnitudes by band (e.g. "J", "Ks"), as catalogued, for the
	// spectroscopy metrics; NaN-free, one value per band, not sampled.
	Mags map[string]float64
}

// Len is the number of draws.
func (s *Star) Len() int { return len(s.Radius) }

// StarSource is an artifact that describes a host star.
type StarSource interface {
	StarDraws() *Star
}

// Companion is one star near the target whose light may fall in the photometric aperture,
// as measured by high-resolution imaging or a catalogue.
type Companion struct {
	Name       string
	Band       string  // the band of DMag, e.g. "Ks"
	DMag       float64 // companion minus target magnitude in Band
	DMagErr    float64 // one-sigma error of DMag
	Separation float64 // arcsec; NaN when unknown
	// Radius is the companion's radius in R☉ when the user gives it (with RadiusErr); NaN
	// when it is to be estimated from the target's relation.
	Radius, RadiusErr float64
}

// CompanionSource is an artifact that lists companions.
type CompanionSource interface {
	CompanionList() []Companion
}

// Hypothesis is one answer to "which star does the planet orbit?".
type Hypothesis struct {
	// Host is "target" or a companion's Name.
	Host string
	// FluxRatio holds draws of the light of all other stars over the host's, in the light
	// curve's band: the observed depth is the true depth divided by 1 + FluxRatio.
	FluxRatio []float64
	// RadiusScale holds draws of R_host/R_target (1 for the target itself): a radius ratio
	// k measured against the host converts to the target's frame by this factor. It is nil
	// when the host's radius is unknown (no radius given and none estimable); the planet's
	// radius relative to its host is then all that can be said.
	RadiusScale []float64
}

// Dilution holds the dilution step's hypotheses; the first is always the target.
type Dilution struct {
	// Band is the light curve's band the flux ratios are for.
	Band string
	// AlreadyCorrected is true when the light curve's flux was corrected for crowding and
	// no further correction is applied (FluxRatio is then all zeros).
	AlreadyCorrected bool
	Hypotheses       []Hypothesis
}

// DilutionSource is an artifact that gives dilution draws.
type DilutionSource interface {
	DilutionDraws() *Dilution
}
