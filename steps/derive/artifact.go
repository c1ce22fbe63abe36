package derive

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/codec"
)

// HostResult is a planet's radius under the hypothesis that it orbits a companion star.
type HostResult struct {
	// Host is the companion's name as the dilution step gives it.
	Host string
	// Quantities are the radius ratio against the host and the radius in R⊕ and R_J.
	Quantities []Quantity
	// NotPlanetary is true when the median radius exceeds the max_planet_radius threshold.
	NotPlanetary bool
}

// Planet holds one planet's derived quantities.
type Planet struct {
	Name       string
	Quantities []Quantity
	// Hosts holds the companion host hypotheses, side by side with the target's numbers.
	Hosts []HostResult
}

// Artifact is the derive step's result: per planet the summaries, and how the sample sets
// were combined. The combined draws themselves are not kept.
type Artifact struct {
	// Method says in words how the fit, star and dilution draws were combined.
	Method string
	// FitSamples is the number of fit samples and Draws the number of combined draws.
	FitSamples, Draws int
	// ESS is the Kish effective sample size of the fit samples after reweighting (equal
	// to FitSamples when they were not reweighted); LowESS flags it below ESSThreshold.
	ESS, ESSThreshold  float64
	Reweighted, LowESS bool
	// Mismatch says the transit's density and the star's do not overlap (the reweighting's
	// ESS fell below minESS): the fit's samples were used with equal weights, each paired
	// with a star draw at random, and every planet figure is marked provisional.
	Mismatch bool
	// FitDensity and StarDensity are the 16th, 50th and 84th percentiles of the fit's
	// stellar density and the star's, g/cm³; zero when the star gives no density.
	FitDensity, StarDensity [3]float64
	// Rescaled is the median flux ratio of the other stars to the target applied to k after
	// the fit, 0 when none was.
	Rescaled float64
	// Bandwidth is the kernel bandwidth in ln ρ (0 when the star gave no density).
	Bandwidth float64
	Planets   []Planet
}

// Quantity returns the named quantity of the named planet, or nil.
func (a *Artifact) Quantity(planet, name string) *Quantity {
	for p := range a.Planets {
		if a.Planets[p].Name != planet {
			continue
		}
		for q := range a.Planets[p].Quantities {
			if a.Planets[p].Quantities[q].Name == name {
				return &a.Planets[p].Quantities[q]
			}
		}
	}
	return nil
}

// figure turns a summary into a Figure: the median with σ half the 16–84 % range and the
// distances down to the 16th and up to the 84th percentile as Lower and Upper, or the 95 %
// upper limit with σ = 0 and no interval. The rounded text goes into the doc. The Monte
// Carlo error of a median from ess effective draws is √(π/2) σ/√ess (common practice); for
// a limit it is left at 0, unknown.
func (q Quantity) figure(name string, ess float64) steps.Figure {
	f := steps.Figure{Name: name, Unit: q.Unit}
	if q.UpperLimit {
		f.Value = q.Limit
		f.Doc = q.Doc + "; 95 % upper limit (the posterior piles against zero): " + q.Format()
	} else {
		f.Value = q.Median
		f.Sigma = (q.Hi - q.Lo) / 2
		f.Lower, f.Upper = q.Median-q.Lo, q.Hi-q.Median
		if ess > 0 {
			f.MCError = math.Sqrt(math.Pi/2) * f.Sigma / math.Sqrt(ess)
		}
		f.Doc = q.Doc + "; median, 16–84 %: " + q.Format()
	}
	return f
}

// unknownHostRadius is why a planet's radius on a companion is undefined: the dilution step
// knows no radius for that companion.
const unknownHostRadius = "the radius of %s is not known (the companions table gives none and none could be estimated), so the planet's radius on it cannot be computed"

// quantity returns the planet's named quantity, or nil.
func (p *Planet) quantity(name string) *Quantity {
	for i := range p.Quantities {
		if p.Quantities[i].Name == name {
			return &p.Quantities[i]
		}
	}
	return nil
}

// effectiveSamples is the number of effective fit samples behind the summaries: the
// reweighting's ESS, or every sample when they kept equal weights.
func (a *Artifact) effectiveSamples() float64 {
	if a.Mismatch {
		return float64(a.FitSamples)
	}
	return a.ESS
}

// provisional starts the doc of every figure that pairs the fit with the star when their
// densities do not overlap.
const provisional = "PROVISIONAL: the transit's and the star's densities do not overlap, so the fit's samples were paired with the star's draws without reweighting (see the step's cautions); "

// Figures lists per planet every quantity ("b.radius_earth"), each companion hypothesis
// ("b.on_<host>.radius_jup"), the combination's effective sample size and whether the
// densities failed to overlap (combine.density_mismatch).
func (a *Artifact) Figures() []steps.Figure {
	var figs []steps.Figure
	essDoc := "Kish effective sample size of the fit's samples after reweighting by the star's density, (Σw)²/Σw²"
	switch {
	case a.Mismatch:
		essDoc = fmt.Sprintf("Kish effective sample size of the reweighting by the star's density, below the floor of %g: the densities do not overlap and the fit's samples were used with equal weights instead", float64(minESS))
	case a.LowESS:
		essDoc = fmt.Sprintf("below %g, the summaries are noisy (see the step's cautions). ", a.ESSThreshold) + essDoc
	case !a.Reweighted:
		essDoc = "fit samples used with equal weights (not reweighted)"
	}
	mismatch, mismatchDoc := 0.0, "1 when the transit's stellar density and the star's do not overlap and the planets' figures are provisional, else 0"
	if a.Mismatch {
		mismatch = 1
	}
	figs = append(figs,
		steps.Figure{Name: "combine.ess", Value: a.ESS, Doc: essDoc},
		steps.Figure{Name: "combine.fit_samples", Value: float64(a.FitSamples), Doc: a.Method},
		steps.Figure{Name: "combine.density_mismatch", Value: mismatch, Doc: mismatchDoc})
	mark := func(f steps.Figure) steps.Figure {
		if a.Mismatch {
			f.Doc = provisional + f.Doc
		}
		return f
	}
	ess := a.effectiveSamples()
	for _, p := range a.Planets {
		for _, q := range p.Quantities {
			f := q.figure(p.Name+"."+q.Name, ess)
			if q.Name != transitDensityName { // the fit's own, whatever the star says
				f = mark(f)
			}
			figs = append(figs, f)
		}
		for _, h := range p.Hosts {
			pre := p.Name + ".on_" + steps.FigureKey(h.Host) + "."
			for _, q := range h.Quantities {
				f := mark(q.figure(pre+q.Name, ess))
				if !f.Defined() {
					f.Reason = fmt.Sprintf(unknownHostRadius, h.Host)
					if r := p.quantity("radius_earth"); r == nil || math.IsNaN(r.Median) {
						f.Reason = "the star's radius is not known, so no planet radius can be computed"
					}
				}
				figs = append(figs, f)
			}
			flag, doc := 0.0, "1 when the radius on this host exceeds the planetary limit, else 0"
			if h.NotPlanetary {
				flag, doc = 1, "radius on this host is not planetary; "+doc
			}
			figs = append(figs, steps.Figure{Name: pre + "not_planetary", Value: flag, Doc: doc})
		}
	}
	return figs
}

// Cautions says, in plain sentences, what makes this step's numbers doubtful: densities
// that do not overlap, too few effective samples after reweighting, and a dilution too
// strong to apply to k after the fit.
func (a *Artifact) Cautions() []string {
	var c []string
	if a.Mismatch {
		c = append(c, a.mismatchCaution())
	}
	if a.LowESS {
		c = append(c, fmt.Sprintf("Only %.0f effective samples of %d survive the reweighting by the star's density (threshold %g): the star's density and the transit's agree poorly, or the star's is much narrower, so the summaries are noisy. Run the fit with the star's density in its likelihood (the coupled fit) instead.",
			a.ESS, a.FitSamples, a.ESSThreshold))
	}
	if a.Rescaled > maxRescaledDilution {
		c = append(c, fmt.Sprintf("The companions add %.0f %% of the target's light; rescaling k after the fit biases it (measured: k high by about 2 %% at 50 %% and 3.6 %% at 100 %%, since a fit of the diluted shape trades k against b). Use the coupled fit, with the dilution in its likelihood.",
			100*a.Rescaled))
	}
	return c
}

// mismatchCaution explains densities that do not overlap: what was done, why it can
// happen, and what to do.
func (a *Artifact) mismatchCaution() string {
	fd, sd := a.FitDensity, a.StarDensity
	return fmt.Sprintf("The transit's stellar density (16–84 %%: %.3g–%.3g g/cm3) and the star's (%.3g–%.3g g/cm3) do not overlap; "+
		"the transit's is %.3g times the star's. The fit's samples could not be reweighted by the star's density, so every planet "+
		"figure of this step pairs them with the star's draws at random, as if the two agreed: take them as provisional. "+
		"Possible causes: the wrong star (a catalogue mix-up, or most of the light coming from another star), a blend or an "+
		"eclipsing binary, an eccentric orbit (it changes the density a circular fit infers; Dawson & Johnson 2012, ApJ 756, 122), "+
		"or a wrong period (an alias at half or twice the true one). What to do: check the star's catalogue values, vet the signal, "+
		"fit the planet on an eccentric orbit or with the star's density in the fit's likelihood, and quote these numbers only "+
		"once the two densities agree.", fd[0], fd[2], sd[0], sd[2], fd[1]/sd[1])
}

const (
	tag    = "derive"
	format = 2
	// Decode's sanity bounds on counts.
	maxPlanetsDecoded, maxQuantities, maxHosts = 64, 256, 256
)

func writeQuantities(w *codec.Writer, qs []Quantity) {
	w.Uint64(uint64(len(qs)))
	for _, q := range qs {
		w.String(q.Name)
		w.String(q.Unit)
		w.String(q.Doc)
		w.Float(q.Median)
		w.Float(q.Lo)
		w.Float(q.Hi)
		w.Bool(q.UpperLimit)
		w.Float(q.Limit)
	}
}

// Encode returns the canonical encoding.
func (a *Artifact) Encode() []byte {
	w := codec.NewWriter(tag, format)
	w.String(a.Method)
	w.Int(int64(a.FitSamples))
	w.Int(int64(a.Draws))
	w.Float(a.ESS)
	w.Float(a.ESSThreshold)
	w.Bool(a.Reweighted)
	w.Bool(a.LowESS)
	w.Bool(a.Mismatch)
	for _, v := range append(a.FitDensity[:], a.StarDensity[:]...) {
		w.Float(v)
	}
	w.Float(a.Rescaled)
	w.Float(a.Bandwidth)
	w.Uint64(uint64(len(a.Planets)))
	for _, p := range a.Planets {
		w.String(p.Name)
		writeQuantities(w, p.Quantities)
		w.Uint64(uint64(len(p.Hosts)))
		for _, h := range p.Hosts {
			w.String(h.Host)
			writeQuantities(w, h.Quantities)
			w.Bool(h.NotPlanetary)
		}
	}
	return w.Bytes()
}

func readQuantities(r *codec.Reader) ([]Quantity, error) {
	n := r.Uint64()
	if n > maxQuantities {
		return nil, fmt.Errorf("derive artifact: %d quantities", n)
	}
	var qs []Quantity
	for i := uint64(0); i < n; i++ {
		qs = append(qs, Quantity{Name: r.String(), Unit: r.String(), Doc: r.String(), Median: r.Float(), Lo: r.Float(), Hi: r.Float(),
			UpperLimit: r.Bool(), Limit: r.Float()})
	}
	return qs, nil
}

// validate checks a decoded quantity.
func (q Quantity) validate() error {
	if q.Name == "" {
		return errors.New("derive artifact: a quantity without a name")
	}
	if !(q.Lo <= q.Median && q.Median <= q.Hi) {
		return fmt.Errorf("derive artifact: quantity %s: percentiles %v, %v, %v out of order", q.Name, q.Lo, q.Median, q.Hi)
	}
	if q.UpperLimit && !(q.Limit >= 0) {
		return fmt.Errorf("derive artifact: quantity %s: upper limit %v", q.Name, q.Limit)
	}
	return nil
}

// Decode reads an artifact written by Encode; truncated, foreign or inconsistent bytes are
// an error.
func Decode(b []byte) (*Artifact, error) {
	r := codec.NewReader(b, tag, format)
	a := &Artifact{Method: r.String(), FitSamples: int(r.Int()), Draws: int(r.Int()), ESS: r.Float(),
		ESSThreshold: r.Float(), Reweighted: r.Bool(), LowESS: r.Bool(), Mismatch: r.Bool()}
	for i := range a.FitDensity {
		a.FitDensity[i] = r.Float()
	}
	for i := range a.StarDensity {
		a.StarDensity[i] = r.Float()
	}
	a.Rescaled = r.Float()
	a.Bandwidth = r.Float()
	np := r.Uint64()
	if np > maxPlanetsDecoded {
		return nil, fmt.Errorf("derive artifact: %d planets", np)
	}
	for i := uint64(0); i < np; i++ {
		p := Planet{Name: r.String()}
		qs, err := readQuantities(r)
		if err != nil {
			return nil, err
		}
		p.Quantities = qs
		nh := r.Uint64()
		if nh > maxHosts {
			return nil, fmt.Errorf("derive artifact: %d host hypotheses", nh)
		}
		for h := uint64(0); h < nh; h++ {
			hr := HostResult{Host: r.String()}
			if hr.Quantities, err = readQuantities(r); err != nil {
				return nil, err
			}
			hr.NotPlanetary = r.Bool()
			p.Hosts = append(p.Hosts, hr)
		}
		a.Planets = append(a.Planets, p)
	}
	if err := r.Err(); err != nil {
		return nil, fmt.Errorf("derive artifact: %w", err)
	}
	switch {
	case a.FitSamples < 1 || a.Draws < 1:
		return nil, fmt.Errorf("derive artifact: %d fit samples and %d draws", a.FitSamples, a.Draws)
	case !(a.ESS > 0 && a.ESS <= float64(a.FitSamples)*(1+1e-9)) && !(a.Mismatch && a.ESS >= 0 && a.ESS < minESS):
		return nil, fmt.Errorf("derive artifact: effective sample size %v of %d samples", a.ESS, a.FitSamples)
	case a.Mismatch && !(a.FitDensity[1] > 0 && a.StarDensity[1] > 0):
		return nil, fmt.Errorf("derive artifact: densities %v and %v of a mismatch", a.FitDensity, a.StarDensity)
	case len(a.Planets) == 0:
		return nil, errors.New("derive artifact: no planet")
	}
	for _, p := range a.Planets {
		qs := append([]Quantity(nil), p.Quantities...)
		for _, h := range p.Hosts {
			qs = append(qs, h.Quantities...)
		}
		for _, q := range qs {
			if err := q.validate(); err != nil {
				return nil, fmt.Errorf("%w (planet %s)", err, p.Name)
			}
		}
	}
	return a, nil
}
