package fit

import (
	"context"
	"math"
	"slices"
	"strings"
	"testing"

	"dipline/steps/internal/sampler"
	"dipline/steps/internal/signals"
)

// A chain kept within a bound is stored every Thin-th step (sampler.Schedule.Keep); the fit
// must read it in steps. The same 1200 steps are sampled storing every step and keeping 256
// stored steps (spacing 8 at the end; the guides come after 2000 steps, so both runs make
// the same draws): the kept run's τ agrees with the full run's, its thinning is a multiple
// of the spacing, and the draws it keeps are the full chains' states at the steps its
// figures name (burn-in, then every thin-th step).
func TestTheFitReadsAThinnedChainInSteps(t *testing.T) {
	if testing.Short() {
		t.Skip("-short skips the 1,200-step fits")
	}
	lc := synthetic(hot, 7, 800e-6, 3)
	o := Options{Signals: []signals.Signal{start(hot)}, MaxSteps: 1200, Ensembles: 2, Window: defaultWindow, Seed: 7}
	ctx := context.Background()
	sample := func(keep int) (*problem, *sampler.Sampling, []float64, float64) {
		p, err := newProblem(lc, o)
		if err != nil {
			t.Fatal(err)
		}
		best, bestLP := p.bestFit(ctx, o)
		s := schedule(o)
		s.Keep = keep
		run, err := sampler.RunEnsembles(ctx, p.m.LogPost, p.walkerStarts(best, o), s)
		if err != nil {
			t.Fatal(err)
		}
		return p, run, best, bestLP
	}
	_, full, _, _ := sample(0)
	p, run, best, bestLP := sample(256)
	if run.Thin != 8 || run.Steps != 1200 || run.Burn != 400 || full.Thin != 1 {
		t.Fatalf("spacing %d over %d steps, burn-in %d (full run: spacing %d); want 8, 1200, 400, 1", run.Thin, run.Steps, run.Burn, full.Thin)
	}
	thin := p.noteSampling(run)
	p.diagnose(run, thin)
	p.keepSamples(run, thin, best, bestLP)
	art := p.art
	t.Run("τ in steps agrees with the full chain's", func(t *testing.T) {
		// The same draws, every 8th of them, for τ of tens of steps: within 10 % (our bound;
		// the sampler's tests check the estimate on thinned series against AR(1) values).
		for i, d := range art.Diag {
			if want := full.Taus[i]; math.Abs(d.Tau/want-1) > 0.1 {
				t.Errorf("%s: τ = %.4g steps from the kept chain, %.4g from every step", art.Names[i], d.Tau, want)
			}
		}
	})
	t.Run("the thinning is τ/2 in whole stored steps", func(t *testing.T) {
		half := max(1, int(run.MaxTau()/2))
		if art.Thin%run.Thin != 0 || art.Thin > max(half, run.Thin) || art.Thin <= half-run.Thin {
			t.Errorf("thinned by %d steps for τ/2 = %d and a spacing of %d", art.Thin, half, run.Thin)
		}
		if art.Thin != half && !slices.ContainsFunc(p.notes, func(n string) bool { return strings.Contains(n, "whole stored steps, 8 steps apart") }) {
			t.Errorf("thinned by %d for τ/2 = %d and the notes do not say why: %q", art.Thin, half, p.notes)
		}
		if art.Steps != 1200 || art.Burn != 400 {
			t.Errorf("figures: %d steps, burn-in %d", art.Steps, art.Burn)
		}
	})
	t.Run("the kept draws are the full chains' states at the steps the figures name", func(t *testing.T) {
		var want []float64
		for _, ch := range full.Chains {
			// The first stored step after burn-in is after (400/8+1)·8 = 408 steps.
			for u := (run.Burn/run.Thin)*run.Thin + art.Thin; u <= run.Steps; u += art.Thin {
				for w := 0; w < ch.Walkers; w++ {
					want = append(want, p.m.row(ch.At(u-1, w))...)
				}
			}
		}
		if len(want) == 0 || !slices.Equal(art.Samples, want) {
			t.Errorf("%d kept values, want %d from the full chains", len(art.Samples), len(want))
		}
	})
}
