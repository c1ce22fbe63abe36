package main

import (
	"flag"
	"fmt"
	"runtime"

	"dipline/cache"
	"dipline/workflow"
)

// recomputeFlags are the options of `store verify --recompute`.
type recomputeFlags struct {
	on      bool
	sample  int
	seed    uint64
	seedSet bool
	run     string
	workers int
}

func (r *recomputeFlags) register(fs *flag.FlagSet) {
	fs.BoolVar(&r.on, "recompute", false, "also run stored steps again from their stored inputs and require the same result key, bit for bit")
	fs.IntVar(&r.sample, "sample", 0, "with --recompute, run only this many of the stored steps, chosen by --sample-seed (0: all)")
	fs.Func("sample-seed", "with --sample, the seed that chooses the steps (default: the workflow's seed)", func(s string) error {
		_, err := fmt.Sscan(s, &r.seed)
		r.seedSet = err == nil
		return err
	})
	fs.StringVar(&r.run, "run", "latest", "with --recompute, the run whose steps are run again")
	r.workers = runtime.NumCPU()
	fs.Var((*countFlag)(&r.workers), "workers", "with --recompute, worker tokens shared by the steps and their numerical cores")
}

// storeRecompute proves the run's stored results by computing them again
// (workflow.Recompute), one line per step, and exits 0 when nothing speaks against the store
// and 2 when something does (a result that comes out with other bits, a step key mapped to
// a result its provenance does not name: the store holds what it does not claim).
func (c *cli) storeRecompute(w *workflow.Workflow, store *cache.Store, ro recomputeFlags) int {
	if ro.sample < 0 {
		fmt.Fprintln(c.err, "dipline store verify: --sample must not be negative")
		return exitBadUser
	}
	run, err := store.FindRun(ro.run)
	if err != nil {
		fmt.Fprintln(c.err, "dipline store verify:", err)
		return exitBadUser
	}
	// The run's own command-line settings make its steps the ones that ran.
	if overrides, err := workflow.RunOverrides(run); err != nil {
		fmt.Fprintln(c.err, "dipline store verify:", err)
		return exitBadUser
	} else if len(overrides) > 0 {
		var ok bool
		if w, ok = c.load(w.Path, overrides); !ok {
			return exitBadUser
		}
	}
	seed := w.Seed
	if ro.seedSet {
		seed = ro.seed
	}
	what := "every stored step"
	if ro.sample > 0 {
		what = fmt.Sprintf("a sample of %d stored steps (sample seed %d)", ro.sample, seed)
	}
	fmt.Fprintf(c.out, "computing again %s of run %s, %d workers\n", what, run.ID, ro.workers)
	ctx, stop := interruptible()
	defer stop()
	rep, err := workflow.Recompute(ctx, w, store, workflow.RecomputeOptions{Run: run.ID, Sample: ro.sample,
		Seed: seed, Workers: ro.workers, OnStep: c.printRecomputed})
	if err != nil {
		return c.storeFailed("store verify", err)
	}
	if len(rep.Problems) == 0 {
		fmt.Fprintf(c.out, "checked %d step keys against their provenance and the steps of %d run records: in agreement\n", rep.Mappings, rep.Runs)
	} else {
		fmt.Fprintf(c.out, "checked %d step keys against their provenance and the steps of %d run records:\n", rep.Mappings, rep.Runs)
		for _, p := range rep.Problems {
			fmt.Fprintf(c.out, "  %s\n", p)
		}
	}
	same := rep.Count(workflow.RecomputeSame)
	ran := len(rep.Steps) - rep.Count(workflow.RecomputeCannot) - rep.Count(workflow.RecomputeDisagrees)
	fmt.Fprintf(c.out, "%d of %d steps run again gave the same bits", same, ran)
	if n := rep.Count(workflow.RecomputeCannot); n > 0 {
		fmt.Fprintf(c.out, "; %d could not be run again (see above)", n)
	}
	fmt.Fprintln(c.out)
	if !rep.OK() {
		return exitBadUser
	}
	return exitOK
}

// printRecomputed prints one step's outcome: its state, its name, and the result key or why.
func (c *cli) printRecomputed(s workflow.RecomputedStep) {
	detail := s.Why
	if s.State == workflow.RecomputeSame {
		detail = fmt.Sprintf("result key %s, %.2f s", s.Recomputed.Short(), s.Seconds)
	}
	fmt.Fprintf(c.out, "  %-18s %-24s %s\n", s.State, s.Step, detail)
}
