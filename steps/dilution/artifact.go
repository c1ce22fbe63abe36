package dilution

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"dipline/steps"
	"dipline/steps/companions"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/stellar"
)

// targetHost is the Host of the planet-on-target hypothesis.
const targetHost = "target"

// Result is the dilution step's artifact: the hypotheses' draws, and for each where its
// radius scale came from (or why it has none).
type Result struct {
	stellar.Dilution
	// RadiusSource has one entry per hypothesis.
	RadiusSource []string
}

// DilutionDraws implements stellar.DilutionSource.
func (r *Result) DilutionDraws() *stellar.Dilution { return &r.Dilution }

const (
	tag       = "dilution"
	formatVer = 1
)

// Encode returns the canonical encoding.
func (r *Result) Encode() []byte {
	w := codec.NewWriter(tag, formatVer)
	w.String(r.Band)
	w.Bool(r.AlreadyCorrected)
	w.Uint64(uint64(len(r.Hypotheses)))
	for i, h := range r.Hypotheses {
		w.String(h.Host)
		w.String(r.RadiusSource[i])
		w.Floats(h.FluxRatio)
		w.Floats(h.RadiusScale)
	}
	return w.Bytes()
}

// Decode implements steps.Kind.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads a Result back, rejecting truncated, foreign or inconsistent records.
func Decode(b []byte) (*Result, error) {
	rd := codec.NewReader(b, tag, formatVer)
	r := &Result{}
	r.Band = rd.String()
	r.AlreadyCorrected = rd.Bool()
	n := rd.Uint64()
	// Each hypothesis takes at least four length prefixes.
	if n > uint64(len(b))/32 {
		if err := rd.Err(); err != nil {
			return nil, fmt.Errorf("dilution: %w", err)
		}
		return nil, fmt.Errorf("dilution: record claims %d hypotheses in %d bytes", n, len(b))
	}
	for i := uint64(0); i < n; i++ {
		var h stellar.Hypothesis
		h.Host = rd.String()
		r.RadiusSource = append(r.RadiusSource, rd.String())
		h.FluxRatio = rd.Floats()
		h.RadiusScale = rd.Floats()
		if len(h.RadiusScale) == 0 {
			h.RadiusScale = nil
		}
		r.Hypotheses = append(r.Hypotheses, h)
	}
	if err := rd.Err(); err != nil {
		return nil, fmt.Errorf("dilution: %w", err)
	}
	if err := r.check(); err != nil {
		return nil, fmt.Errorf("dilution: %w", err)
	}
	return r, nil
}

// check verifies the invariants readers rely on: the target first with radius scale 1,
// hosts unique, every slice of one length, flux ratios finite and not negative, radius
// scales positive and finite, and a corrected light curve with one all-zero hypothesis.
func (r *Result) check() error {
	if len(r.Hypotheses) == 0 || r.Hypotheses[0].Host != targetHost {
		return fmt.Errorf("the first hypothesis must be the planet on the target")
	}
	if len(r.RadiusSource) != len(r.Hypotheses) {
		return fmt.Errorf("%d radius sources for %d hypotheses", len(r.RadiusSource), len(r.Hypotheses))
	}
	n := len(r.Hypotheses[0].FluxRatio)
	if n == 0 {
		return fmt.Errorf("no draws")
	}
	if r.AlreadyCorrected && len(r.Hypotheses) != 1 {
		return fmt.Errorf("a crowding-corrected light curve has only the target hypothesis, not %d", len(r.Hypotheses))
	}
	seen := map[string]bool{}
	for k, h := range r.Hypotheses {
		if seen[h.Host] || h.Host == "" || (k > 0 && h.Host == targetHost) {
			return fmt.Errorf("hypothesis %d: host %q is empty or repeated", k+1, h.Host)
		}
		seen[h.Host] = true
		if len(h.FluxRatio) != n || (h.RadiusScale != nil && len(h.RadiusScale) != n) {
			return fmt.Errorf("hypothesis %q: draws of different lengths", h.Host)
		}
		for _, x := range h.FluxRatio {
			if !(x >= 0) || math.IsInf(x, 0) || (r.AlreadyCorrected && x != 0) {
				return fmt.Errorf("hypothesis %q: flux ratio %v", h.Host, x)
			}
		}
		for _, x := range h.RadiusScale {
			if !(x > 0) || math.IsInf(x, 0) || (k == 0 && x != 1) {
				return fmt.Errorf("hypothesis %q: radius scale %v", h.Host, x)
			}
		}
		if k == 0 && h.RadiusScale == nil {
			return fmt.Errorf("the target hypothesis has no radius scale")
		}
	}
	return nil
}

// Summary is the median and one-sigma half-width of a set of draws, the distances from the
// median down to the lower and up to the upper end of that interval, and the Monte Carlo
// standard error of the median.
type Summary struct{ Median, Sigma, Lower, Upper, MCError float64 }

// Summarize returns the median of xs and half the width of its central 68.27 % interval
// (15.87 % to 84.13 %, the normal one-sigma fractions), by linear interpolation between
// order statistics, with the interval's two sides. It does not modify xs.
func Summarize(xs []float64) Summary {
	s := slices.Clone(xs)
	sort.Float64s(s)
	lo, mid, hi := quantile(s, 0.158655254), quantile(s, 0.5), quantile(s, 0.841344746)
	sum := Summary{Median: mid, Sigma: (hi - lo) / 2, Lower: mid - lo, Upper: hi - mid}
	if len(s) > 0 {
		sum.MCError = medianSE * sum.Sigma / math.Sqrt(float64(len(s)))
	}
	return sum
}

// medianSE is √(π/2), the standard error of a sample median in units of σ/√N for normal
// draws (Kendall & Stuart, common practice).
var medianSE = math.Sqrt(math.Pi / 2)

// quantile interpolates the sorted s at fraction q.
func quantile(s []float64, q float64) float64 {
	if len(s) == 0 {
		return math.NaN()
	}
	x := q * float64(len(s)-1)
	i := int(x)
	if i >= len(s)-1 {
		return s[len(s)-1]
	}
	f := x - float64(i)
	return s[i] + f*(s[i+1]-s[i])
}

// RadiusFactor returns the draws of X_R = √(1 + FluxRatio) × RadiusScale for h (Ciardi et
// al. 2015, ApJ 805, 16): the factor that turns a planet radius derived as if the target
// were alone into the planet's true radius under h. Without a radius scale it is the flux
// part alone, √(1 + FluxRatio).
func RadiusFactor(h stellar.Hypothesis) []float64 {
	out := make([]float64, len(h.FluxRatio))
	for i, f := range h.FluxRatio {
		out[i] = math.Sqrt(1 + f)
		if h.RadiusScale != nil {
			out[i] *= h.RadiusScale[i]
		}
	}
	return out
}

// boundCaution is the standard caution of the planet-on-companion hypotheses.
const boundCaution = "assumes the companion is bound, at the target's distance"

// Figures lists, per hypothesis, the flux ratio and the radius-correction factor (median
// ± one-sigma half-width), and a companion's radius scale; names start with "target." or
// the companion's figure name (companions.FigureName).
func (r *Result) Figures() []steps.Figure {
	var figs []steps.Figure
	for k, h := range r.Hypotheses {
		p := companions.FigureName(h.Host) + "."
		on := "the target"
		caution := ""
		if k > 0 {
			on = h.Host
			caution = "; " + boundCaution
		}
		fr := Summarize(h.FluxRatio)
		figs = append(figs, steps.Figure{Name: p + "flux_ratio", Value: fr.Median, Sigma: fr.Sigma, MCError: fr.MCError,
			Lower: fr.Lower, Upper: fr.Upper,
			Doc: fmt.Sprintf("light of all other stars over that of %s in band %s, planet on %s%s", on, r.Band, on, caution)})
		xr := Summarize(RadiusFactor(h))
		if h.RadiusScale == nil {
			figs = append(figs, steps.Figure{Name: p + "flux_factor", Value: xr.Median, Sigma: xr.Sigma, MCError: xr.MCError,
				Lower: xr.Lower, Upper: xr.Upper,
				Doc: fmt.Sprintf("√(1 + flux ratio), planet on %s: its radius factor were it the target's size (no radius: %s)%s", on, r.RadiusSource[k], caution)})
			continue
		}
		figs = append(figs, steps.Figure{Name: p + "radius_factor", Value: xr.Median, Sigma: xr.Sigma, MCError: xr.MCError,
			Lower: xr.Lower, Upper: xr.Upper,
			Doc: fmt.Sprintf("X_R, true over target-alone planet radius, planet on %s%s", on, caution)})
		if k > 0 {
			rs := Summarize(h.RadiusScale)
			figs = append(figs, steps.Figure{Name: p + "radius_scale", Value: rs.Median, Sigma: rs.Sigma, MCError: rs.MCError,
				Lower: rs.Lower, Upper: rs.Upper,
				Doc: fmt.Sprintf("radius of %s over the target's (from %s)", on, r.RadiusSource[k])})
		}
	}
	return figs
}
