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
// over the points of one transit. When no window is that good, the narrowest is taken.
// The trials are binned to a twelfth of the reference duration (never finer than the
// cadence) so that the choice costs about as much as one detrend.

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
	// TrendNoise is the standard deviation the noise gives the trend at a point.
	TrendNoise float64
	// Score is what the goal maximises: the expected signal to noise of an unmasked
	// transit (KeepTransits), or the span itself when the bias is negligible and 0 when not
	// (FollowStar).
	Score float64
}

// SpanChoice is ChooseSpan's answer with its evidence.
type SpanChoice struct {
	Span   float64
	Trials []SpanTrial
	// Noise is the white noise per reference duration, σ_D (relative flux); Bin the width
	// of the bins the trials were made on (days).
	Noise, Bin float64
}

// ChooseSpan picks the window of the local polynomial of the given degree for the series
// (masked points left out), for the goal, with transits of duration ref (days) in mind.
// Series are split at gaps longer than gapOver. ok is false when the data are too few or
// too noisy to tell (fewer than two usable bins in every piece); the caller then keeps a
// fixed default.
func ChooseSpan(series []Series, degree int, goal SpanGoal, ref, gapOver float64, par parallel.Func) (SpanChoice, bool) {
	cadence := MedianCadence(series)
	if !(cadence > 0) || !(ref > 0) {
		return SpanChoice{}, false
	}
	bin := max(cadence, ref/12)
	pieces := binPieces(series, bin, gapOver)
	measured, ok := secondDifferenceScatter(pieces, bin)
	if !ok {
		return SpanChoice{}, false
	}
	// The noise the transits compete with: the measured scatter, or the stated errors when
	// they are larger. What the two trends differ by from noise alone is set by the noise
	// actually in the data, the measured scatter.
	sigma := max(measured, statedNoise(series)*math.Sqrt(cadence/bin))
	choice := SpanChoice{Noise: sigma * math.Sqrt(bin/ref), Bin: bin}
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
		var sq []float64
		for p := range pieces {
			for i, v := range trends[k][p] {
				if d := v - trends[0][p][i]; finite(d) {
					sq = append(sq, d*d)
				}
			}
		}
		if len(sq) == 0 {
			continue
		}
		tr := SpanTrial{Span: h, Kept: kh.kept(ref), TrendNoise: sigma * math.Sqrt(kh.sumSq())}
		ms := trimmedMean(sq, trimShare)
		tr.Bias = math.Sqrt(max(0, ms/trimSmooth-measured*measured*kh.diffSq(k0)*trimNoise/trimSmooth))
		switch goal {
		case KeepTransits:
			tr.Score = tr.Kept / math.Hypot(choice.Noise, tr.Bias)
		default:
			// Any window whose bias is negligible will do; the widest has the least noise.
			tr.Score = 0
			if tr.Bias <= negligibleBias*choice.Noise {
				tr.Score = tr.Span
			}
		}
		choice.Trials = append(choice.Trials, tr)
		if best < 0 || tr.Score > choice.Trials[best].Score {
			best = len(choice.Trials) - 1
		}
	}
	if best < 0 {
		return SpanChoice{}, false
	}
	choice.Span = choice.Trials[best].Span
	return choice, true
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
// width, splitting at gaps longer than gapOver; bins are aligned to each piece's first
// point, and a bin's time is the mean time of its points.
func binPieces(series []Series, width, gapOver float64) []binned {
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
				start = t
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
		w := tricube(u)
		k.off = append(k.off, float64(j)*step)
		st.s[0] += w
		st.s[1] += w * u
		st.s[2] += w * u * u
		st.s[3] += w * u * u * u
		st.s[4] += w * u * u * u * u
	}
	// The centre value is linear in r: c = (c0, c1, c2) from solving with unit right sides.
	var c [3]float64
	for i := range c {
		e := st
		e.r = [3]float64{}
		e.r[i] = 1
		c[i], _ = e.solve(degree)
	}
	for j := -m; j <= m; j++ {
		u := float64(j) * step / half
		k.ell = append(k.ell, tricube(u)*(c[0]+c[1]*u+c[2]*u*u))
	}
	return k
}

// kept is the share of a box of duration d centred on the point that the detrended light
// curve keeps: 1 − Σ ell over the box.
func (k equivKernel) kept(d float64) float64 {
	s := 0.0
	for j, o := range k.off {
		if math.Abs(o) < d/2 {
			s += k.ell[j]
		}
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
