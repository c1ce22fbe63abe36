package completeness

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/transit"
	"dipline/steps/search/bls"
)

// Injection is one planet to put into a light curve: a circular orbit of period Period
// (days) with a mid-transit at Epoch (days, in the light curve's time), radius ratio
// RadiusRatio = Rp/R* and impact parameter Impact (stellar radii).
type Injection struct {
	Period, Epoch, RadiusRatio, Impact float64
}

// Star is what the injected transits need to know of the star: its mean density in g/cm³
// (which sets a/R* through Kepler's law) and its quadratic limb darkening
// I(μ)/I(1) = 1 − U1(1−μ) − U2(1−μ)².
type Star struct {
	Density float64
	U1, U2  float64
}

// integrationTolerance is the bound, in relative flux, that the exposure integration's
// error is held under (see subexposures): far below any photometry's noise, so the injected
// signal is the model itself to well within what the search can see (our choice).
const integrationTolerance = 1e-7

// maxSub caps the sub-exposures per point; it is reached only for deep transits with
// ingresses much shorter than the exposure (our choice).
const maxSub = 256

// contactMargin widens, in periods, the phase window in which points are integrated, so a
// point whose exposure ends a rounding error from first contact is still integrated
// (points outside the window have every sub-exposure far past contact, where the model
// is exactly 1, so skipping them changes no bit).
const contactMargin = 1e-7

// orbitShape is what the injection needs beyond the Injection itself.
type orbitShape struct {
	aR      float64 // a/R*
	reach   float64 // half-width in phase of the stretch with z < 1 + k
	ingress float64 // first-to-second contact in days; half of T14 when grazing
	depth   float64 // 1 − flux at mid-transit (instantaneous)
}

// Check reports whether the injection can be modelled around st.
func (inj Injection) Check(st Star) error {
	fin := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	switch {
	case !(inj.Period > 0) || !fin(inj.Period):
		return fmt.Errorf("completeness: period %v d; it must be positive and finite", inj.Period)
	case !fin(inj.Epoch):
		return fmt.Errorf("completeness: epoch %v; it must be finite", inj.Epoch)
	case !(inj.RadiusRatio > 0 && inj.RadiusRatio < 1):
		return fmt.Errorf("completeness: radius ratio %v; it must lie strictly between 0 and 1", inj.RadiusRatio)
	case !(inj.Impact >= 0 && inj.Impact < 1+inj.RadiusRatio):
		return fmt.Errorf("completeness: impact parameter %v; it must lie in [0, 1 + k) for a transit", inj.Impact)
	case !(st.Density > 0) || !fin(st.Density):
		return fmt.Errorf("completeness: star density %v g/cm3; it must be positive and finite", st.Density)
	case !fin(st.U1) || !fin(st.U2):
		return fmt.Errorf("completeness: limb darkening (%v, %v) must be finite", st.U1, st.U2)
	}
	if a := bls.ScaledAxis(inj.Period, st.Density); !(a > 1+inj.RadiusRatio) {
		return fmt.Errorf("completeness: a %.4g d orbit around a %.4g g/cm3 star has a/R* = %.4g, inside the star", inj.Period, st.Density, a)
	}
	return nil
}

// shape works out the orbit's geometry for a checked injection: a/R* from the density by
// Kepler's third law (bls.ScaledAxis, the search's own), the phase reach of the transit
// from z² = b² + (a² − b²) sin²φ on a circular orbit (Winn 2010 with e = 0), and the
// ingress time from Winn's (2010) T14 and T23 through astro.
func shape(inj Injection, st Star) orbitShape {
	k, b := inj.RadiusRatio, inj.Impact
	o := orbitShape{aR: bls.ScaledAxis(inj.Period, st.Density)}
	r := ((1+k)*(1+k) - b*b) / (o.aR*o.aR - b*b)
	o.reach = 0.25
	if r < 1 {
		o.reach = math.Asin(math.Sqrt(r)) / (2 * math.Pi)
	}
	t14, err14 := astro.TotalDuration(inj.Period, o.aR, k, b, 0, 0)
	t23, err23 := astro.FullDuration(inj.Period, o.aR, k, b, 0, 0)
	if err14 == nil && err23 == nil {
		o.ingress = (t14 - t23) / 2
	}
	mid := transit.Flux(nil, []float64{b}, k, st.U1, st.U2)
	o.depth = 1 - mid[0]
	return o
}

// subexposures is the number N of midpoint sub-exposures per point for an exposure of
// length T (days): the least N whose error bound is below integrationTolerance, capped at
// maxSub. The bound treats the transit as a trapezoid of depth δ with ingress τ: the
// midpoint rule is exact on its straight pieces, and each corner errs by at most
// (δ/τ)h²/8 in the integral over a sub-interval of width h = T/N, or by at most δh/2, so
// the exposure mean errs by at most min(δT/(8τN²), δ/(2N)). It is the rule the fit uses
// (steps/fit, unexported there, re-derived here) with an absolute tolerance in place of a
// share of the point errors; the limb-darkened curve is smoother than the trapezoid, and
// completeness_test.go checks the result against a 1000-point quadrature.
func subexposures(exposure float64, o orbitShape) int {
	if !(exposure > 0) || !(o.depth > 0) {
		return 1
	}
	eps := integrationTolerance
	n := math.Inf(1)
	if o.ingress > 0 {
		n = math.Sqrt(o.depth * exposure / (8 * o.ingress * eps))
	}
	n = math.Ceil(math.Min(n, o.depth/(2*eps)))
	return int(math.Max(1, math.Min(maxSub, n)))
}

// Inject returns a deep copy of lc whose fluxes are multiplied by the transits of inj
// around st: the Mandel & Agol (2002) quadratic limb-darkened model (transit.Flux) on a
// circular orbit (transit.SeparationCircular), averaged over each segment's exposure by
// the midpoint rule with subexposures points (Kipping 2010, MNRAS 408, 1758). Errors and
// every other field are copied unchanged, and so is the flux of every point whose exposure
// lies wholly outside the transits, bit for bit.
func Inject(lc *lightcurve.LightCurve, inj Injection, st Star) (*lightcurve.LightCurve, error) {
	if lc == nil {
		return nil, errors.New("completeness: no light curve to inject into")
	}
	if err := lc.Validate(); err != nil {
		return nil, fmt.Errorf("completeness: %w", err)
	}
	if err := inj.Check(st); err != nil {
		return nil, err
	}
	o := shape(inj, st)
	out := *lc
	out.Segments = make([]lightcurve.Segment, len(lc.Segments))
	for i := range lc.Segments {
		seg := lc.Segments[i]
		seg.Time = append([]float64(nil), seg.Time...)
		seg.Flux = append([]float64(nil), seg.Flux...)
		seg.Err = append([]float64(nil), seg.Err...)
		if !(seg.Exposure >= 0) || math.IsInf(seg.Exposure, 0) {
			return nil, fmt.Errorf("completeness: segment %s: exposure %v d; it must be zero or positive", seg.ID, seg.Exposure)
		}
		multiply(&seg, inj, st, o)
		out.Segments[i] = seg
	}
	return &out, nil
}

// multiply multiplies the flux of the points of seg near a transit by the exposure-averaged
// model; the rest are left alone.
func multiply(seg *lightcurve.Segment, inj Injection, st Star, o orbitShape) {
	n := subexposures(seg.Exposure, o)
	reach := o.reach + seg.Exposure/(2*inj.Period) + contactMargin
	var near []int
	var mid []float64
	for i, t := range seg.Time {
		d := (t - inj.Epoch) / inj.Period
		if math.Abs(d-math.Round(d)) <= reach {
			near = append(near, i)
			mid = append(mid, t)
		}
	}
	if len(near) == 0 {
		return
	}
	model := exposureModel(mid, seg.Exposure, n, inj, st, o.aR)
	for q, i := range near {
		seg.Flux[i] *= model[q]
	}
}

// exposureModel is the model at mid-times t averaged over an exposure with n midpoint
// sub-exposures (n = 1 or exposure 0: the instantaneous model).
func exposureModel(t []float64, exposure float64, n int, inj Injection, st Star, aR float64) []float64 {
	if n < 1 || exposure == 0 {
		n = 1
	}
	fine := t
	if n > 1 {
		fine = transit.SubexposureTimes(nil, t, exposure, n)
	}
	z := transit.SeparationCircular(nil, fine, inj.Period, inj.Epoch, aR, inj.Impact)
	f := transit.Flux(z, z, inj.RadiusRatio, st.U1, st.U2)
	if n == 1 {
		return f
	}
	return transit.AverageBlocks(nil, f, n)
}
