// Package timing measures the mid-time of each transit with the transit's shape held at the
// global fit's, and fits a linear ephemeris T(n) = T0 + n·P to the measured times with its
// observed-minus-calculated (O−C) table and a χ² test of strict periodicity. It does not
// build the transit model (the caller passes one per transit, with supersampling and other
// planets already handled), fit the shape, model timing variations or decide that they are
// real. Main entry points: Measure (per-transit times) and FitEphemeris (the linear
// ephemeris and O−C table). Times are in days (BJD_TDB in dipline); O−C is in minutes.
package timing

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps/internal/parallel"
)

// Defaults of Options, each with its reason.
const (
	// defaultShiftShare: the search spans ±¼ of the transit duration around the predicted
	// mid-time, wide enough for the TTVs of most known systems at the durations they have,
	// narrow enough that the fixed windows keep out-of-transit points on both sides (our
	// choice).
	defaultShiftShare = 0.25
	// defaultSteps: the grid has 100 steps over the search range, a step of T14/200 with
	// the default range: for k = 0.1 the ingress lasts ~T14/11, so ~18 grid points fall on
	// it and the χ² minimum cannot hide between two of them (our choice).
	defaultSteps = 100
	// DefaultMinInTransit is the least number of points inside T14 for a transit to be
	// timed: fewer cannot pin the ingress and egress against the free flux scale (our choice).
	DefaultMinInTransit = 5
	// DefaultMinOutOfTransit is the least number of points outside T14, which set the flux
	// scale (our choice).
	DefaultMinOutOfTransit = 3
	// goldenIters and bisectIters stop the refinements at a 10⁻⁴ (0.618¹⁹) and 10⁻⁶ (2⁻²⁰)
	// share of a grid step: below any timing error the grid can resolve.
	goldenIters = 20
	bisectIters = 20
	// maxGrid bounds the grid steps so a mistaken step cannot exhaust memory or time.
	maxGrid = 100000
	// fineReach and finePerSigma set the fine grid of the error integral: it spans
	// fineReach Δχ² = 1 half-widths on each side of the best shift with finePerSigma points
	// per half-width, so the trapezoid sum of a Gaussian likelihood is exact to well below
	// 1 % (the mass beyond 8σ is 10⁻¹⁵; the trapezoid rule's error for a Gaussian falls as
	// exp(−2π²σ²/h²), negligible at h = σ/8) (our choice, numerical quadrature).
	fineReach    = 8
	finePerSigma = 8
)

// ErrInput marks bad input: lengths, non-finite values, errors not positive, no model.
var ErrInput = errors.New("timing: bad input")

// Model writes into out the fixed-shape model flux of one transit at times t, with its
// mid-time shifted by dt from the predicted one. It must not keep out or t, and must be safe
// to call concurrently with the models of other transits (Measure may run transits in
// parallel; one transit's model is called from one goroutine at a time).
type Model func(dt float64, t, out []float64)

// Transit is the data of one transit for Measure.
type Transit struct {
	Epoch     int64     // transit number n in the caller's ephemeris
	Predicted float64   // mid-time at dt = 0, days
	Time      []float64 // point mid-times within the caller's window, days
	Flux      []float64 // relative flux
	Err       []float64 // one-sigma flux errors (jitter included if any), > 0
	Model     Model
}

// Options configures Measure.
type Options struct {
	// Duration is the first-to-last-contact duration T14 of the fixed shape, days: points
	// within Duration/2 of the predicted mid-time count as in transit.
	Duration float64
	// MaxShift is the half-range of the search in dt, days; 0 means Duration/4.
	MaxShift float64
	// Step is the grid step in dt, days; 0 means MaxShift/50 (100 steps). It should be well
	// below the ingress duration.
	Step float64
	// MinInTransit, MinOutOfTransit: the least points inside and outside T14; 0 means the
	// defaults.
	MinInTransit, MinOutOfTransit int
	// Parallel runs block(i) for i in [0, n), one transit per block; nil runs serially. The
	// results do not depend on it.
	Parallel parallel.Func
}

// TransitTime is the measured mid-time of one transit, or why it has none.
type TransitTime struct {
	Epoch     int64
	Predicted float64 // mid-time at dt = 0, days
	Time      float64 // measured mid-time Predicted + Shift, days
	Shift     float64 // best dt, days
	// ErrLow and ErrHigh are the one-sigma errors below and above Time, days: the root
	// mean square distance from Time of the likelihood over the search range on each side,
	// ErrLow² = 2·∫_{dt<Shift}(dt−Shift)²L / ∫L and ErrHigh² likewise (see Measure). For a
	// parabolic χ² both equal the Δχ² = 1 half-width.
	ErrLow    float64
	ErrHigh   float64
	Chi2      float64 // χ² at the best shift, flux scale profiled
	Scale     float64 // best flux scale (the model is multiplied by it)
	Points    int     // points in the window
	InTransit int     // points within Duration/2 of the predicted mid-time
	// Skipped, when not empty, says why the transit has no time; the numbers above other
	// than Epoch, Predicted, Points and InTransit are then NaN or 0.
	Skipped string
}

// Sigma is the symmetric one-sigma error used in the ephemeris: √((ErrLow² + ErrHigh²)/2),
// the root mean square distance of the likelihood from Time over the whole search range.
func (t TransitTime) Sigma() float64 {
	return math.Sqrt(0.5 * (t.ErrLow*t.ErrLow + t.ErrHigh*t.ErrHigh))
}

// Measure times each transit. For each shift dt on a grid over ±MaxShift it computes the χ²
// of the data against the model times a flux scale s, with s profiled out analytically:
// χ²(dt) = C − B²/A, A = Σ m²/σ², B = Σ f m/σ², C = Σ f²/σ² (the scale the fit step
// marginalises; profiling it gives the same minimum and a Δχ² that is a profile likelihood).
// The best grid point is refined by golden-section search between its neighbours.
//
// The errors are the spread of the likelihood L(dt) ∝ exp(−χ²/2)/√A (the flux scale
// marginalised with a flat prior) over the whole search range, about the best shift: the
// root mean square of dt − Shift, split into its low and high sides. The Δχ² = 1
// half-widths, where χ² crosses its minimum + 1 (found by walking the grid outward and
// bisecting), give the same errors when χ² is a parabola, as it is when the transit is
// timed to much better than its ingress. They are too small otherwise: when a shallow
// transit's ingress is noisy or shorter than the cadence, χ²(dt) has several nearly equal
// minima a few minutes apart, the best one is often the wrong one, and the scatter of the
// times is about twice the Δχ² = 1 half-width (a Monte-Carlo over white-noise light curves
// in timing_test.go). The integral counts those other minima. It is a trapezoid sum over the
// grid, refined near the best shift to an eighth of the Δχ² = 1 half-width.
//
// A transit is skipped, with the reason, when it has too few points in or out of transit,
// when its best shift lies at the search edge, or when a Δχ² = 1 interval reaches the edge.
// Bad input is an error wrapping ErrInput.
func Measure(transits []Transit, o Options) ([]TransitTime, error) {
	if !(o.Duration > 0) || math.IsInf(o.Duration, 0) {
		return nil, fmt.Errorf("%w: transit duration %v days; need a positive finite duration", ErrInput, o.Duration)
	}
	if o.MaxShift == 0 {
		o.MaxShift = defaultShiftShare * o.Duration
	}
	if !(o.MaxShift > 0) || math.IsInf(o.MaxShift, 0) {
		return nil, fmt.Errorf("%w: search half-range %v days; need a positive finite range", ErrInput, o.MaxShift)
	}
	if o.Step == 0 {
		o.Step = 2 * o.MaxShift / defaultSteps
	}
	if !(o.Step > 0) || o.Step > o.MaxShift || 2*o.MaxShift/o.Step > maxGrid {
		return nil, fmt.Errorf("%w: grid step %v days for a half-range of %v days; need 0 < step ≤ half-range and at most %d steps", ErrInput, o.Step, o.MaxShift, maxGrid)
	}
	if o.MinInTransit <= 0 {
		o.MinInTransit = DefaultMinInTransit
	}
	if o.MinOutOfTransit <= 0 {
		o.MinOutOfTransit = DefaultMinOutOfTransit
	}
	if len(transits) == 0 {
		return nil, fmt.Errorf("%w: no transits to time", ErrInput)
	}
	seen := make(map[int64]bool, len(transits))
	for i := range transits {
		if err := check(&transits[i]); err != nil {
			return nil, err
		}
		if seen[transits[i].Epoch] {
			return nil, fmt.Errorf("%w: transit %d appears twice", ErrInput, transits[i].Epoch)
		}
		seen[transits[i].Epoch] = true
	}
	out := make([]TransitTime, len(transits))
	run := func(i int) { out[i] = measureOne(&transits[i], &o) }
	if o.Parallel == nil {
		for i := range transits {
			run(i)
		}
	} else {
		o.Parallel(len(transits), run)
	}
	return out, nil
}

// check validates one transit's data.
func check(tr *Transit) error {
	n := tr.Epoch
	if tr.Model == nil {
		return fmt.Errorf("%w: transit %d has no model", ErrInput, n)
	}
	if math.IsNaN(tr.Predicted) || math.IsInf(tr.Predicted, 0) {
		return fmt.Errorf("%w: transit %d: predicted mid-time %v is not finite", ErrInput, n, tr.Predicted)
	}
	if len(tr.Flux) != len(tr.Time) || len(tr.Err) != len(tr.Time) {
		return fmt.Errorf("%w: transit %d: %d times, %d fluxes, %d errors; the lengths must agree", ErrInput, n, len(tr.Time), len(tr.Flux), len(tr.Err))
	}
	for i, t := range tr.Time {
		f, e := tr.Flux[i], tr.Err[i]
		if math.IsNaN(t) || math.IsInf(t, 0) || math.IsNaN(f) || math.IsInf(f, 0) || !(e > 0) || math.IsInf(e, 0) {
			return fmt.Errorf("%w: transit %d, point %d: time %v, flux %v, error %v; need finite values and a positive error", ErrInput, n, i+1, t, f, e)
		}
	}
	return nil
}

// fitter holds one transit's scratch: the weights, the model buffer and the χ² grid.
type fitter struct {
	tr   *Transit
	w    []float64 // 1/σ²
	mod  []float64
	grid []float64 // χ² at dt_k = −MaxShift + k·Step
	lnA  []float64 // ln A at the grid points
	lo   float64   // −MaxShift
	step float64
	a    float64 // A = Σ m²/σ² of the last χ²
	bad  bool    // the model gave a non-finite flux or no signal (A ≤ 0)
}

// chi2 is the χ² at shift dt with the flux scale profiled; it also returns the scale.
func (f *fitter) chi2(dt float64) (float64, float64) {
	f.tr.Model(dt, f.tr.Time, f.mod)
	var A, B, C float64
	for i, m := range f.mod {
		w, y := f.w[i], f.tr.Flux[i]
		A += w * m * m
		B += w * y * m
		C += w * y * y
	}
	if !(A > 0) || math.IsNaN(B) || math.IsInf(A, 0) {
		f.bad = true
		f.a = math.NaN()
		return math.Inf(1), math.NaN()
	}
	f.a = A
	return C - B*B/A, B / A
}

func (f *fitter) at(k int) float64 { return f.lo + float64(k)*f.step }

func measureOne(tr *Transit, o *Options) TransitTime {
	nan := math.NaN()
	r := TransitTime{Epoch: tr.Epoch, Predicted: tr.Predicted, Time: nan, Shift: nan, ErrLow: nan, ErrHigh: nan, Chi2: nan, Scale: nan, Points: len(tr.Time)}
	for _, t := range tr.Time {
		if math.Abs(t-tr.Predicted) < o.Duration/2 {
			r.InTransit++
		}
	}
	if r.InTransit < o.MinInTransit {
		r.Skipped = fmt.Sprintf("only %d point(s) within the transit duration; at least %d are needed", r.InTransit, o.MinInTransit)
		return r
	}
	if out := r.Points - r.InTransit; out < o.MinOutOfTransit {
		r.Skipped = fmt.Sprintf("only %d point(s) outside the transit to set the flux level; at least %d are needed", out, o.MinOutOfTransit)
		return r
	}
	K := int(math.Round(2 * o.MaxShift / o.Step))
	f := &fitter{tr: tr, w: make([]float64, len(tr.Time)), mod: make([]float64, len(tr.Time)),
		grid: make([]float64, K+1), lnA: make([]float64, K+1), lo: -o.MaxShift, step: 2 * o.MaxShift / float64(K)}
	for i, e := range tr.Err {
		f.w[i] = 1 / (e * e)
	}
	best := 0
	for k := range f.grid {
		f.grid[k], _ = f.chi2(f.at(k))
		f.lnA[k] = math.Log(f.a)
		if f.grid[k] < f.grid[best] {
			best = k
		}
	}
	if f.bad {
		r.Skipped = "the model gives no usable flux (not finite, or zero everywhere) for some shift in the search range"
		return r
	}
	if best == 0 || best == K {
		r.Skipped = fmt.Sprintf("the best shift lies at the edge of the search (±%.4g min); the transit is off its predicted time by more than the search allows, or is not in the data", o.MaxShift*1440)
		return r
	}
	dt := f.golden(f.at(best-1), f.at(best+1))
	c2, scale := f.chi2(dt)
	if c2 > f.grid[best] { // the grid point beat the refinement (flat or noisy χ²)
		dt = f.at(best)
		c2, scale = f.chi2(dt)
	}
	lowCross, okLow := f.crossing(best, dt, c2+1, -1)
	highCross, okHigh := f.crossing(best, dt, c2+1, +1)
	if !okLow || !okHigh {
		r.Skipped = fmt.Sprintf("the one-sigma interval reaches the edge of the search (±%.4g min): the time is not constrained within it", o.MaxShift*1440)
		return r
	}
	if f.bad {
		r.Skipped = "the model gives no usable flux (not finite, or zero everywhere) near the best shift"
		return r
	}
	lnA := math.Log(f.a)
	errLow, errHigh := f.spread(dt, c2, lnA, dt-lowCross, highCross-dt)
	if f.bad {
		r.Skipped = "the model gives no usable flux (not finite, or zero everywhere) near the best shift"
		return r
	}
	r.Shift, r.Time, r.Chi2, r.Scale = dt, tr.Predicted+dt, c2, scale
	r.ErrLow, r.ErrHigh = errLow, errHigh
	return r
}

// spread returns the low- and high-side root mean square distances from the best shift dt
// of the likelihood L ∝ exp(−(χ² − c2)/2)·√(A₀/A) over the search range (c2 and lnA = ln A₀
// at dt): errLow² = 2·∫_{x<dt}(x−dt)²L dx / ∫L dx, errHigh² likewise, so that for a
// symmetric L both are its standard deviation and (errLow² + errHigh²)/2 is the mean square
// distance. The integrals are trapezoid sums over the grid points, with the points within
// fineReach·sLow below dt and fineReach·sHigh above it (sLow, sHigh: the Δχ² = 1
// half-widths) replaced by a finer grid through dt, of step min(grid step, s/finePerSigma)
// on the side of half-width s (at most fineReach·finePerSigma points a side).
func (f *fitter) spread(dt, c2, lnA, sLow, sHigh float64) (errLow, errHigh float64) {
	hLow, hHigh := min(f.step, sLow/finePerSigma), min(f.step, sHigh/finePerSigma)
	a := max(f.lo, dt-fineReach*sLow)
	b := min(-f.lo, dt+fineReach*sHigh)
	var m0, m2lo, m2hi float64
	px, pw, first := 0.0, 0.0, true
	add := func(x, c, la float64) {
		w := math.Exp(-0.5*(c-c2) - 0.5*(la-lnA))
		if !first {
			// Trapezoid over [px, x]; the fine grid has a point at dt, so no interval
			// straddles it.
			d := x - px
			m0 += 0.5 * d * (pw + w)
			q := 0.5 * d * (pw*(px-dt)*(px-dt) + w*(x-dt)*(x-dt))
			if x <= dt {
				m2lo += q
			} else {
				m2hi += q
			}
		}
		px, pw, first = x, w, false
	}
	fine := func(x float64) {
		c, _ := f.chi2(x)
		add(x, c, math.Log(f.a))
	}
	k := 0
	for ; k < len(f.grid) && f.at(k) < a; k++ {
		add(f.at(k), f.grid[k], f.lnA[k])
	}
	nLow := int(math.Floor((dt - a) / hLow))
	for i := -nLow; i < 0; i++ {
		fine(dt + float64(i)*hLow)
	}
	add(dt, c2, lnA)
	nHigh := int(math.Floor((b - dt) / hHigh))
	for i := 1; i <= nHigh; i++ {
		fine(dt + float64(i)*hHigh)
	}
	for ; k < len(f.grid); k++ {
		if f.at(k) > b {
			add(f.at(k), f.grid[k], f.lnA[k])
		}
	}
	return math.Sqrt(2 * m2lo / m0), math.Sqrt(2 * m2hi / m0)
}

// golden minimises χ² on [a, b] by golden-section search (Kiefer 1953), a fixed number of
// steps so the cost is known.
func (f *fitter) golden(a, b float64) float64 {
	const g = 0.6180339887498949 // (√5 − 1)/2
	x1, x2 := b-g*(b-a), a+g*(b-a)
	f1, _ := f.chi2(x1)
	f2, _ := f.chi2(x2)
	for range goldenIters {
		if f1 <= f2 {
			b, x2, f2 = x2, x1, f1
			x1 = b - g*(b-a)
			f1, _ = f.chi2(x1)
		} else {
			a, x1, f1 = x1, x2, f2
			x2 = a + g*(b-a)
			f2, _ = f.chi2(x2)
		}
	}
	if f1 <= f2 {
		return x1
	}
	return x2
}

// crossing finds where χ² rises through level going from the minimum at dt (grid index
// best) in direction dir (−1 or +1): the first grid point beyond dt above the level brackets
// it with the last point below (or dt), and bisection closes in. ok is false when the grid
// ends first.
func (f *fitter) crossing(best int, dt, level float64, dir int) (float64, bool) {
	inner := dt
	k := best
	if (f.at(k)-dt)*float64(dir) <= 0 {
		k += dir
	}
	for ; k >= 0 && k < len(f.grid); k += dir {
		if f.grid[k] > level {
			outer := f.at(k)
			for range bisectIters {
				mid := 0.5 * (inner + outer)
				if c, _ := f.chi2(mid); c > level {
					outer = mid
				} else {
					inner = mid
				}
			}
			return 0.5 * (inner + outer), true
		}
		inner = f.at(k)
	}
	return math.NaN(), false
}
