package derive

import (
	"errors"
	"fmt"
	"math"
	"strings"

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

// figure turns a summary into a Figure: the median with σ half the 16–84 % range, or the
// 95 % upper limit with σ = 0. The rounded text goes into the doc. The Monte Carlo error of
// a median from ess effective draws is √(π/2) σ/√ess (common practice); for a limit it is
// left at 0, unknown.
func (q Quantity) figure(name string, ess float64) steps.Figure {
	f := steps.Figure{Name: name, Unit: q.Unit}
	if q.UpperLimit {
		f.Value = q.Limit
		f.Doc = q.Doc + "; 95 % upper limit (the posterior piles against zero): " + q.Format()
	} else {
		f.Value = q.Median
		f.Sigma = (q.Hi - q.Lo) / 2
		if ess > 0 {
			f.MCError = math.Sqrt(math.Pi/2) * f.Sigma / math.Sqrt(ess)
		}
		f.Doc = q.Doc + "; median, 16–84 %: " + q.Format()
	}
	return f
}

// hostKey turns a host name into a figure-name part: lower case letters, digits and "_".
func hostKey(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
		} else {
			b.WriteByte('_')
		}
	}
	return b.String()
}

// Figures lists per planet every quantity ("b.radius_earth"), each companion hypothesis
// ("b.on_<host>.radius_jup"), and the combination's effective sample size.
func (a *Artifact) Figures() []steps.Figure {
	var figs []steps.Figure
	essDoc := "Kish effective sample size of the fit's samples after reweighting by the star's density, (Σw)²/Σw²"
	switch {
	case a.LowESS:
		essDoc = fmt.Sprintf("WARNING: below %g; the summaries are noisy, run the coupled fit instead. ", a.ESSThreshold) + essDoc
	case !a.Reweighted:
		essDoc = "fit samples used with equal weights (not reweighted)"
	}
	figs = append(figs,
		steps.Figure{Name: "combine.ess", Value: a.ESS, Doc: essDoc},
		steps.Figure{Name: "combine.fit_samples", Value: float64(a.FitSamples), Doc: a.Method})
	for _, p := range a.Planets {
		for _, q := range p.Quantities {
			figs = append(figs, q.figure(p.Name+"."+q.Name, a.ESS))
		}
		for _, h := range p.Hosts {
			pre := p.Name + ".on_" + hostKey(h.Host) + "."
			for _, q := range h.Quantities {
				figs = append(figs, q.figure(pre+q.Name, a.ESS))
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

const (
	tag    = "derive"
	format = 1
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
		ESSThreshold: r.Float(), Reweighted: r.Bool(), LowESS: r.Bool(), Bandwidth: r.Float()}
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
	case !(a.ESS > 0 && a.ESS <= float64(a.FitSamples)*(1+1e-9)):
		return nil, fmt.Errorf("derive artifact: effective sample size %v of %d samples", a.ESS, a.FitSamples)
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
