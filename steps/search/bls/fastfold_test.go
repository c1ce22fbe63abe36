package bls

import (
	"math"
	"os"
	"runtime"
	"slices"
	"strconv"
	"sync"
	"testing"

	"dipline/steps"
)

// staelinShift returns the cyclic shift, in bins, that the power-of-two fast folding
// algorithm (Staelin 1969, Proc. IEEE 57, 724) gives row r of m = 2^levels rows at trial k,
// written out bit by bit rather than by the butterfly's recursion: at the level that splits
// groups of 2^(l+1) rows into halves, a row in the second half (bit l of r set) is shifted by
// ⌈k_l/2⌉ with k_l = k >> (levels−1−l), the trial index that level sees.
func staelinShift(r, k, levels int) int {
	s := 0
	for l := 0; l < levels; l++ {
		if r>>l&1 == 1 {
			kl := k >> (levels - 1 - l)
			s += (kl + 1) / 2
		}
	}
	return s
}

// TestStaelinShiftsSpanOneBinPerRow checks the two ends of Staelin's trial range from his
// definition: trial 0 folds at p bins (no shift) and trial m−1 at p+1 bins (row r shifted by
// r), and between them each row's shift is non-decreasing in k.
func TestStaelinShiftsSpanOneBinPerRow(t *testing.T) {
	for levels := 1; levels <= 8; levels++ {
		m := 1 << levels
		for r := 0; r < m; r++ {
			if s := staelinShift(r, 0, levels); s != 0 {
				t.Fatalf("m = %d: row %d shifted by %d at trial 0", m, r, s)
			}
			if s := staelinShift(r, m-1, levels); s != r {
				t.Fatalf("m = %d: row %d shifted by %d at the last trial, want %d", m, r, s, r)
			}
			for k := 1; k < m; k++ {
				if staelinShift(r, k, levels) < staelinShift(r, k-1, levels) {
					t.Fatalf("m = %d: row %d shift decreases at trial %d", m, r, k)
				}
			}
		}
	}
}

// TestButterflyEqualsDirectFold compares the butterfly with a direct fold of the same
// binned series cut into rows of p bins and padded with empty rows to m, each row cyclically
// shifted by staelinShift and summed row by row. Some series end inside a row and leave
// several rows empty, as the padding to a power of two does; the butterfly is asked for
// every trial and for every third one (its last stage computes only those asked for).
func TestButterflyEqualsDirectFold(t *testing.T) {
	g := normals{state: 21}
	for _, c := range []struct{ per, levels, nbins int }{
		{7, 1, 14}, {5, 3, 40}, {13, 5, 13*17 + 4}, {3, 7, 3 * 128}, {40, 4, 40*5 + 1}, {6, 6, 6*9 - 2},
	} {
		m := 1 << c.levels
		var fs fastScratch
		fs.series = make([]bin, c.nbins+c.per)
		fs.nbins = c.nbins
		for i := range c.nbins {
			fs.series[i] = bin{g.uniform(), g.norm()}
		}
		for _, every := range []int{1, 3} {
			var want []int
			for k := 0; k < m; k += every {
				want = append(want, k)
			}
			compareFolds(t, &fs, c.per, c.levels, want)
		}
	}
}

// compareFolds checks the butterfly's trials want against the direct fold.
func compareFolds(t *testing.T, fs *fastScratch, per, levels int, want []int) {
	t.Helper()
	m := 1 << levels
	row := func(r, j int) bin {
		if i := r*per + j; i < fs.nbins {
			return fs.series[i]
		}
		return bin{}
	}
	prof := fs.fold(per, m, want)
	for _, k := range want {
		for j := 0; j < per; j++ {
			var w, s float64
			for r := 0; r < m; r++ {
				x := row(r, (j+staelinShift(r, k, levels))%per)
				w += x.w
				s += x.s
			}
			got := prof[k*per+j]
			if math.Abs(got.w-w) > 1e-12*float64(m) || math.Abs(got.s-s) > 1e-12*float64(m) {
				t.Fatalf("p = %d, m = %d, trial %d, bin %d: butterfly (%g, %g), direct (%g, %g)",
					per, m, k, j, got.w, got.s, w, s)
			}
		}
	}
}

// TestEveryCellTakesATrialWithinHalfAStep checks the claim of fastRows on the benchmark
// grids and a short one: the trial each grid cell takes lies within half a grid step of
// the cell in f^{1/3}, and every cell belongs to exactly one block.
func TestEveryCellTakesATrialWithinHalfAStep(t *testing.T) {
	long := fourYears()
	short := synth(3, 60, 2.0/1440, 1e-3, 10)
	for _, c := range []struct {
		name       string
		s          Series
		density    float64
		pmin, pmax float64
	}{
		{"four years, 0.4 to 730 d, 3.2 g/cm³", long, 3.2, 0.4, 730},
		{"four years, 0.2 to 100 d, 5.6 g/cm³", long, benchDensity, 0.2, 100},
		{"60 d at 2 min with a gap, 0.25 to 20 d, the Sun", short, solarDensity, 0.25, 20},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := prepare(c.s, nil, c.s.Cadence())
			g, err := NewGrid(c.density, c.s.Time[len(c.s.Time)-1]-c.s.Time[0], c.pmin, c.pmax, 3)
			if err != nil {
				t.Fatal(err)
			}
			checkTrialOffsets(t, p, g)
		})
	}
}

// checkTrialOffsets walks the plan of the fast fold over g.
func checkTrialOffsets(t *testing.T, p *prepared, g Grid) {
	t.Helper()
	segs, blocks := fastPlan(p, g)
	next, worst := g.N-1, 0.0
	var fs fastScratch
	for _, b := range blocks {
		if b.jhi != next || b.jlo > b.jhi {
			t.Fatalf("a block holds cells %d … %d, expected to start at %d", b.jlo, b.jhi, next)
		}
		next = b.jlo - 1
		s := segs[b.seg]
		for j := b.jhi; j >= b.jlo; {
			per := int(g.Period(j) / s.dt)
			m := fastRows(g, s, per)
			n := fs.trials(g, s.dt, per, m, j, b.jlo)
			for i, k := range fs.want {
				f := 1 / ((float64(per) + float64(k)/float64(m-1)) * s.dt)
				worst = math.Max(worst, math.Abs(math.Cbrt(f)-math.Cbrt(g.Freq(j-i)))/g.Step)
			}
			j -= n
		}
	}
	if next != -1 {
		t.Fatalf("the blocks stop at cell %d", next+1)
	}
	if worst > 0.5+1e-9 {
		t.Errorf("a cell's trial lies %.3f grid steps away", worst)
	}
	t.Logf("%d cells in %d blocks of %d segments; farthest trial %.3f steps", g.N, len(blocks), len(segs), worst)
}

// TestFastScanFindsTheBruteForceBox compares the box scan of one folded profile with every
// box summed bin by bin, wrapping past the profile's end, under the statistic of Kovács,
// Zucker & Mazeh (2002): the largest s²/(r(1−r)) with s < 0 and r ≥ rmin. Empty bins are
// included.
func TestFastScanFindsTheBruteForceBox(t *testing.T) {
	g := normals{state: 5}
	const per, dt = 23, 0.01
	prof := make([]bin, per)
	for j := range prof {
		if j%5 == 3 {
			continue // an empty bin, as in a gap
		}
		w := 0.02 + 0.02*g.uniform()
		prof[j] = bin{w, w * 1e-3 * g.norm()}
	}
	prof[21].s -= 4e-4 // a dip across the wrap
	prof[0].s -= 4e-4
	p := &prepared{rmin: 0.03}
	for _, lens := range [][2]int{{1, 3}, {2, 6}, {4, 11}} {
		var sc scratch
		got := sc.fastScan(p, prof, dt, lens[0], lens[1])
		best, bj, bn := 0.0, -1, 0
		for n := lens[0]; n <= lens[1]; n++ {
			for j := 0; j < per; j++ {
				var r, s float64
				for i := j; i < j+n; i++ {
					r += prof[i%per].w
					s += prof[i%per].s
				}
				if v := s * s / (r * (1 - r)); s < 0 && r >= p.rmin && v > best {
					best, bj, bn = v, j, n
				}
			}
		}
		c := math.Mod((float64(bj)+float64(bn)/2)*dt, per*dt)
		if math.Abs(got.stat/best-1) > 1e-12 || math.Abs(got.duration-float64(bn)*dt) > 1e-12 || math.Abs(got.centre-c) > 1e-12 {
			t.Errorf("lengths %v: scan %+v, brute force stat %g, duration %g, centre %g", lens, got, best, float64(bn)*dt, c)
		}
	}
}

// fastCase is one synthetic light curve searched both ways.
type fastCase struct {
	name          string
	span, cadence float64
	gap           float64
	d             dip
	pmin, pmax    float64
}

// fastVersusDirect runs both periodograms and detections on one case.
func fastVersusDirect(t *testing.T, c fastCase) {
	c.d.duration = CentralDuration(c.d.period, solarDensity)
	s := synth(31, c.span, c.cadence, 1e-3, c.gap, c.d)
	p := prepare(s, nil, s.Cadence())
	g, err := NewGrid(solarDensity, s.Time[len(s.Time)-1]-s.Time[0], c.pmin, c.pmax, 3)
	if err != nil {
		t.Fatal(err)
	}
	fast, st := fastSpectrum(p, g, nil, nil)
	direct := periodogram(p, g, nil, nil)
	for j, v := range fast.power {
		if math.IsNaN(v) || math.IsNaN(fast.duration[j]) || math.IsNaN(fast.centre[j]) {
			t.Fatalf("the fast spectrum holds NaN at %d", j)
		}
	}
	if st.filled != 0 || st.trials != g.N {
		t.Errorf("%d folded trials and %d direct folds for %d grid cells", st.trials, st.filled, g.N)
	}
	sf, kf := detrendedSDE(fast.power)
	sd, kd := detrendedSDE(direct.power)
	t.Logf("peak P %.5f vs %.5f d (cells %d vs %d), power %.2f vs %.2f, SDE %.1f vs %.1f, %d folds for %d cells",
		g.Period(kf), g.Period(kd), kf, kd, fast.power[kf], direct.power[kd], sf, sd, st.folds, g.N)
	// The grid's relative step in period is 3·Step/f^{1/3}; a peak within two steps of the
	// injected period is the signal's.
	if tol := 2 * 3 * g.Step / math.Cbrt(1/c.d.period); math.Abs(g.Period(kf)/c.d.period-1) > tol {
		t.Fatalf("the fast peak is at %.5f d, injected %.5f d", g.Period(kf), c.d.period)
	}
	// The fast fold's box edges fall on bins of a quarter of the central duration T: a
	// transit of four bins starting half a bin off keeps at best √(4²/5 / 4) = 0.894 of its
	// power (a box of five bins), the direct fold's bins of 0.15·T keep at least 0.96,
	// and the two see the noise through different bins (a few % at these SNRs).
	if r := fast.power[kf] / direct.power[kd]; r < 0.85 || r > 1.05 {
		t.Errorf("peak power %.3f of the direct fold's", r)
	}
	df, _ := detect(p, g, fast, kf, sf, 2)
	dd, _ := detect(p, g, direct, kd, sd, 2)
	if df == nil || dd == nil {
		t.Fatalf("detection failed: fast %v, direct %v", df != nil, dd != nil)
	}
	compareDetections(t, df, dd)
}

// compareDetections requires the fast-fold detection to match the direct one within their
// stated errors (combined in quadrature, times 2).
func compareDetections(t *testing.T, a, b *Detection) {
	t.Helper()
	within := func(what string, x, y, sx, sy float64) {
		if d := math.Abs(x - y); d > 2*math.Hypot(sx, sy) {
			t.Errorf("%s: fast %.7g ± %.2g, direct %.7g ± %.2g", what, x, sx, y, sy)
		}
	}
	within("period", a.Timing.Period, b.Timing.Period, a.Timing.PeriodSigma, b.Timing.PeriodSigma)
	within("epoch", a.Timing.Epoch, b.Timing.Epoch, a.Timing.EpochSigma, b.Timing.EpochSigma)
	within("depth", a.Shape.Depth, b.Shape.Depth, a.Shape.DepthSigma, b.Shape.DepthSigma)
}

// TestFastPeriodogramFindsInjectedSignals injects box transits of a Sun-like star's central
// duration at short, medium and long periods (relative to the span), and on a light curve
// with a long gap, and compares the fast periodogram and its detection with the direct
// fold's.
func TestFastPeriodogramFindsInjectedSignals(t *testing.T) {
	for _, c := range []fastCase{
		{"a 0.83 d signal, short against a 120 d span", 120, 30.0 / 1440, 0,
			dip{period: 0.8317, epoch: 0.31, depth: 1.2e-3}, 0.5, 40},
		{"a 6.71 d signal", 120, 30.0 / 1440, 0, dip{period: 6.713, epoch: 2.2, depth: 1.5e-3}, 0.5, 40},
		{"a 37.3 d signal, three transits in 120 d", 120, 30.0 / 1440, 0,
			dip{period: 37.29, epoch: 11.4, depth: 2.5e-3}, 0.5, 40},
		{"a 4.17 d signal across a 50 d gap", 160, 30.0 / 1440, 50,
			dip{period: 4.171, epoch: 1.05, depth: 1.5e-3}, 0.5, 40},
	} {
		t.Run(c.name, func(t *testing.T) { fastVersusDirect(t, c) })
	}
}

// TestFastPeriodogramIsTheSameForAnyWorkers compares a serial run with a pool of two
// workers bit for bit, and counts the progress calls: one per block.
func TestFastPeriodogramIsTheSameForAnyWorkers(t *testing.T) {
	d := dip{period: 2.9, epoch: 0.7, depth: 1e-3}
	d.duration = CentralDuration(d.period, solarDensity)
	s := synth(41, 80, 30.0/1440, 1e-3, 0, d)
	p := prepare(s, nil, s.Cadence())
	g, err := NewGrid(solarDensity, s.Time[len(s.Time)-1]-s.Time[0], 0.5, 26, 3)
	if err != nil {
		t.Fatal(err)
	}
	a := fastPeriodogram(p, g, nil, nil)
	var mu sync.Mutex
	calls := 0
	b := fastPeriodogram(p, g, steps.NewPool(2).Parallel, func() {
		mu.Lock()
		calls++
		mu.Unlock()
	})
	if n := fastBlockCount(p, g); calls != n {
		t.Errorf("progress was called %d times for %d blocks", calls, n)
	}
	for j := range a.power {
		if math.Float64bits(a.power[j]) != math.Float64bits(b.power[j]) ||
			math.Float64bits(a.duration[j]) != math.Float64bits(b.duration[j]) ||
			math.Float64bits(a.centre[j]) != math.Float64bits(b.centre[j]) {
			t.Fatalf("cell %d differs: serial (%v, %v, %v), two workers (%v, %v, %v)", j,
				a.power[j], a.duration[j], a.centre[j], b.power[j], b.duration[j], b.centre[j])
		}
	}
}

// TestFastFoldSensitivity measures the power the fast fold keeps against the direct fold at
// injected signals of random period (0.5 to 40 d, log-uniform), epoch and impact parameter
// (duration √(1−b²)·T, b < 0.95, the shortest durations the search scans) on 120-day
// light curves at a 30-minute cadence, the best power within two grid
// cells of the injected period on each side. The noise (200 ppm against 1500 ppm dips) is
// low, so the ratio shows the binning rather than the noise. It takes a minute; run it
// with
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run FastFoldSensitivity -v
func TestFastFoldSensitivity(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("sensitivity of the fast fold against the direct fold; set DIPLINE_LONG=1 to run it")
	}
	const trials = 40
	u := normals{state: 77}
	var ratios []float64
	for i := 0; i < trials; i++ {
		per := 0.5 * math.Pow(80, u.uniform())
		b := 0.95 * u.uniform()
		d := dip{period: per, epoch: per * u.uniform(), depth: 1.5e-3}
		d.duration = CentralDuration(per, solarDensity) * math.Sqrt(1-b*b)
		s := synth(uint64(1000+i), 120, 30.0/1440, 2e-4, 0, d)
		p := prepare(s, nil, s.Cadence())
		g, err := NewGrid(solarDensity, s.Time[len(s.Time)-1]-s.Time[0], 0.4, 40, 3)
		if err != nil {
			t.Fatal(err)
		}
		fast := fastPeriodogram(p, g, nil, nil)
		direct := periodogram(p, g, nil, nil)
		j := int(math.Round((math.Cbrt(1/per) - math.Cbrt(g.FMin)) / g.Step))
		var pf, pd float64
		for k := max(0, j-2); k <= min(g.N-1, j+2); k++ {
			pf, pd = math.Max(pf, fast.power[k]), math.Max(pd, direct.power[k])
		}
		ratios = append(ratios, pf/pd)
	}
	slices.Sort(ratios)
	var mean float64
	for _, r := range ratios {
		mean += r / trials
	}
	t.Logf("fast/direct peak power over %d injections: mean %.3f, min %.3f, 10%% %.3f, median %.3f, max %.3f",
		trials, mean, ratios[0], ratios[trials/10], ratios[trials/2], ratios[trials-1])
	// Guards against a loss of sensitivity, below the figures measured when the fast fold
	// was written (mean 0.936, least 0.771, a transit of one cadence; see fastfold.go): the
	// mean less 0.02, the least less 0.03 (it moves with where each transit falls on the
	// bins).
	if mean < 0.916 || ratios[0] < 0.741 {
		t.Errorf("the fast fold keeps %.3f of the power on average, %.3f at least", mean, ratios[0])
	}
}

// TestFastFoldNoiseSDE repeats the white-noise measurement behind DefaultThreshold
// (TestCalibrateSDEThreshold, same cases and seeds) with the fast fold's spectrum, and
// checks that the threshold still bounds the 99th percentile of the highest SDE. It takes
// a few minutes; run it with
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run FastFoldNoiseSDE -v -timeout 1h
//
// (DIPLINE_SDE_TRIALS sets the trials per case, default 500).
func TestFastFoldNoiseSDE(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("white-noise SDE of the fast fold; set DIPLINE_LONG=1 to run it")
	}
	trials := 500
	if v, err := strconv.Atoi(os.Getenv("DIPLINE_SDE_TRIALS")); err == nil && v > 0 {
		trials = v
	}
	for i, c := range noiseCases {
		t.Run(c.name, func(t *testing.T) {
			v := make([]float64, trials)
			steps.NewPool(runtime.GOMAXPROCS(0)).Parallel(trials, func(k int) {
				s := synth(uint64(1_000_000*(i+1)+k), c.span, c.cadence, 1e-3, c.gap)
				o := c.options()
				g, err := NewGrid(o.Density, s.Time[len(s.Time)-1]-s.Time[0], o.PeriodMin, o.PeriodMax, o.Oversampling)
				if err != nil {
					panic(err)
				}
				v[k], _ = detrendedSDE(fastPeriodogram(prepare(s, nil, s.Cadence()), g, nil, nil).power)
			})
			q50, q99 := quantile(v, 0.5), quantile(v, 0.99)
			t.Logf("%s: %d trials; fast-fold SDE median %.2f, 99%% %.2f, max %.2f", c.name, trials, q50, q99, v[len(v)-1])
			if th := caseThreshold(c); q99 > th {
				t.Errorf("the 99th percentile %.2f exceeds the default threshold %.2f", q99, th)
			}
		})
	}
}
