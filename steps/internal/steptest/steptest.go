// Package steptest runs a step kind the way the engine does, for the kinds' own tests:
// the configuration decoded from what a block writes (defaults first), checked, then Run
// with a token pool and the notes collected. It is test support only; nothing in a build
// of dipline imports it.
package steptest

import (
	"context"
	"fmt"
	"strconv"
	"sync"

	"dipline/steps"
)

// Config returns the checked configuration of a block of kind k that writes only the
// attributes in set, each as a user writes it: a number (float64 or int), a string (a
// quantity with its unit, a measurement with its ±, a choice, or for a reference its
// target, "detrend.x"), a bool, a []string or a map[string]string.
func Config(k steps.Kind, set map[string]any) (any, error) {
	schema := k.Schema()
	cfg, err := schema.New()
	if err != nil {
		return nil, err
	}
	for name, x := range set {
		p := schema.Param(name)
		if p == nil {
			return nil, fmt.Errorf("a %s block has no attribute %q", k.Name(), name)
		}
		if err := schema.Set(cfg, p, written(p, x)); err != nil {
			return nil, &steps.AttrError{Attr: name, Msg: err.Error()}
		}
	}
	if err := k.Check(cfg); err != nil {
		return nil, err
	}
	return cfg, nil
}

// MustConfig is Config for tests whose settings are known to be valid.
func MustConfig(k steps.Kind, set map[string]any) any {
	cfg, err := Config(k, set)
	if err != nil {
		panic(fmt.Sprintf("steptest: %s: %v", k.Name(), err))
	}
	return cfg
}

// written turns a Go value into what a workflow would have written for parameter p.
func written(p *steps.Param, x any) steps.Written {
	switch v := x.(type) {
	case steps.Written:
		return v
	case float64:
		return steps.Written{Kind: steps.WrittenNumber, Num: v, Text: strconv.FormatFloat(v, 'g', -1, 64)}
	case int:
		return steps.Written{Kind: steps.WrittenNumber, Num: float64(v), Text: strconv.Itoa(v)}
	case bool:
		return steps.Written{Kind: steps.WrittenBool, Bool: v}
	case string:
		switch p.Type {
		case steps.StepRef, steps.StepSettings:
			return steps.Written{Kind: steps.WrittenRef, Str: v}
		case steps.CatalogueRow:
			return steps.Written{Kind: steps.WrittenRow, Str: v}
		}
		return steps.Written{Kind: steps.WrittenString, Str: v}
	case []string:
		w := steps.Written{Kind: steps.WrittenList, List: []steps.Written{}}
		for _, s := range v {
			e := steps.Written{Kind: steps.WrittenString, Str: s}
			if p.Type == steps.StepRefList {
				e.Kind = steps.WrittenRef
			}
			w.List = append(w.List, e)
		}
		return w
	case map[string]string:
		w := steps.Written{Kind: steps.WrittenObject, Object: map[string]steps.Written{}}
		for k, s := range v {
			w.Object[k] = steps.Written{Kind: steps.WrittenString, Str: s}
		}
		return w
	}
	return steps.Written{Kind: steps.WrittenNull}
}

// Run configures k with set (see Config) and runs it on in with pool (nil runs serially),
// as the engine would, and returns the artifact, the notes it made, and the first error.
func Run(k steps.Kind, set map[string]any, in steps.Inputs, pool *steps.Pool) (steps.Artifact, []string, error) {
	cfg, err := Config(k, set)
	if err != nil {
		return nil, nil, err
	}
	return RunConfig(k, cfg, in, pool)
}

// RunConfig runs k with a configuration from Config.
func RunConfig(k steps.Kind, cfg any, in steps.Inputs, pool *steps.Pool) (steps.Artifact, []string, error) {
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
