package bls

import (
	"fmt"
	"slices"

	"dipline/steps/internal/parallel"
)

// Method says how a pass's periodogram is computed.
type Method int

// The methods. Both give the same statistic over the same grid; they differ in cost, and
// the fast fold in a few per cent of power lost to its bins (fastfold.go).
const (
	MethodAuto   Method = iota // the fast fold where its estimated cost is the lower, else fold-and-scan
	MethodFast                 // fast folding of the light curve binned evenly in time (fastfold.go)
	MethodDirect               // fold-and-scan: every point folded at every frequency (periodogram.go)
)

// String names the method as a workflow writes it.
func (m Method) String() string {
	switch m {
	case MethodFast:
		return "fast_fold"
	case MethodDirect:
		return "fold_and_scan"
	}
	return "auto"
}

// choose picks the method for a search of p over g and says why. The fast fold's cost
// grows with the bins of the light curve's span, fold-and-scan's with its points, so a
// sparse or very unevenly sampled light curve (a ground-based one over a season) can be
// cheaper to fold point by point; fastCost estimates both in operations.
func choose(m Method, p *prepared, g Grid) (Method, string) {
	fast, direct := fastCost(p, g)
	ops := fmt.Sprintf("about %.2g operations against %.2g for fold-and-scan (%d points × %d frequencies)", fast, direct, len(p.t), g.N)
	switch {
	case m == MethodFast:
		return m, "fast folding, as the workflow asks: " + ops
	case m == MethodDirect:
		return m, fmt.Sprintf("fold-and-scan, as the workflow asks (%d points × %d frequencies)", len(p.t), g.N)
	case fast < direct:
		return MethodFast, "fast folding, the cheaper here: " + ops
	}
	return MethodDirect, "fold-and-scan, the cheaper here: fast folding would take " + ops
}

// Passes after the first search the light curve with the found signals masked. With the
// fast fold they do not fold everything again at full resolution (sparsePass): they fold
// at coarseLevel (bins and trials twice as wide, about a quarter of the work), take that
// spectrum's highest peaks as candidates, and fold at full resolution only the integer
// periods holding the cells around the candidates and every sparseEvery-th integer period,
// whose cells give the spectrum's trend, median and spread for the SDE. On 150 injected signals whose full-resolution SDE
// lay between 7.5 and 12 (90-day light curves, 0.5 to 30 d, impact parameters to 0.9),
// the true peak was never below the 12th highest of the coarse spectrum's peaks
// (TestCoarsePeaksHoldTheTruePeak); SparseCandidates keeps 64.
const (
	SparseCandidates = 64
	sparseEvery      = 8
	// sparseMinBlocks: a grid of fewer full-resolution blocks (each 16 integer periods) is
	// folded whole; the sparse pass would save little on it.
	sparseMinBlocks = 64
	// sparseMinPerStretch is the fewest sampled cells a stretch of the trend must hold;
	// stretches with fewer are folded whole.
	sparseMinPerStretch = 16
	// candidateReach is how far around a candidate, in grid cells, the full fold reaches.
	candidateReach = 3
)

// passResult is one pass's spectrum and its peak's SDE. exact is false for a sparse pass,
// whose power holds full-resolution values only where have is set and coarse ones
// elsewhere.
type passResult struct {
	sp    spectrum
	score float64
	peak  int
	have  []bool
}

// firstPass computes the whole spectrum by the method.
func firstPass(m Method, p *prepared, g Grid, par parallel.Func, tick func()) passResult {
	var sp spectrum
	if m == MethodDirect {
		sp = periodogram(p, g, par, tick)
	} else {
		sp = fastPeriodogram(p, g, par, tick)
	}
	score, peak := detrendedSDE(sp.power)
	return passResult{sp: sp, score: score, peak: peak}
}

// sparsePass is a later pass by the fast fold (see the comment above SparseCandidates).
func sparsePass(p *prepared, g Grid, par parallel.Func, tick func()) passResult {
	segs, blocks := fastPlan(p, g)
	if len(blocks) < sparseMinBlocks {
		return firstPass(MethodFast, p, g, par, tick)
	}
	sp, _ := fastSpectrumAt(p, g, par, tick, coarseLevel)
	sample := sampleCells(p, g, segs, blocks)
	sel := &selection{want: slices.Clone(sample), have: make([]bool, g.N)}
	for _, c := range candidates(sp.power, SparseCandidates) {
		for j := max(0, c-candidateReach); j <= min(g.N-1, c+candidateReach); j++ {
			sel.want[j] = true
		}
	}
	var only []int
	for b, blk := range blocks {
		if slices.Contains(sel.want[blk.jlo:blk.jhi+1], true) {
			only = append(only, b)
		}
	}
	fastBlocks(p, g, par, tick, segs, blocks, only, sp, sel)
	// The trend, median and spread come from the sample alone: the cells around the
	// candidates are the spectrum's highest, and would widen the spread.
	r := detrendedPower(sp.power, sample)
	peak := argmax(r, sel.have)
	centre, sigma := spread(r, sample)
	res := passResult{sp: sp, peak: peak, have: sel.have}
	if sigma > 0 {
		res.score = (r[peak] - centre) / sigma
	}
	return res
}

// sampleCells marks the cells of every sparseEvery-th integer period of each segment, and
// every cell of a stretch of the trend (see detrendedPower) that would otherwise hold
// fewer than sparseMinPerStretch of them.
func sampleCells(p *prepared, g Grid, segs []fastSegment, blocks []fastBlock) []bool {
	want := make([]bool, g.N)
	for _, blk := range blocks {
		dt := segs[blk.seg].dt
		for j := blk.jlo; j <= blk.jhi; j++ {
			want[j] = int(g.Period(j)/dt)%sparseEvery == 0
		}
	}
	if g.N < 4*trendBlocks {
		for j := range want {
			want[j] = true
		}
		return want
	}
	for s := 0; s < trendBlocks; s++ {
		lo, hi := s*g.N/trendBlocks, (s+1)*g.N/trendBlocks
		count := 0
		for j := lo; j < hi; j++ {
			if want[j] {
				count++
			}
		}
		if count < sparseMinPerStretch {
			for j := lo; j < hi; j++ {
				want[j] = true
			}
		}
	}
	return want
}

// candidates returns the cells of the k highest local maxima of the detrended power (each
// the highest within candidateReach cells), highest first.
func candidates(power []float64, k int) []int {
	r := detrendedPower(power, nil)
	var peaks []int
	for j := range r {
		lo, hi := max(0, j-candidateReach), min(len(r)-1, j+candidateReach)
		if argmax(r[lo:hi+1], nil)+lo == j {
			peaks = append(peaks, j)
		}
	}
	slices.SortStableFunc(peaks, func(a, b int) int {
		switch {
		case r[a] > r[b]:
			return -1
		case r[a] < r[b]:
			return 1
		}
		return 0
	})
	return peaks[:min(k, len(peaks))]
}
