package sampler

import (
	"context"
	"errors"
	"math"
	"slices"
	"sync"
	"sync/atomic"
	"testing"

	"gonum.org/v1/gonum/mat"

	"dipline/steps/internal/rng"
)

// workers returns a Parallel function that spreads blocks over w goroutines, handing out
// block indices in whatever order the scheduler picks.
func workers(w int) func(n int, block func(i int)) {
	return func(n int, block func(i int)) {
		var next atomic.Int64
		var wg sync.WaitGroup
		for g := 0; g < w; g++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for {
					i := int(next.Add(1) - 1)
					if i >= n {
						return
					}
					block(i)
				}
			}()
		}
		wg.Wait()
	}
}

// gaussian is a multivariate normal with mean mu and covariance cov.
type gaussian struct {
	mu   []float64
	cov  *mat.SymDense
	prec *mat.SymDense
}

// kms returns the covariance s_i s_j ρ^|i−j| (a Kac–Murdock–Szegő correlation matrix, positive
// definite for |ρ| < 1; Kac, Murdock & Szegő 1953).
func kms(mu, s []float64, rho float64) gaussian {
	n := len(s)
	cov := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			cov.SetSym(i, j, s[i]*s[j]*math.Pow(rho, math.Abs(float64(i-j))))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(cov) {
		panic("test covariance not positive definite")
	}
	prec := mat.NewSymDense(n, nil)
	if err := ch.InverseTo(prec); err != nil {
		panic(err)
	}
	return gaussian{mu, cov, prec}
}

// logp is −½ (x−μ)ᵀ P (x−μ), allocation-free for dimensions ≤ 16.
func (g gaussian) logp(x []float64) float64 {
	var d [16]float64
	n := len(g.mu)
	for i := 0; i < n; i++ {
		d[i] = x[i] - g.mu[i]
	}
	var q float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			q += d[i] * g.prec.At(i, j) * d[j]
		}
	}
	return -0.5 * q
}

// ball returns k starting points around centre with spread width, from seed.
func ball(k int, centre []float64, width float64, seed uint64) [][]float64 {
	r := rng.New(seed)
	out := make([][]float64, k)
	for w := range out {
		out[w] = make([]float64, len(centre))
		for i, c := range centre {
			out[w][i] = c + width*r.Normal()
		}
	}
	return out
}

// A correlated 5-D Gaussian: every mean and covariance entry is recovered within five Monte
// Carlo standard errors. The standard errors use the measured τ: SE(mean_i) =
// sqrt(Σ_ii τ/(K n)), SE(Σ̂_ij) = sqrt((Σ_ii Σ_jj + Σ_ij²) τ/(K n)) (normal-theory variance
// of a sample covariance, e.g. Anderson 2003, An Introduction to Multivariate Statistical
// Analysis, §3.3; from memory), with τ the largest over the parameters.
// moveMix is one sampler under test: the shares of differential-evolution and independence
// (guide) steps, the rest being stretch steps.
type moveMix struct {
	name                string
	deShare, guideShare float64
}

// moveMixes are the samplers under test: the pure stretch move, the mixture with
// differential-evolution steps, and the mixture with independence steps that the fit uses
// once it has a guide.
var moveMixes = []moveMix{
	{"the stretch move", 0, 0},
	{"stretch and differential-evolution moves", 0.8, 0},
	{"stretch, differential-evolution and guide moves", 0.4, 0.5},
}

// options returns the run's options for mix, with guide for its independence steps.
func (mix moveMix) options(steps int, seed uint64, guide *Guide) Options {
	o := Options{Steps: steps, Seed: seed, DEShare: mix.deShare, GuideShare: mix.guideShare}
	if mix.guideShare > 0 {
		o.Guide = guide
	}
	return o
}

// offGuide is a deliberately poor guide for g: its centre is half a standard deviation off
// in every parameter, its scales are 0.8 of the marginal ones and it ignores correlations.
// The independence move stays valid with it (Tierney 1994); only its acceptance suffers.
func offGuide(g gaussian) *Guide {
	n := len(g.mu)
	mean := make([]float64, n)
	cov := mat.NewSymDense(n, nil)
	for i := range mean {
		sd := math.Sqrt(g.cov.At(i, i))
		mean[i] = g.mu[i] + 0.5*sd
		cov.SetSym(i, i, 0.64*sd*sd)
	}
	gd, err := NewGuide(mean, cov, GuideNu)
	if err != nil {
		panic(err)
	}
	return gd
}

func TestRecoversMeanAndCovarianceOfCorrelatedGaussian(t *testing.T) {
	for _, mix := range moveMixes {
		t.Run(mix.name, func(t *testing.T) { recoversGaussian(t, mix) })
	}
}

func recoversGaussian(t *testing.T, mix moveMix) {
	g := kms([]float64{1, -2, 0.5, 3, 0}, []float64{1, 2, 0.5, 3, 1}, 0.6)
	const K, steps, burn = 32, 6000, 1000
	ch, err := Run(context.Background(), g.logp, ball(K, g.mu, 0.1, 11), mix.options(steps, 2026, offGuide(g)))
	if err != nil {
		t.Fatal(err)
	}
	N := len(g.mu)
	tau := 0.0
	for p := 0; p < N; p++ {
		ac, err := AutoCorrTime(ch.Series(p, burn), 0)
		if err != nil {
			t.Fatal(err)
		}
		if !ac.Trusted {
			t.Fatalf("parameter %d: τ = %.1f not trusted over %d steps", p, ac.Tau, steps-burn)
		}
		tau = math.Max(tau, ac.Tau)
	}
	t.Logf("largest τ %.1f steps", tau)
	n := float64(steps - burn)
	draws := float64(K) * n
	mean := make([]float64, N)
	for s := burn; s < ch.Stored; s++ {
		for w := 0; w < K; w++ {
			for i, v := range ch.At(s, w) {
				mean[i] += v / draws
			}
		}
	}
	cov := make([]float64, N*N)
	for s := burn; s < ch.Stored; s++ {
		for w := 0; w < K; w++ {
			x := ch.At(s, w)
			for i := 0; i < N; i++ {
				for j := 0; j < N; j++ {
					cov[i*N+j] += (x[i] - mean[i]) * (x[j] - mean[j]) / draws
				}
			}
		}
	}
	for i := 0; i < N; i++ {
		se := math.Sqrt(g.cov.At(i, i) * tau / draws)
		if d := mean[i] - g.mu[i]; math.Abs(d) > 5*se {
			t.Errorf("mean[%d] = %.4f, want %.4f ± %.4f (5 SE, τ = %.1f)", i, mean[i], g.mu[i], 5*se, tau)
		}
		for j := 0; j < N; j++ {
			want := g.cov.At(i, j)
			se := math.Sqrt((g.cov.At(i, i)*g.cov.At(j, j) + want*want) * tau / draws)
			if d := cov[i*N+j] - want; math.Abs(d) > 5*se {
				t.Errorf("cov[%d][%d] = %.4f, want %.4f ± %.4f (5 SE)", i, j, cov[i*N+j], want, 5*se)
			}
		}
	}
	// Stretch-move acceptance on a 5-D Gaussian with a = 2 lies well inside 0.2–0.8
	// (Foreman-Mackey et al. 2013 §4 recommend 0.2–0.5 as healthy; common practice).
	for w, f := range ch.AcceptanceFraction(nil) {
		if f < 0.2 || f > 0.8 {
			t.Errorf("walker %d acceptance %.3f outside 0.2–0.8", w, f)
		}
	}
}

// The stretch move is affine invariant (Goodman & Weare 2010 §2): sampling p(x) from start X
// and p(A⁻¹y) from AX, with the same seed, gives chains related by A. With A scaling one
// axis by 1024 (a power of two) every operation is exact, so the chains agree bit for bit
// over any length. With 1000 they agree only to rounding, and a chain is a chaotic map of its
// state: we measured the difference growing about e-fold every 30 steps (1e-14 of the scale
// after 200 steps, 1e-9 after 400, accept decisions differing by 1200). So the 1000 case is
// checked over 150 steps, to 1e-12 of the axis scale.
//
// The independence move is affine invariant when its guide transforms with the parameters:
// scaling axis 0 by s scales the guide's mean and the first row of its Cholesky factor by s
// (chol(AΣA) = A·L for a diagonal A), as a guide fitted to the scaled samples would.
func TestChainIsAffineInvariant(t *testing.T) {
	for _, mix := range moveMixes {
		t.Run(mix.name, func(t *testing.T) { affineInvariant(t, mix) })
	}
}

func affineInvariant(t *testing.T, mix moveMix) {
	deShare := mix.deShare + mix.guideShare
	g := kms([]float64{0.3, -1, 2}, []float64{1, 0.5, 2}, 0.7)
	init := ball(8, g.mu, 0.2, 5)
	guide := offGuide(g)
	cases := []struct {
		name  string
		scale float64
		steps int
		tol   float64 // on the scaled axis, relative to scale·σ
	}{
		{"scaling an axis by 1024 gives the same chain bit for bit over 2000 steps", 1024, 2000, 0},
		{"scaling an axis by 1000 gives the same chain to 1e-12 over 150 steps", 1000, 150, 1e-12},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			steps := c.steps
			if deShare > 0 && c.tol > 0 {
				// Rounding differences grow faster with the larger DE jumps: measured 1e-9 of
				// the scale after 84 steps, so the inexact case is checked over 60.
				steps = 60
			}
			base, err := Run(context.Background(), g.logp, init, mix.options(steps, 77, guide))
			if err != nil {
				t.Fatal(err)
			}
			scaled := func(y []float64) float64 {
				var x [3]float64
				copy(x[:], y)
				x[0] = y[0] / c.scale
				return g.logp(x[:])
			}
			init2 := make([][]float64, len(init))
			for w, row := range init {
				init2[w] = append([]float64(nil), row...)
				init2[w][0] *= c.scale
			}
			sg := &Guide{Mean: slices.Clone(guide.Mean), Chol: slices.Clone(guide.Chol), Nu: guide.Nu}
			sg.Mean[0] *= c.scale
			for j := range 3 {
				sg.Chol[j] *= c.scale
			}
			got, err := Run(context.Background(), scaled, init2, mix.options(steps, 77, sg))
			if err != nil {
				t.Fatal(err)
			}
			for w := range base.Accepted {
				if got.Accepted[w] != base.Accepted[w] {
					t.Fatalf("walker %d accepted %d moves, unscaled %d", w, got.Accepted[w], base.Accepted[w])
				}
			}
			for i, v := range base.Samples {
				if i%3 == 0 {
					if d := math.Abs(got.Samples[i] - c.scale*v); d > c.tol*c.scale*math.Sqrt(g.cov.At(0, 0)) {
						t.Fatalf("sample %d: %v vs %v scaled", i, got.Samples[i], c.scale*v)
					}
				} else if got.Samples[i] != v {
					t.Fatalf("unscaled axis, sample %d: %v vs %v", i, got.Samples[i], v)
				}
			}
		})
	}
}

func chainBits(c *Chain) []uint64 {
	var out []uint64
	for _, v := range c.Samples {
		out = append(out, math.Float64bits(v))
	}
	for _, v := range c.LogProb {
		out = append(out, math.Float64bits(v))
	}
	for _, a := range c.Accepted {
		out = append(out, uint64(a))
	}
	return out
}

func equalBits(a, b []uint64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// Determinism (DESIGN.md §Keys): each walker draws from its own stream, so the chain is the
// same bytes whatever the number of workers, and the seed does change it.
func TestChainIsIdenticalForAnyWorkerCount(t *testing.T) {
	for _, mix := range moveMixes {
		t.Run(mix.name, func(t *testing.T) { identicalForAnyWorkerCount(t, mix) })
	}
}

func identicalForAnyWorkerCount(t *testing.T, mix moveMix) {
	g := kms([]float64{0, 1, 2, 3}, []float64{1, 1, 2, 2}, 0.5)
	init := ball(12, g.mu, 0.5, 3)
	run := func(par func(int, func(int)), seed uint64) []uint64 {
		o := mix.options(300, seed, offGuide(g))
		o.Parallel, o.Thin = par, 3
		ch, err := Run(context.Background(), g.logp, init, o)
		if err != nil {
			t.Fatal(err)
		}
		if ch.Stored != 100 {
			t.Fatalf("stored %d steps with thin 3 of 300, want 100", ch.Stored)
		}
		return chainBits(ch)
	}
	want := run(nil, 9)
	for _, w := range []int{1, 2, 4} {
		t.Run("a pool of "+string(rune('0'+w))+" workers gives the serial chain", func(t *testing.T) {
			if !equalBits(run(workers(w), 9), want) {
				t.Errorf("chain with %d workers differs from the serial chain", w)
			}
		})
	}
	t.Run("another seed gives another chain", func(t *testing.T) {
		if equalBits(run(nil, 10), want) {
			t.Error("seeds 9 and 10 gave the same chain")
		}
	})
}

func TestProposalsWithNonFiniteLogProbabilityAreRejected(t *testing.T) {
	// A unit Gaussian restricted to the box |x_i| < 1: outside, logp is NaN, −Inf or +Inf
	// in turn; no stored sample may leave the box.
	var calls atomic.Int64
	logp := func(x []float64) float64 {
		for _, v := range x {
			if math.Abs(v) >= 1 {
				switch calls.Add(1) % 3 {
				case 0:
					return math.NaN()
				case 1:
					return math.Inf(-1)
				default:
					return math.Inf(1)
				}
			}
		}
		return -0.5 * (x[0]*x[0] + x[1]*x[1])
	}
	ch, err := Run(context.Background(), logp, ball(6, []float64{0, 0}, 0.3, 1), Options{Steps: 500, Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	if calls.Load() == 0 {
		t.Fatal("no proposal left the box; the test checks nothing")
	}
	for i, v := range ch.Samples {
		if math.Abs(v) >= 1 {
			t.Fatalf("sample value %d = %v left the box", i, v)
		}
	}
	for i, v := range ch.LogProb {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatalf("log-probability %d = %v", i, v)
		}
	}
}

func TestBadConfigurationsAreErrors(t *testing.T) {
	flat := func([]float64) float64 { return 0 }
	cases := []struct {
		name string
		logp func([]float64) float64
		init [][]float64
		opts Options
	}{
		{"fewer walkers than twice the dimension", flat, ball(5, []float64{0, 0, 0}, 1, 1), Options{Steps: 10}},
		{"no walkers", flat, nil, Options{Steps: 10}},
		{"walkers without parameters", flat, [][]float64{{}, {}}, Options{Steps: 10}},
		{"ragged starting points", flat, [][]float64{{0}, {1, 2}}, Options{Steps: 10}},
		{"a NaN starting point", flat, [][]float64{{0}, {math.NaN()}}, Options{Steps: 10}},
		{"all walkers equal in one parameter", flat, [][]float64{{0, 1}, {1, 1}, {2, 1}, {3, 1}}, Options{Steps: 10}},
		{"a start where logp is −Inf", func(x []float64) float64 {
			if x[0] > 0.5 {
				return math.Inf(-1)
			}
			return 0
		}, [][]float64{{0}, {1}}, Options{Steps: 10}},
		{"zero steps", flat, [][]float64{{0}, {1}}, Options{}},
		{"a stretch scale of 1", flat, [][]float64{{0}, {1}}, Options{Steps: 10, Stretch: 1}},
		{"a negative thinning", flat, [][]float64{{0}, {1}}, Options{Steps: 10, Thin: -2}},
		{"a guide share without a guide", flat, [][]float64{{0}, {1}}, Options{Steps: 10, GuideShare: 0.5}},
		{"a guide of another dimension", flat, [][]float64{{0}, {1}}, Options{Steps: 10, GuideShare: 0.5,
			Guide: &Guide{Mean: []float64{0, 0}, Chol: []float64{1, 0, 0, 1}, Nu: 4}}},
		{"guide and DE shares above 1 together", flat, ball(4, []float64{0}, 1, 1), Options{Steps: 10, DEShare: 0.6, GuideShare: 0.5,
			Guide: &Guide{Mean: []float64{0}, Chol: []float64{1}, Nu: 4}}},
	}
	for _, c := range cases {
		t.Run(c.name+" is a configuration error", func(t *testing.T) {
			_, err := Run(context.Background(), c.logp, c.init, c.opts)
			if !errors.Is(err, ErrConfig) {
				t.Errorf("err = %v, want ErrConfig", err)
			}
		})
	}
}

func TestCancellationReturnsTheStepsSoFar(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	opts := Options{Steps: 100, Seed: 1, Progress: func(done, total int) {
		if done == 7 {
			cancel()
		}
	}}
	ch, err := Run(ctx, func(x []float64) float64 { return -x[0] * x[0] }, [][]float64{{0}, {1}}, opts)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
	if ch.Stored != 7 || len(ch.Samples) != 7*2 || len(ch.LogProb) != 7*2 {
		t.Errorf("stored %d steps (%d samples), want 7", ch.Stored, len(ch.Samples))
	}
}

// BenchmarkStep10D reports ensemble steps per second on a cheap 10-D Gaussian with 32
// walkers, serially and with the blocks spread over 2 goroutines.
func BenchmarkStep10D(b *testing.B) {
	mu := make([]float64, 10)
	s := make([]float64, 10)
	for i := range s {
		s[i] = 1 + float64(i)
	}
	logp := func(x []float64) float64 {
		var q float64
		for i, v := range x {
			d := (v - mu[i]) / s[i]
			q += d * d
		}
		return -0.5 * q
	}
	init := ball(32, mu, 0.1, 1)
	for _, bc := range []struct {
		name string
		par  func(int, func(int))
	}{{"serial", nil}, {"2 workers", workers(2)}} {
		b.Run(bc.name, func(b *testing.B) {
			b.ReportAllocs()
			ch, err := Run(context.Background(), logp, init, Options{Steps: b.N, Seed: 1, Parallel: bc.par})
			if err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(ch.Steps)/b.Elapsed().Seconds(), "steps/s")
		})
	}
}
