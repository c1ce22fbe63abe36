package sampler

import (
	"context"
	"math"
	"testing"

	"dipline/steps/internal/rng"
)

// ar1 returns walkers series of length n of x_t = φ x_{t−1} + ε_t, ε ~ N(0,1), each started
// from the stationary distribution N(0, 1/(1−φ²)).
func ar1(phi float64, walkers, n int, seed uint64) [][]float64 {
	out := make([][]float64, walkers)
	for w := range out {
		r := rng.Derive(seed, "ar1", uint64(w))
		s := make([]float64, n)
		s[0] = r.Normal() / math.Sqrt(1-phi*phi)
		for i := 1; i < n; i++ {
			s[i] = phi*s[i-1] + r.Normal()
		}
		out[w] = s
	}
	return out
}

// For an AR(1) process ρ(t) = φ^t, so τ_int = (1+φ)/(1−φ) (standard, common practice;
// from memory).
// Sokal (1997) gives the variance of the windowed estimate as var(τ̂) ≈ 2(2M+1)/n · τ² for
// n draws and window M (from memory); we allow four of those standard errors.
func TestAutocorrelationTimeOfAR1(t *testing.T) {
	cases := []struct {
		name string
		phi  float64
	}{
		{"φ = 0.8 gives τ = 9", 0.8},
		{"φ = 0.5 gives τ = 3", 0.5},
		{"φ = 0 (white noise) gives τ = 1", 0},
	}
	const walkers, n = 4, 1 << 18
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			want := (1 + c.phi) / (1 - c.phi)
			ac, err := AutoCorrTime(ar1(c.phi, walkers, n, 8), 0)
			if err != nil {
				t.Fatal(err)
			}
			rel := 4 * math.Sqrt(2*float64(2*ac.Window+1)/float64(walkers*n))
			if math.Abs(ac.Tau/want-1) > rel {
				t.Errorf("τ = %.4f, want %.4f ± %.1f %%", ac.Tau, want, 100*rel)
			}
			if float64(ac.Window) < DefaultWindowFactor*ac.Tau || !ac.Trusted {
				t.Errorf("window %d for τ = %.3f (trusted %v)", ac.Window, ac.Tau, ac.Trusted)
			}
		})
	}
}

func TestAutocorrelationTimeFlagsShortChains(t *testing.T) {
	// φ = 0.99 has τ = 199 (same formula): 2000 steps are 10 τ, far below 50 τ.
	ac, err := AutoCorrTime(ar1(0.99, 2, 2000, 1), 0)
	if err != nil {
		t.Fatal(err)
	}
	if ac.Trusted {
		t.Errorf("τ = %.1f from 2000 steps reported as trusted", ac.Tau)
	}
}

func TestAutocorrelationTimeRejectsBadSeries(t *testing.T) {
	cases := map[string][][]float64{
		"no series is an error":             nil,
		"a one-step series is an error":     {{1}},
		"ragged series are an error":        {{1, 2, 3}, {1, 2}},
		"only constant series are an error": {{2, 2, 2, 2}, {5, 5, 5, 5}},
	}
	for name, s := range cases {
		t.Run(name, func(t *testing.T) {
			if _, err := AutoCorrTime(s, 0); err == nil {
				t.Error("no error")
			}
		})
	}
}

func TestEffectiveSamples(t *testing.T) {
	// Definition (Sokal 1997): 32 walkers × 1000 steps at τ = 40 are 800 independent draws.
	if got := EffectiveSamples(32, 1000, 40); got != 800 {
		t.Errorf("ESS = %v, want 800", got)
	}
}

// Golden values from testdata/rhat_golden.py (numpy + scipy, /usr/bin/python3).
var rhatChains = [][]float64{
	{0.1, 1.3, -0.4, 2.2, 0.9, 0.0, 1.1, -1.7, 0.5},
	{1.0, 2.5, 1.9, 3.3, 0.8, 2.2, 1.6, 2.9, 1.0},
	{-0.5, 0.2, 0.0, 0.7, -1.2, 0.9, 0.3, 0.1, -0.8},
}

func TestRhatMatchesReferenceValues(t *testing.T) {
	cases := []struct {
		name string
		f    func([][]float64) (float64, error)
		want float64
	}{
		{"split R-hat matches numpy", SplitRhat, 1.362039397383848},
		{"rank-normalised R-hat matches scipy ranks and quantiles", RankRhat, 1.354750656415315},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := c.f(rhatChains)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-c.want) > 1e-12 {
				t.Errorf("R-hat = %.15f, want %.15f", got, c.want)
			}
		})
	}
	t.Run("chains shorter than 4 draws are an error", func(t *testing.T) {
		if _, err := SplitRhat([][]float64{{1, 2, 3}, {1, 2, 3}}); err == nil {
			t.Error("no error")
		}
	})
}

// R-hat across independently seeded ensembles: near 1 once converged (Vehtari et al. 2021
// recommend R̂ < 1.01), clearly above 1.1 for ensembles started apart and run briefly
// (Gelman et al. 2013 BDA3 §11.4 use 1.1 as the classic threshold).
func TestEnsembleRhatSeparatesConvergedFromUnmixed(t *testing.T) {
	g := kms([]float64{0, 1}, []float64{1, 3}, 0.8)
	run := func(centre []float64, seed uint64, steps int) *Chain {
		ch, err := Run(context.Background(), g.logp, ball(16, centre, 0.1, seed), Options{Steps: steps, Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		return ch
	}
	t.Run("four converged ensembles give R-hat below 1.01", func(t *testing.T) {
		var es []*Chain
		for seed := uint64(1); seed <= 4; seed++ {
			es = append(es, run(g.mu, seed, 3000))
		}
		for p := 0; p < 2; p++ {
			r, err := EnsembleRhat(es, p, 500)
			if err != nil {
				t.Fatal(err)
			}
			if !(r < 1.01) {
				t.Errorf("parameter %d: R-hat = %.4f", p, r)
			}
		}
	})
	t.Run("ensembles started apart and run briefly give R-hat above 1.1", func(t *testing.T) {
		var es []*Chain
		for i, c := range []float64{-20, 0, 20} {
			es = append(es, run([]float64{c, c}, uint64(i+1), 20))
		}
		for p := 0; p < 2; p++ {
			r, err := EnsembleRhat(es, p, 0)
			if err != nil {
				t.Fatal(err)
			}
			if !(r > 1.1) {
				t.Errorf("parameter %d: R-hat = %.4f", p, r)
			}
		}
	})
	t.Run("one ensemble is an error", func(t *testing.T) {
		if _, err := EnsembleRhat([]*Chain{run(g.mu, 1, 10)}, 0, 0); err == nil {
			t.Error("no error")
		}
	})
}

func TestQuantileInterpolatesOrderStatistics(t *testing.T) {
	// Type-7 quantiles of 1…5 (Hyndman & Fan 1996; numpy.percentile's default, from memory):
	// p 0 → 1, 0.25 → 2, 0.5 → 3, 0.9 → 4.6, 1 → 5.
	s := []float64{1, 2, 3, 4, 5}
	for p, want := range map[float64]float64{0: 1, 0.25: 2, 0.5: 3, 0.9: 4.6, 1: 5} {
		if got := Quantile(s, p); math.Abs(got-want) > 1e-12 {
			t.Errorf("Quantile(%v) = %v, want %v", p, got, want)
		}
	}
	if !math.IsNaN(Quantile(nil, 0.5)) {
		t.Error("the quantile of no draws is not NaN")
	}
}
