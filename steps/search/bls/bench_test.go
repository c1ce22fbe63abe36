package bls

import (
	"math"
	"runtime"
	"syscall"
	"testing"

	"dipline/steps"
)

// The speed benchmarks: a four-year light curve at a 29.4-minute cadence (71,560 points,
// white noise of 1000 ppm and an invented 9.7 d, 800 ppm box), searched from 0.2 to 100 d
// around a red dwarf of 0.5 M☉ and 0.5 R☉ (ρ = 4 ρ☉ = 5.639 g/cm³) at oversampling 3.
//
//	go test ./steps/search/bls -run '^$' -bench 'Search4yr$|FoldFloor$' -benchtime 1x
//
// reports n_freq and the wall-clock and CPU nanoseconds per point and frequency; both run
// on one locked thread, so the CPU figure is per core whatever else the machine runs. The *Sub variants take every 16th frequency of the same grid for quick runs.

// benchDensity is the density of a 0.5 M☉, 0.5 R☉ dwarf: 0.5/0.5³ = 4 ρ☉.
var benchDensity = densityOf(0.5, 0.5)

func fourYears() Series {
	d := dip{period: 9.7, epoch: 3.1, depth: 8e-4}
	d.duration = CentralDuration(d.period, benchDensity)
	return synth(4, 4*365.25, 29.4/1440, 1e-3, 0, d)
}

func benchSetup(b *testing.B, thin int) (*prepared, Grid, Options, Series) {
	s := fourYears()
	o := Options{Density: benchDensity, PeriodMin: 0.2, PeriodMax: 100, Oversampling: 3,
		MaxSignals: 1, MaskFactor: 2}
	g, err := NewGrid(o.Density, s.Time[len(s.Time)-1]-s.Time[0], o.PeriodMin, o.PeriodMax, o.Oversampling)
	if err != nil {
		b.Fatal(err)
	}
	if thin > 1 {
		g.Step *= float64(thin)
		g.N = (g.N-1)/thin + 1
	}
	return prepare(s, nil, s.Cadence()), g, o, s
}

// cpuClock reads the CPU time used so far by the calling thread (who = RUSAGE_THREAD, 1 on
// Linux) or by the whole process (RUSAGE_SELF, 0), in nanoseconds. On a shared machine
// the CPU time per point and frequency is a fairer per-core figure than the wall time.
func cpuClock(who int) int64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(who, &ru); err != nil {
		return 0
	}
	return ru.Utime.Nano() + ru.Stime.Nano()
}

const (
	rusageSelf   = 0
	rusageThread = 1
)

// measure runs body b.N times and reports n_freq, the wall-clock and the CPU nanoseconds
// per point and frequency. who selects the CPU clock: the thread for serial runs (locked
// to it), the process for parallel ones.
func measure(b *testing.B, points int, g Grid, who int, body func()) {
	if who == rusageThread {
		runtime.LockOSThread()
		defer runtime.UnlockOSThread()
	}
	b.ResetTimer()
	c0 := cpuClock(who)
	for i := 0; i < b.N; i++ {
		body()
	}
	cpu := cpuClock(who) - c0
	b.StopTimer()
	pf := float64(points) * float64(g.N) * float64(b.N)
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/pf, "wall-ns/point-freq")
	b.ReportMetric(float64(cpu)/pf, "cpu-ns/point-freq")
	b.ReportMetric(float64(g.N), "n_freq")
}

// BenchmarkSearch4yr is the whole search (one pass, with refinement and measurement).
func BenchmarkSearch4yr(b *testing.B) {
	_, g, o, s := benchSetup(b, 1)
	measure(b, len(s.Time), g, rusageThread, func() {
		res, err := Search(s, o, nil, nil)
		if err != nil || res.Passes[0].Found == nil || math.Abs(res.Passes[0].Found.Timing.Period-9.7) > 1e-3 {
			b.Fatalf("the benchmark signal was not found: %v", err)
		}
	})
}

// BenchmarkSearch4yrSub is the periodogram alone on every 16th frequency.
func BenchmarkSearch4yrSub(b *testing.B) {
	p, g, _, _ := benchSetup(b, 16)
	measure(b, len(p.t), g, rusageThread, func() { periodogram(p, g, nil, nil) })
}

// BenchmarkSearch4yrSubPool2 is BenchmarkSearch4yrSub on a pool of two workers (wall time).
func BenchmarkSearch4yrSubPool2(b *testing.B) {
	p, g, _, _ := benchSetup(b, 16)
	pool := steps.NewPool(2)
	measure(b, len(p.t), g, rusageSelf, func() { periodogram(p, g, pool.Parallel, nil) })
}

func benchFloor(b *testing.B, thin int) {
	p, g, _, _ := benchSetup(b, thin)
	var sc scratch
	measure(b, len(p.t), g, rusageThread, func() { floorRange(&sc, p, g, 0, g.N) })
}

// floorRange folds and accumulates the points at frequencies j0 … j1−1 into the search's
// bins, two frequencies per pass as the search does, and does nothing else.
func floorRange(sc *scratch, p *prepared, g Grid, j0, j1 int) {
	j := j0
	for ; j+1 < j1; j += 2 {
		f1, f2 := g.Freq(j), g.Freq(j+1)
		lo1, hi1 := durationRange(1/f1, g.Density, p.cadence)
		lo2, hi2 := durationRange(1/f2, g.Density, p.cadence)
		nb1, _, _ := phaseBins(f1, lo1, hi1)
		nb2, _, _ := phaseBins(f2, lo2, hi2)
		foldPair(sc.binsFor(0, nb1), sc.binsFor(1, nb2), p.t, p.w, p.wx, f1, f2, nb1, nb2)
	}
	if j < j1 {
		f := g.Freq(j)
		lo, hi := durationRange(1/f, g.Density, p.cadence)
		nb, _, _ := phaseBins(f, lo, hi)
		fold(sc.binsFor(0, nb), p.t, p.w, p.wx, f, nb)
	}
}

// BenchmarkFoldFloor folds and accumulates the same points over the same grid and bins with
// the search's own fold, and does nothing else: the ratio of the two benchmarks is the cost
// of everything besides folding (the box scan, cumulative sums, grid and bookkeeping).
func BenchmarkFoldFloor(b *testing.B) { benchFloor(b, 1) }

// BenchmarkFoldFloorSub is BenchmarkFoldFloor on every 16th frequency.
func BenchmarkFoldFloorSub(b *testing.B) { benchFloor(b, 16) }

// BenchmarkInterleaved4yr alternates the search's periodogram and the bare fold on the same
// blocks of 256 frequencies of the full grid, on one locked thread, and reports both CPU
// figures and their ratio: on a shared machine whose speed drifts, interleaving keeps the
// ratio honest where two separate runs would not.
func BenchmarkInterleaved4yr(b *testing.B) {
	p, g, _, _ := benchSetup(b, 1)
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	var sc, fl scratch
	var search, floor int64
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		for j0 := 0; j0 < g.N; j0 += freqBlock {
			j1 := min(g.N, j0+freqBlock)
			c0 := cpuClock(rusageThread)
			for j := j0; j+1 < j1; j += 2 {
				f1, f2 := g.Freq(j), g.Freq(j+1)
				lo1, hi1 := durationRange(1/f1, g.Density, p.cadence)
				lo2, hi2 := durationRange(1/f2, g.Density, p.cadence)
				sc.bestPair(p, f1, lo1, hi1, f2, lo2, hi2)
			}
			c1 := cpuClock(rusageThread)
			floorRange(&fl, p, g, j0, j1&^1)
			c2 := cpuClock(rusageThread)
			search += c1 - c0
			floor += c2 - c1
		}
	}
	pf := float64(len(p.t)) * float64(g.N) * float64(b.N)
	b.ReportMetric(float64(search)/pf, "search-cpu-ns/point-freq")
	b.ReportMetric(float64(floor)/pf, "floor-cpu-ns/point-freq")
	b.ReportMetric(float64(search)/float64(floor), "ratio")
	b.ReportMetric(float64(g.N), "n_freq")
}

// BenchmarkRefine4yr is the refinement and measurement of the benchmark signal alone, from
// its grid peak.
func BenchmarkRefine4yr(b *testing.B) {
	p, g, _, _ := benchSetup(b, 1)
	peak := 0
	for j := 1; j < g.N; j++ {
		if math.Abs(1/g.Freq(j)-9.7) < math.Abs(1/g.Freq(peak)-9.7) {
			peak = j
		}
	}
	// The grid spectrum around the signal only: the refinement reads centre and duration
	// at the peak.
	sp := spectrum{power: make([]float64, g.N), duration: make([]float64, g.N), centre: make([]float64, g.N)}
	var sc scratch
	for j := peak - 3; j <= peak+3; j++ {
		f := g.Freq(j)
		lo, hi := durationRange(1/f, g.Density, p.cadence)
		bx := sc.best(p, f, lo, hi)
		sp.power[j], sp.duration[j], sp.centre[j] = math.Sqrt(p.sumW*bx.stat), bx.duration, bx.centre
	}
	for j := peak - 3; j <= peak+3; j++ {
		if sp.power[j] > sp.power[peak] {
			peak = j
		}
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if d, _ := detect(p, g, sp, peak, 10, 2); d == nil || math.Abs(d.Timing.Period-9.7) > 1e-3 {
			b.Fatal("the benchmark signal was not refined")
		}
	}
}

// BenchmarkFoldFloorSingleSub is BenchmarkFoldFloorSub folding one frequency per pass over
// the points, to measure what folding two at a time gains.
func BenchmarkFoldFloorSingleSub(b *testing.B) {
	p, g, _, _ := benchSetup(b, 16)
	var sc scratch
	measure(b, len(p.t), g, rusageThread, func() {
		for j := 0; j < g.N; j++ {
			f := g.Freq(j)
			lo, hi := durationRange(1/f, g.Density, p.cadence)
			nb, _, _ := phaseBins(f, lo, hi)
			fold(sc.binsFor(0, nb), p.t, p.w, p.wx, f, nb)
		}
	})
}

// BenchmarkChecks4yr times the rival-period and per-transit checks of one detection on the
// four-year light curve (part of BenchmarkRefine4yr).
func BenchmarkChecks4yr(b *testing.B) {
	s := fourYears()
	p := prepare(s, nil, s.Cadence())
	d := dip{period: 9.7, epoch: 3.1}
	dur := CentralDuration(d.period, benchDensity)
	b.ResetTimer()
	for range b.N {
		if r, _ := checkDetection(p, 1/d.period, d.epoch, dur); r.Preferred != PreferFound {
			b.Fatal("the benchmark signal prefers another period")
		}
	}
}
