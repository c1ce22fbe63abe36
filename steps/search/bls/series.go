package bls

import (
	"fmt"
	"math"
	"sort"
)

// Series is a light curve flattened for the search: times in days (sorted), relative flux
// and one-sigma errors. The search never changes it.
type Series struct {
	Time, Flux, Err []float64
}

// Check reports the first point that the search cannot use, by its index: unsorted or
// non-finite times, non-finite flux, or an error that is not a positive finite number.
func (s Series) Check() error {
	if len(s.Flux) != len(s.Time) || len(s.Err) != len(s.Time) {
		return fmt.Errorf("time, flux and error columns have %d, %d and %d points", len(s.Time), len(s.Flux), len(s.Err))
	}
	for i, t := range s.Time {
		switch {
		case math.IsNaN(t) || math.IsInf(t, 0):
			return fmt.Errorf("point %d: time %g is not finite", i+1, t)
		case i > 0 && t < s.Time[i-1]:
			return fmt.Errorf("point %d: time %g is earlier than the point before (%g)", i+1, t, s.Time[i-1])
		case math.IsNaN(s.Flux[i]) || math.IsInf(s.Flux[i], 0):
			return fmt.Errorf("point %d (t = %g): flux %g is not finite", i+1, t, s.Flux[i])
		case !(s.Err[i] > 0) || math.IsInf(s.Err[i], 0):
			return fmt.Errorf("point %d (t = %g): error %g is not a positive number", i+1, t, s.Err[i])
		}
	}
	return nil
}

// Cadence returns the median spacing of consecutive distinct times, in days, or 0 for fewer
// than two distinct times.
func (s Series) Cadence() float64 {
	d := make([]float64, 0, len(s.Time))
	for i := 1; i < len(s.Time); i++ {
		if dt := s.Time[i] - s.Time[i-1]; dt > 0 {
			d = append(d, dt)
		}
	}
	if len(d) == 0 {
		return 0
	}
	sort.Float64s(d)
	return d[len(d)/2]
}

// minInTransitPoints is the least in-transit weight a box may hold, counted in average
// points: fewer than three points cannot tell a dip from one low outlier (common practice).
const minInTransitPoints = 3

// prepared is one search pass's view of the data: the points not yet masked, shifted to
// weighted mean zero, with weights normalised to sum to one (Kovács, Zucker & Mazeh 2002).
type prepared struct {
	t0      float64   // time of the first point; t holds times since t0
	t       []float64 // time since t0, days, sorted, ≥ 0
	w       []float64 // w_i = σ_i⁻² / Σσ⁻²
	wx      []float64 // w_i·(flux_i − weighted mean)
	flux    []float64 // flux as given
	invVar  []float64 // σ_i⁻²
	sumW    float64   // Σσ⁻², turns s²/(r(1−r)) into a χ² improvement
	tMid    float64   // weighted mean time since t0
	rmin    float64   // least in-transit weight: minInTransitPoints / N
	cadence float64
}

// prepare keeps the points where keep is nil or true.
func prepare(s Series, keep []bool, cadence float64) *prepared {
	p := &prepared{cadence: cadence}
	n := 0
	for i := range s.Time {
		if keep == nil || keep[i] {
			n++
		}
	}
	p.t, p.w, p.wx = make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
	p.flux, p.invVar = make([]float64, 0, n), make([]float64, 0, n)
	for i, t := range s.Time {
		if keep != nil && !keep[i] {
			continue
		}
		if len(p.t) == 0 {
			p.t0 = t
		}
		iv := 1 / (s.Err[i] * s.Err[i])
		p.t = append(p.t, t-p.t0)
		p.flux = append(p.flux, s.Flux[i])
		p.invVar = append(p.invVar, iv)
		p.sumW += iv
	}
	var mean, tm float64
	for i, iv := range p.invVar {
		w := iv / p.sumW
		p.w = append(p.w, w)
		mean += w * p.flux[i]
		tm += w * p.t[i]
	}
	p.tMid = tm
	for i, w := range p.w {
		p.wx = append(p.wx, w*(p.flux[i]-mean))
	}
	if n > 0 {
		p.rmin = minInTransitPoints / float64(n)
	}
	return p
}

// span is the time from the first to the last kept point.
func (p *prepared) span() float64 {
	if len(p.t) == 0 {
		return 0
	}
	return p.t[len(p.t)-1]
}
