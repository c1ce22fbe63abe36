package sampler

import (
	"context"
	"math"
	"slices"
	"testing"
)

// ar1Chunks feeds walkers AR(1) series (ar1) of n steps into a chain of one parameter, in
// runs of chunk steps as RunEnsembles does, keeping at most keep stored steps; it returns
// the chain and the series in full.
func ar1Chunks(phi float64, walkers, n, chunk, keep int) (*Chain, [][]float64) {
	full := ar1(phi, walkers, n, 21)
	acc := &Chain{Walkers: walkers, Dim: 1, Thin: 1, Accepted: make([]int, walkers)}
	for total := 0; total < n; total += chunk {
		m := min(chunk, n-total)
		c := &Chain{Walkers: walkers, Dim: 1, Thin: 1, Stored: m, Steps: m,
			Samples: make([]float64, m*walkers), LogProb: make([]float64, m*walkers), Accepted: make([]int, walkers)}
		for j := 0; j < m; j++ {
			for w := range full {
				c.Samples[j*walkers+w] = full[w][total+j]
			}
		}
		appendChain(acc, c, total, keep)
	}
	return acc, full
}

// A chain kept within 2048 stored steps over 60,000 steps of AR(1) series with φ = 0.99
// is stored every 32nd step, far below τ = (1+φ)/(1−φ) = 199 (standard; from memory), and
// τ measured on the stored steps times their spacing is that τ: thinning by T multiplies
// each lag by T and leaves ρ(T·t) = φ^(T·t), so T·τ(φ^T) = T(1+φ^T)/(1−φ^T) ≈ 199 + T²/600
// (our arithmetic), a 1 % excess at T = 32. The bound allows four of Sokal's standard
// errors of the estimate on the stored steps, √(2(2M+1)/n) for n draws and window M (Sokal
// 1997; from memory), besides that excess.
func TestAKeptChainKeepsTheAutocorrelationTimeOfAR1(t *testing.T) {
	const phi, walkers, n, keep = 0.99, 64, 60000, 2048
	acc, full := ar1Chunks(phi, walkers, n, 250, keep)
	t.Run("the chain never holds more than the bound", func(t *testing.T) {
		if acc.Stored > keep || cap(acc.Samples) > keep*walkers || acc.Thin != 32 || acc.Stored != n/32 || acc.Steps != n {
			t.Errorf("stored %d steps (capacity %d values) every %d of %d; want %d every 32", acc.Stored, cap(acc.Samples), acc.Thin, acc.Steps, n/32)
		}
	})
	t.Run("stored step s is the state after (s+1)·Thin steps", func(t *testing.T) {
		for s := 0; s < acc.Stored; s++ {
			for w := range full {
				if acc.At(s, w)[0] != full[w][(s+1)*acc.Thin-1] {
					t.Fatalf("stored step %d, walker %d is not step %d", s, w, (s+1)*acc.Thin-1)
				}
			}
		}
	})
	t.Run("τ of the stored steps times their spacing is (1+φ)/(1−φ)", func(t *testing.T) {
		ac, err := AutoCorrTime(acc.Series(0, 0), 0)
		if err != nil {
			t.Fatal(err)
		}
		want, T := (1+phi)/(1-phi), float64(acc.Thin)
		got := ac.Tau * T
		excess := T * (1 + math.Pow(phi, T)) / (1 - math.Pow(phi, T)) / want
		rel := 4 * math.Sqrt(2*float64(2*ac.Window+1)/float64(walkers*acc.Stored))
		if math.Abs(got/want-excess) > rel || !ac.Trusted {
			t.Errorf("τ = %.4g steps (%.4g stored steps × %v, trusted %v), want %.4g × %.4f ± %.1f %%", got, ac.Tau, T, ac.Trusted, want, excess, 100*rel)
		}
	})
}

// A run of 20,000 steps on a 10-D Gaussian with the stretch move alone (τ about 150 steps,
// measured here) keeps at most 2048 stored steps per chain, every one of them the state
// the full chain holds at the same step, and τ measured on them within 5 % of τ measured
// on every step: both estimates read the same draws, and the thinning's own excess at a
// spacing of 16 steps is (T/τ)²/3 ≈ 0.4 % (TestAKeptChainKeepsTheAutocorrelationTimeOfAR1);
// measured, they differ by at most 1.5 % (our bound, deterministic draws).
func TestLongRunsKeepTheirChainsWithinTheBound(t *testing.T) {
	if testing.Short() {
		t.Skip("20,000 steps of two ensembles, twice")
	}
	mu, sd := make([]float64, 10), make([]float64, 10)
	for i := range sd {
		sd[i] = 1
	}
	g := kms(mu, sd, 0.5)
	s := testSchedule(20000, 4)
	// Never guided and never stopping: the draws then do not depend on what is stored.
	s.DEShare, s.GuideAfter, s.LengthPerTau = 0, math.Inf(1), math.Inf(1)
	run := func(keep int) *Sampling {
		s.Keep = keep
		r, err := RunEnsembles(context.Background(), g.logp, startsAround(2, 20, g.mu), s)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	all, kept := run(0), run(2048)
	t.Run("the chains hold at most the bound, evenly spaced", func(t *testing.T) {
		for e, ch := range kept.Chains {
			if ch.Stored > 2048 || cap(ch.Samples) > 2048*ch.Walkers*ch.Dim || ch.Thin != 16 || ch.Stored != 20000/16 || kept.Thin != 16 {
				t.Errorf("ensemble %d: %d stored steps every %d (capacity %d values)", e, ch.Stored, ch.Thin, cap(ch.Samples))
			}
		}
	})
	t.Run("each stored step is the full chain's state at that step", func(t *testing.T) {
		for e, ch := range kept.Chains {
			for i := 0; i < ch.Stored; i++ {
				if !slices.Equal(ch.At(i, 3), all.Chains[e].At((i+1)*ch.Thin-1, 3)) {
					t.Fatalf("ensemble %d, stored step %d differs from step %d", e, i, (i+1)*ch.Thin-1)
				}
			}
		}
	})
	t.Run("τ in steps agrees with τ on every step within 5 %", func(t *testing.T) {
		if kept.Burn != all.Burn || kept.Burn != 20000/3 {
			t.Fatalf("burn-in %d and %d steps, want %d", kept.Burn, all.Burn, 20000/3)
		}
		if all.MaxTau() < 5*16 {
			t.Fatalf("τ = %.3g steps is not well above the spacing of 16; the test checks nothing", all.MaxTau())
		}
		for p, want := range all.Taus {
			if got := kept.Taus[p]; math.Abs(got/want-1) > 0.05 {
				t.Errorf("parameter %d: τ = %.4g steps from the kept chain, %.4g from every step", p, got, want)
			}
		}
	})
}
