package robust

import (
	"math"
	"sort"

	"dipline/steps/internal/parallel"
)

// Choosing the window of the local polynomial from the light curve itself.
//
// A wide window keeps more of an unmasked transit (the trend bends less into it) but follows
// the star's own variability less closely: the local quadratic's bias grows about as the
// fourth power of the window (the first term a quadratic does not cancel), and on a spotted
// star it turns into slow wiggles that compete with the transits. No single width suits a
// quiet star and a star rotating once a day, so ChooseSpan measures both sides of the trade
// on the data:
//
//   - the bias of each candidate window, from how far its trend strays from the trend of the
//     narrowest candidate (whose own bias is smaller by the fourth power of the ratio), less
//     what the noise alone makes the two differ by (the equivalent kernels give it);
//   - the noise, from the scatter of second differences of the light curve binned to a
//     twelfth of the reference duration (smooth variability cancels in second differences),
//     or the stated errors when they are larger (data smoother than their errors say, as a
//     noise-free test's, should not make the choice chase a bias of a few ppm);
//   - the share of an unmasked box of the reference duration that the trend leaves in the
//     data, from the window's equivalent kernel (the linear weights by which the plain fit's
//     value at a point combines the fluxes around it).
//
// For a first, unmasked pass it picks the window that maximises the expected transit signal
// to noise, kept / √(σ_D² + bias²), σ_D the white noise binned to the reference duration.
// With the transits masked nothing needs keeping, and it picks the widest window (the least
// noise in the trend) whose bias is negligible, at most a tenth of σ_D: it then adds at most
// 1 % to the variance of a transit's depth, and a bias, unlike noise, does not average away
// over the points of one transit. A bias that small is far below what the estimate can
// resolve: every window's estimate carries the noise of the narrowest window's trend, whose
// sampling error on a month of data is tens of ppm, while a tenth of σ_D is often under
// 30 ppm. So a window is ruled out only when its bias is shown to exceed the tenth, by more
// than twice the estimate's own standard error (measured from the data, in blocks one window
// long); otherwise pure noise would rule out every window but the narrowest, whose bias is
// zero by construction, and the masked pass would follow the noise. When no window is that
// good, the narrowest allowed is taken.
//
// A masked pass also has a floor: the caller's shortest allowed window (floor), which keeps
// the masked stretches a small part of the window so that the trend under them is
// interpolated from data on both sides rather than extrapolated (see the detrend kind).
//
// The trials are binned to about a twelfth of the reference duration (a whole number of
// cadences, at least one) so that the choice costs about as much as one detrend.

// negligibleBias is the largest bias, as a share of the white noise per reference
// duration, that a masked pass's window may leave: (1 + 0.1²) adds 1 % to the variance.
const negligibleBias = 0.1

// SpanGoal says what the chosen window must serve.
type SpanGoal int

const (
	// KeepTransits serves a pass whose transits are not masked: keep as much of them as the
	// star allows.
	KeepTransits SpanGoal = iota
	// FollowStar serves a pass whose transits are masked: follow the star as closely as the
	// noise allows.
	FollowStar
)

// spanLadder lists the candidate windows in days, a factor √2 apart from 6 h to 4 d: 6 h is
// about the shortest window that still spans a masked 2-hour transit (1.5 durations) with
// room on both sides; 4 d keeps 95 % of a 2-hour transit on a quiet star.
var spanLadder = []float64{0.25, 0.354, 0.5, 0.707, 1.0, 1.414, 2.0, 2.828, 4.0}

// SpanTrial is what ChooseSpan measured for one candidate window.
type SpanTrial struct {
	Span float64 // full width, days
	// Kept is the share of an unmasked box of the reference duration's depth the detrended
	// light curve keeps (plain fit, evenly sampled data).
	Kept float64
	// Bias is the root-mean-square departure of the trend from the star's, relative flux.
	Bias float64
	// BiasErr is the square root of the standard error of Bias² (relative flux): a bias
	// below it cannot be told from none.
	BiasErr float64
	// TrendNoise is the standard deviation the noise gives the trend at a point.
	TrendNoise float64
	// Allowed is false for a window under the caller's floor.
	Allowed bool
	// Score is what the goal maximises: the expected signal to noise of an unmasked
	// transit (KeepTransits), or the span itself when the bias is not shown to exceed the
	// negligible level and 0 when it is (FollowStar); 0 for a window under the floor.
	Score float64
	// Quiet is true when the window's bias is not shown to exceed the negligible level
	// (FollowStar), whether or not the floor allows it.
	Quiet bool
	// Reference is true for the narrowest window, against whose trend the others' bias is
	// measured: its own bias is not measured (it is set to 0), only taken to be smaller.
	Reference bool
}

// ShownAbove reports whether the trial's bias is shown to exceed level: by more than
// significance of its own standard errors, as the negligible test reads it.
func (t SpanTrial) ShownAbove(level float64) bool {
	return t.Bias*t.Bias-significance*t.BiasErr*t.BiasErr > level*level
}

// SpanChoice is ChooseSpan's answer with its evidence.
type SpanChoice struct {
	Span   float64
	Trials []SpanTrial
	// Noise is the white noise per reference duration, σ_D (relative flux); Bin the width
	// of the bins the trials were made on (days).
	Noise, Bin float64
	// Negligible is false when no allowed window met the goal's test for the bias
	// (FollowStar): the narrowest allowed was taken, and its bias is not negligible.
	// Always true for KeepTransits.
	Negligible bool
	// Floored is true when the floor is wider than every candidate: Span is the floor
	// itself, its bias not measured.
	Floored bool
}

// significance is how many standard errors a bias estimate must exceed the negligible
// level by for a masked pass to rule its window out: a one-sided 2.3 % chance that noise
// alone rules out a given window (normal tail at 2σ, common practice).
const significance = 2.0

// ChooseSpan picks the window of the local polynomial of the given degree for the series
// (masked points left out), for the goal, with transits of duration ref (days) in mind,
// never narrower than floor (days; 0 for no floor). Series are split at gaps longer than
// gapOver. ok is false when the data are too few or too noisy to tell (fewer than two
// usable bins in every piece); the caller then keeps a fixed default.
func ChooseSpan(series []Series, degree int, goal SpanGoal, ref, floor, gapOver float64, par parallel.Func) (SpanChoice, bool) {
	cadence := MedianCadence(series)
	if !(cadence > 0) || !(ref > 0) {
		return SpanChoice{}, false
	}
	// A whole number of cadences per bin, the bins' edges half a cadence before a piece's
	// first point: on an even cadence every bin then holds the same number of points. Edges
	// on the points' own times (a bin exactly one cadence wide, starting at a point) would
	// leave it to rounding whether a point falls in one bin or the next, and the bins would
	// hold one or two points at random: noise of two levels on an uneven grid, which the
	// bias estimate below would read as bias.
	bin := cadence * max(1, math.Round(ref/12/cadence))
	pieces := binPieces(series, bin, cadence/2, gapOver)
	measured, ok := secondDifferenceScatter(pieces, bin)
	if !ok {
		return SpanChoice{}, false
	}
	// The noise the transits compete with: the measured scatter, or the stated errors when
	// they are larger. What the two trends differ by from noise alone is set by the noise
	// actually in the data, the measured scatter.
	sigma := max(measured, statedNoise(series)*math.Sqrt(cadence/bin))
	choice := SpanChoice{Noise: sigma * math.Sqrt(bin/ref), Bin: bin, Negligible: goal == KeepTransits}
	trends := make([][][]float64, len(spanLadder))
	for k, h := range spanLadder {
		trends[k] = make([][]float64, len(pieces))
		for p, pc := range pieces {
			trends[k][p] = make([]float64, len(pc.t))
			use := make([]bool, len(pc.t))
			errs := make([]float64, len(pc.t))
			for i := range use {
				use[i], errs[i] = true, sigma
			}
			LocalFilter(trends[k][p], pc.t, pc.f, errs, use, LocalFit{Half: h / 2, Degree: degree, Iterations: 4, MinPoints: degree + 3}, par)
		}
	}
	k0 := kernel(spanLadder[0]/2, bin, degree)
	best := -1
	for k, h := range spanLadder {
		kh := kernel(h/2, bin, degree)
		var sq, at []float64
		var piece []int
		for p, pc := range pieces {
			for i, v := range trends[k][p] {
				if d := v - trends[0][p][i]; finite(d) {
					sq = append(sq, d*d)
					at = append(at, pc.t[i])
					piece = append(piece, p)
				}
			}
		}
		if len(sq) == 0 {
			continue
		}
		tr := SpanTrial{Span: h, Kept: kh.kept(ref), TrendNoise: sigma * math.Sqrt(kh.sumSq()), Allowed: h >= floor, Reference: k == 0}
		se := blockError(sq, at, piece, h, trimShare)
		ms := trimmedMean(sq, trimShare)
		bias2 := ms/trimSmooth - measured*measured*kh.diffSq(k0)*trimNoise/trimSmooth
		tr.Bias = math.Sqrt(max(0, bias2))
		tr.BiasErr = math.Sqrt(se / trimSmooth)
		switch {
		case goal == KeepTransits:
			tr.Score = tr.Kept / math.Hypot(choice.Noise, tr.Bias)
		default:
			// Any window whose bias is not shown to exceed the negligible level will do; the
			// widest has the least noise.
			tr.Score = 0
			lim := negligibleBias * choice.Noise
			tr.Quiet = bias2-significance*tr.BiasErr*tr.BiasErr <= lim*lim
			if tr.Quiet {
				tr.Score = tr.Span
			}
		}
		if !tr.Allowed {
			tr.Score = 0 // a window under the floor is never chosen here
		}
		choice.Trials = append(choice.Trials, tr)
		if !tr.Allowed {
			continue
		}
		if best < 0 || tr.Score > choice.Trials[best].Score {
			best = len(choice.Trials) - 1
		}
	}
	if len(choice.Trials) == 0 {
		return SpanChoice{}, false
	}
	if best < 0 { // the floor is wider than every candidate
		choice.Span, choice.Floored, choice.Negligible = floor, true, false
		return choice, true
	}
	choice.Span = choice.Trials[best].Span
	if goal == FollowStar {
		choice.Negligible = choice.Trials[best].Score > 0
	}
	return choice, true
}

// blockError is the standard error of trimmedMean(sq, share) from the scatter of its parts
// over blocks of consecutive values, each block the values of one piece within a stretch of
// the given length (days) of their times at: the squared differences of two trends are
// correlated over about a window, so blocks one window long are close to independent
// (batch means; the variance of a ratio of sums, common practice). The trim's cut is the
// whole series'. 0 when there are fewer than two blocks.
func blockError(sq, at []float64, piece []int, length, share float64) float64 {
	keep := len(sq) - int(share*float64(len(sq)))
	cut := math.Inf(1)
	if keep < len(sq) && keep > 0 {
		c := append([]float64(nil), sq...)
		selectNth(c, keep-1)
		cut = c[keep-1]
	}
	var sums, counts []float64
	start, last := math.NaN(), -1
	for i, v := range sq {
		if piece[i] != last || at[i]-start >= length {
			sums, counts = append(sums, 0), append(counts, 0)
			start, last = at[i], piece[i]
		}
		if v <= cut {
			sums[len(sums)-1] += v
			counts[len(counts)-1]++
		}
	}
	b := len(sums)
	var S, N float64
	for i := range sums {
		S += sums[i]
		N += counts[i]
	}
	if b < 2 || N == 0 {
		return 0
	}
	r := S / N
	v := 0.0
	for i := range sums {
		d := sums[i] - r*counts[i]
		v += d * d
	}
	return math.Sqrt(v*float64(b)/float64(b-1)) / N
}

// The mean square difference between two trends is taken without its largest tenth:
// unmasked transits (a few per cent of the time) make the narrow window's trend dip where
// the wide one's does not, and would pass for bias. Trimming lowers the mean of the parts
// that remain: a sinusoidal bias's sin² by the factor trimSmooth (its mean over the lower
// 90 %, 1 − sin(π·0.9)/(0.9π)... worked numerically: 0.8895), white noise's χ²₁ by trimNoise
// (E[X | X < 2.706] = P(χ²₃ < 2.706)/0.9 = 0.6235, with 2.706 the 90th percentile of χ²₁;
// scipy.stats.chi2). The bias is read back on the sinusoid's scale.
const (
	trimShare  = 0.1
	trimSmooth = 0.8907
	trimNoise  = 0.6230
)

// trimmedMean is the mean of x without its largest share (x is reordered).
func trimmedMean(x []float64, share float64) float64 {
	keep := len(x) - int(share*float64(len(x)))
	if keep < len(x) && keep > 0 {
		selectNth(x, keep-1)
	}
	s := 0.0
	for _, v := range x[:max(keep, 1)] {
		s += v
	}
	return s / float64(max(keep, 1))
}

// binned is one gap-free piece of binned data.
type binned struct{ t, f []float64 }

// binPieces averages the usable points of every series in consecutive bins of the given
// width, splitting at gaps longer than gapOver; the first bin of each piece begins lead
// days before its first point, and a bin's time is the mean time of its points.
func binPieces(series []Series, width, lead, gapOver float64) []binned {
	var out []binned
	for _, s := range series {
		var cur binned
		var st, sf float64
		var n int
		start, last := math.NaN(), math.NaN()
		flush := func() {
			if n > 0 {
				cur.t = append(cur.t, st/float64(n))
				cur.f = append(cur.f, sf/float64(n))
			}
			st, sf, n = 0, 0, 0
		}
		for j, t := range s.Time {
			if !finite(t) || !finite(s.Flux[j]) || (s.Mask != nil && s.Mask[j]) || (s.Err != nil && !finite(s.Err[j])) {
				continue
			}
			if !math.IsNaN(last) && t-last > gapOver {
				flush()
				if len(cur.t) > 0 {
					out = append(out, cur)
				}
				cur, start = binned{}, math.NaN()
			}
			if math.IsNaN(start) {
				start = t - lead
			}
			if t-start >= width {
				flush()
				start += width * math.Floor((t-start)/width)
			}
			st += t
			sf += s.Flux[j]
			n++
			last = t
		}
		flush()
		if len(cur.t) > 0 {
			out = append(out, cur)
		}
	}
	return out
}

// secondDifferenceScatter returns the standard deviation of a binned point's white noise
// from second differences of consecutive, evenly spaced bins: for white noise of σ,
// f₋ − 2f₀ + f₊ has σ√6, and a smooth trend contributes only f”·bin², so 1.4826 × MAD/√6
// measures the noise without the star (common practice for point-to-point scatter).
func secondDifferenceScatter(pieces []binned, bin float64) (float64, bool) {
	var d []float64
	for _, p := range pieces {
		for i := 1; i+1 < len(p.t); i++ {
			a, b := p.t[i]-p.t[i-1], p.t[i+1]-p.t[i]
			if math.Abs(a-b) > 0.25*bin || a > 1.5*bin {
				continue
			}
			d = append(d, p.f[i-1]-2*p.f[i]+p.f[i+1])
		}
	}
	if len(d) < 10 {
		return 0, false
	}
	m := selectMedian(d)
	for i, v := range d {
		d[i] = math.Abs(v - m)
	}
	return madScale * selectMedian(d) / math.Sqrt(6), true
}

// statedNoise is the median stated error of the usable points, or 0 without errors.
func statedNoise(series []Series) float64 {
	var e []float64
	for _, s := range series {
		for j, x := range s.Err {
			if x > 0 && finite(x) && !(s.Mask != nil && s.Mask[j]) {
				e = append(e, x)
			}
		}
	}
	if len(e) == 0 {
		return 0
	}
	return selectMedian(e)
}

// equivKernel is a plain local fit's equivalent kernel on an even grid: the trend at the
// centre is Σ ell[j] y(off[j]) over the offsets off (days).
type equivKernel struct {
	off, ell []float64
}

// kernel returns the equivalent kernel of the local polynomial of the given degree with
// half-width half on a grid of the given step, from the normal equations the fit solves.
func kernel(half, step float64, degree int) equivKernel {
	m := int(math.Ceil(half/step)) - 1
	for float64(m+1)*step < half {
		m++
	}
	var k equivKernel
	var st localStat
	for j := -m; j <= m; j++ {
		u := float64(j) * step / half
		k.off = append(k.off, float64(j)*step)
		st.addMoments(u, tricube(u))
	}
	c := st.centreWeights(degree)
	for j := -m; j <= m; j++ {
		u := float64(j) * step / half
		k.ell = append(k.ell, tricube(u)*(c[0]+c[1]*u+c[2]*u*u))
	}
	return k
}

// kept is the share of a box of duration d centred on the point that the detrended light
// curve keeps: 1 − Σ ell over the box, each grid point standing for the cell of one step
// around it and counted by the share of that cell inside the box (so that a box whose edge
// falls on a grid point does not gain or lose a whole step by rounding).
func (k equivKernel) kept(d float64) float64 {
	if len(k.off) < 2 { // a window within one step: the point alone
		if d > 0 {
			return 0
		}
		return 1
	}
	step := k.off[1] - k.off[0]
	s := 0.0
	for j, o := range k.off {
		s += k.ell[j] * min(1, max(0, (d/2-math.Abs(o))/step+0.5))
	}
	return 1 - s
}

// sumSq is Σ ell², the variance the noise of one point gives the trend, per unit variance.
func (k equivKernel) sumSq() float64 {
	s := 0.0
	for _, v := range k.ell {
		s += v * v
	}
	return s
}

// diffSq is Σ (ell − other)² over the union of both grids (same step): the variance of the
// difference of the two trends per unit noise variance.
func (k equivKernel) diffSq(o equivKernel) float64 {
	m := map[int]float64{}
	key := func(off float64, step float64) int { return int(math.Round(off / step)) }
	step := 1.0
	if len(k.off) > 1 {
		step = k.off[1] - k.off[0]
	}
	for j, off := range k.off {
		m[key(off, step)] += k.ell[j]
	}
	for j, off := range o.off {
		m[key(off, step)] -= o.ell[j]
	}
	keys := make([]int, 0, len(m))
	for q := range m {
		keys = append(keys, q)
	}
	sort.Ints(keys)
	s := 0.0
	for _, q := range keys {
		s += m[q] * m[q]
	}
	return s
}

// NoiseKept is the share (in standard deviation) of white noise averaged over a stretch
// of duration d that the plain local polynomial of the given degree and full width span
// leaves in the detrended light curve, on evenly sampled data: the white noise filtered by
// the residual operator 1 − ℓ (ℓ the equivalent kernel) and averaged by a box b of width
// d has variance ∝ Σ (b − ℓ∗b)², against Σ b² unfiltered. A search that scores a dip by
// the out-of-transit scatter on the dip's time scale sees that scatter shrunk by this
// share; a dip the trend passes under untouched (a masked transit) keeps its own noise.
func NoiseKept(span, d float64, degree int) float64 {
	if !(span > 0) || !(d > 0) {
		return 1
	}
	step := d / 30
	k := kernel(span/2, step, degree)
	m := len(k.off) / 2
	nb := int(math.Round(d / step))
	// b on indices [0, nb); ℓ∗b reaches m past either end.
	box := func(i int) float64 {
		if i >= 0 && i < nb {
			return 1 / float64(nb)
		}
		return 0
	}
	var sr, sb float64
	for i := -m; i < nb+m; i++ {
		lb := 0.0
		for j := -m; j <= m; j++ {
			lb += k.ell[j+m] * box(i-j)
		}
		r := box(i) - lb
		sr += r * r
		sb += box(i) * box(i)
	}
	return math.Sqrt(sr / sb)
}

// HoleVariance is the variance of the local polynomial's trend at the centre of a hole of
// width m (a masked stretch) in a window of width w, relative to no hole: the ratio of the
// plain fit's Σℓ² with and without the hole, from its normal equations on an even grid of
// 2001 points.
func HoleVariance(w, m float64, degree int) float64 {
	step := w / 2000
	v := func(hole float64) float64 {
		var st localStat
		var us []float64
		for j := -1000; j <= 1000; j++ {
			off := float64(j) * step
			if math.Abs(off) < hole/2 {
				continue
			}
			u := off / (w / 2)
			us = append(us, u)
			st.addMoments(u, tricube(u))
		}
		c := st.centreWeights(degree)
		s := 0.0
		for _, u := range us {
			l := tricube(u) * (c[0] + c[1]*u + c[2]*u*u)
			s += l * l
		}
		return s
	}
	return v(m) / v(0)
}
