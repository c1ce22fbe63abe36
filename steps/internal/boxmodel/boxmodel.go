// Package boxmodel fits flat-bottomed box dips to a light curve by weighted least squares:
// a constant level outside every box and one depth per group of boxes, where the caller
// says which group (if any) each point's box belongs to. One function serves every
// question asked of a periodic dip: its depth, the depths of odd and even transits, the
// depth of each transit alone, a dip at another phase, the depth in each segment or band,
// and the χ² of competing box models (at P, P/2 or 2P) for an information criterion.
//
// It knows nothing of workflows or steps. Main entry point: Fit.
package boxmodel

import "math"

// Ephemeris places a periodic box: mid-times Epoch + n·Period, full width Duration (days).
type Ephemeris struct {
	Period, Epoch, Duration float64
}

// Cycle returns the transit number n of the box nearest t and the distance to its centre
// in days, |t − (Epoch + n·Period)|.
func (e Ephemeris) Cycle(t float64) (n int64, dist float64) {
	n, off := e.Offset(t)
	return n, math.Abs(off)
}

// Offset returns the transit number n of the box nearest t and the signed time from its
// centre in days, (t − Epoch)/Period − n times Period: negative before mid-transit, in
// [−Period/2, Period/2]. It is the phase of a fold centred on the transit, in days.
func (e Ephemeris) Offset(t float64) (n int64, off float64) {
	x := (t - e.Epoch) / e.Period
	r := math.Round(x)
	return int64(r), (x - r) * e.Period
}

// Inside reports whether t lies in a box (within Duration/2 of a mid-time), and which.
func (e Ephemeris) Inside(t float64) (n int64, in bool) {
	n, d := e.Cycle(t)
	return n, d < e.Duration/2
}

// Shifted returns the ephemeris moved by phase (a fraction of the period, e.g. 0.5 for
// the opposite conjunction).
func (e Ephemeris) Shifted(phase float64) Ephemeris {
	e.Epoch += phase * e.Period
	return e
}

// Result is the weighted least-squares fit of a constant Level outside every box and
// Level − Depth[g] inside the boxes of group g.
type Result struct {
	Level float64
	// Depth, Sigma and Points are per group; a group with no point has NaN depth and
	// sigma and 0 points.
	Depth, Sigma []float64
	Points       []int
	// Weight is Σ w of each group's points.
	Weight []float64
	// Outside is the number of points in no box.
	Outside int
	// Chi2 is Σ w (f − model)² over every point; Chi2Flat that of the best constant alone.
	// Chi2Flat − Chi2 is the improvement the boxes make.
	Chi2, Chi2Flat float64
	// N is the number of points used (finite flux and positive weight).
	N int
}

// Fit fits a constant and one depth per group to (t, f) with weights w (1/σ²; nil means
// all 1). group(i) returns the group in [0, groups) of the box point i falls in, or −1 when
// it is in none. Groups partition the in-box points, so the solution is closed-form: the
// level is the weighted mean outside every box and each depth is the level minus its
// group's weighted mean; σ(depth_g) = √(1/W_g + 1/W_out). Points with a non-finite flux or
// a weight that is not positive are left out. With no point outside every box the level
// and depths are NaN.
func Fit(f, w []float64, groups int, group func(i int) int) Result {
	r := Result{Depth: make([]float64, groups), Sigma: make([]float64, groups),
		Points: make([]int, groups), Weight: make([]float64, groups)}
	sum := make([]float64, groups)
	var wOut, sOut, wAll, sAll float64
	weight := func(i int) float64 {
		if w == nil {
			return 1
		}
		return w[i]
	}
	for i, fi := range f {
		wi := weight(i)
		if !(wi > 0) || math.IsInf(wi, 0) || math.IsNaN(fi) || math.IsInf(fi, 0) {
			continue
		}
		r.N++
		wAll += wi
		sAll += wi * fi
		g := group(i)
		if g < 0 || g >= groups {
			wOut += wi
			sOut += wi * fi
			r.Outside++
			continue
		}
		r.Weight[g] += wi
		sum[g] += wi * fi
		r.Points[g]++
	}
	r.Level = math.NaN()
	if wOut > 0 {
		r.Level = sOut / wOut
	}
	for g := range r.Depth {
		if r.Points[g] == 0 || wOut == 0 {
			r.Depth[g], r.Sigma[g] = math.NaN(), math.NaN()
			continue
		}
		r.Depth[g] = r.Level - sum[g]/r.Weight[g]
		r.Sigma[g] = math.Sqrt(1/r.Weight[g] + 1/wOut)
	}
	flat := math.NaN()
	if wAll > 0 {
		flat = sAll / wAll
	}
	for i, fi := range f {
		wi := weight(i)
		if !(wi > 0) || math.IsInf(wi, 0) || math.IsNaN(fi) || math.IsInf(fi, 0) {
			continue
		}
		m := r.Level
		if g := group(i); g >= 0 && g < groups && r.Points[g] > 0 {
			m -= r.Depth[g]
		}
		d := fi - m
		r.Chi2 += wi * d * d
		df := fi - flat
		r.Chi2Flat += wi * df * df
	}
	return r
}

// BIC is the Bayesian information criterion χ² + k ln n of a model with k free parameters
// fitted to n points with Gaussian errors of known size (Schwarz 1978), up to a constant
// common to all models of the same data.
func BIC(chi2 float64, k, n int) float64 {
	return chi2 + float64(k)*math.Log(float64(n))
}
