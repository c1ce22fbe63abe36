package sampler

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"testing"
)

// testSchedule is a short schedule for cheap targets: the values are the test's choices,
// small enough that both phases run within a few thousand steps.
func testSchedule(maxSteps int, seed uint64) Schedule {
	return Schedule{MaxSteps: maxSteps, Chunk: 100, LengthPerTau: 50, BurnShare: 3,
		GuideAfter: 10, MinFirstPhase: 400, GuideGain: 2,
		DEShare: 0.8, GuidedDEShare: 0.4, GuideShare: 0.5, Seed: seed, SeedLabel: "sampler-test/ensemble"}
}

// startsAround returns n ensembles of k walkers each, in a small ball around centre, each
// ensemble from its own seed.
func startsAround(n, k int, centre []float64) [][][]float64 {
	out := make([][][]float64, n)
	for e := range out {
		out[e] = ball(k, centre, 0.1, uint64(100+e))
	}
	return out
}

// A correlated 4-D Gaussian has τ of a few tens of steps: the schedule must stop well
// before a cap of 20,000 steps, with the kept chains at least 50τ long, after fitting the
// guides (the first phase reaches 10τ in well under 20,000 steps).
func TestEnsemblesStopOnceTheChainsAreLongEnough(t *testing.T) {
	g := kms([]float64{0, 1, 2, 3}, []float64{1, 1, 2, 2}, 0.5)
	s := testSchedule(20000, 3)
	run, err := RunEnsembles(context.Background(), g.logp, startsAround(2, 8, g.mu), s)
	if err != nil {
		t.Fatal(err)
	}
	t.Run("sampling stops before the cap", func(t *testing.T) {
		if run.Steps >= s.MaxSteps {
			t.Errorf("ran to the cap of %d steps (τ = %.3g)", run.Steps, run.MaxTau())
		}
	})
	t.Run("the kept chains are 50 autocorrelation times long", func(t *testing.T) {
		if !run.Trusted || float64(run.Steps-run.Burn) < s.LengthPerTau*run.MaxTau() {
			t.Errorf("%d steps after a burn-in of %d, τ = %.3g (trusted %v)", run.Steps, run.Burn, run.MaxTau(), run.Trusted)
		}
	})
	t.Run("the ensembles got their guides", func(t *testing.T) {
		if !run.Guided || run.Burn < s.MinFirstPhase {
			t.Errorf("guided %v, burn-in %d steps (the first phase is at least %d)", run.Guided, run.Burn, s.MinFirstPhase)
		}
	})
	t.Run("every chain holds every step", func(t *testing.T) {
		for e, ch := range run.Chains {
			if ch.Stored != run.Steps || ch.Steps != run.Steps || len(ch.Samples) != run.Steps*ch.Walkers*ch.Dim {
				t.Errorf("ensemble %d: %d stored of %d steps, %d values", e, ch.Stored, run.Steps, len(ch.Samples))
			}
		}
	})
}

// A cap reached in the first phase leaves the first third of each chain as burn-in.
func TestACapInTheFirstPhaseBurnsAThird(t *testing.T) {
	g := kms([]float64{0, 1}, []float64{1, 2}, 0.9)
	run, err := RunEnsembles(context.Background(), g.logp, startsAround(2, 4, g.mu), testSchedule(300, 1))
	if err != nil {
		t.Fatal(err)
	}
	if run.Steps != 300 || run.Burn != 100 || run.Guided {
		t.Errorf("steps %d, burn-in %d, guided %v; want 300, 100, false", run.Steps, run.Burn, run.Guided)
	}
}

// Determinism (DESIGN.md §Keys): the streams depend on the seed, the ensemble and the
// chunk, never on the worker count; the caller's starts are left as they were.
func TestEnsemblesAreIdenticalForAnyWorkerCount(t *testing.T) {
	g := kms([]float64{0, 1, 2}, []float64{1, 2, 1}, 0.7)
	starts := startsAround(3, 6, g.mu)
	before := slices.Clone(starts[0][0])
	run := func(par func(int, func(int)), seed uint64) (*Sampling, []uint64) {
		s := testSchedule(1500, seed)
		s.Parallel = par
		r, err := RunEnsembles(context.Background(), g.logp, starts, s)
		if err != nil {
			t.Fatal(err)
		}
		var bits []uint64
		for _, ch := range r.Chains {
			bits = append(bits, chainBits(ch)...)
		}
		return r, bits
	}
	want, wantBits := run(nil, 8)
	if !want.Guided {
		t.Fatal("the run never reached the guided phase; the test checks only the first")
	}
	for _, w := range []int{1, 2, 4} {
		t.Run("a pool of "+string(rune('0'+w))+" workers gives the serial chains", func(t *testing.T) {
			got, bits := run(workers(w), 8)
			if !equalBits(bits, wantBits) || got.Burn != want.Burn || got.Steps != want.Steps || !slices.Equal(got.Taus, want.Taus) {
				t.Errorf("%d workers differ from the serial run", w)
			}
		})
	}
	t.Run("another seed gives other chains", func(t *testing.T) {
		if _, bits := run(nil, 9); equalBits(bits, wantBits) {
			t.Error("seeds 8 and 9 gave the same chains")
		}
	})
	t.Run("the starts are unchanged", func(t *testing.T) {
		if !slices.Equal(starts[0][0], before) {
			t.Error("RunEnsembles changed the caller's starts")
		}
	})
}

func TestBadSchedulesAreErrors(t *testing.T) {
	flat := func([]float64) float64 { return 0 }
	good := [][]float64{{0}, {1}}
	cases := []struct {
		name   string
		starts [][][]float64
		change func(*Schedule)
	}{
		{"no ensembles", nil, func(*Schedule) {}},
		{"a chunk of 0 steps", [][][]float64{good}, func(s *Schedule) { s.Chunk = 0 }},
		{"a burn-in of the whole chain", [][][]float64{good}, func(s *Schedule) { s.BurnShare = 1 }},
		{"ensembles of different sizes", [][][]float64{good, {{0}, {1}, {2}}}, func(*Schedule) {}},
		{"an empty ensemble", [][][]float64{good, {}}, func(*Schedule) {}},
		{"too few walkers for Run", [][][]float64{{{0, 0}, {1, 1}}}, func(*Schedule) {}},
	}
	for _, c := range cases {
		t.Run(c.name+" is a configuration error", func(t *testing.T) {
			s := testSchedule(200, 1)
			s.DEShare = 0 // two walkers cannot make a differential-evolution move
			c.change(&s)
			if _, err := RunEnsembles(context.Background(), flat, c.starts, s); !errors.Is(err, ErrConfig) {
				t.Errorf("err = %v, want ErrConfig", err)
			}
		})
	}
}

// Progress only watches: it climbs to the total without going back, and the chains are the
// same bits with it and without it.
func TestProgressWatchesWithoutChangingTheChains(t *testing.T) {
	g := kms([]float64{0, 1, 2, 3}, []float64{1, 1, 2, 2}, 0.5)
	for _, maxSteps := range []int{20000, 300} { // stops early on convergence; runs to the cap
		s := testSchedule(maxSteps, 3)
		plain, err := RunEnsembles(context.Background(), g.logp, startsAround(2, 8, g.mu), s)
		if err != nil {
			t.Fatal(err)
		}
		type call struct{ done, total int }
		var calls []call
		s.Progress = func(done, total int) { calls = append(calls, call{done, total}) }
		watched, err := RunEnsembles(context.Background(), g.logp, startsAround(2, 8, g.mu), s)
		if err != nil {
			t.Fatal(err)
		}
		t.Run(fmt.Sprintf("progress climbs to the total with a cap of %d steps", maxSteps), func(t *testing.T) {
			if len(calls) == 0 {
				t.Fatal("no progress reported")
			}
			for i, c := range calls {
				if c.total != maxSteps*2 || c.done > c.total || (i > 0 && c.done < calls[i-1].done) {
					t.Fatalf("call %d: %d of %d after %v", i, c.done, c.total, calls[max(0, i-1)])
				}
			}
			if last := calls[len(calls)-1]; last.done != last.total {
				t.Errorf("the last call is %d of %d", last.done, last.total)
			}
		})
		t.Run(fmt.Sprintf("the chains are the same with progress reported, cap %d", maxSteps), func(t *testing.T) {
			if plain.Steps != watched.Steps || plain.Burn != watched.Burn || !slices.Equal(plain.Taus, watched.Taus) {
				t.Fatalf("steps %d/%d, burn %d/%d", plain.Steps, watched.Steps, plain.Burn, watched.Burn)
			}
			for e := range plain.Chains {
				if !slices.Equal(plain.Chains[e].Samples, watched.Chains[e].Samples) || !slices.Equal(plain.Chains[e].LogProb, watched.Chains[e].LogProb) {
					t.Errorf("ensemble %d drew other samples", e)
				}
			}
		})
	}
}

// Sampling that runs past the end its first looks foretold still moves the line, towards
// the cap, instead of standing just short of the total until it stops.
func TestProgressPastTheForeseenEndKeepsMoving(t *testing.T) {
	var got []int
	r := &scheduled{Schedule: Schedule{MaxSteps: 1000, Progress: func(done, total int) { got = append(got, done) }},
		chains: make([]*Chain, 2), expectEnd: 200}
	for _, done := range []int{200, 400, 1000, 1600, 1999} { // over both ensembles; the end foreseen is 400
		r.progress(done)
	}
	// foreseenShare of the cap at the foreseen end, then a tenth more spread over the
	// 1600 updates between it and the cap of 2000.
	want := []int{900, 1800, 1875, 1950, 1999}
	if !slices.Equal(got, want) {
		t.Errorf("progress %v, want %v", got, want)
	}
}
