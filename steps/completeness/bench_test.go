package completeness

import (
	"context"
	"testing"
	"time"
)

// BenchmarkInjections4yr measures injection–recovery on an invented four-year light curve
// at 29.4-minute cadence (71,500 points of white noise, 1000 ppm) around the Sun-like star
// of the tests: benchInjections planets drawn from one cell (0.5–100 d, k 0.01–0.05)
// recovered with the default detrend and search and a period window of 0.3, serially. It
// reports the CPU-seconds per injection (wall time of the serial run on one core, divided
// by the injections; it includes RunAll's one-off span choice and reference search, about
// 4.5 s, which 1000 injections share) and the projected minutes for 1000 injections on two
// cores (half the serial time, the injections being independent). The target is below
// 2 CPU-s per injection. On a shared machine, compare with the user time of the process.
//
//	go test ./steps/completeness -run '^$' -bench Injections4yr -benchtime 1x
func BenchmarkInjections4yr(b *testing.B) {
	const benchInjections = 20
	lc := whiteCurve(4*365.25, 29.4/1440, 1e-3, 4)
	dcfg, scfg := configs(b, sunLike, 3)
	cells := []Cell{{PeriodLo: 0.5, PeriodHi: 100, RadiusLo: 0.01, RadiusHi: 0.05}}
	first, last := lc.Span()
	drawn, err := Plan(cells, benchInjections, 11, [2]float64{first, last})
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	var total time.Duration
	for i := 0; i < b.N; i++ {
		start := time.Now()
		out, err := RunAll(context.Background(), lc, drawn, sunLike, dcfg, scfg, 0.3, nil, nil)
		if err != nil {
			b.Fatal(err)
		}
		total += time.Since(start)
		logRecovered(b, out)
	}
	per := total.Seconds() / float64(b.N*benchInjections)
	b.ReportMetric(per, "CPU-s/injection")
	b.ReportMetric(per*1000/2/60, "min/1000-on-2-cores")
}

// logRecovered logs how many outcomes were recovered, so a benchmark that finds nothing
// is noticed.
func logRecovered(b *testing.B, out []Outcome) {
	n := 0
	for _, o := range out {
		if o.Recovered {
			n++
		}
	}
	b.Logf("%d of %d recovered", n, len(out))
}
