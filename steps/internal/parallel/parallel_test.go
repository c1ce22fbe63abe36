package parallel_test

import (
	"sync"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/parallel"
)

// The engine's pool must fit the shape the numerical cores accept.
var _ parallel.Func = (*steps.Pool)(nil).Parallel

func TestRunCoversEveryBlockOnce(t *testing.T) {
	for _, c := range []struct {
		name string
		f    parallel.Func
	}{
		{"a nil Func runs the blocks in order", nil},
		{"a pool of three workers runs every block once", steps.NewPool(3).Parallel},
	} {
		t.Run(c.name, func(t *testing.T) {
			const n = 100
			var mu sync.Mutex
			var order []int
			c.f.Run(n, func(i int) {
				mu.Lock()
				order = append(order, i)
				mu.Unlock()
			})
			seen := make([]int, n)
			for _, i := range order {
				seen[i]++
			}
			for i, s := range seen {
				if s != 1 {
					t.Fatalf("block %d ran %d times", i, s)
				}
			}
			if c.f == nil {
				for i, v := range order {
					if v != i {
						t.Fatalf("serial run out of order at %d: %v", i, order[:i+1])
					}
				}
			}
		})
	}
}
