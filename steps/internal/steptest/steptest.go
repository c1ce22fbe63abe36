// Package steptest runs a step kind the way the engine does, for the kinds' own tests:
// defaults applied to the decoded values, Prepare, then Run with a token pool and the notes
// collected. It is test support only; nothing in a build of dipline imports it.
package steptest

import (
	"context"
	"fmt"
	"sync"

	"dipline/steps"
)

// Values returns the decoded values of a block of kind k that writes only the attributes
// in set: every default, with set on top.
func Values(k steps.Kind, set map[string]any) steps.Values {
	v := steps.Values{}
	for _, p := range k.Params() {
		if p.Default != nil {
			v[p.Name] = p.Default
		}
	}
	for name, x := range set {
		v[name] = x
	}
	return v
}

// Run prepares k with v and runs it on in with pool (nil runs serially), as the engine
// would, and returns the artifact, the notes it made, and the first error.
func Run(k steps.Kind, v steps.Values, in steps.Inputs, pool *steps.Pool) (steps.Artifact, []string, error) {
	cfg, err := k.Prepare(v)
	if err != nil {
		return nil, nil, err
	}
	var (
		mu    sync.Mutex
		notes []string
	)
	env := steps.Env{Pool: pool, Notef: func(f string, a ...any) {
		mu.Lock()
		notes = append(notes, fmt.Sprintf(f, a...))
		mu.Unlock()
	}}
	art, err := k.Run(context.Background(), cfg, in, env)
	return art, notes, err
}

// Pool returns a pool of n tokens with one already taken, as the engine holds one for the
// running step; n ≤ 0 gives nil, which runs serially.
func Pool(n int) *steps.Pool {
	if n <= 0 {
		return nil
	}
	p := steps.NewPool(n)
	p.TryAcquire(1)
	return p
}
