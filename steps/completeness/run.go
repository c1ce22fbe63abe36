package completeness

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"

	"dipline/steps"
	"dipline/steps/detrend"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/search"
)

// RunAll runs Recover for every drawn planet and returns the outcomes in the order of
// drawn, detrending with FixSpan(dcfg, raw, pool) and, for a windowed search, measuring
// the full grid's noise once (see Recover and reference). The injections are spread over
// the pool one per block (nil: serially); each block writes only its own outcome, so the
// result does not depend on the number of workers. Each injection's detrend and search are handed the same pool: steps.Pool only
// ever takes tokens without blocking (TryAcquire), so nested use cannot deadlock, and it
// finds no free token while the injections hold them all, running serially inside. Both
// are deterministic for any worker count. finished, when not nil, is called after each
// injection that succeeded, one call at a time, with its index in drawn, its outcome and
// the number done so far (never decreasing), so a caller can keep each outcome as soon as
// it is known. The first error, in the order of drawn, is returned.
//
// When ctx is cancelled, the injections not yet begun are not begun, and ctx's error is
// returned once those running have finished (and been told to finished).
func RunAll(ctx context.Context, raw *lightcurve.LightCurve, drawn []Drawn, st Star, dcfg detrend.Config, scfg search.Config, window float64, pool *steps.Pool, finished func(i int, o Outcome, done int)) ([]Outcome, error) {
	if raw == nil {
		return nil, errors.New("completeness: no light curve to inject into")
	}
	if err := raw.Validate(); err != nil {
		return nil, fmt.Errorf("completeness: %w", err)
	}
	if !(window >= 0) || math.IsInf(window, 0) {
		return nil, fmt.Errorf("completeness: period window %v; give 0 (the full range) or a positive fraction", window)
	}
	dcfg = FixSpan(dcfg, raw, pool)
	var ref *reference
	if window > 0 && len(drawn) > 0 {
		var err error
		if ref, err = newReference(raw, dcfg, scfg, pool); err != nil {
			return nil, err
		}
	}
	out := make([]Outcome, len(drawn))
	errs := make([]error, len(drawn))
	var (
		mu   sync.Mutex
		done int
	)
	pool.Parallel(len(drawn), func(i int) {
		if errs[i] = ctx.Err(); errs[i] != nil {
			return
		}
		out[i], errs[i] = recoverWith(raw, drawn[i], st, dcfg, scfg, window, ref, pool)
		if finished != nil && errs[i] == nil {
			mu.Lock()
			done++
			finished(i, out[i], done)
			mu.Unlock()
		}
	})
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	return out, nil
}
