// Package sampler is the numerical core of dipline's posterior sampling: the affine-invariant
// ensemble sampler with the stretch move of Goodman & Weare (2010, Comm. App. Math. Comp. Sci.
// 5, 65) in its parallel half-ensemble form (Foreman-Mackey et al. 2013, PASP 125, 306,
// Algorithm 3), mixed on request with differential-evolution moves (ter Braak 2006) and
// independence moves from a fixed Student-t guide (Tierney 1994; see Guide), and the
// diagnostics to judge a chain: the integrated autocorrelation time with
// Sokal's automatic window, the effective sample size, and split R-hat across independently
// seeded ensembles (rank-normalised, Vehtari et al. 2021). It works on plain slices and a
// log-probability function; it knows nothing of models, priors, workflow files or the cache.
// Every walker draws from its own random stream, derived from the seed and the walker's index,
// so a chain is byte-identical for any worker count. Main entry points: Run for one ensemble
// and a fixed number of steps, and RunEnsembles for independently seeded ensembles run to a
// Schedule (burn-in, guides, and a stop once the chains are long enough in autocorrelation
// times).
package sampler

import (
	"context"
	"errors"
	"fmt"
	"math"

	"dipline/steps/internal/parallel"
	"dipline/steps/internal/rng"
)

// DefaultStretch is the stretch-move scale a = 2 recommended by Goodman & Weare (2010) and
// Foreman-Mackey et al. (2013).
const DefaultStretch = 2.0

// walkerLabel names the per-walker random streams (rng.Derive(seed, walkerLabel, k)).
const walkerLabel = "sampler/walker"

// moveLabel names the stream that picks each step's move.
const moveLabel = "sampler/move"

// Options says how long to run and how to draw.
type Options struct {
	// Steps is the number of ensemble updates (each moves every walker once); > 0.
	Steps int
	// Seed selects the random streams; walker k draws from rng.Derive(Seed, "sampler/walker", k).
	Seed uint64
	// Stretch is the scale a > 1 of the stretch move; 0 means DefaultStretch.
	Stretch float64
	// DEShare is the share of steps (0 to 1) that use the differential-evolution move
	// instead of the stretch move: walker k proposes x_k + γ(x_a − x_b) for two distinct
	// walkers a, b of the complementary half, γ = 2.38/√(2·dim), and γ = 1 one time in ten
	// (ter Braak 2006, Statistics and Computing 16, 239; the ensemble form of Nelson et al.
	// 2014, ApJS 210, 11). The proposal is symmetric and affine-invariant, like the stretch
	// move; mixing the two shortens autocorrelation times on curved posteriors. Which move a
	// step uses is drawn from the seed, never from the data. 0 keeps the pure stretch move.
	DEShare float64
	// GuideShare is the share of steps (0 to 1, with DEShare at most 1 in all) that use the
	// independence move: each walker proposes a draw from Guide and accepts it with the
	// Metropolis–Hastings ratio for that proposal (see Guide). The steps left after DEShare
	// and GuideShare use the stretch move.
	GuideShare float64
	// Guide is the independence move's proposal density; needed when GuideShare > 0.
	Guide *Guide
	// Thin keeps every Thin-th step (steps Thin−1, 2·Thin−1, …); 0 or 1 keeps all.
	Thin int
	// Parallel runs block(i) for every i in [0, n), possibly concurrently, and returns when all
	// are done (the signature of steps.Pool.Parallel). Nil runs them in order on the caller.
	// When it is not nil, logp must be safe for concurrent use.
	Parallel parallel.Func
	// Progress, if not nil, is called on the caller's goroutine after every step.
	Progress func(done, total int)
}

// Chain is the record of a run. Samples and LogProb are flat, step-major: the position of
// walker w at stored step s is Samples[(s*Walkers+w)*Dim : ...+Dim]. Stored step s is the
// state after (s+1)·Thin ensemble updates.
type Chain struct {
	Walkers, Dim int
	Stored       int       // number of stored steps (Steps / Thin)
	Thin         int       // steps between stored states
	Samples      []float64 // Stored × Walkers × Dim
	LogProb      []float64 // Stored × Walkers
	Accepted     []int     // accepted proposals per walker, over all steps
	Steps        int       // ensemble updates performed
}

// At returns the position of walker w at stored step s (a view into Samples).
func (c *Chain) At(s, w int) []float64 {
	i := (s*c.Walkers + w) * c.Dim
	return c.Samples[i : i+c.Dim : i+c.Dim]
}

// From is the first stored step after the first steps ensemble updates (Stored when there
// is none): the first to keep after a burn-in of that many steps.
func (c *Chain) From(steps int) int {
	return min(max(steps, 0)/c.Thin, c.Stored)
}

// Series returns parameter p as one series per walker over stored steps from..Stored−1,
// the layout the diagnostics take.
func (c *Chain) Series(p, from int) [][]float64 {
	if from < 0 {
		from = 0
	}
	if from > c.Stored {
		from = c.Stored
	}
	out := make([][]float64, c.Walkers)
	for w := range out {
		s := make([]float64, c.Stored-from)
		for i := range s {
			s[i] = c.Samples[((from+i)*c.Walkers+w)*c.Dim+p]
		}
		out[w] = s
	}
	return out
}

// AcceptanceFraction writes each walker's fraction of accepted proposals into dst (grown if
// short) and returns it.
func (c *Chain) AcceptanceFraction(dst []float64) []float64 {
	if cap(dst) < c.Walkers {
		dst = make([]float64, c.Walkers)
	}
	dst = dst[:c.Walkers]
	for w, a := range c.Accepted {
		dst[w] = float64(a) / float64(c.Steps)
	}
	return dst
}

// ErrConfig marks a bad call: too few walkers, ragged or non-finite starting points, bad
// options. Adapters report it as bad input.
var ErrConfig = errors.New("sampler: bad configuration")

// Run samples the density exp(logp) with an ensemble of len(init) walkers started at init
// (one row per walker, all of the same dimension N). It needs at least 2N walkers, finite
// log-probabilities at the start, and for every parameter at least two walkers that differ in
// it (a stretch move can never leave the span of the ensemble). A logp that returns NaN or
// ±Inf at a proposal rejects it. The context is checked between steps; on cancellation Run
// returns the steps stored so far together with the context's error.
func Run(ctx context.Context, logp func(x []float64) float64, init [][]float64, opts Options) (*Chain, error) {
	return runInto(ctx, logp, init, opts, nil)
}

// runInto is Run recording into reuse, whose slices it keeps when they are large enough
// (RunEnsembles runs many short runs of the same shape); nil records into a new chain.
func runInto(ctx context.Context, logp func(x []float64) float64, init [][]float64, opts Options, reuse *Chain) (*Chain, error) {
	a, thin, err := checkOptions(init, opts)
	if err != nil {
		return nil, err
	}
	par := opts.Parallel
	if par == nil {
		par = serial
	}
	w, err := startWalkers(logp, init, par)
	if err != nil {
		return nil, err
	}
	if err := checkMoves(w.K, w.N, opts); err != nil {
		return nil, err
	}
	w.prepare(opts, a)
	stored := opts.Steps / thin
	ch := reuse
	if ch == nil {
		ch = new(Chain)
	}
	*ch = Chain{
		Walkers: w.K, Dim: w.N, Thin: thin,
		Samples:  resize(ch.Samples, stored*w.K*w.N),
		LogProb:  resize(ch.LogProb, stored*w.K),
		Accepted: resize(ch.Accepted, w.K),
	}
	clear(ch.Accepted)
	return w.run(ctx, ch, opts, par)
}

// resize returns s with length n, reusing its array when it is large enough.
func resize[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// checkOptions checks the ensemble's shape and the options that do not concern the moves,
// and returns the stretch scale and the thinning to use.
func checkOptions(init [][]float64, opts Options) (a float64, thin int, err error) {
	K := len(init)
	if K == 0 {
		return 0, 0, fmt.Errorf("%w: no walkers", ErrConfig)
	}
	N := len(init[0])
	if N == 0 {
		return 0, 0, fmt.Errorf("%w: walkers have no parameters", ErrConfig)
	}
	if K < 2*N {
		return 0, 0, fmt.Errorf("%w: %d walkers for %d parameters; the stretch move needs at least %d (twice the dimension)", ErrConfig, K, N, 2*N)
	}
	if opts.Steps <= 0 {
		return 0, 0, fmt.Errorf("%w: steps = %d, must be positive", ErrConfig, opts.Steps)
	}
	a = opts.Stretch
	if a == 0 {
		a = DefaultStretch
	}
	if !(a > 1) || math.IsInf(a, 1) {
		return 0, 0, fmt.Errorf("%w: stretch scale %v, must be finite and > 1", ErrConfig, opts.Stretch)
	}
	thin = opts.Thin
	if thin == 0 {
		thin = 1
	}
	if thin < 0 {
		return 0, 0, fmt.Errorf("%w: thin = %d, must be positive", ErrConfig, opts.Thin)
	}
	return a, thin, nil
}

// checkMoves checks the shares of the differential-evolution and independence moves, and
// the guide, for K walkers of dimension N.
func checkMoves(K, N int, opts Options) error {
	if !(opts.DEShare >= 0 && opts.DEShare <= 1) {
		return fmt.Errorf("%w: DE share %v, must be between 0 and 1", ErrConfig, opts.DEShare)
	}
	if opts.DEShare > 0 && K < 4 {
		return fmt.Errorf("%w: %d walkers; the differential-evolution move needs two in each half", ErrConfig, K)
	}
	if !(opts.GuideShare >= 0 && opts.GuideShare+opts.DEShare <= 1) {
		return fmt.Errorf("%w: guide share %v with DE share %v: each between 0 and 1, together at most 1", ErrConfig, opts.GuideShare, opts.DEShare)
	}
	if opts.GuideShare > 0 && (opts.Guide == nil || len(opts.Guide.Mean) != N) {
		return fmt.Errorf("%w: guide share %v needs a guide of dimension %d", ErrConfig, opts.GuideShare, N)
	}
	return nil
}

// walkers is the state of one Run: the ensemble's positions and log-probabilities
// (walker-major), each walker's random stream, and the scratch of the moves.
type walkers struct {
	logp     func(x []float64) float64
	K, N     int       // walkers, parameters
	x        []float64 // positions, one row per walker
	lp       []float64 // log-probabilities at x
	y        []float64 // proposal scratch, one row per walker
	gbuf     []float64 // the guide's scratch, one row per walker
	accepted []bool    // whether each walker's last proposal was accepted
	streams  []rng.Stream
	a        float64 // stretch scale
	gamma    float64 // differential-evolution step, 2.38/√(2N)
	guide    *Guide
	// de and guided say which move the current step uses (neither: the stretch move).
	de, guided bool
	// The current half-step moves walkers lo, lo+1, … against the complementary half
	// [olo, olo+on).
	lo, olo, on int
	// update is w.move bound once, so that a step allocates nothing.
	update func(i int)
}

// startWalkers copies init into a new ensemble state after checking it, and evaluates logp
// at every start.
func startWalkers(logp func(x []float64) float64, init [][]float64, par parallel.Func) (*walkers, error) {
	K, N := len(init), len(init[0])
	w := &walkers{logp: logp, K: K, N: N, x: make([]float64, K*N), lp: make([]float64, K)}
	for k, row := range init {
		if len(row) != N {
			return nil, fmt.Errorf("%w: walker %d has %d parameters, walker 0 has %d", ErrConfig, k, len(row), N)
		}
		for i, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("%w: walker %d starts with parameter %d = %v", ErrConfig, k, i, v)
			}
		}
		copy(w.x[k*N:], row)
	}
	for i := 0; i < N; i++ {
		same := true
		for k := 1; k < K && same; k++ {
			same = w.x[k*N+i] == w.x[i]
		}
		if same {
			return nil, fmt.Errorf("%w: all walkers start with parameter %d = %v; the ensemble could never move in it", ErrConfig, i, w.x[i])
		}
	}
	par(K, func(k int) { w.lp[k] = logp(w.row(w.x, k)) })
	for k, v := range w.lp {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: log-probability at walker %d's start is %v, must be finite", ErrConfig, k, v)
		}
	}
	return w, nil
}

// prepare seeds the walkers' streams and allocates the moves' scratch, for the stretch
// scale a.
func (w *walkers) prepare(opts Options, a float64) {
	w.streams = make([]rng.Stream, w.K)
	for k := range w.streams {
		w.streams[k].Seed(rng.DeriveSeed(opts.Seed, walkerLabel, uint64(k)))
	}
	w.a, w.gamma, w.guide = a, 2.38/math.Sqrt(2*float64(w.N)), opts.Guide
	w.gbuf = make([]float64, w.K*w.N)
	w.y = make([]float64, w.K*w.N)
	w.accepted = make([]bool, w.K)
	w.update = w.move
}

// row is walker k's row of v (positions, proposals or scratch), capped at its end.
func (w *walkers) row(v []float64, k int) []float64 {
	return v[k*w.N : (k+1)*w.N : (k+1)*w.N]
}

// run performs opts.Steps ensemble updates, storing every ch.Thin-th state in ch.
func (w *walkers) run(ctx context.Context, ch *Chain, opts Options, par parallel.Func) (*Chain, error) {
	K, N := w.K, w.N
	moves := rng.Derive(opts.Seed, moveLabel, 0)
	halves := [2][2]int{{0, K / 2}, {K / 2, K}}
	for step := 0; step < opts.Steps; step++ {
		// One draw per step picks the move: DE below DEShare, then the guide, then stretch.
		u := moves.Float64()
		w.de = u < opts.DEShare
		w.guided = !w.de && u < opts.DEShare+opts.GuideShare
		if err := ctx.Err(); err != nil {
			ch.Samples = ch.Samples[:ch.Stored*K*N]
			ch.LogProb = ch.LogProb[:ch.Stored*K]
			return ch, err
		}
		for h, half := range halves {
			lo, hi := half[0], half[1]
			w.lo, w.olo, w.on = lo, halves[1-h][0], halves[1-h][1]-halves[1-h][0]
			par(hi-lo, w.update)
			for k := lo; k < hi; k++ {
				if w.accepted[k] {
					ch.Accepted[k]++
				}
			}
		}
		ch.Steps = step + 1
		if (step+1)%ch.Thin == 0 {
			s := ch.Stored
			copy(ch.Samples[s*K*N:(s+1)*K*N], w.x)
			copy(ch.LogProb[s*K:(s+1)*K], w.lp)
			ch.Stored++
		}
		if opts.Progress != nil {
			opts.Progress(step+1, opts.Steps)
		}
	}
	return ch, nil
}

// move moves walker lo+i of the active half against the complementary half, with the
// step's move. It touches only that walker's row, stream and flags, so the blocks of a half
// may run in any order or concurrently.
func (w *walkers) move(i int) {
	k := w.lo + i
	r := &w.streams[k]
	switch {
	case w.de:
		w.deMove(k, r)
	case w.guided:
		w.guideMove(k, r)
	default:
		w.stretch(k, r)
	}
}

// stretch is the stretch move of walker k: three draws per update, always, so the stream
// never depends on data.
func (w *walkers) stretch(k int, r *rng.Stream) {
	a := w.a
	j := w.olo + r.Intn(w.on)
	u := r.Float64()
	z := (1 + (a-1)*u) * (1 + (a-1)*u) / a // inverse CDF of g(z) ∝ z^(−1/2) on [1/a, a]
	lnU := math.Log(r.Float64())
	xk, xj, yk := w.row(w.x, k), w.row(w.x, j), w.row(w.y, k)
	for d := range yk {
		yk[d] = xj[d] + z*(xk[d]-xj[d])
	}
	if lpy, ok := w.evaluate(k); ok {
		w.settle(k, lpy, lnU < float64(w.N-1)*math.Log(z)+lpy-w.lp[k])
	}
}

// deMove is the differential-evolution move of walker k: four draws per update, always.
func (w *walkers) deMove(k int, r *rng.Stream) {
	ia := r.Intn(w.on)
	ib := r.Intn(w.on - 1)
	if ib >= ia {
		ib++
	}
	g := w.gamma
	if r.Float64() < 0.1 {
		g = 1
	}
	lnU := math.Log(r.Float64())
	xk, xa, xb, yk := w.row(w.x, k), w.row(w.x, w.olo+ia), w.row(w.x, w.olo+ib), w.row(w.y, k)
	for d := range yk {
		yk[d] = xk[d] + g*(xa[d]-xb[d])
	}
	if lpy, ok := w.evaluate(k); ok {
		w.settle(k, lpy, lnU < lpy-w.lp[k])
	}
}

// guideMove is the independence move of walker k: N + Nu + 1 draws per update, always.
func (w *walkers) guideMove(k int, r *rng.Stream) {
	g := w.guide
	xk, yk, d := w.row(w.x, k), w.row(w.y, k), w.row(w.gbuf, k)
	g.draw(yk, r)
	lnU := math.Log(r.Float64())
	if lpy, ok := w.evaluate(k); ok {
		w.settle(k, lpy, lnU < lpy-w.lp[k]+g.logDensity(xk, d)-g.logDensity(yk, d))
	}
}

// evaluate is logp at walker k's proposal (row k of y); a non-finite value rejects it.
func (w *walkers) evaluate(k int) (float64, bool) {
	lpy := w.logp(w.row(w.y, k))
	if math.IsNaN(lpy) || math.IsInf(lpy, 0) {
		w.accepted[k] = false
		return 0, false
	}
	return lpy, true
}

// settle records the decision on walker k's proposal of log-probability lpy, moving the
// walker there when it is accepted.
func (w *walkers) settle(k int, lpy float64, accept bool) {
	w.accepted[k] = accept
	if accept {
		copy(w.x[k*w.N:(k+1)*w.N], w.y[k*w.N:(k+1)*w.N])
		w.lp[k] = lpy
	}
}

// serial runs block(i) for i in [0, n) in order on the caller: Options.Parallel's default.
func serial(n int, block func(i int)) {
	for i := 0; i < n; i++ {
		block(i)
	}
}
