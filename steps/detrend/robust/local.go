package robust

import (
	"math"
	"sort"

	"dipline/steps/internal/parallel"
)

// Robust locally weighted polynomial regression in a sliding time window (Cleveland 1979,
// JASA 74, 829): at each point a polynomial of degree 0, 1 or 2 in time is fitted by
// weighted least squares to the usable points within ±half, the weights tricube in the
// distance, (1 − |u|³)³ with u = Δt/half, times a robustness weight per point; the trend is
// the polynomial's value at the point itself. The robustness weights start at one and are
// then set from the residuals of the previous fit, B(e_j / (6 s)) with B(u) = (1 − u²)² for
// |u| < 1 and s the median absolute residual of the piece, so that outliers (flares, a
// transit left unmasked) lose their pull. Where the points carry errors, s is at least the
// median absolute deviation that Gaussian noise of the median error would give (0.6745 σ):
// residuals smaller than the photometry's own noise are no evidence of an outlier, and on
// noise-free data (a test's, or a star far brighter than its errors admit) a scale set by
// the trend's own tiny bias would otherwise zero the weights at every turn of the light.
//
// A location estimate (the biweight, the median) in a window is biased wherever the trend
// is curved, by about ½ f''·h²/12 for a window of width h, and beside a masked stretch,
// where the window becomes one-sided and a slope leaves a shelf; a local line removes the
// slope bias and a local quadratic the curvature term as well (from memory; measured in
// local_test.go and spotted_test.go). Masked points and flares get zero weight, and the fit is still
// evaluated at their times, so the trend runs straight through a masked transit.

// localStat holds the weighted moments of one window: Σw u^k for k = 0…4 and Σw u^k y for
// k = 0…2, with u the scaled time offset and y the flux minus the piece's reference level.
type localStat struct {
	s [5]float64
	r [3]float64
}

// addMoments adds a point at scaled offset u with weight w to the weighted moments
// Σw·uᵏ, k = 0 … 4 (the right sides r are the caller's).
func (st *localStat) addMoments(u, w float64) {
	st.s[0] += w
	st.s[1] += w * u
	st.s[2] += w * u * u
	st.s[3] += w * u * u * u
	st.s[4] += w * u * u * u * u
}

// centreWeights returns the coefficients (c0, c1, c2) with which the fit's value at the
// centre is c0·r0 + c1·r1 + c2·r2: the value is linear in the right sides, so solving with
// each unit right side in turn gives them.
func (st localStat) centreWeights(degree int) [3]float64 {
	var c [3]float64
	for i := range c {
		e := st
		e.r = [3]float64{}
		e.r[i] = 1
		c[i], _ = e.solve(degree)
	}
	return c
}

// tricube is Cleveland's (1979) neighbourhood weight (1 − |u|³)³ for |u| < 1, else 0.
func tricube(u float64) float64 {
	a := math.Abs(u)
	if a >= 1 {
		return 0
	}
	x := 1 - a*a*a
	return x * x * x
}

// singularTol decides when a window's normal equations are too ill-conditioned for the
// asked degree: the pivot of the elimination relative to Σw. A one-sided window (the end of
// a piece, the edge of a mask) is still well conditioned for a quadratic; a window whose
// weight sits on one or two distinct times is not, and the degree is lowered.
const singularTol = 1e-9

// maxCentroid bounds how far from the point (in half-widths) the centroid of a window's
// weight may lie. At the end of a series with data up to the end the tricube weights put it
// at ∫u(1−u³)³du / ∫(1−u³)³du = 0.318 half-widths (worked by hand); beyond 0.5 the usable
// points lie mostly far to one side — a masked stretch that fills the near half of the
// window at an end, or a window that sees only the far edge of the data — and a polynomial
// would be extrapolated into the hole, which for a quadratic on a spotted star can miss by
// more than the star's whole amplitude. Such points get no trend of their own: masked ones
// are bridged from their neighbours (fillMasked), others dropped.
const maxCentroid = 0.5

// solve returns the fitted polynomial's value at u = 0 for the highest degree ≤ deg whose
// normal equations are well conditioned, and false when not even a constant can be fitted
// or the window's weight lies too far to one side (maxCentroid).
func (m *localStat) solve(deg int) (float64, bool) {
	s, r := m.s, m.r
	if !(s[0] > 0) || math.Abs(s[1]) > maxCentroid*s[0] {
		return 0, false
	}
	if deg >= 2 {
		// Symmetric 3×3 system [[s0 s1 s2] [s1 s2 s3] [s2 s3 s4]] a = r by Gaussian
		// elimination without pivoting (positive definite), then back-substitution for a0.
		l10, l20 := s[1]/s[0], s[2]/s[0]
		a11 := s[2] - l10*s[1]
		a12 := s[3] - l10*s[2]
		a22 := s[4] - l20*s[2]
		b1 := r[1] - l10*r[0]
		b2 := r[2] - l20*r[0]
		if a11 > singularTol*s[0] {
			l21 := a12 / a11
			c22 := a22 - l21*a12
			if c22 > singularTol*s[0] {
				a2 := (b2 - l21*b1) / c22
				a1 := (b1 - a12*a2) / a11
				return (r[0] - s[1]*a1 - s[2]*a2) / s[0], true
			}
		}
	}
	if deg >= 1 {
		d := s[0]*s[2] - s[1]*s[1]
		if d > singularTol*s[0]*s[0] {
			return (s[2]*r[0] - s[1]*r[1]) / d, true
		}
	}
	return r[0] / s[0], true
}

// LocalFit is the configuration of LocalFilter.
type LocalFit struct {
	// Half is the half-width of the time window in days.
	Half float64
	// Degree is the local polynomial's degree, 0, 1 or 2.
	Degree int
	// Iterations is the number of fits: the first with unit robustness weights, each later
	// one with weights from the previous fit's residuals. 1 gives the plain (non-robust)
	// local regression.
	Iterations int
	// MinPoints is the fewest usable points a window needs; with fewer the trend is NaN.
	MinPoints int
	// Step, when positive, is the longest time between points at which the polynomial is
	// fitted: the points between two such anchors take the trend interpolated linearly
	// between them (see localBlockFit). 0 fits at every point.
	Step float64
}

// AnchorsPerWindow is the number of anchors a window of the detrend spans when points are
// denser (Step = 2·Half/AnchorsPerWindow). A trend varying on the window's scale, of
// amplitude A, departs from the straight line between anchors d apart by about f″d²/8, of
// order A/(8·64²) ≈ 3·10⁻⁵ A: 0.3 ppm for a 1 % spot modulation
// (TestAnchoredTrendFollowsTheExactOne). At a 30-minute cadence no window of the ladder
// holds more than 64 points below 1.3 d, so there every point is fitted; at a 20-second
// cadence a 0.7-day window holds 3024 points and the fits fall 47-fold.
const AnchorsPerWindow = 64

// localBlock is the number of points per unit of parallel work; fixed, so the result does
// not depend on the worker count (each point's value depends only on its own window).
const localBlock = 1024

// LocalFilter writes into dst the robust local polynomial trend of the fluxes f at times t
// (sorted) over the points with use[j], evaluated at every point, usable or not; NaN where
// the window holds fewer than cfg.MinPoints usable points. e holds the points' errors (nil
// when there are none), used only to floor the robustness scale. The robustness weights are
// shared by the whole series (one scale s for all residuals), so a series is one unit: call
// it once per piece. par may be nil.
func LocalFilter(dst, t, f, e []float64, use []bool, cfg LocalFit, par parallel.Func) {
	n := len(t)
	if n == 0 {
		return
	}
	if par == nil {
		par = serial
	}
	ref := 0.0
	for j := range f {
		if use[j] {
			ref = f[j]
			break
		}
	}
	rw := make([]float64, n)
	for j := range rw {
		if use[j] {
			rw[j] = 1
		}
	}
	floor := noiseFloor(e, use)
	iters := max(cfg.Iterations, 1)
	nb := (n + localBlock - 1) / localBlock
	res := make([]float64, 0, n)
	for it := 0; it < iters; it++ {
		par(nb, func(b int) {
			localBlockFit(dst, t, f, rw, ref, cfg, b*localBlock, min((b+1)*localBlock, n))
		})
		if it == iters-1 {
			break
		}
		res = res[:0]
		for j := range t {
			if use[j] && finite(dst[j]) {
				res = append(res, math.Abs(f[j]-dst[j]))
			}
		}
		if len(res) == 0 {
			return
		}
		s := max(selectMedian(res), floor)
		if !(s > sigmaFloor*math.Abs(ref)) {
			return // residuals at rounding level: nothing to downweight
		}
		robustnessWeights(rw, t, f, dst, use, 6*s)
	}
}

// noiseFloor is the median absolute deviation of Gaussian noise with the median error of
// the usable points, σ/1.4826, or 0 without errors.
func noiseFloor(e []float64, use []bool) float64 {
	if e == nil {
		return 0
	}
	v := make([]float64, 0, len(e))
	for j, x := range e {
		if use[j] && x > 0 && finite(x) {
			v = append(v, x)
		}
	}
	if len(v) == 0 {
		return 0
	}
	return selectMedian(v) / madScale
}

// robustnessWeights sets rw[j] = B((f_j − trend_j)/scale) for usable points with a trend
// and 0 for the others, B the biweight (Cleveland 1979: scale = 6 × median |residual|).
func robustnessWeights(rw, t, f, trend []float64, use []bool, scale float64) {
	for j := range t {
		if !use[j] || !finite(trend[j]) {
			rw[j] = 0
			continue
		}
		u := (f[j] - trend[j]) / scale
		if math.Abs(u) >= 1 {
			rw[j] = 0
			continue
		}
		v := 1 - u*u
		rw[j] = v * v
	}
}

// localBlockFit fits the points [from, to) of one block: at anchors, each the farthest
// point within cfg.Step of the one before (every point when cfg.Step is 0, or when the
// next point lies farther), the first and the last point of the block among them; the
// points between two anchors with a trend take it interpolated linearly, the others
// (beside an anchor without one) are fitted too. A block's anchors depend only on its
// points, so the result does not depend on the number of workers.
func localBlockFit(dst, t, f, rw []float64, ref float64, cfg LocalFit, from, to int) {
	prev := -1
	for i := from; i < to; {
		dst[i] = localFitAt(t, f, rw, ref, cfg, i)
		if prev >= 0 {
			for j := prev + 1; j < i; j++ {
				if finite(dst[prev]) && finite(dst[i]) {
					dst[j] = dst[prev] + (dst[i]-dst[prev])*(t[j]-t[prev])/(t[i]-t[prev])
				} else {
					dst[j] = localFitAt(t, f, rw, ref, cfg, j)
				}
			}
		}
		prev = i
		next := i + 1
		for cfg.Step > 0 && next+1 < to && t[next+1] <= t[i]+cfg.Step {
			next++
		}
		i = next
	}
}

// localFitAt is the local polynomial's value at point i: the weighted fit over the points
// strictly within cfg.Half of it; NaN with fewer than cfg.MinPoints of weight.
func localFitAt(t, f, rw []float64, ref float64, cfg LocalFit, i int) float64 {
	lo := sort.Search(len(t), func(k int) bool { return t[k] > t[i]-cfg.Half })
	hi := sort.Search(len(t), func(k int) bool { return t[k] >= t[i]+cfg.Half })
	var m localStat
	count := 0
	for j := lo; j < hi; j++ {
		if rw[j] == 0 {
			continue
		}
		u := (t[j] - t[i]) / cfg.Half
		w := tricube(u) * rw[j]
		if w == 0 {
			continue
		}
		count++
		y := f[j] - ref
		u2 := u * u
		m.s[0] += w
		m.s[1] += w * u
		m.s[2] += w * u2
		m.s[3] += w * u2 * u
		m.s[4] += w * u2 * u2
		m.r[0] += w * y
		m.r[1] += w * u * y
		m.r[2] += w * u2 * y
	}
	if count < cfg.MinPoints {
		return math.NaN()
	}
	v, ok := m.solve(cfg.Degree)
	if !ok {
		return math.NaN()
	}
	return ref + v
}

// serial runs the blocks one after another.
func serial(n int, block func(int)) {
	for i := 0; i < n; i++ {
		block(i)
	}
}
