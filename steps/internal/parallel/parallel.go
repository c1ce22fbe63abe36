// Package parallel declares the one shape of parallel work that dipline's numerical cores
// accept, so that a core can be handed the engine's worker pool without importing the step
// contract (package steps) and a library user can pass a plain function. It runs nothing
// itself beyond the serial fallback of Func.Run; the pool that spreads blocks over workers
// is steps.Pool, whose Parallel method has this shape.
package parallel

// Func runs block(i) for every i in [0, n), possibly concurrently, and returns when all
// are done. Each block writes only its own part of the output, so a result never depends
// on how many workers ran: callers split work into blocks of a fixed size, never by worker
// count (DESIGN.md, Keys: determinism). A nil Func means "run the blocks in order".
type Func func(n int, block func(i int))

// Run calls f, or, when f is nil, runs the blocks in order on the caller's goroutine.
func (f Func) Run(n int, block func(i int)) {
	if f == nil {
		for i := 0; i < n; i++ {
			block(i)
		}
		return
	}
	f(n, block)
}
