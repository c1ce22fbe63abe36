package sampler

import (
	"context"
	"fmt"
	"math"
	"slices"

	"dipline/steps/internal/parallel"
	"dipline/steps/internal/rng"
)

// Schedule says how long RunEnsembles samples and with which moves. Sampling runs in two
// phases. First the stretch and differential-evolution moves alone (DEShare), from the
// starting points, until the chains are GuideAfter autocorrelation times long and at least
// MinFirstPhase steps; each ensemble's guide is then fitted to the second half of its own
// chains (FitGuide; so the ensembles stay independent) and frozen, and everything so far is
// burn-in. Then all three moves (GuidedDEShare, GuideShare, the rest stretch moves), until
// the chains after burn-in are LengthPerTau autocorrelation times long. Chains that reach
// that length in the first phase, its first 1/BurnShare discarded, stop there. MaxSteps caps
// both phases. With Keep set, each chain is thinned as it grows so that it never holds more
// than Keep stored steps; every figure (burn-in, τ, the looks) stays in ensemble updates.
//
// The values are the caller's choices; the schedule knows nothing of what is sampled.
type Schedule struct {
	// MaxSteps caps the ensemble updates per ensemble.
	MaxSteps int
	// Chunk is the number of steps run between looks at the chains; each ensemble's run of
	// Chunk steps draws from its own seed. > 0.
	Chunk int
	// Keep bounds the stored steps of each chain: when a chain holds Keep stored steps,
	// every second one is dropped and from then on only every 2·Thin-th step is stored
	// (Chain.Thin doubles). The chain so always spans the whole run, at a spacing below
	// 2·steps/Keep, and its memory stays bounded however long the run. 0 stores every step;
	// otherwise even and ≥ 4. The draws themselves do not depend on it; the guides, fitted to
	// stored steps, and so the later draws, do.
	Keep int
	// LengthPerTau is the length of the chains after burn-in, in autocorrelation times, at
	// which sampling stops.
	LengthPerTau float64
	// BurnShare: the first 1/BurnShare of each chain is burn-in when the first phase is all
	// there is. ≥ 2.
	BurnShare int
	// GuideAfter is the length of the first phase in autocorrelation times (τ estimated
	// after its first 1/BurnShare), and MinFirstPhase its least length in steps.
	GuideAfter    float64
	MinFirstPhase int
	// GuideGain is the factor by which the first look after the guides are fitted expects τ
	// to have shrunk (it only places that look; τ is measured there).
	GuideGain float64
	// DEShare is the share of differential-evolution moves in the first phase;
	// GuidedDEShare and GuideShare are the shares of differential-evolution and independence
	// moves in the second (see Options).
	DEShare                   float64
	GuidedDEShare, GuideShare float64
	// Seed and SeedLabel select the random streams: ensemble e's run of steps from total on
	// draws from rng.DeriveSeed(Seed, SeedLabel, e<<32 | total/Chunk).
	Seed      uint64
	SeedLabel string
	// Parallel is as in Options; it also spreads the autocorrelation estimates, one block
	// per parameter. Results do not depend on it.
	Parallel parallel.Func
	// Progress, when not nil, is told after each ensemble's run of steps how far the
	// sampling is, as done out of total = MaxSteps for every ensemble: done is the steps run
	// so far scaled by the end the autocorrelation times measured so far foretell (the cap
	// until the first look) to nine tenths of total, and past that end on towards total,
	// never going back and short of total until sampling is over; the last call gives
	// done = total. It only watches: it is called from RunEnsembles' own
	// goroutine, draws nothing and decides nothing, so the results are the same with it or
	// without.
	Progress func(done, total int)
}

// Sampling is the record of RunEnsembles.
type Sampling struct {
	Chains []*Chain // one per ensemble, every Thin-th step stored (Schedule.Keep)
	Steps  int      // ensemble updates per ensemble
	Burn   int      // leading steps of every chain that are burn-in (Kept: the first stored step after it)
	Thin   int      // steps between stored states, the same in every chain
	// Taus holds per parameter the largest integrated autocorrelation time over the
	// ensembles after Burn, in steps, at least 1; Trusted says every estimate is trusted
	// (AutoCorrTime).
	Taus    []float64
	Trusted bool
	// Guided says the ensembles got their guides: the second phase began.
	Guided bool
}

// MaxTau is the largest of s.Taus.
func (s *Sampling) MaxTau() float64 { return maxOf(s.Taus) }

// Kept is the first stored step after burn-in, in every chain.
func (s *Sampling) Kept() int { return s.Chains[0].From(s.Burn) }

// RunEnsembles samples exp(logp) with independently seeded ensembles, ensemble e started at
// starts[e] (as Run's init; all of one shape), to the schedule s. The autocorrelation time
// is estimated (an FFT per walker and parameter) only at looks, a quarter of the chain
// apart, and once trusted not before the chains could be long enough for it. Errors from
// Run are returned as they are.
func RunEnsembles(ctx context.Context, logp func(x []float64) float64, starts [][][]float64, s Schedule) (*Sampling, error) {
	if err := s.check(starts); err != nil {
		return nil, err
	}
	r := newScheduled(ctx, logp, starts, s)
	r.nextLook = s.Chunk
	for r.total < s.MaxSteps {
		if err := r.advance(min(s.Chunk, s.MaxSteps-r.total)); err != nil {
			return nil, err
		}
		if r.total < r.nextLook && r.total < s.MaxSteps {
			continue
		}
		if r.look() {
			break
		}
	}
	res := r.finish()
	if r.Progress != nil && r.reported < s.MaxSteps*len(starts) {
		all := s.MaxSteps * len(starts)
		r.Progress(all, all)
	}
	return res, nil
}

// check reports a schedule or a set of starts that RunEnsembles cannot follow.
func (s *Schedule) check(starts [][][]float64) error {
	switch {
	case len(starts) == 0:
		return fmt.Errorf("%w: no ensembles", ErrConfig)
	case s.Chunk <= 0:
		return fmt.Errorf("%w: chunk = %d, must be positive", ErrConfig, s.Chunk)
	case s.BurnShare < 2:
		return fmt.Errorf("%w: burn share 1/%d, must be at most a half", ErrConfig, s.BurnShare)
	case s.Keep != 0 && (s.Keep < 4 || s.Keep%2 != 0):
		return fmt.Errorf("%w: keep %d stored steps, must be 0 (all) or even and at least 4", ErrConfig, s.Keep)
	}
	for e, init := range starts {
		if len(init) == 0 || len(init[0]) == 0 || len(init) != len(starts[0]) || len(init[0]) != len(starts[0][0]) {
			return fmt.Errorf("%w: ensemble %d starts in another shape than ensemble 0", ErrConfig, e)
		}
	}
	return nil
}

// scheduled is the state of RunEnsembles.
type scheduled struct {
	Schedule
	ctx      context.Context
	logp     func(x []float64) float64
	dim      int
	chains   []*Chain
	run      Chain         // the latest run of Chunk steps, its arrays reused by the next
	last     [][][]float64 // per ensemble, every walker's latest position
	guides   []*Guide      // per ensemble, its guide once the first phase is over
	total    int           // steps run per ensemble
	burn     int
	taus     []float64
	trusted  bool
	nextLook int // the total at which the chains are next looked at
	// For Progress only, never for a decision: the total at which sampling is expected
	// to stop (0: not known yet), and the last done reported.
	expectEnd, reported int
}

// newScheduled returns RunEnsembles' state with empty chains at the starts.
func newScheduled(ctx context.Context, logp func(x []float64) float64, starts [][][]float64, s Schedule) *scheduled {
	if s.Parallel == nil {
		s.Parallel = serial
	}
	r := &scheduled{Schedule: s, ctx: ctx, logp: logp, dim: len(starts[0][0]),
		chains: make([]*Chain, len(starts)), last: make([][][]float64, len(starts)), guides: make([]*Guide, len(starts))}
	for e, init := range starts {
		// A shallow copy: advance replaces the rows, so the caller's starts stay as they were.
		r.last[e] = slices.Clone(init)
		r.chains[e] = &Chain{Walkers: len(init), Dim: r.dim, Thin: 1, Accepted: make([]int, len(init))}
	}
	return r
}

// advance runs n steps of every ensemble, each with its guide when it has one.
func (r *scheduled) advance(n int) error {
	for e := range r.chains {
		seed := rng.DeriveSeed(r.Seed, r.SeedLabel, uint64(e)<<32|uint64(r.total/r.Chunk))
		so := Options{Steps: n, Seed: seed, Parallel: r.Parallel, DEShare: r.DEShare}
		if r.guides[e] != nil {
			so.DEShare, so.GuideShare, so.Guide = r.GuidedDEShare, r.GuideShare, r.guides[e]
		}
		ch, err := runInto(r.ctx, r.logp, r.last[e], so, &r.run)
		if err != nil {
			return err
		}
		appendChain(r.chains[e], ch, r.total, r.Keep)
		for w, row := range r.last[e] {
			if r.total == 0 {
				row = make([]float64, r.dim) // the first rows are the caller's starts
			}
			r.last[e][w] = append(row[:0], ch.At(ch.Stored-1, w)...)
		}
		r.progress(r.total*len(r.chains) + (e+1)*n)
	}
	r.total += n
	return nil
}

// look estimates the autocorrelation times and reports whether the chains after burn-in are
// long enough. If not, it fits the guides when the first phase is over, and places the next
// look.
func (r *scheduled) look() bool {
	guided := r.guides[0] != nil
	from := r.burn
	if !guided {
		from = r.total / r.BurnShare
	}
	r.taus, r.trusted = tausOf(r.chains, r.dim, from, r.Parallel)
	tauMax := maxOf(r.taus)
	r.foretell(guided, tauMax)
	if r.trusted && float64(r.total-from) >= r.LengthPerTau*tauMax {
		r.burn = from
		return true
	}
	if !guided && r.total >= r.MinFirstPhase && float64(r.total) >= r.GuideAfter*tauMax {
		if fitGuides(r.guides, r.chains, r.total/2) {
			r.burn = r.total
			r.nextLook = r.total + max(r.Chunk, int(r.LengthPerTau*tauMax/r.GuideGain))
			return false
		}
	}
	// Each look costs an FFT per walker and parameter over the whole chain, so the looks
	// grow apart geometrically (a quarter of the chain at a time, at most a quarter of
	// overshoot in steps).
	r.nextLook = max(r.total+r.Chunk, r.total+(r.total-from)/4)
	if r.trusted {
		// The total at which the kept share reaches LengthPerTau·τ, if τ holds.
		need := from + int(r.LengthPerTau*tauMax) + 1
		if !guided {
			need = int(r.LengthPerTau*tauMax*float64(r.BurnShare)/float64(r.BurnShare-1)) + 1
		}
		r.nextLook = max(r.nextLook, min(need, r.MaxSteps))
	}
	return false
}

// foreseenShare is the share of the progress line the foreseen end fills. The rest is kept
// for sampling that runs past it (chains that mix more slowly than their first looks
// foretold), so that the line keeps moving towards the cap instead of standing at 99 %
// (a fit of a fast rotator's spurious signals stood there for ten minutes).
const foreseenShare = 0.9

// progress reports done ensemble updates (over all ensembles) to Progress: up to the
// expected end as a share of foreseenShare of the cap, past it linearly from there to the
// cap.
func (r *scheduled) progress(done int) {
	if r.Progress == nil {
		return
	}
	all := r.MaxSteps * len(r.chains)
	end := all
	if r.expectEnd > 0 {
		end = r.expectEnd * len(r.chains)
	}
	share := 1.0
	switch {
	case done < end:
		share = foreseenShare * float64(done) / float64(end)
	case end < all:
		share = foreseenShare + (1-foreseenShare)*float64(done-end)/float64(all-end)
	}
	n := min(all-1, int(share*float64(all))) // only the last call says the sampling is over
	if n > r.reported {
		r.reported = n
		r.Progress(n, all)
	}
}

// foretell sets, for Progress only, the total at which sampling is expected to stop if
// tauMax holds: in the second phase, when the chains after burn-in are LengthPerTau·τ long;
// in the first, the sooner of an end in the first phase (its first 1/BurnShare burnt) and
// an end after a first phase of GuideAfter·τ and a second with τ shrunk by GuideGain.
func (r *scheduled) foretell(guided bool, tauMax float64) {
	var end float64
	if guided {
		end = float64(r.burn) + r.LengthPerTau*tauMax
	} else {
		first := r.LengthPerTau * tauMax * float64(r.BurnShare) / float64(r.BurnShare-1)
		both := math.Max(float64(r.MinFirstPhase), r.GuideAfter*tauMax) + r.LengthPerTau*tauMax/math.Max(r.GuideGain, 1)
		end = math.Min(first, both)
	}
	r.expectEnd = int(math.Min(math.Max(end, float64(r.total)), float64(r.MaxSteps)))
}

// finish settles the burn-in (the first 1/BurnShare when the guides never came or came at
// the very end), measures τ after it when the last look did not, and returns the record.
func (r *scheduled) finish() *Sampling {
	if r.guides[0] == nil || r.burn >= r.total {
		r.burn = r.total / r.BurnShare
	}
	if r.taus == nil || !(r.burn < r.total) {
		r.taus, r.trusted = tausOf(r.chains, r.dim, r.burn, r.Parallel)
	}
	return &Sampling{Chains: r.chains, Steps: r.total, Burn: r.burn, Thin: r.chains[0].Thin, Taus: r.taus, Trusted: r.trusted, Guided: r.guides[0] != nil}
}

// fitGuides fits each ensemble's guide to its chains after the first from steps
// (FitGuide). It reports whether every ensemble has one, and leaves none when any fit fails.
func fitGuides(guides []*Guide, ens []*Chain, from int) bool {
	for e, ch := range ens {
		g, err := FitGuide([]*Chain{ch}, ch.From(from), 1)
		if err != nil {
			clear(guides)
			return false
		}
		guides[e] = g
	}
	return true
}

// appendChain appends to acc, which holds the first total steps, the steps of c (a run
// that stored every step) that fall on acc's spacing: the state after u updates in all is
// stored when u is a multiple of acc.Thin. With keep > 0, acc never holds more than keep
// stored steps: on reaching keep it drops every second one (halve).
func appendChain(acc, c *Chain, total, keep int) {
	KN := acc.Walkers * acc.Dim
	for j := 0; j < c.Stored; j++ {
		if (total+j+1)%acc.Thin != 0 {
			continue
		}
		acc.Samples = grow(acc.Samples, KN, keep*KN)
		acc.LogProb = grow(acc.LogProb, acc.Walkers, keep*acc.Walkers)
		acc.Samples = append(acc.Samples, c.Samples[j*KN:(j+1)*KN]...)
		acc.LogProb = append(acc.LogProb, c.LogProb[j*acc.Walkers:(j+1)*acc.Walkers]...)
		acc.Stored++
		if keep > 0 && acc.Stored == keep {
			acc.halve()
		}
	}
	acc.Steps += c.Steps
	for w, a := range c.Accepted {
		acc.Accepted[w] += a
	}
}

// grow returns s with room for n more values: doubling its capacity but never beyond limit
// when the n fit within it, or as append grows it when limit is 0.
func grow(s []float64, n, limit int) []float64 {
	if len(s)+n <= cap(s) {
		return s
	}
	if limit == 0 {
		return slices.Grow(s, n)
	}
	c := max(2*cap(s), len(s)+n)
	if len(s)+n <= limit {
		c = min(c, limit)
	}
	return append(make([]float64, 0, c), s...)
}

// halve keeps every second stored step of c, those after 2·Thin, 4·Thin, … updates, and
// doubles its spacing, so stored step s is still the state after (s+1)·Thin updates.
// Stored must be even.
func (c *Chain) halve() {
	KN, K := c.Walkers*c.Dim, c.Walkers
	half := c.Stored / 2
	for i := 0; i < half; i++ {
		copy(c.Samples[i*KN:(i+1)*KN], c.Samples[(2*i+1)*KN:(2*i+2)*KN])
		copy(c.LogProb[i*K:(i+1)*K], c.LogProb[(2*i+1)*K:(2*i+2)*K])
	}
	c.Samples, c.LogProb = c.Samples[:half*KN], c.LogProb[:half*K]
	c.Stored, c.Thin = half, 2*c.Thin
}

// tausOf is, per parameter, the largest autocorrelation time over the ensembles after the
// first burn steps, in steps (at least 1), and whether every estimate is trusted. Each is
// measured on the stored steps and multiplied by their spacing: for a spacing T well below
// τ, the series is as correlated over T·t steps as the full chain, and the sum over lags
// that are T apart is the same integral (for ρ(t) = e^(−t/c), T·coth(T/2c) against
// coth(1/2c), a relative excess of about (T/τ)²/3; Sokal 1997, our arithmetic); a chain too
// short in stored steps is not trusted, as a full one would not be (50τ either way).
func tausOf(ens []*Chain, dim, burn int, par parallel.Func) ([]float64, bool) {
	taus := make([]float64, dim)
	ok := make([]bool, dim)
	// One block per parameter: each writes only its own entries, so the result does not
	// depend on how the blocks are scheduled.
	par(dim, func(p int) {
		ok[p] = true
		for _, ch := range ens {
			ac, err := AutoCorrTime(ch.Series(p, ch.From(burn)), 0)
			if err != nil {
				ok[p] = false
				continue
			}
			taus[p] = math.Max(taus[p], ac.Tau*float64(ch.Thin))
			ok[p] = ok[p] && ac.Trusted
		}
		if taus[p] < 1 {
			taus[p] = 1
		}
	})
	trusted := true
	for _, t := range ok {
		trusted = trusted && t
	}
	return taus, trusted
}

// maxOf is the largest of v, or 0 when v is empty.
func maxOf(v []float64) float64 {
	m := 0.0
	for _, x := range v {
		m = math.Max(m, x)
	}
	return m
}
