package steps

import (
	"context"
	"sync"
)

// Pool is the one set of worker tokens that running steps and their numerical cores share.
// The scheduler takes one token per running step; a step may take extra tokens without
// blocking for parallel work, so the machine is never oversubscribed.
type Pool struct {
	tokens chan struct{}
}

// NewPool returns a pool of n tokens (at least one).
func NewPool(n int) *Pool {
	if n < 1 {
		n = 1
	}
	p := &Pool{tokens: make(chan struct{}, n)}
	for i := 0; i < n; i++ {
		p.tokens <- struct{}{}
	}
	return p
}

// Size is the number of tokens the pool was made with.
func (p *Pool) Size() int { return cap(p.tokens) }

// Acquire blocks until a token is free or ctx ends.
func (p *Pool) Acquire(ctx context.Context) error {
	select {
	case <-p.tokens:
		return nil
	case <-ctx.Done():
		return ctx.Err()
	}
}

// TryAcquire takes up to n free tokens without blocking and returns how many it took.
func (p *Pool) TryAcquire(n int) int {
	got := 0
	for got < n {
		select {
		case <-p.tokens:
			got++
		default:
			return got
		}
	}
	return got
}

// Release returns n tokens.
func (p *Pool) Release(n int) {
	for i := 0; i < n; i++ {
		p.tokens <- struct{}{}
	}
}

// Parallel runs block(i) for i in [0, n) on the caller's goroutine plus as many extra
// workers as the pool has free tokens. Each block must write only its own part of the
// output, so the result does not depend on how many workers ran: callers split work into
// blocks of a fixed size, never by worker count. A nil pool runs the blocks serially.
func (p *Pool) Parallel(n int, block func(i int)) {
	if n <= 0 {
		return
	}
	extra := 0
	if p != nil && n > 1 {
		extra = p.TryAcquire(n - 1)
	}
	if extra == 0 {
		for i := 0; i < n; i++ {
			block(i)
		}
		return
	}
	defer p.Release(extra)
	var (
		mu   sync.Mutex
		next int
		wg   sync.WaitGroup
	)
	take := func() int {
		mu.Lock()
		defer mu.Unlock()
		i := next
		next++
		return i
	}
	var panicked any
	work := func() {
		defer func() {
			if r := recover(); r != nil {
				mu.Lock()
				if panicked == nil {
					panicked = r
				}
				next = n // stop handing out blocks
				mu.Unlock()
			}
		}()
		for i := take(); i < n; i = take() {
			block(i)
		}
	}
	wg.Add(extra)
	for w := 0; w < extra; w++ {
		go func() { defer wg.Done(); work() }()
	}
	work()
	wg.Wait()
	if panicked != nil {
		// Re-raise on the caller's goroutine, where the engine's recover turns it into an
		// error instead of letting a worker goroutine take the process down.
		panic(panicked)
	}
}
