package robust

import (
	"math"
	"sort"

	"dipline/steps/internal/parallel"
)

// Estimator selects how the trend is estimated.
type Estimator int

const (
	// Biweight is the Tukey biweight location of the fluxes within ±Span/2 in time.
	Biweight Estimator = iota
	// RunningMedian is the median of the fluxes within ±Span/2 in time.
	RunningMedian
	// Spline is a cubic B-spline with knots every KnotSpacing, fitted with iterative
	// two-sided clipping (RobustSpline).
	Spline
	// LocalPoly is a robust locally weighted polynomial of degree Degree in the time window
	// ±Span/2 (Cleveland 1979; LocalFilter).
	LocalPoly
)

// Mark says what became of one input point.
type Mark uint8

const (
	// Kept points are in the output and were used for the trend.
	Kept Mark = iota
	// InTransit points lie in a masked transit window: in the output, not used for the trend.
	InTransit
	// Flare points lay more than FlareSigma robust sigmas above the trend: removed.
	Flare
	// NoTrend points had no trend (too few neighbours, or a trend that is not positive):
	// removed, never interpolated, since nothing nearby says where the star was.
	NoTrend
	// NonFinite points had a flux or error that is NaN or infinite: removed.
	NonFinite
)

// NumMarks is the number of marks; a mark at or above it is invalid.
const NumMarks = 5

// Config is the numerical configuration of Detrend. Times are in days.
type Config struct {
	Estimator Estimator
	// Span is the full width of the time window of Biweight and RunningMedian.
	Span float64
	// KnotSpacing is the breakpoint spacing of Spline.
	KnotSpacing float64
	// C is the biweight tuning constant in (unscaled) median absolute deviations.
	C float64
	// Degree is LocalPoly's polynomial degree (0, 1 or 2) and Iterations its number of
	// fits (the first plain, each later one reweighted by the previous residuals).
	Degree, Iterations int
	// FlareSigma removes points more than this many robust sigmas above the trend; zero or
	// less turns flare removal off. Points below the trend are never removed.
	FlareSigma float64
	// SplineSigma is the two-sided clip of Spline's own fit (points left out of the fit,
	// not removed from the output).
	SplineSigma float64
	// MinPoints is the fewest usable points a window (or spline interval) needs.
	MinPoints int
	// GapOver splits every series where consecutive times are further apart than this;
	// each piece is filtered on its own.
	GapOver float64
}

// Series is one stretch of photometry, detrended independently of the others.
type Series struct {
	// Time is sorted and finite.
	Time []float64
	Flux []float64
	// Err is optional; a point whose error is not finite is dropped like a non-finite flux.
	Err []float64
	// Mask is optional; true marks points inside a transit window, which the trend ignores
	// (its value there comes from the unmasked neighbours) and the output keeps.
	Mask []bool
}

// Result is the outcome for one series, point by point.
type Result struct {
	// Trend is the trend at every input point, NaN where none could be estimated.
	Trend []float64
	// Marks says what became of every input point.
	Marks []Mark
	// Pieces is the number of pieces the series was split into at gaps.
	Pieces int
}

// blockSize is the number of points in one unit of parallel work for the window filters.
// It is fixed, never derived from the worker count, and the value of a point does not
// depend on it anyway: each point's window is built from the same set of values.
const blockSize = 2048

// maxFlareRounds bounds the remove-flares-and-re-estimate cycle. The biweight already
// gives a flare's points little weight, so one re-estimate after removing them is enough;
// more rounds do harm where the trend lags a sharp turn of the star's light: the lagging
// side sits above the trend, is taken for a flare, the trend then lags further, and the
// clipping eats the whole turn (seen on spotted-star light curves with ten rounds).
const maxFlareRounds = 2

// localFlareRounds is maxFlareRounds for the local polynomial: its robustness weights
// already give a flare's points no weight beyond about four sigmas, so one re-estimate
// after removing the flares is all it needs, and each costs a full robust fit.
const localFlareRounds = 1

// gapFloor is the shortest gap at which series are split by default: half a day covers
// the data downlinks and pointing resets after which an instrument's level commonly jumps
// (common practice), while a few missing cadences never split a series.
const gapFloor = 0.5

// gapCadences makes the default gap at least this many median cadences, so that sparse
// photometry (a cadence over 36 min) is not cut into pieces at every few missing points.
const gapCadences = 20

// DefaultGap is the gap threshold used when none is given: the larger of half a day and
// 20 median cadences.
func DefaultGap(cadence float64) float64 {
	return max(gapFloor, gapCadences*cadence)
}

// MedianCadence is the median of the positive differences between consecutive times over
// all series, or 0 when there are none.
func MedianCadence(series []Series) float64 {
	var d []float64
	for _, s := range series {
		for j := 1; j < len(s.Time); j++ {
			if dt := s.Time[j] - s.Time[j-1]; dt > 0 {
				d = append(d, dt)
			}
		}
	}
	if len(d) == 0 {
		return 0
	}
	sort.Float64s(d)
	return medianSorted(d)
}

type piece struct {
	s, from, to int
	active      bool
	newFlares   []float64 // times of the flares found in the last round, ascending
}

// Detrend estimates the trend of every series and marks every point. Each series is split
// at gaps longer than cfg.GapOver and each piece is filtered on its own. Masked points are
// left out of the estimate; where a masked point's own window is too thin, its trend is
// interpolated linearly in time between the nearest unmasked points with a trend on both
// sides (dropped when there is a side without one). Flares are then removed upward only:
// points whose relative residual f/trend − 1 exceeds cfg.FlareSigma times the piece's robust
// scatter (1.4826·MAD of the residuals of unmasked points) are marked and left out, and the
// trend re-estimated, until no new flare appears. Points below the trend are never removed.
// par may be nil.
func Detrend(cfg Config, series []Series, par parallel.Func) []Result {
	if par == nil {
		par = serial
	}
	d := newDriver(cfg, series, par)
	for round := 0; ; round++ {
		jobs, act := d.jobs(round)
		if len(act) == 0 {
			break
		}
		par(len(jobs), func(k int) { d.estimate(jobs[k]) })
		last := round == maxFlareRounds || (cfg.Estimator == LocalPoly && round == localFlareRounds)
		par(len(act), func(k int) { d.settle(&d.pieces[act[k]], last) })
		for _, pi := range act {
			d.pieces[pi].active = len(d.pieces[pi].newFlares) > 0
		}
	}
	d.mark()
	return d.out
}

// driver holds Detrend's state: per series the output, the raw trend of the last estimate,
// which points may enter a window and which are flares; and the gap-free pieces.
type driver struct {
	cfg        Config
	series     []Series
	par        parallel.Func
	minPts     int
	half       float64
	out        []Result
	raw        [][]float64
	use, flare [][]bool
	pieces     []piece
}

// job is one unit of parallel work: points [from, to) of piece p.
type job struct{ p, from, to int }

// newDriver marks the unusable points and cuts every series into pieces at its gaps.
func newDriver(cfg Config, series []Series, par parallel.Func) *driver {
	d := &driver{cfg: cfg, series: series, par: par, minPts: max(cfg.MinPoints, 1), half: cfg.Span / 2,
		out: make([]Result, len(series)), raw: make([][]float64, len(series)),
		use: make([][]bool, len(series)), flare: make([][]bool, len(series))}
	for si, s := range series {
		n := len(s.Time)
		d.out[si] = Result{Trend: make([]float64, n), Marks: make([]Mark, n)}
		d.raw[si], d.use[si], d.flare[si] = make([]float64, n), make([]bool, n), make([]bool, n)
		for j := 0; j < n; j++ {
			ok := finite(s.Flux[j]) && finite(s.Time[j]) && (s.Err == nil || finite(s.Err[j]))
			if !ok {
				d.out[si].Marks[j] = NonFinite
			}
			d.use[si][j] = ok && !(s.Mask != nil && s.Mask[j])
		}
		start := 0
		for j := 1; j <= n; j++ {
			if j == n || s.Time[j]-s.Time[j-1] > cfg.GapOver {
				d.pieces = append(d.pieces, piece{s: si, from: start, to: j, active: true})
				d.out[si].Pieces++
				start = j
			}
		}
	}
	return d
}

// jobs lists the work of one round and the pieces still active. The whole-piece
// estimators (spline, local polynomial) redo a piece; the window filters redo, after the
// first round, only the points whose window holds a new flare, in runs cut into blocks of
// at most blockSize.
func (d *driver) jobs(round int) (jobs []job, act []int) {
	for pi := range d.pieces {
		p := &d.pieces[pi]
		if !p.active {
			continue
		}
		act = append(act, pi)
		switch {
		case d.cfg.Estimator == Spline || d.cfg.Estimator == LocalPoly:
			jobs = append(jobs, job{pi, p.from, p.to})
		case round == 0:
			for b := p.from; b < p.to; b += blockSize {
				jobs = append(jobs, job{pi, b, min(b+blockSize, p.to)})
			}
		default:
			tp := d.series[p.s].Time[p.from:p.to]
			end := 0
			for _, tf := range p.newFlares {
				lo := max(sort.SearchFloat64s(tp, tf-d.half), end)
				hi := sort.Search(len(tp), func(j int) bool { return tp[j] > tf+d.half })
				for b := lo; b < hi; b += blockSize {
					jobs = append(jobs, job{pi, p.from + b, p.from + min(b+blockSize, hi)})
				}
				end = max(end, hi)
			}
		}
	}
	return jobs, act
}

// estimate computes the raw trend of one job with the configured estimator.
func (d *driver) estimate(jb job) {
	p := d.pieces[jb.p]
	s := d.series[p.s]
	t, f := s.Time[p.from:p.to], s.Flux[p.from:p.to]
	u, dst := d.use[p.s][p.from:p.to], d.raw[p.s][p.from:p.to]
	switch d.cfg.Estimator {
	case Spline:
		RobustSpline(dst, t, f, u, d.cfg.KnotSpacing, d.cfg.SplineSigma, d.minPts)
	case LocalPoly:
		LocalFilter(dst, t, f, errOf(s, p.from, p.to), u,
			LocalFit{Half: d.half, Degree: d.cfg.Degree, Iterations: d.cfg.Iterations, MinPoints: d.minPts,
				Step: 2 * d.half / AnchorsPerWindow}, d.par)
	case RunningMedian:
		MedianFilter(dst, t, f, u, d.half, d.minPts, jb.from-p.from, jb.to-p.from)
	default:
		BiweightFilter(dst, t, f, u, d.half, d.cfg.C, d.minPts, jb.from-p.from, jb.to-p.from)
	}
}

// settle turns a piece's raw trend into its trend (masked points bridged) and, unless this
// is the last round, finds its new flares.
func (d *driver) settle(p *piece, last bool) {
	s := d.series[p.s]
	lo, hi := p.from, p.to
	var mask []bool
	if s.Mask != nil {
		mask = s.Mask[lo:hi]
	}
	marks := d.out[p.s].Marks[lo:hi]
	tr := d.out[p.s].Trend[lo:hi]
	fillMasked(tr, d.raw[p.s][lo:hi], s.Time[lo:hi], mask, marks)
	p.newFlares = p.newFlares[:0]
	if last || !(d.cfg.FlareSigma > 0) {
		return
	}
	p.newFlares = findFlares(p.newFlares, s.Time[lo:hi], s.Flux[lo:hi], errOf(s, lo, hi), tr, d.use[p.s][lo:hi],
		d.flare[p.s][lo:hi], marks, d.cfg.FlareSigma, d.minPts)
}

// mark gives every point its final mark.
func (d *driver) mark() {
	for si, s := range d.series {
		r := d.out[si]
		for j := range r.Marks {
			switch {
			case r.Marks[j] == NonFinite:
			case d.flare[si][j]:
				r.Marks[j] = Flare
			case !(r.Trend[j] > 0) || math.IsInf(r.Trend[j], 0):
				r.Marks[j] = NoTrend
			case s.Mask != nil && s.Mask[j]:
				r.Marks[j] = InTransit
			default:
				r.Marks[j] = Kept
			}
		}
	}
}

// fillMasked copies the raw trend into tr and, at masked points whose raw trend is NaN,
// interpolates linearly in time between the nearest unmasked points with a finite raw
// trend on either side. A masked point with such a point on one side only (a masked
// stretch at the end of a piece, too long for its own window) keeps NaN and is dropped:
// holding the last value flat would pass a made-up trend off as the star's.
func fillMasked(tr, raw, t []float64, mask []bool, marks []Mark) {
	copy(tr, raw)
	if mask == nil {
		return
	}
	anchor := func(j int) bool { return !mask[j] && marks[j] != NonFinite && finite(raw[j]) }
	// next[j] is the first anchor at or after j, or -1; built only when needed.
	var next []int
	prev := -1
	for j := range tr {
		if anchor(j) {
			prev = j
			continue
		}
		if !mask[j] || finite(raw[j]) {
			continue
		}
		if next == nil {
			next = make([]int, len(tr)+1)
			next[len(tr)] = -1
			for k := len(tr) - 1; k >= 0; k-- {
				if anchor(k) {
					next[k] = k
				} else {
					next[k] = next[k+1]
				}
			}
		}
		if nx := next[j]; prev >= 0 && nx >= 0 {
			w := (t[j] - t[prev]) / (t[nx] - t[prev])
			tr[j] = raw[prev] + w*(raw[nx]-raw[prev])
		}
	}
}

// findFlares marks the points of one piece that lie more than k robust sigmas above the
// trend, appends their times to dst and returns it. The scatter is that of the relative
// residuals of the points used for the trend together with those already taken as flares:
// leaving the flares out would shrink the scatter every round (the upper tail goes, the
// lower stays) and eat into the noise itself. With fewer than minPoints points the piece is
// left alone. The scatter is at least the median stated error (e, nil when none): a point
// within a few of its own error bars of the trend is no flare, even where the trend fits
// the rest more closely than the errors say (noise-free test data, errors overstated).
func findFlares(dst, t, f, e, tr []float64, use, flare []bool, marks []Mark, k float64, minPoints int) []float64 {
	res := make([]float64, 0, len(t))
	for j := range t {
		if (use[j] || flare[j]) && tr[j] > 0 && finite(tr[j]) {
			res = append(res, f[j]/tr[j]-1)
		}
	}
	if len(res) < max(minPoints, 3) {
		return dst
	}
	sigma := max(RobustSigma(res), sigmaFloor, madScale*noiseFloor(e, use))
	thr := k * sigma
	for j := range t {
		if marks[j] == NonFinite || flare[j] || !(tr[j] > 0) || !finite(tr[j]) {
			continue
		}
		if f[j]/tr[j]-1 > thr {
			flare[j] = true
			use[j] = false
			dst = append(dst, t[j])
		}
	}
	return dst
}

// errOf returns the errors of points [from, to) of s, or nil when it has none.
func errOf(s Series, from, to int) []float64 {
	if s.Err == nil {
		return nil
	}
	return s.Err[from:to]
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
