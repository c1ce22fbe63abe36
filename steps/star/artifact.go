package star

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"dipline/steps"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/stellar"
)

// Artifact is the star step's result: joint draws of the host star and how each quantity
// was obtained.
type Artifact struct {
	Method string
	Basis  Basis
	Star   *stellar.Star
}

// StarDraws gives the draws to the kinds that read a star (dilution, derive, fit).
func (a *Artifact) StarDraws() *stellar.Star { return a.Star }

var _ stellar.StarSource = (*Artifact)(nil)

// oneSigmaLo, oneSigmaHi are the normal distribution's ±1σ quantiles, Φ(∓1).
const oneSigmaLo, oneSigmaHi = 0.15865525393145707, 0.8413447460685429

// summary returns the median and half the 15.9–84.1 % range of v.
func summary(v []float64) (med, sigma float64) {
	lo, med, hi := percentiles(v)
	return med, (hi - lo) / 2
}

// percentiles returns the 15.9th, 50th and 84.1st percentiles of v.
func percentiles(v []float64) (lo, med, hi float64) {
	s := slices.Clone(v)
	slices.Sort(s)
	return sortedQuantile(s, oneSigmaLo), sortedQuantile(s, 0.5), sortedQuantile(s, oneSigmaHi)
}

// Figures lists, for each quantity the method gives, the median of the draws and as its σ
// half the range between the 15.9th and 84.1st percentiles.
func (a *Artifact) Figures() []steps.Figure {
	s, b := a.Star, a.Basis
	src := func(how string) string {
		if how == "" {
			return ""
		}
		return "; " + how
	}
	items := []struct {
		name string
		v    []float64
		unit string
		doc  string
	}{
		{"radius", s.Radius, "R_sun", "stellar radius (IAU 2015 nominal R_sun)" + src(b.Radius)},
		{"mass", s.Mass, "M_sun", "stellar mass (nominal M_sun)" + src(b.Mass)},
		{"teff", s.Teff, "K", "effective temperature" + src(b.Teff)},
		{"luminosity", s.Luminosity, "L_sun", "bolometric luminosity (IAU 2015 nominal L_sun)" + src(b.Luminosity)},
		{"logg", s.LogG, "dex", "log10 of the surface gravity in cm/s², from the mass and radius draws"},
		{"density", s.Density, "g/cm3", "mean stellar density, from the mass and radius draws"},
		{"distance", s.Distance, "pc", "distance" + src(b.Distance)},
		{"abs_k", s.MagK, "mag", "absolute Ks magnitude of the star alone (companions' light removed)"},
	}
	var figs []steps.Figure
	for _, it := range items {
		if it.v == nil {
			continue
		}
		lo, m, hi := percentiles(it.v)
		sg := (hi - lo) / 2
		// The Monte Carlo error of the median of n independent draws, √(π/2) σ/√n (common
		// practice), so that a run-to-run diff can tell a shift from sampling noise.
		mc := math.Sqrt(math.Pi/2) * sg / math.Sqrt(float64(len(it.v)))
		figs = append(figs, steps.Figure{Name: it.name, Value: m, Sigma: sg, MCError: mc, Unit: it.unit,
			Lower: m - lo, Upper: hi - m,
			Doc: "median of the draws, σ half their 15.9–84.1 % range: " + it.doc})
	}
	return figs
}

const (
	tag    = "star"
	format = 1
	// maxDraws bounds the draws a decoder accepts (the draws attribute is at most 1e6).
	maxDraws = 1 << 22
	// maxBands bounds the magnitudes a decoder accepts.
	maxBands = 16
)

// Encode returns the canonical encoding: the method, the basis strings, the relation name,
// each quantity's draws as float64 (with a flag for a quantity the method does not give),
// then the magnitudes sorted by band.
func (a *Artifact) Encode() []byte {
	w := codec.NewWriter(tag, format)
	s, b := a.Star, a.Basis
	w.String(a.Method)
	w.Strings([]string{b.Radius, b.Mass, b.Teff, b.Luminosity, b.Distance})
	w.String(s.Relation)
	for _, v := range [][]float64{s.Radius, s.Mass, s.Teff, s.Luminosity, s.LogG, s.Density, s.Distance, s.MagK} {
		w.Bool(v != nil)
		if v != nil {
			w.Floats(v)
		}
	}
	bands := make([]string, 0, len(s.Mags))
	for k := range s.Mags {
		bands = append(bands, k)
	}
	slices.Sort(bands)
	w.Strings(bands)
	for _, k := range bands {
		w.Float(s.Mags[k])
	}
	return w.Bytes()
}

// Decode reads an artifact back; truncated, foreign or inconsistent bytes are an error.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads an artifact written by Encode and checks it: a known method, radius and mass
// present, every quantity with the same number of draws, radius, mass and every other draw
// finite, radius and mass positive.
func Decode(b []byte) (*Artifact, error) {
	r := codec.NewReader(b, tag, format)
	a := &Artifact{Star: &stellar.Star{}}
	s := a.Star
	a.Method = r.String()
	basis := r.Strings()
	s.Relation = r.String()
	fields := []*[]float64{&s.Radius, &s.Mass, &s.Teff, &s.Luminosity, &s.LogG, &s.Density, &s.Distance, &s.MagK}
	for _, f := range fields {
		if r.Bool() {
			*f = r.Floats()
			if *f == nil {
				*f = []float64{}
			}
		}
	}
	bands := r.Strings()
	if len(bands) > maxBands {
		return nil, fmt.Errorf("star artifact: %d bands", len(bands))
	}
	for _, k := range bands {
		if s.Mags == nil {
			s.Mags = map[string]float64{}
		}
		s.Mags[k] = r.Float()
	}
	if err := r.Err(); err != nil {
		return nil, fmt.Errorf("star artifact: %w", err)
	}
	if !slices.Contains(Methods, a.Method) {
		return nil, fmt.Errorf("star artifact: unknown method %q", a.Method)
	}
	if len(basis) != 5 {
		return nil, fmt.Errorf("star artifact: %d basis entries, want 5", len(basis))
	}
	a.Basis = Basis{Radius: basis[0], Mass: basis[1], Teff: basis[2], Luminosity: basis[3], Distance: basis[4]}
	n := len(s.Radius)
	if n == 0 || n > maxDraws || s.Mass == nil {
		return nil, fmt.Errorf("star artifact: %d radius draws (and mass present: %v)", n, s.Mass != nil)
	}
	for i, f := range fields {
		v := *f
		if v == nil {
			continue
		}
		if len(v) != n {
			return nil, fmt.Errorf("star artifact: quantity %d has %d draws, radius %d", i+1, len(v), n)
		}
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) || (i < 2 && !(x > 0)) {
				return nil, fmt.Errorf("star artifact: quantity %d holds %g", i+1, x)
			}
		}
	}
	for k, m := range s.Mags {
		if math.IsNaN(m) || math.IsInf(m, 0) {
			return nil, fmt.Errorf("star artifact: magnitude %s is %g", k, m)
		}
	}
	if len(s.Mags) != len(bands) || !slices.IsSorted(bands) {
		return nil, errors.New("star artifact: bands repeated or out of order")
	}
	return a, nil
}
