package sampler

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"runtime/metrics"
	"testing"
)

// heapObjects is the bytes held by live and not yet swept heap objects (runtime/metrics),
// cheap enough to read after every run of steps.
func heapObjects() uint64 { return readMetric("/memory/classes/heap/objects:bytes") }

// allocated is the bytes allocated on the heap since the program started.
func allocated() uint64 { return readMetric("/gc/heap/allocs:bytes") }

func readMetric(name string) uint64 {
	s := []metrics.Sample{{Name: name}}
	metrics.Read(s)
	return s[0].Value.Uint64()
}

// BenchmarkEnsemblesToTheCap runs two ensembles of 16 walkers on an 8-D Gaussian to a cap
// of 40,000 steps that the stopping rule never reaches (LengthPerTau is out of reach), the
// shape of a small fit that mixes too slowly to stop, storing every step and keeping 8192
// stored steps as the fit does: it reports the bytes allocated per ensemble update and the
// largest heap seen, sampled after every run of Chunk steps. Run with -benchtime=1x and
// -memprofile to see where the memory goes.
func BenchmarkEnsemblesToTheCap(b *testing.B) {
	const dim, maxSteps = 8, 40000
	mu, sd := make([]float64, dim), make([]float64, dim)
	for i := range sd {
		sd[i] = 1 + float64(i)
	}
	g := kms(mu, sd, 0.9)
	for _, keep := range []int{0, 8192} {
		b.Run(fmt.Sprintf("keep %d stored steps", keep), func(b *testing.B) {
			s := testSchedule(maxSteps, 5)
			s.Chunk, s.Keep, s.LengthPerTau, s.MinFirstPhase = 250, keep, math.Inf(1), 2000
			var peak uint64
			s.Progress = func(int, int) { peak = max(peak, heapObjects()) }
			b.ReportAllocs()
			for b.Loop() {
				runtime.GC()
				base, alloc0 := heapObjects(), allocated()
				peak = base
				run, err := RunEnsembles(context.Background(), g.logp, startsAround(2, 2*dim, mu), s)
				if err != nil {
					b.Fatal(err)
				}
				if run.Steps != maxSteps {
					b.Fatalf("stopped after %d steps", run.Steps)
				}
				b.ReportMetric(float64(peak-base)/(1<<20), "peak-heap-MiB")
				b.ReportMetric(float64(allocated()-alloc0)/float64(maxSteps), "B/update")
			}
		})
	}
}
