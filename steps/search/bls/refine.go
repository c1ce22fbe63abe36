package bls

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// The peak refinement replaces the grid's binned statistic by the exact one. At a trial
// frequency the points near the expected transits are sorted by their time offset from the
// predicted mid-transit, and every run of consecutive points is a candidate in-transit set;
// its box may have its left edge anywhere between the first point inside and its neighbour
// outside, and likewise on the right.
//
// The frequency is scanned on a local grid that first zooms until the region where the χ²
// improvement Δχ² lies within 1 of its maximum spans several steps, then walks outwards at
// a sixteenth of that region until Δχ² has dropped by profileDrop. The scan never leaves
// the reach of the peak it started from (see profileReachDrift) nor the grid's own range:
// a walk that meets the reach before Δχ² has dropped finds no settled period there, and
// the peak gives no signal. The period is the mean
// frequency, and its error the standard deviation, under the weight exp(Δχ²(f)/2) — the
// profile likelihood of the box model, its depth, epoch and duration optimised at every
// frequency. For a regular, quadratic minimum that standard deviation is the Δχ² = 1
// half-width; unlike the Δχ² = 1 rule it stays meaningful for the flat-topped, stepwise
// profile of a box on sampled data, and for sharp edges in weak noise, where the χ² grows
// only linearly away from the best edge and the Δχ² = 1 interval is several times too
// narrow (the change-point problem; tested against the scatter of injected signals).
//
// At the chosen frequency every box is weighted the same way, each spread uniformly over the
// edge positions that give it, and the weighted mean and standard deviation of the box
// centre and length give the epoch and duration with their errors. The errors rest on the
// stated flux errors: the refinement does not rescale them.

const (
	// profilePoints is the number of trial frequencies on each side of the centre of one
	// zoom level of the local frequency scan.
	profilePoints = 16
	// profileSpan is the initial half-width of the local scan in grid steps: the true peak
	// lies within half a step of some grid frequency, and noise may lift a neighbour.
	profileSpan = 2.0
	// profileMaxSpan bounds how far the scan may widen, in grid steps.
	profileMaxSpan = 8.0
	// profileResolved is the width, in trial steps, at which the Δχ² = 1 region counts as
	// resolved and zooming stops.
	profileResolved = 8
	// profileZooms bounds the number of zoom levels.
	profileZooms = 12
	// profileFine is the number of final steps across the Δχ² = 1 region.
	profileFine = 16
	// profileDrop is the fall of Δχ² at which the final walk stops: the weight there is
	// e^{-6} ≈ 0.25 % of the peak's.
	profileDrop = 12.0
	// profileWalk bounds the final walk, in steps on each side, and profileGrowth is the
	// factor by which its step grows beyond the Δχ² = 1 region.
	profileWalk   = 200
	profileGrowth = 1.15
	// profileReachDrift bounds how far the refinement may move from the grid's peak f0: the
	// frequency shift Δf that moves the transit farthest from the reference one by this
	// many box durations, Δf = profileReachDrift·d·f0/t_far (t_far the time from the
	// reference transit to the farthest point), or profileMaxSpan grid steps when that is
	// wider. At the default oversampling of 3 that is 8 grid steps for a box of under 0.7
	// central durations and 12 for a central one. Once every transit has drifted by more
	// than its box, no box holds the signal, so a real dip's Δχ² must have fallen by
	// profileDrop: on injected boxes at the threshold's SNR (80 days at 10 minutes, the
	// default grid, oversampling 3 and 15) it fell by then within 0.95 box durations of
	// drift, so twice that leaves room; noise peaks that do not settle within it have no
	// period the data fix (steps/search/BENCHMARKS.md). The refiner selects its points for
	// this reach, so a scan beyond it would see only part of the data.
	profileReachDrift = 2.0
	// edgeSteps is how many candidate edge positions per box length the coarse exact scan
	// tries before polishing the best box point by point: the work per trial frequency stays
	// near (window/duration)·edgeSteps² whatever the number of points.
	edgeSteps = 48
)

// wpt is one point near the expected transit: its time offset u from the nearest predicted
// mid-transit at the trial frequency, with its weight and weighted residual.
type wpt struct{ u, w, wx float64 }

// exactBox is the best box of one exact scan.
type exactBox struct {
	stat     float64 // s²/(r(1−r))
	centre   float64 // offset of the box centre from the reference mid-transit, days
	duration float64 // days
}

// refiner evaluates the exact box statistic near one periodogram peak.
type refiner struct {
	p       *prepared
	density float64
	// fLo … fHi are the frequencies the refinement may try: within reach of the peak and
	// inside the grid; loGrid and hiGrid say whether the grid's end is the bound there.
	fLo, fHi       float64
	loGrid, hiGrid bool
	reach          float64 // the largest shift from f0 allowed, 1/d
	tc             float64 // reference mid-transit, time since t0, near the data's weighted mean time
	sel            []int   // points that may lie in a box at any trial frequency
	stride         int     // edge stride of the coarse exact scan
	buf            []wpt   // the selected points of the last scan, sorted by u
	cw, cs         []float64
}

// newRefiner prepares the refinement of the coarse peak at grid frequency f0 (grid step
// df, box centre c0 since t0, duration d0) on a grid of frequencies gMin … gMax: it sets
// the reach (see profileReachDrift) and selects the points that may lie in a box at any
// frequency within it.
func newRefiner(p *prepared, density, f0, df, c0, d0, gMin, gMax float64) *refiner {
	rf := &refiner{p: p, density: density}
	per := 1 / f0
	// Move the reference transit next to the weighted mean time: the epoch and the period
	// are then nearly uncorrelated.
	rf.tc = c0 + math.Round((p.tMid-c0)*f0)*per
	far := math.Max(math.Abs(rf.tc), math.Abs(p.span()-rf.tc))
	maxShift := profileMaxSpan * df
	if far > 0 {
		maxShift = math.Max(maxShift, profileReachDrift*d0*f0/far)
	}
	rf.reach = maxShift
	rf.fLo, rf.fHi = f0-maxShift, f0+maxShift
	if gMin >= rf.fLo {
		rf.fLo, rf.loGrid = gMin, true
	}
	if gMax <= rf.fHi {
		rf.fHi, rf.hiGrid = gMax, true
	}
	_, hi := durationRange(1/(f0+maxShift), density, p.cadence)
	half := math.Max(hi, d0)/2 + far*maxShift/f0 + 2*p.cadence
	nIn := 0
	for i, t := range p.t {
		x := (t - rf.tc) * f0
		u := math.Abs(x-math.Round(x)) * per
		if u <= half || half >= per/2 {
			rf.sel = append(rf.sel, i)
		}
		if u <= d0/2 {
			nIn++
		}
	}
	rf.stride = max(1, nIn/edgeSteps)
	rf.buf = make([]wpt, 0, len(rf.sel))
	rf.cw = make([]float64, len(rf.sel)+1)
	rf.cs = make([]float64, len(rf.sel)+1)
	return rf
}

// fold sorts the selected points by their offset from the nearest predicted mid-transit at
// frequency f and forms the running sums of weight and weighted residual.
func (rf *refiner) fold(f float64) {
	p := rf.p
	per := 1 / f
	buf := rf.buf[:0]
	for _, i := range rf.sel {
		x := (p.t[i] - rf.tc) * f
		buf = append(buf, wpt{u: (x - math.Round(x)) * per, w: p.w[i], wx: p.wx[i]})
	}
	slices.SortFunc(buf, func(a, b wpt) int {
		switch {
		case a.u < b.u:
			return -1
		case a.u > b.u:
			return 1
		}
		return 0
	})
	rf.buf = buf
	cw, cs := rf.cw[:len(buf)+1], rf.cs[:len(buf)+1]
	for k, q := range buf {
		cw[k+1] = cw[k] + q.w
		cs[k+1] = cs[k] + q.wx
	}
}

// leftSpan returns the span of left-edge positions of a box whose first point inside is i,
// and rightSpan that of right-edge positions of one whose last point inside is j: half a
// cadence beyond the outermost points.
func (rf *refiner) leftSpan(i int) (lo, hi float64) {
	if i == 0 {
		return rf.buf[0].u - rf.p.cadence/2, rf.buf[0].u
	}
	return rf.buf[i-1].u, rf.buf[i].u
}

// rightSpan: see leftSpan.
func (rf *refiner) rightSpan(j int) (lo, hi float64) {
	if j == len(rf.buf)-1 {
		return rf.buf[j].u, rf.buf[j].u + rf.p.cadence/2
	}
	return rf.buf[j].u, rf.buf[j+1].u
}

// stat returns s²/(r(1−r)) of the box holding sorted points i … j, or −1 when it is not a
// dip or holds too little weight.
func (rf *refiner) stat(i, j int) float64 {
	w := rf.cw[j+1] - rf.cw[i]
	s := rf.cs[j+1] - rf.cs[i]
	if s >= 0 || w < rf.p.rmin || w >= 1 {
		return -1
	}
	return s * s / (w * (1 - w))
}

// boxes calls visit for every box i … j whose edge-to-edge length (taken between the edge
// spans' midpoints) is allowed at period per, with edges on a stride of st points.
func (rf *refiner) boxes(per float64, st int, visit func(i, j int, l, r float64)) {
	lo, hi := durationRange(per, rf.density, rf.p.cadence)
	n := len(rf.buf)
	j0 := 0
	for i := 0; i < n; i += st {
		a, b := rf.leftSpan(i)
		l := (a + b) / 2
		for j0 < n && rf.rightMid(j0)-l < lo {
			j0++
		}
		for j := max(j0, i); j < n; j += st {
			r := rf.rightMid(j)
			if r-l > hi {
				break
			}
			visit(i, j, l, r)
		}
	}
}

// rightMid returns the midpoint of rightSpan(j), the right edge a box ending at j is scanned with.
func (rf *refiner) rightMid(j int) float64 {
	a, b := rf.rightSpan(j)
	return (a + b) / 2
}

// scan returns the best exact box at frequency f: a strided search of the edges, then every
// edge pair near the best.
func (rf *refiner) scan(f float64) exactBox {
	b, _, _ := rf.scanAt(f)
	return b
}

// scanAt is scan that also returns the sorted indices of the best box's first and last
// points.
func (rf *refiner) scanAt(f float64) (exactBox, int, int) {
	if !(f > 0) || math.IsInf(f, 0) {
		// No box at a frequency that is not one (the walk keeps within the grid, so this
		// is only a guard).
		return exactBox{}, -1, -1
	}
	rf.fold(f)
	per := 1 / f
	lo, hi := durationRange(per, rf.density, rf.p.cadence)
	best := exactBox{}
	bi, bj := -1, -1
	try := func(i, j int, l, r float64) {
		if v := rf.stat(i, j); v > best.stat {
			best = exactBox{stat: v, centre: (l + r) / 2, duration: r - l}
			bi, bj = i, j
		}
	}
	st := rf.stride
	rf.boxes(per, st, try)
	if st > 1 && bi >= 0 {
		ci, cj := bi, bj
		n := len(rf.buf)
		for i := max(0, ci-st+1); i < min(n, ci+st); i++ {
			a, b := rf.leftSpan(i)
			l := (a + b) / 2
			for j := max(i, cj-st+1); j < min(n, cj+st); j++ {
				if r := rf.rightMid(j); r-l >= lo && r-l <= hi {
					try(i, j, l, r)
				}
			}
		}
	}
	return best, bi, bj
}

// posteriorSide is the number of edge positions per side and axis that one round of the
// posterior evaluates; beyond it the edges are strided.
const posteriorSide = 48

// posterior weights the boxes whose first and last points lie near bi and bj by
// exp(Δχ²/2), each spread uniformly over the edge positions that give it, and returns the
// weighted mean and standard deviation of the box centre (offset from tc) and length, and
// the largest statistic met. The neighbourhood doubles until the boxes on its border weigh
// less than e^{-profileDrop} of the best; past posteriorSide points per side the edges are
// taken on a stride, each standing for the run of points up to the next.
func (rf *refiner) posterior(per float64, bi, bj int, peak float64) (c, cs, d, ds, top float64) {
	lo, hi := durationRange(per, rf.density, rf.p.cadence)
	n := len(rf.buf)
	sumW := rf.p.sumW
	for m := max(rf.stride, 4); ; m *= 2 {
		st := max(1, m/posteriorSide)
		i0, i1 := max(0, bi-m), min(n-1, bi+m)
		j0, j1 := max(0, bj-m), min(n-1, bj+m)
		top = peak
		border := 0.0
		each := func(visit func(v, la, lb, ra, rb float64)) {
			for i := i0; i <= i1; i += st {
				la, _ := rf.leftSpan(i)
				_, lb := rf.leftSpan(min(i+st-1, n-1))
				for j := max(i, j0); j <= j1; j += st {
					ra, _ := rf.rightSpan(j)
					_, rb := rf.rightSpan(min(j+st-1, n-1))
					if l := (ra + rb - la - lb) / 2; l < lo || l > hi {
						continue
					}
					v := rf.stat(i, j)
					if v <= 0 {
						continue
					}
					top = math.Max(top, v)
					if (i == i0 && i0 > 0) || (i+st > i1 && i1 < n-1) || (j == j0 && j0 > 0) || (j+st > j1 && j1 < n-1) {
						border = math.Max(border, v)
					}
					visit(v, la, lb, ra, rb)
				}
			}
		}
		each(func(float64, float64, float64, float64, float64) {})
		var cw, dw weighted
		each(func(v, la, lb, ra, rb float64) {
			if (top-v)*sumW > 3*profileDrop {
				return
			}
			a, b := lb-la, rb-ra
			weight := math.Exp(-(top-v)*sumW/2) * a * b
			cw.add(weight, (la+lb+ra+rb)/4, (a*a+b*b)/48)
			dw.add(weight, (ra+rb-la-lb)/2, (a*a+b*b)/12)
		})
		whole := i0 == 0 && i1 == n-1 && j0 == 0 && j1 == n-1
		if (top-border)*sumW > 2*profileDrop || whole {
			if cw.w <= 0 {
				return 0, 0, 0, 0, 0
			}
			c, cs = cw.meanSD()
			d, ds = dw.meanSD()
			return c, cs, d, ds, top
		}
	}
}

// refined is the outcome of the refinement.
type refined struct {
	freq, freqSigma     float64
	centre, centreSigma float64 // mid-transit, time since t0
	dur, durSigma       float64
	stat                float64 // s²/(r(1−r)) of the best box at freq
}

// weighted accumulates a mean and variance under weights.
type weighted struct{ w, m1, m2 float64 }

// add adds x with the given weight; within is the variance of x inside what it stands for.
func (a *weighted) add(weight, x, within float64) {
	a.w += weight
	a.m1 += weight * x
	a.m2 += weight * (x*x + within)
}

// meanSD returns the weighted mean and standard deviation.
func (a weighted) meanSD() (float64, float64) {
	m := a.m1 / a.w
	return m, math.Sqrt(math.Max(0, a.m2/a.w-m*m))
}

// noDip is why a peak gave no signal when no box near it is a dip.
const noDip = "gave no dip on refinement"

// refine locates the peak at grid index peak of g to the precision the data allow,
// without leaving its reach or the grid (see profileReachDrift). c0 and d0 are the coarse
// box centre (since t0) and duration. When it finds no period, why says so in a few
// words that follow "the peak (P d, SDE s)".
func refine(p *prepared, g Grid, peak int, c0, d0 float64) (out refined, why string) {
	f0 := g.Freq(peak)
	df := g.Freq(peak+1) - f0
	rf := newRefiner(p, g.Density, f0, df, c0, d0, g.FMin, g.FMax)
	pk, ok := rf.zoom(f0, df)
	if !ok {
		return refined{}, noDip
	}
	trials, settled := rf.walk(pk)
	if !settled {
		return refined{}, fmt.Sprintf("could not be refined: the box fit does not get clearly worse (by Δχ² = %g) within %.3g grid steps on both sides of it, its best Δχ² being %.3g, so the data do not fix a period there",
			profileDrop, rf.reach/df, pk.top*p.sumW)
	}
	freq, freqSigma, ok := frequencyPosterior(trials, pk.top, p.sumW)
	if !ok {
		return refined{}, noDip
	}
	if !(freq >= rf.fLo && freq <= rf.fHi) {
		// The trials lie within the bounds, so their weighted mean does too; this guards
		// the promise that a refined period stays near its peak and inside the grid.
		return refined{}, fmt.Sprintf("could not be refined: the refinement moved to %.4g d, beyond %.4g–%.4g d", 1/freq, 1/rf.fHi, 1/rf.fLo)
	}
	out = refined{freq: freq, freqSigma: freqSigma}

	// Epoch and duration at the chosen frequency, from the boxes near the best one.
	b, bi, bj := rf.scanAt(out.freq)
	if b.stat <= 0 {
		return refined{}, noDip
	}
	c, cs, d, ds, top := rf.posterior(1/out.freq, bi, bj, b.stat)
	if top <= 0 {
		return refined{}, noDip
	}
	out.centre, out.centreSigma = rf.tc+c, cs
	out.dur, out.durSigma = d, ds
	out.stat = top
	return out, ""
}

// profilePeak is what the zoom finds: the trial frequency with the largest statistic top,
// and the frequencies fLo … fHi between which the statistic lies within Δχ² = 1 of it.
type profilePeak struct {
	fLo, fHi, fTop, top float64
}

// zoom scans the frequency profile around f0 (grid step df), zooming in until the Δχ² = 1
// region spans profileResolved trial steps and widening (up to profileMaxSpan grid steps)
// while the region reaches the scan's edge. ok is false when no frequency gives a dip.
func (rf *refiner) zoom(f0, df float64) (pk profilePeak, ok bool) {
	tol := 1 / rf.p.sumW // Δχ² = 1 in units of s²/(r(1−r))
	fc, h := f0, profileSpan*df
	var step float64
	prof := make([]float64, 2*profilePoints+1)
	for zoom := 0; zoom < profileZooms; zoom++ {
		step = h / profilePoints
		pk.top = 0
		for k := range prof {
			f := fc + float64(k-profilePoints)*step
			prof[k] = 0 // outside the reach or the grid: no box is tried there
			if f >= rf.fLo && f <= rf.fHi {
				prof[k] = rf.scan(f).stat
			}
			if prof[k] > pk.top {
				pk.top, pk.fTop = prof[k], f
			}
		}
		if pk.top <= 0 {
			return profilePeak{}, false
		}
		lo, hi := -1, -1
		for k, v := range prof {
			if v >= pk.top-tol {
				if lo < 0 {
					lo = k
				}
				hi = k
			}
		}
		pk.fLo = fc + float64(lo-profilePoints)*step
		pk.fHi = fc + float64(hi-profilePoints)*step
		if (lo == 0 || hi == len(prof)-1) && h < profileMaxSpan*df {
			fc, h = (pk.fLo+pk.fHi)/2, math.Min(2*h, profileMaxSpan*df) // the region reaches an edge: widen
			continue
		}
		if hi-lo >= profileResolved || step < fc*1e-13 {
			break
		}
		fc = (pk.fLo + pk.fHi) / 2
		h = math.Max(pk.fHi-pk.fLo, 2*step) // the region will span about half the new range
	}
	return pk, true
}

// profileTrial is one trial frequency of the final walk and its statistic.
type profileTrial struct{ f, v float64 }

// walk scans outwards from the best frequency until Δχ² has dropped by profileDrop: at a
// fine step across the Δχ² = 1 region, growing by profileGrowth per step beyond it. It
// returns the trials sorted by frequency, and whether the walk settled on both sides: Δχ²
// dropped by profileDrop, or the side reached the grid's end (the searched range bounds
// the period as a prior would). A side that meets the reach first has not settled.
func (rf *refiner) walk(pk profilePeak) ([]profileTrial, bool) {
	fine := math.Max((pk.fHi-pk.fLo)/profileFine, pk.fTop*1e-13)
	trials := []profileTrial{{pk.fTop, rf.scan(pk.fTop).stat}}
	settled := true
	for _, dir := range []float64{-1, 1} {
		bound, grid := rf.fHi, rf.hiGrid
		if dir < 0 {
			bound, grid = rf.fLo, rf.loGrid
		}
		side := false
		off, dx := 0.0, fine
		for k := 1; k <= profileWalk; k++ {
			off += dx
			if k > profileFine {
				dx *= profileGrowth
			}
			f := pk.fTop + dir*off
			end := dir*(f-bound) >= 0
			if end {
				f = bound
			}
			v := rf.scan(f).stat
			trials = append(trials, profileTrial{f, v})
			if (pk.top-v)*rf.p.sumW > profileDrop {
				side = true
				break
			}
			if end {
				side = grid
				break
			}
		}
		settled = settled && side
	}
	slices.SortFunc(trials, func(a, b profileTrial) int { return cmp.Compare(a.f, b.f) })
	return trials, settled
}

// frequencyPosterior returns the mean and standard deviation of the frequency under the
// profile likelihood: each trial stands for the interval half-way to its neighbours and
// carries the weight exp(Δχ²/2), Δχ² measured from the largest statistic met (at least
// top). ok is false when no trial carries weight.
func frequencyPosterior(trials []profileTrial, top, sumW float64) (freq, sigma float64, ok bool) {
	for _, t := range trials {
		top = math.Max(top, t.v)
	}
	var fw weighted
	for k, t := range trials {
		if t.v <= 0 {
			continue
		}
		a, b := t.f, t.f
		if k > 0 {
			a = (trials[k-1].f + t.f) / 2
		}
		if k < len(trials)-1 {
			b = (t.f + trials[k+1].f) / 2
		}
		fw.add(math.Exp(-(top-t.v)*sumW/2)*(b-a), t.f, (b-a)*(b-a)/12)
	}
	if fw.w <= 0 {
		return 0, 0, false
	}
	freq, sigma = fw.meanSD()
	return freq, sigma, true
}
