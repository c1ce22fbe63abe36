package robust

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// splineMaxRounds bounds the fit–clip–refit cycle of RobustSpline. The clipped set may
// change back and forth by a point or two; the bound keeps the cycle finite.
const splineMaxRounds = 20

// sigmaFloor keeps a robust scatter from collapsing to zero on noise-free data, where
// clipping at k·σ would then cut points on rounding error: σ is at least this fraction of
// the mean absolute flux (one part per billion, far below any photometric noise).
const sigmaFloor = 1e-9

// minPerInterval is the fewest fitted points a knot interval may hold: with at least four
// in every interval the Schoenberg–Whitney conditions hold and the cubic least-squares
// problem has a unique solution (de Boor, A Practical Guide to Splines, from memory).
const minPerInterval = 4

// RobustSpline writes into dst the robust cubic-spline trend of (t, f): a clamped cubic
// B-spline fitted by least squares to the points with use[j], with breakpoints every
// spacing (evenly spread over the series and merged wherever an interval holds fewer than
// max(minPoints, 4) fitted points, so knots sit only where data exist); points whose
// residual exceeds clip times the robust scatter (1.4826·MAD) on either side are left
// out and the spline refitted until the left-out set stops changing. The idea is that of
// Vanderburg & Johnson (2014, PASP 126, 948). The spline is evaluated at every point of t,
// used or not; dst is all NaN when fewer than four points can be fitted. t must be sorted.
func RobustSpline(dst, t, f []float64, use []bool, spacing, clip float64, minPoints int) {
	n := len(t)
	fit := make([]bool, n)
	copy(fit, use)
	res := make([]float64, 0, n)
	var s splineFit
	for round := 0; round < splineMaxRounds; round++ {
		if !s.fit(dst, t, f, fit, spacing, minPoints) {
			for i := range dst {
				dst[i] = math.NaN()
			}
			return
		}
		res = res[:0]
		scale := 0.0
		for j := range t {
			if use[j] {
				res = append(res, f[j]-dst[j])
				scale += math.Abs(f[j])
			}
		}
		sigma := RobustSigma(res)
		if floor := sigmaFloor * scale / float64(len(res)); !(sigma >= floor) {
			sigma = floor
		}
		changed := false
		for j := range t {
			if !use[j] {
				continue
			}
			keep := math.Abs(f[j]-dst[j]) <= clip*sigma
			if keep != fit[j] {
				fit[j] = keep
				changed = true
			}
		}
		if !changed {
			return
		}
	}
}

// splineFit holds the work space of one least-squares cubic B-spline fit.
type splineFit struct {
	breaks []float64
	knots  []float64
	coef   []float64
}

// fit fits the spline to the points with fit[j] and evaluates it at all of t into dst. It
// reports false when fewer than four points are fitted or the system is singular.
func (s *splineFit) fit(dst, t, f []float64, fit []bool, spacing float64, minPoints int) bool {
	per := max(minPoints, minPerInterval)
	nfit := 0
	for _, u := range fit {
		if u {
			nfit++
		}
	}
	if nfit < minPerInterval || len(t) == 0 {
		return false
	}
	a, b := t[0], t[len(t)-1]
	if !(b > a) {
		// All points at one time: the best constant.
		sum := 0.0
		for j := range t {
			if fit[j] {
				sum += f[j]
			}
		}
		for j := range dst {
			dst[j] = sum / float64(nfit)
		}
		return true
	}
	s.placeBreaks(t, fit, a, b, spacing, per, nfit)
	for {
		ok := s.solve(dst, t, f, fit)
		if ok {
			return true
		}
		if len(s.breaks) <= 2 {
			return false
		}
		// Singular (it should not be with the interval rule): halve the knots and retry.
		nb := s.breaks[:0]
		for i := 0; i < len(s.breaks)-1; i += 2 {
			nb = append(nb, s.breaks[i])
		}
		nb = append(nb, b)
		s.breaks = nb
	}
}

// placeBreaks spreads breakpoints evenly over [a, b] about spacing apart, then merges,
// left to right, every interval that holds fewer than per fitted points into the next
// (and a short last interval into the one before).
func (s *splineFit) placeBreaks(t []float64, fit []bool, a, b, spacing float64, per, nfit int) {
	m := 1
	if spacing > 0 {
		if r := math.Round((b - a) / spacing); r > 1 {
			m = int(min(r, float64(nfit/per)))
		}
	}
	m = max(m, 1)
	s.breaks = s.breaks[:0]
	s.breaks = append(s.breaks, a)
	j, count := 0, 0
	for k := 1; k < m; k++ {
		x := a + (b-a)*float64(k)/float64(m)
		for j < len(t) && t[j] < x {
			if fit[j] {
				count++
			}
			j++
		}
		if count >= per {
			s.breaks = append(s.breaks, x)
			count = 0
		}
	}
	for ; j < len(t); j++ {
		if fit[j] {
			count++
		}
	}
	if count < per && len(s.breaks) > 1 {
		s.breaks = s.breaks[:len(s.breaks)-1]
	}
	s.breaks = append(s.breaks, b)
}

// solve builds and solves the banded normal equations for the current breakpoints and
// evaluates the spline into dst.
func (s *splineFit) solve(dst, t, f []float64, fit []bool) bool {
	m := len(s.breaks) - 1 // intervals
	nb := m + 3            // cubic B-splines
	s.knots = s.knots[:0]
	for range 3 {
		s.knots = append(s.knots, s.breaks[0])
	}
	s.knots = append(s.knots, s.breaks...)
	for range 3 {
		s.knots = append(s.knots, s.breaks[m])
	}
	const k = 3
	ata := make([]float64, nb*(k+1)) // upper band, row-major: ata[i*(k+1)+(j-i)]
	atb := make([]float64, nb)
	var bas [4]float64
	iv := 0
	for j := range t {
		if !fit[j] {
			continue
		}
		iv = s.interval(t[j], iv)
		s.basis(t[j], iv, &bas)
		for p := 0; p < 4; p++ {
			r := iv + p
			atb[r] += bas[p] * f[j]
			for q := p; q < 4; q++ {
				ata[r*(k+1)+(q-p)] += bas[p] * bas[q]
			}
		}
	}
	// Banded Cholesky (LAPACK dpbtrf/dpbtrs as ported by gonum): O(nb·k²), without the
	// condition estimate of mat.BandCholesky, which costs more than the whole fit here.
	u, ok := lapack64.Pbtrf(blas64.SymmetricBand{Uplo: blas.Upper, N: nb, K: k, Data: ata, Stride: k + 1})
	if !ok {
		return false
	}
	lapack64.Pbtrs(u, blas64.General{Rows: nb, Cols: 1, Data: atb, Stride: 1})
	for _, c := range atb {
		if !finite(c) {
			return false
		}
	}
	s.coef = append(s.coef[:0], atb...)
	iv = 0
	for j := range t {
		iv = s.interval(t[j], iv)
		s.basis(t[j], iv, &bas)
		v := 0.0
		for p := 0; p < 4; p++ {
			v += bas[p] * s.coef[iv+p]
		}
		dst[j] = v
	}
	return true
}

// interval returns the index of the breakpoint interval holding x, searching forward from
// the guess (x comes in ascending order); the last interval is closed on the right.
func (s *splineFit) interval(x float64, guess int) int {
	m := len(s.breaks) - 1
	i := min(guess, m-1)
	for i < m-1 && x >= s.breaks[i+1] {
		i++
	}
	return i
}

// basis writes the four cubic B-splines that are non-zero on interval iv, evaluated at x,
// by the Cox–de Boor recurrence (de Boor 1978, from memory). The i-th of them is the basis
// function iv+i.
func (s *splineFit) basis(x float64, iv int, out *[4]float64) {
	span := iv + 3 // knots[span] ≤ x < knots[span+1]
	kn := s.knots
	var left, right [4]float64
	out[0] = 1
	for j := 1; j <= 3; j++ {
		left[j] = x - kn[span+1-j]
		right[j] = kn[span+j] - x
		saved := 0.0
		for r := 0; r < j; r++ {
			tmp := out[r] / (right[r+1] + left[j-r])
			out[r] = saved + right[r+1]*tmp
			saved = left[j-r] * tmp
		}
		out[j] = saved
	}
}
