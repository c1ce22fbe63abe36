package bls

import (
	"math"
	"math/bits"

	"dipline/steps/internal/parallel"
)

// The fast-folding periodogram computes the same spectrum as periodogram, over the same
// grid, by Staelin's (1969, Proc. IEEE 57, 724) fast folding algorithm applied to the box
// search as Shahaf et al. (2022, MNRAS, doi:10.1093/mnras/stac960) do. The points are binned
// on an even time grid of width dt starting at t0, each bin carrying the summed normalised
// weight and weighted residual of its points (a gap is a run of empty bins). For an
// integer period of p bins the binned series is cut into rows of p bins, padded with empty
// rows to m, a power of two, and a butterfly of log₂ m stages folds them at the m trial
// periods p + k/(m−1) bins, k = 0 … m−1, at once: about p·m·log₂ m additions for m trials,
// against one pass over all points per frequency for the direct fold. Each grid cell takes
// the trial nearest to its own period, and the box scan of that trial's folded profile.
//
// Bin width and grid spacing. Between adjacent trials row r moves by about r/(m−1) bins,
// and the rows span the data, so a transit's phase drifts by up to one bin, dt, over the
// data: the trials' natural step is a drift of one bin. The Ofir grid lets a transit of central duration T drift by T/OS between
// adjacent frequencies. With dt = T/OS the natural step would be the grid's own; we take
// dt = T/(OS·fastBinsPerStep), a quarter of T at OS = 3, so the trials are 4/3 finer than
// the grid and each cell picks the nearest. T grows as P^{1/3}, so the period range is cut
// into segments a third of an octave wide (T grows by 8 % across one), each binned afresh
// from the points with dt set by T at the segment's shortest period; the bin thus grows by
// 2^{1/9} per segment, ×2 every three octaves. The rows are never fewer than the span
// requires for the trials to be at least as fine as the grid everywhere in the segment
// (fastRows), so the nearest trial lies within half a grid step of every cell.
//
// The bin is never shorter than half the cadence, as the direct fold's phase bins are
// not: where T/(OS·fastBinsPerStep) is shorter (short periods around dense stars), the
// bin is half the cadence, and the rows are padded further so that the trials stay as
// fine as the grid. The boxes scanned are never shorter than the cadence (durationRange,
// fastLengths).
//
// What it costs in power. The box edges fall on bin edges, and the binning and the
// butterfly's shifts spread a transit's phase by about a bin, so a transit lasting a few
// bins loses part of its power: on 40 high-SNR injections (0.5 to 40 d, impact parameters
// up to 0.95; TestFastFoldSensitivity) the fast fold kept on average 0.936 of the direct
// fold's peak power (median 0.948). The worst were the shortest transits: 0.771 for one
// lasting a single 30-minute cadence at 0.67 d, which the direct fold's half-cadence phase
// bins resolve and the fast fold's 23-minute time bins smear; with impact parameters up to
// 0.9 the least was 0.90. The bin width is what matters: with dt = T/OS, folding the same
// bins exactly instead of by the butterfly gained 1 % on average. With impact parameters
// up to 0.9, dt = T/OS (fastBinsPerStep = 1) kept 0.926 on average at 0.6 times the cost,
// 4/3 kept 0.948, 1.5 kept 0.960 and 2 kept 0.979, at 1.3 and 2.3 times the cost (the cost
// grows as the square of fastBinsPerStep: the bins per period and the trials both grow
// with it). On white noise the highest SDE of the fast fold's spectrum stays below
// DefaultThreshold in 99 % of light curves (TestFastFoldNoiseSDE: 99th percentiles 6.27
// to 7.20 over the calibration's five cases, 500 light curves each).

// fastBinsPerStep is the number of bins a transit drifts by between adjacent grid
// frequencies: see the comment above for the choice.
const fastBinsPerStep = 4.0 / 3

// fastSegmentRatio is the ratio of the longest to the shortest period of one segment: a
// third of an octave, across which the central duration grows by 2^{1/9} ≈ 1.08, so the
// bins at the segment's long end are at most 8 % finer than they need be.
const fastSegmentRatio = 1.2599210498948732 // 2^{1/3}

// fastBlockPeriods is the number of consecutive integer periods one parallel block folds.
// It is fixed, so the split of work never depends on the number of workers.
const fastBlockPeriods = 16

// fastSegment is one stretch of the period range with its bin width.
type fastSegment struct {
	dt    float64 // bin width, days
	nbins int     // bins of the binned series: the span of the points
}

// fastBlock is one parallel unit: the grid cells jlo … jhi of one segment, whose periods
// fall in the integer periods pa … pb (in bins) of that segment.
type fastBlock struct {
	seg      int
	pa, pb   int
	jlo, jhi int
}

// fastStats counts what a fast periodogram did, for tests and cost estimates.
type fastStats struct {
	folds  int // butterflies run (integer periods)
	trials int // folded profiles scanned (one per grid cell)
	filled int // grid cells computed by the direct fold instead (see block)
}

// gridDrift returns T/OS at period per: the drift of a transit's phase over the span
// between adjacent grid frequencies, T = q(f)·P the small-angle central duration on which
// the grid rests.
func gridDrift(g Grid, per float64) float64 {
	return g.DutyCycle(1/per) * per / g.Oversampling
}

// newFastSegment returns the segment whose shortest period is lo. Its bin is the grid's
// drift at lo over fastBinsPerStep, but never below half the cadence: finer bins would
// only be partly filled, and the direct fold's phase bins never go below half the
// cadence either (phaseBins with durationRange's floor).
func newFastSegment(p *prepared, g Grid, lo float64) fastSegment {
	dt := math.Max(gridDrift(g, lo)/fastBinsPerStep, p.cadence/2)
	return fastSegment{dt: dt, nbins: int(p.span()/dt) + 1}
}

// fastPlan cuts the grid into segments a third of an octave wide and each segment into
// blocks of fastBlockPeriods integer periods. Every grid cell lies in exactly one block.
func fastPlan(p *prepared, g Grid) ([]fastSegment, []fastBlock) {
	var segs []fastSegment
	var blocks []fastBlock
	lo := 1 / g.FMax
	hi := lo * fastSegmentRatio
	for j := g.N - 1; j >= 0; j-- {
		per := g.Period(j)
		moved := len(segs) == 0
		for per >= hi {
			lo, hi = hi, hi*fastSegmentRatio
			moved = true
		}
		if moved {
			segs = append(segs, newFastSegment(p, g, lo))
		}
		s := len(segs) - 1
		ip := int(per / segs[s].dt)
		if moved || ip >= blocks[len(blocks)-1].pa+fastBlockPeriods {
			blocks = append(blocks, fastBlock{seg: s, pa: ip, jhi: j})
		}
		b := &blocks[len(blocks)-1]
		b.pb, b.jlo = ip, j
	}
	return segs, blocks
}

// fastRows returns the number of rows, a power of two, for integer period per in segment
// s: enough to hold the binned series and to space the trials at least as finely as the
// grid. Adjacent trials at period P = per·dt lie Δf = 1/((m−1)·per²·dt) apart, and the
// grid's step there is q(f)/(S·OS) = T/(P·S·OS) with T = q·P, so (m−1)·per must reach
// S·OS/T(P) bins (with a margin of 10⁻³ for rounding).
func fastRows(g Grid, s fastSegment, per int) int {
	need := math.Max(float64(s.nbins), g.Baseline/gridDrift(g, float64(per)*s.dt)*(1+1e-3))
	m := int(math.Ceil(need/float64(per))) + 1
	return 1 << bits.Len(uint(m-1))
}

// fastPeriodogram computes the spectrum over the grid by fast folding (see the comment at
// the top of this file). It has periodogram's contract: par spreads fixed blocks of integer
// periods over workers (nil: serial), each block writes only its own grid cells, so the
// spectrum is the same for any number of workers, and progress, if not nil, is called
// after each block.
func fastPeriodogram(p *prepared, g Grid, par parallel.Func, progress func()) spectrum {
	sp, _ := fastSpectrum(p, g, par, progress)
	return sp
}

// fastBlockCount returns the number of blocks, and so of progress calls, of
// fastPeriodogram on p over g.
func fastBlockCount(p *prepared, g Grid) int {
	_, blocks := fastPlan(p, g)
	return len(blocks)
}

// fastSpectrum is fastPeriodogram that also returns what it did.
func fastSpectrum(p *prepared, g Grid, par parallel.Func, progress func()) (spectrum, fastStats) {
	sp := newSpectrum(g.N)
	segs, blocks := fastPlan(p, g)
	return sp, fastBlocks(p, g, par, progress, segs, blocks, sp)
}

// newSpectrum returns an empty spectrum of n frequencies.
func newSpectrum(n int) spectrum {
	return spectrum{power: make([]float64, n), duration: make([]float64, n), centre: make([]float64, n)}
}

// fastBlocks folds every block of a plan into sp, each block writing its own cells, and
// returns what it did.
func fastBlocks(p *prepared, g Grid, par parallel.Func, progress func(), segs []fastSegment, blocks []fastBlock, sp spectrum) fastStats {
	stats := make([]fastStats, len(blocks))
	par.Run(len(blocks), func(b int) {
		fs := fastScratches.Get().(*fastScratch)
		stats[b] = fs.block(p, g, segs[blocks[b].seg], blocks[b], sp)
		fastScratches.Put(fs)
		if progress != nil {
			progress()
		}
	})
	var st fastStats
	for _, s := range stats {
		st.folds += s.folds
		st.trials += s.trials
		st.filled += s.filled
	}
	return st
}

// block folds the integer periods of one block and gives each of its grid cells the best
// box of the trial period nearest to the cell's: the cell of period P lies in integer
// period per = ⌊P/dt⌋, and its trial is k = round((P/dt − per)·(m−1)), at most half a
// trial step, and so half a grid step, away.
func (fs *fastScratch) block(p *prepared, g Grid, s fastSegment, blk fastBlock, sp spectrum) fastStats {
	var st fastStats
	fs.bin(p, s.dt, s.nbins, blk.pb+1)
	put := func(j int, bx box) {
		sp.power[j] = math.Sqrt(p.sumW * bx.stat)
		sp.duration[j] = bx.duration
		sp.centre[j] = bx.centre
	}
	for j := blk.jhi; j >= blk.jlo; {
		per := int(g.Period(j) / s.dt)
		// A period of P/dt ≥ π·OS·fastBinsPerStep > 4 bins for any orbit outside the star
		// (q < 1/π); only a grid reaching inside the star, which Search refuses, gets
		// here, and its cells are folded directly.
		if per < 2 {
			f := g.Freq(j)
			lo, hi := durationRange(1/f, g.Density, p.cadence)
			put(j, fs.sc.best(p, f, lo, hi))
			st.filled++
			j--
			continue
		}
		m := fastRows(g, s, per)
		cells := fs.trials(g, s.dt, per, m, j, blk.jlo)
		prof := fs.fold(per, m, fs.want)
		st.folds++
		nlo, nhi := fastLengths(p, g, per, s.dt)
		for i, k := range fs.want {
			put(j-i, fs.sc.fastScan(p, prof[k*per:(k+1)*per], s.dt, nlo, nhi))
		}
		st.trials += cells
		j -= cells
	}
	return st
}

// trials lists in fs.want, for the cells j, j−1, … (down to jlo) whose periods P fall in
// integer period per (P/dt < per+1), the trial nearest to each: k = round((P/dt − per)·(m−1)).
// It returns the number of cells.
func (fs *fastScratch) trials(g Grid, dt float64, per, m, j, jlo int) int {
	fs.want = fs.want[:0]
	for ; j >= jlo; j-- {
		x := g.Period(j)/dt - float64(per)
		if x >= 1 {
			break
		}
		fs.want = append(fs.want, int(math.Round(x*float64(m-1))))
	}
	return len(fs.want)
}

// fastCost estimates the work of both periodograms on p over g, in bin or point
// operations, for choosing between them: the fast fold's binning, butterflies (the stages
// over the rows holding data, the last stage over the trials the cells take) and box scans
// (per cell, the bins of the period times the box lengths), against the direct fold's
// points times frequencies. It walks the plan without folding anything. One operation of
// either kind takes about a nanosecond (on the four-year benchmark, 1.25 ns per point and
// frequency for the direct fold, 1.0 ns per operation for the fast one);
// BenchmarkFastVersusDirect4yr reports the ratio of the estimates beside the measured one.
func fastCost(p *prepared, g Grid) (fast, direct float64) {
	segs, blocks := fastPlan(p, g)
	for _, b := range blocks {
		s := segs[b.seg]
		fast += float64(len(p.t))
		for j := b.jhi; j >= b.jlo; j-- {
			per := int(g.Period(j) / s.dt)
			nlo, nhi := fastLengths(p, g, per, s.dt)
			fast += float64(per * (nhi - nlo + 2)) // scan and running sums
			if j == b.jhi || per != int(g.Period(j+1)/s.dt) {
				fast += butterflyCost(s.nbins, per, fastRows(g, s, per))
			}
		}
	}
	return fast, float64(len(p.t)) * float64(g.N)
}

// butterflyCost is the number of bins fold writes for integer period per and m rows
// before its last stage (all of them when m = 2).
func butterflyCost(nbins, per, m int) float64 {
	live := (nbins + per - 1) / per
	if m == 2 {
		return float64(m * per)
	}
	var n int
	for h := 1; h < m/2; h *= 2 {
		n += min(m, (live+2*h-1)/(2*h)*2*h) * per
	}
	return float64(n)
}
