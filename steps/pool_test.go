package steps

import (
	"context"
	"errors"
	"sync/atomic"
	"testing"
)

func TestParallelCoversEveryBlockOnce(t *testing.T) {
	for _, size := range []int{1, 2, 4} {
		p := NewPool(size)
		var hits [100]int32
		p.Parallel(len(hits), func(i int) { atomic.AddInt32(&hits[i], 1) })
		for i, h := range hits {
			if h != 1 {
				t.Fatalf("pool of %d: block %d ran %d times", size, i, h)
			}
		}
		if got := p.TryAcquire(size + 1); got != size {
			t.Fatalf("pool of %d has %d tokens after Parallel", size, got)
		}
	}
}

func TestParallelReraisesPanicOnCaller(t *testing.T) {
	p := NewPool(3)
	defer func() {
		if recover() == nil {
			t.Fatal("a panic in a block was swallowed")
		}
		if got := p.TryAcquire(3); got != 3 {
			t.Fatalf("tokens leaked: %d of 3 back", got)
		}
	}()
	p.Parallel(10, func(i int) {
		if i == 7 {
			panic("boom")
		}
	})
}

func TestAcquireHonoursCancel(t *testing.T) {
	p := NewPool(1)
	if err := p.Acquire(context.Background()); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if err := p.Acquire(ctx); err == nil {
		t.Fatal("Acquire on an empty pool returned without error after cancel")
	}
}

type nothing struct{}

func (*nothing) Encode() []byte    { return nil }
func (*nothing) Figures() []Figure { return nil }

func TestDecodedKeepsAFailedDecodeNil(t *testing.T) {
	var typedNil *nothing
	a, err := Decoded(typedNil, errors.New("truncated"))
	if a != nil || err == nil {
		t.Errorf("Decoded(typed nil, error) = %v, %v; want a nil Artifact and the error", a, err)
	}
	if a, err := Decoded(&nothing{}, nil); a == nil || err != nil {
		t.Errorf("Decoded(value, nil) = %v, %v", a, err)
	}
}
