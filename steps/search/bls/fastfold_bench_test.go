package bls

import (
	"math"
	"runtime"
	"sync"
	"syscall"
	"testing"
	"time"

	"dipline/steps"
)

// The fast-fold benchmarks run the direct fold-and-scan periodogram and the fast-folding one
// on the same four-year, 29.4-minute light curve as bench_test.go (71,560 points), on one
// locked thread, for two searches:
//
//   - "wide": a star of ρ = 3.2 g/cm³ searched from 0.4 to 730 d (half the span), on a grid
//     built directly;
//   - "dwarf": bench_test.go's case, ρ = 5.639 g/cm³ from 0.2 to 100 d.
//
//	go test ./steps/search/bls -run '^$' -bench 'FastVersusDirect4yr$' -benchtime 1x -timeout 30m
//	go test ./steps/search/bls -run '^$' -bench 'FastMemory4yr' -benchtime 1x
//
// The first reports the CPU seconds of each periodogram and their ratio per search (about
// a minute, nearly all of it the direct fold); the second the fast fold's peak heap and
// the process's resident set. The Sub variant runs the direct fold on every 16th grid
// frequency and scales its time by the ratio of the grid sizes, for quick runs; the fast
// fold always runs on the full grid.

// fastBenchCase is one search of the four-year light curve.
type fastBenchCase struct {
	name       string
	density    float64
	pmin, pmax float64
}

var fastBenchCases = []fastBenchCase{
	{"wide", 3.2, 0.4, 730},
	{"dwarf", benchDensity, 0.2, 100},
}

// fastBenchGrid returns the prepared four-year light curve and the full grid of c.
func fastBenchGrid(b *testing.B, c fastBenchCase) (*prepared, Grid) {
	s := fourYears()
	g, err := NewGrid(c.density, s.Time[len(s.Time)-1]-s.Time[0], c.pmin, c.pmax, 3)
	if err != nil {
		b.Fatal(err)
	}
	return prepare(s, nil, s.Cadence()), g
}

// thinGrid keeps every thin-th frequency of g.
func thinGrid(g Grid, thin int) Grid {
	g.Step *= float64(thin)
	g.N = (g.N-1)/thin + 1
	return g
}

// threadSeconds returns the CPU seconds body takes on the calling thread, locked to it.
func threadSeconds(body func()) float64 {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	c0 := cpuClock(rusageThread)
	body()
	return float64(cpuClock(rusageThread)-c0) / 1e9
}

// benchFastVersusDirect reports, per case, the CPU seconds of both periodograms and the
// direct fold's over the fast fold's. The direct fold runs on every thin-th frequency and
// is scaled to the full grid. On a shared machine whose speed drifts, the two sides
// alternate for rounds rounds and the least time of each side counts.
func benchFastVersusDirect(b *testing.B, thin, rounds int) {
	for i := 0; i < b.N; i++ {
		for _, c := range fastBenchCases {
			p, g := fastBenchGrid(b, c)
			sub := thinGrid(g, thin)
			direct, fast := math.Inf(1), math.Inf(1)
			var st fastStats
			for range rounds {
				d := threadSeconds(func() { periodogram(p, sub, nil, nil) })
				direct = math.Min(direct, d*float64(g.N)/float64(sub.N))
				fast = math.Min(fast, threadSeconds(func() { _, st = fastSpectrum(p, g, nil, nil) }))
			}
			fc, dc := fastCost(p, g)
			b.ReportMetric(float64(g.N), c.name+"-n_freq")
			b.ReportMetric(direct, c.name+"-direct-cpu-s")
			b.ReportMetric(fast, c.name+"-fast-cpu-s")
			b.ReportMetric(direct/fast, c.name+"-ratio")
			b.ReportMetric(dc/fc, c.name+"-ops-ratio")
			b.ReportMetric(float64(st.filled), c.name+"-direct-cells")
		}
	}
}

// BenchmarkFastVersusDirect4yr compares both periodograms on the full grids.
func BenchmarkFastVersusDirect4yr(b *testing.B) { benchFastVersusDirect(b, 1, 1) }

// BenchmarkFastVersusDirect4yrSub is BenchmarkFastVersusDirect4yr with the direct fold on
// every 16th frequency, scaled.
func BenchmarkFastVersusDirect4yrSub(b *testing.B) { benchFastVersusDirect(b, 16, 3) }

// BenchmarkFastFold4yr times the fast fold alone on each case, one locked thread.
func BenchmarkFastFold4yr(b *testing.B) {
	for _, c := range fastBenchCases {
		b.Run(c.name, func(b *testing.B) {
			p, g := fastBenchGrid(b, c)
			var cpu float64
			for i := 0; i < b.N; i++ {
				cpu += threadSeconds(func() { fastPeriodogram(p, g, nil, nil) })
			}
			b.ReportMetric(cpu/float64(b.N), "cpu-s")
		})
	}
}

// BenchmarkFastFold4yrPool2 times the fast fold on a pool of two workers (wall seconds).
func BenchmarkFastFold4yrPool2(b *testing.B) {
	pool := steps.NewPool(2)
	for _, c := range fastBenchCases {
		b.Run(c.name, func(b *testing.B) {
			p, g := fastBenchGrid(b, c)
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				fastPeriodogram(p, g, pool.Parallel, nil)
			}
			b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "wall-s")
		})
	}
}

// BenchmarkFastMemory4yr reports the largest heap in use while the fast fold runs on the
// wide case (sampled every millisecond, less the heap before it started), and the process's
// peak resident set (getrusage's maxrss, which includes the light curve and the test
// binary). Run it alone for the resident set to mean anything.
func BenchmarkFastMemory4yr(b *testing.B) {
	p, g := fastBenchGrid(b, fastBenchCases[0])
	for i := 0; i < b.N; i++ {
		runtime.GC()
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		base, peak := ms.HeapInuse, ms.HeapInuse
		stop := make(chan struct{})
		var wg sync.WaitGroup
		wg.Add(1)
		go func() {
			defer wg.Done()
			var m runtime.MemStats
			for {
				select {
				case <-stop:
					return
				case <-time.After(time.Millisecond):
					runtime.ReadMemStats(&m)
					peak = max(peak, m.HeapInuse)
				}
			}
		}()
		fastPeriodogram(p, g, nil, nil)
		close(stop)
		wg.Wait()
		var ru syscall.Rusage
		if err := syscall.Getrusage(rusageSelf, &ru); err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(peak-base)/(1<<20), "peak-heap-MB")
		b.ReportMetric(float64(ru.Maxrss)/1024, "maxrss-MB")
	}
}
