package bls

import (
	"fmt"

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

// passResult is one pass's spectrum and its peak's SDE.
type passResult struct {
	sp    spectrum
	score float64
	peak  int
}

// wholePass computes the whole spectrum by the method. Every pass is a whole one: a
// coarser fold for the passes after the first, with the highest peaks refined at full
// resolution, cost about half as much but lost the peaks of short transits (a 1.4-hour
// transit at 30-minute cadence, bins of half its duration), so it was not kept
// (steps/search/BENCHMARKS.md).
func wholePass(m Method, p *prepared, g Grid, par parallel.Func, tick func()) passResult {
	var sp spectrum
	if m == MethodDirect {
		sp = periodogram(p, g, par, tick)
	} else {
		sp = fastPeriodogram(p, g, par, tick)
	}
	score, peak := detrendedSDE(sp.power)
	return passResult{sp: sp, score: score, peak: peak}
}
