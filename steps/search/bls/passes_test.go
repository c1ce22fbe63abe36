package bls

import (
	"math"
	"os"
	"slices"
	"testing"
)

// TestTheMethodFollowsTheCost: a space light curve (continuous, 30-minute cadence, 1 year)
// is folded fast; a ground-based one (an invented season of 15 nights of 4 hours at
// 5 minutes over a year) has few points for its span, and fold-and-scan is cheaper.
func TestTheMethodFollowsTheCost(t *testing.T) {
	space := synth(1, 365, 30.0/1440, 1e-3, 0)
	var ground Series
	g := normals{state: 2}
	for night := 0; night < 15; night++ {
		t0 := float64(night) * 24.3
		for k := 0; k < 48; k++ {
			ground.Time = append(ground.Time, t0+float64(k)*5.0/1440)
			ground.Flux = append(ground.Flux, 1+1e-3*g.norm())
			ground.Err = append(ground.Err, 1e-3)
		}
	}
	for _, c := range []struct {
		name string
		s    Series
		want Method
	}{{"space", space, MethodFast}, {"ground", ground, MethodDirect}} {
		p := prepare(c.s, nil, c.s.Cadence())
		gr, err := NewGrid(solarDensity, p.span(), 0.5, 100, 3)
		if err != nil {
			t.Fatal(err)
		}
		m, why := choose(MethodAuto, p, gr)
		if m != c.want {
			t.Errorf("%s: %v (%s), want %v", c.name, m, why, c.want)
		}
		if m, _ := choose(MethodDirect, p, gr); m != MethodDirect {
			t.Errorf("%s: a method asked for was not taken", c.name)
		}
	}
}

// TestASparsePassFindsWhatAWholePassFinds searches a year of data holding two invented
// planets: the second, found by a sparse pass, has the period, epoch and SDE (within a
// few per cent: the SDE's median and spread come from a sample) that a whole fast pass
// over the same masked light curve gives.
func TestASparsePassFindsWhatAWholePassFinds(t *testing.T) {
	b := dip{period: 3.3, epoch: 1.2, depth: 1.5e-3}
	b.duration = CentralDuration(b.period, solarDensity)
	c := dip{period: 11.7, epoch: 5.1, depth: 9e-4}
	c.duration = CentralDuration(c.period, solarDensity)
	s := synth(5, 365, 30.0/1440, 1e-3, 0, b, c)
	o := defaultOptions(0.5, 60)
	o.MaxSignals = 2
	res, err := Search(s, o, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Method != MethodFast || len(res.Passes) != 2 || !res.Passes[1].Sparse || res.Passes[1].Found == nil {
		t.Fatalf("method %v, %d passes, the second sparse %v", res.Method, len(res.Passes), len(res.Passes) > 1 && res.Passes[1].Sparse)
	}
	first := res.Passes[0].Found.Timing
	keep := make([]bool, len(s.Time))
	for i, tt := range s.Time {
		x := (tt - first.Epoch) / first.Period
		keep[i] = math.Abs(x-math.Round(x))*first.Period > o.MaskFactor*res.Passes[0].Found.Shape.Duration/2
	}
	p := prepare(s, keep, res.Cadence)
	whole := firstPass(MethodFast, p, res.Grid, nil, nil)
	sparse := res.Passes[1]
	t.Logf("sparse pass: peak %d SDE %.3f; whole pass: peak %d SDE %.3f", sparse.Peak, sparse.SDE, whole.peak, whole.score)
	if whole.peak != sparse.Peak || math.Abs(sparse.SDE/whole.score-1) > 0.05 {
		t.Errorf("sparse pass: peak %d SDE %.3f; whole pass: peak %d SDE %.3f", sparse.Peak, sparse.SDE, whole.peak, whole.score)
	}
	if got := sparse.Found.Timing; math.Abs(got.Period-c.period) > 3*got.PeriodSigma+1e-4 {
		t.Errorf("second signal at %.5f ± %.5f d, injected %.5f", got.Period, got.PeriodSigma, c.period)
	}
}

// TestCoarsePeaksHoldTheTruePeak measures what the sparse pass rests on: for injected
// signals whose full-resolution SDE lies between 7.5 and 12, where in the coarse fold's
// list of peaks the true one falls. SparseCandidates must reach well past the worst.
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run CoarsePeaks -v
func TestCoarsePeaksHoldTheTruePeak(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("rank of the true peak in the coarse fold; set DIPLINE_LONG=1 to run it")
	}
	u := normals{state: 9}
	var ranks []int
	for k := 0; len(ranks) < 150 && k < 3000; k++ {
		per := 0.5 * math.Pow(60, u.uniform())
		b := 0.9 * u.uniform()
		d := dip{period: per, epoch: per * u.uniform(), depth: 1e-3 * (0.15 + 0.6*u.uniform())}
		d.duration = CentralDuration(per, solarDensity) * math.Sqrt(1-b*b)
		s := synth(uint64(5000+k), 90, 30.0/1440, 1e-3, 0, d)
		p := prepare(s, nil, s.Cadence())
		g, err := NewGrid(solarDensity, p.span(), 0.4, 45, 3)
		if err != nil {
			t.Fatal(err)
		}
		full := firstPass(MethodFast, p, g, nil, nil)
		if full.score < 7.5 || full.score > 12 || math.Abs(g.Period(full.peak)-per)/per > 0.01 {
			continue
		}
		coarse, _ := fastSpectrumAt(p, g, nil, nil, coarseLevel)
		rank := slices.IndexFunc(candidates(coarse.power, g.N), func(j int) bool { return abs(j-full.peak) <= candidateReach })
		if rank < 0 {
			rank = g.N
		}
		ranks = append(ranks, rank)
	}
	slices.Sort(ranks)
	n := len(ranks)
	t.Logf("%d signals near the threshold: the true peak's rank among the coarse peaks: median %d, 95 %% %d, 99 %% %d, worst %d",
		n, ranks[n/2], ranks[n*95/100], ranks[n*99/100], ranks[n-1])
	if ranks[n-1] >= SparseCandidates/2 {
		t.Errorf("the worst rank %d leaves less than a factor two to the %d candidates", ranks[n-1], SparseCandidates)
	}
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// BenchmarkSparsePass4yr measures what a later pass costs against a whole one: on the
// four-year light curve of the fast-fold benchmarks, with the 9.7 d signal's transits
// masked as Search masks them, the CPU seconds of a whole fast pass and of a sparse pass,
// alternating three times on one locked thread and keeping the least of each, per case.
//
//	go test ./steps/search/bls -run '^$' -bench SparsePass4yr -benchtime 1x
func BenchmarkSparsePass4yr(b *testing.B) {
	for i := 0; i < b.N; i++ {
		for _, c := range fastBenchCases {
			_, g := fastBenchGrid(b, c)
			s := fourYears()
			keep := make([]bool, len(s.Time))
			dur := CentralDuration(9.7, benchDensity)
			for k, t := range s.Time {
				x := (t - 3.1) / 9.7
				keep[k] = math.Abs(x-math.Round(x))*9.7 > dur
			}
			p := prepare(s, keep, s.Cadence())
			whole, sparse := math.Inf(1), math.Inf(1)
			for range 3 {
				whole = math.Min(whole, threadSeconds(func() { firstPass(MethodFast, p, g, nil, nil) }))
				sparse = math.Min(sparse, threadSeconds(func() { sparsePass(p, g, nil, nil) }))
			}
			b.ReportMetric(whole, c.name+"-whole-cpu-s")
			b.ReportMetric(sparse, c.name+"-sparse-cpu-s")
			b.ReportMetric(whole/sparse, c.name+"-ratio")
		}
	}
}
