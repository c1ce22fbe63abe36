package bls

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
)

// TestBoxStatisticIsTheChiSquareGain checks the identity behind the statistic (Kovács,
// Zucker & Mazeh 2002): with normalised weights and data shifted to weighted mean zero, the
// χ² of a constant minus the χ² of the best two-level box equals Σσ⁻²·s²/(r(1−r)), and the
// fitted depth is −s/(r(1−r)). The reference is a direct least-squares fit of both models.
func TestBoxStatisticIsTheChiSquareGain(t *testing.T) {
	g := normals{state: 3}
	var s Series
	for i := 0; i < 300; i++ {
		s.Time = append(s.Time, float64(i)*0.01)
		s.Flux = append(s.Flux, 1+1e-3*g.norm())
		s.Err = append(s.Err, 1e-3*(0.5+g.uniform()))
	}
	p := prepare(s, nil, 0.01)
	in := func(i int) bool { return i >= 120 && i < 160 }
	// Direct fits: weighted means of all points, of those in and of those out.
	mean := func(sel func(int) bool) float64 {
		var w, f float64
		for i := range s.Time {
			if sel(i) {
				w += 1 / (s.Err[i] * s.Err[i])
				f += s.Flux[i] / (s.Err[i] * s.Err[i])
			}
		}
		return f / w
	}
	all := func(int) bool { return true }
	out := func(i int) bool { return !in(i) }
	mAll, mIn, mOut := mean(all), mean(in), mean(out)
	var chiConst, chiBox float64
	for i := range s.Time {
		iv := 1 / (s.Err[i] * s.Err[i])
		chiConst += iv * (s.Flux[i] - mAll) * (s.Flux[i] - mAll)
		m := mOut
		if in(i) {
			m = mIn
		}
		chiBox += iv * (s.Flux[i] - m) * (s.Flux[i] - m)
	}
	var r, sum float64
	for i := range p.t {
		if in(i) {
			r += p.w[i]
			sum += p.wx[i]
		}
	}
	if got, want := p.sumW*sum*sum/(r*(1-r)), chiConst-chiBox; math.Abs(got/want-1) > 1e-9 {
		t.Errorf("Σσ⁻²·s²/(r(1−r)) = %.10g, direct Δχ² = %.10g", got, want)
	}
	if got, want := -sum/(r*(1-r)), mOut-mIn; math.Abs(got-want) > 1e-12 {
		t.Errorf("depth −s/(r(1−r)) = %.10g, direct %.10g", got, want)
	}
}

// TestFoldAndScanFindTheBestBinnedBox compares the cumulative-sum scan with a brute-force
// one: bins filled by math.Mod phases and every box summed bin by bin, wrapping past phase 1.
func TestFoldAndScanFindTheBestBinnedBox(t *testing.T) {
	d := dip{period: 2.37, epoch: 0.4, duration: 0.12, depth: 2e-3}
	s := synth(11, 20, 0.01, 1e-3, 0, d)
	p := prepare(s, nil, s.Cadence())
	for _, f := range []float64{1 / 2.37, 1 / 1.9, 1 / 5.3, 1 / 0.83} {
		lo, hi := durationRange(1/f, solarDensity, p.cadence)
		var sc scratch
		got := sc.best(p, f, lo, hi)

		nb, nlo, nhi := phaseBins(f, lo, hi)
		bw := make([]float64, nb)
		bs := make([]float64, nb)
		for i, tm := range p.t {
			k := int(math.Mod(tm*f, 1) * float64(nb))
			bw[k%nb] += p.w[i]
			bs[k%nb] += p.wx[i]
		}
		best := 0.0
		for n := nlo; n <= nhi; n++ {
			for j := 0; j < nb; j++ {
				var r, sum float64
				for k := j; k < j+n; k++ {
					r += bw[k%nb]
					sum += bs[k%nb]
				}
				if sum < 0 && r >= p.rmin {
					best = math.Max(best, sum*sum/(r*(1-r)))
				}
			}
		}
		if math.Abs(got.stat/best-1) > 1e-9 {
			t.Errorf("P = %.3f d: scan %.10g, brute force %.10g", 1/f, got.stat, best)
		}
	}
}

func TestFoldingTwoFrequenciesAtOnceChangesNothing(t *testing.T) {
	s := synth(12, 30, 0.01, 1e-3, 0, dip{period: 3.3, epoch: 1, duration: 0.1, depth: 1e-3})
	p := prepare(s, nil, s.Cadence())
	var sc scratch
	for _, f := range []float64{0.05, 0.3, 1.1, 1.6} {
		f2 := f * 1.0001
		lo1, hi1 := durationRange(1/f, solarDensity, p.cadence)
		lo2, hi2 := durationRange(1/f2, solarDensity, p.cadence)
		a, b := sc.bestPair(p, f, lo1, hi1, f2, lo2, hi2)
		if a != sc.best(p, f, lo1, hi1) || b != sc.best(p, f2, lo2, hi2) {
			t.Errorf("f = %g 1/d: the paired fold gives other boxes than two single folds", f)
		}
	}
}

func TestSDEOfAHandMadeSpectrum(t *testing.T) {
	// Mean 1.8 and population standard deviation 1.6 by hand: SDE = (5 − 1.8)/1.6 = 2.
	v, peak := sde([]float64{1, 1, 5, 1, 1})
	if math.Abs(v-2) > 1e-12 || peak != 2 {
		t.Errorf("SDE = %g at %d, want 2 at 2", v, peak)
	}
	if v, _ := sde([]float64{3, 3, 3}); v != 0 {
		t.Errorf("a flat spectrum has SDE %g, want 0", v)
	}
}

func TestSearchRecoversInjectedSignals(t *testing.T) {
	rhoDwarf := densityOf(0.5, 0.5)
	cases := []struct {
		name          string
		density       float64
		span, cadence float64
		sigma, gap    float64
		d             dip
		trapezoid     bool
		pmin, pmax    float64
	}{
		{"a 4.3 d box around a Sun-like star", solarDensity, 60, 30.0 / 1440, 5e-4, 0,
			dip{period: 4.3, epoch: 1.7, depth: 1e-3}, false, 0.6, 30},
		{"an 11.7 d box around a red dwarf with a gap", rhoDwarf, 90, 10.0 / 1440, 1e-3, 4,
			dip{period: 11.7, epoch: 5.2, depth: 1.5e-3}, false, 0.3, 45},
		{"a 0.93 d trapezoid around a Sun-like star", solarDensity, 45, 10.0 / 1440, 1e-3, 0,
			dip{period: 0.93, epoch: 0.21, depth: 6e-4}, true, 0.6, 22},
	}
	for _, c := range cases {
		t.Run("it finds "+c.name, func(t *testing.T) {
			c.d.duration = CentralDuration(c.d.period, c.density)
			if c.trapezoid {
				c.d.ingress = 0.15 * c.d.duration
			}
			s := synth(5, c.span, c.cadence, c.sigma, c.gap, c.d)
			o := defaultOptions(c.pmin, c.pmax)
			o.Density, o.MaxSignals = c.density, 1
			res, err := Search(s, o, nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			f := res.Passes[0].Found
			if f == nil {
				t.Fatalf("nothing found; SDE %.2f at P = %.4f d", res.Passes[0].SDE, res.Grid.Period(res.Passes[0].Peak))
			}
			tm, sh := f.Timing, f.Shape
			// The period must beat the duration/baseline scale (KZM 2002; common practice) and
			// lie within 3σ of the truth.
			if rel := math.Abs(tm.Period/c.d.period - 1); rel > c.d.duration/c.span || math.Abs(tm.Period-c.d.period) > 3*tm.PeriodSigma {
				t.Errorf("period %.6f ± %.6f d, injected %.6f (scale %.2g)", tm.Period, tm.PeriodSigma, c.d.period, c.d.duration/c.span)
			}
			x := (tm.Epoch - c.d.epoch) / c.d.period
			if off := math.Abs(x-math.Round(x)) * c.d.period; off > 0.1*c.d.duration {
				t.Errorf("epoch %.5f ± %.5f is %.4f d from a transit", tm.Epoch, tm.EpochSigma, off)
			}
			// A box's depth comes back unbiased. A trapezoid's lies between its mean depth over
			// first to last contact, δ(1 − τ/T), and its full depth δ (geometry).
			lo, hi := c.d.depth, c.d.depth
			if c.trapezoid {
				lo = c.d.depth * (1 - c.d.ingress/c.d.duration)
			}
			if sh.Depth < lo-3*sh.DepthSigma || sh.Depth > hi+3*sh.DepthSigma {
				t.Errorf("depth %.1f ± %.1f ppm, want %.1f … %.1f", sh.Depth*1e6, sh.DepthSigma*1e6, lo*1e6, hi*1e6)
			}
			if math.Abs(sh.Duration/c.d.duration-1) > 0.25 {
				t.Errorf("duration %.4f d, injected %.4f", sh.Duration, c.d.duration)
			}
			// Every transit in the data has points; count them independently.
			n := 0
			for k := -1; float64(k)*c.d.period+c.d.epoch < c.span+1; k++ {
				mid := c.d.epoch + float64(k)*c.d.period
				if mid > 0 && mid < c.span && (c.gap == 0 || math.Abs(mid-c.span/2) > c.gap/2+c.d.duration) {
					n++
				}
			}
			if f.Strength.Transits != n {
				t.Errorf("%d transits with data, %d injected outside the gap", f.Strength.Transits, n)
			}
			if f.Strength.SNR < 7 || f.Strength.SDE < o.SDEThreshold {
				t.Errorf("SNR %.1f, SDE %.1f", f.Strength.SNR, f.Strength.SDE)
			}
		})
	}
}

func TestIterativeSearchFindsTwoPlanets(t *testing.T) {
	a := dip{period: 3.1, epoch: 0.9, depth: 1.5e-3}
	b := dip{period: 7.7, epoch: 4.4, depth: 1e-3}
	a.duration = CentralDuration(a.period, solarDensity)
	b.duration = CentralDuration(b.period, solarDensity)
	s := synth(21, 80, 30.0/1440, 7e-4, 0, a, b)
	res, err := Search(s, defaultOptions(0.6, 40), nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var found []*Detection
	for _, p := range res.Passes {
		if p.Found != nil {
			found = append(found, p.Found)
		}
	}
	if len(found) != 2 || len(res.Passes) != 3 {
		for _, p := range res.Passes {
			t.Logf("pass: SDE %.2f, P %.4f", p.SDE, res.Grid.Period(p.Peak))
		}
		t.Fatalf("%d signals in %d passes, want 2 signals and a third pass below the threshold", len(found), len(res.Passes))
	}
	for _, want := range []dip{a, b} {
		ok := false
		for _, f := range found {
			if math.Abs(f.Timing.Period-want.period) < 3*f.Timing.PeriodSigma+1e-4*want.period {
				ok = true
			}
		}
		if !ok {
			t.Errorf("no signal at %.2f d: found %.4f and %.4f d", want.period, found[0].Timing.Period, found[1].Timing.Period)
		}
	}
}

// TestPeriodErrorMatchesTheScatter runs 40 noise realisations of one injected signal and
// compares the root-mean-square error of the period with the mean reported σ_P (Monte Carlo,
// this test). The reported error must neither understate the scatter by more than a factor
// 1.6 nor overstate it by more than 2.5.
func TestPeriodErrorMatchesTheScatter(t *testing.T) {
	for _, ingress := range []float64{0, 0.2} {
		name := "a box"
		if ingress > 0 {
			name = "a trapezoid"
		}
		t.Run("for "+name, func(t *testing.T) {
			var ss, sig float64
			n := 40
			for k := 0; k < n; k++ {
				d := dip{period: 4.3, epoch: 1.7 + 0.3*float64(k%7)/7, depth: 1e-3}
				d.duration = CentralDuration(d.period, solarDensity)
				d.ingress = ingress * d.duration
				s := synth(uint64(100+k), 60, 30.0/1440, 5e-4, 0, d)
				o := defaultOptions(4.0, 4.6)
				o.MaxSignals, o.SDEThreshold = 1, 0.1 // a narrow range: SDE means little
				res, err := Search(s, o, nil, nil)
				if err != nil {
					t.Fatal(err)
				}
				f := res.Passes[0].Found
				if f == nil {
					t.Fatalf("realisation %d: nothing found", k)
				}
				ss += (f.Timing.Period - d.period) * (f.Timing.Period - d.period)
				sig += f.Timing.PeriodSigma
			}
			rms, mean := math.Sqrt(ss/float64(n)), sig/float64(n)
			t.Logf("rms error %.3g d, mean σ_P %.3g d", rms, mean)
			if rms > 1.6*mean || rms < mean/2.5 {
				t.Errorf("rms period error %.3g d against a mean reported σ_P of %.3g d", rms, mean)
			}
		})
	}
}

func TestSameResultForAnyNumberOfWorkers(t *testing.T) {
	d := dip{period: 2.9, epoch: 0.5, depth: 1e-3}
	d.duration = CentralDuration(d.period, solarDensity)
	s := synth(8, 40, 20.0/1440, 8e-4, 0, d)
	var ref *Result
	for _, n := range []int{1, 2, 4} {
		pool := steps.NewPool(n)
		res, err := Search(s, defaultOptions(0.6, 20), pool.Parallel, nil)
		if err != nil {
			t.Fatal(err)
		}
		if ref == nil {
			ref = res
			continue
		}
		if len(res.Passes) != len(ref.Passes) {
			t.Fatalf("pool of %d: %d passes, want %d", n, len(res.Passes), len(ref.Passes))
		}
		for k, p := range res.Passes {
			q := ref.Passes[k]
			for j := range p.Power {
				if math.Float64bits(p.Power[j]) != math.Float64bits(q.Power[j]) || p.Duration[j] != q.Duration[j] {
					t.Fatalf("pool of %d, pass %d: frequency %d differs", n, k, j)
				}
			}
			if (p.Found == nil) != (q.Found == nil) || (p.Found != nil && *p.Found != *q.Found) {
				t.Fatalf("pool of %d, pass %d: detections differ", n, k)
			}
		}
	}
}

func TestSearchRefusesUnusableInput(t *testing.T) {
	good := synth(1, 30, 0.02, 1e-3, 0)
	bad := func(edit func(*Series)) Series {
		s := Series{Time: append([]float64(nil), good.Time...), Flux: append([]float64(nil), good.Flux...), Err: append([]float64(nil), good.Err...)}
		edit(&s)
		return s
	}
	cases := []struct {
		name, want string
		s          Series
		o          Options
	}{
		{"a NaN flux at point 7", "point 7", bad(func(s *Series) { s.Flux[6] = math.NaN() }), defaultOptions(1, 10)},
		{"a zero error at point 12", "point 12", bad(func(s *Series) { s.Err[11] = 0 }), defaultOptions(1, 10)},
		{"unsorted times at point 3", "point 3", bad(func(s *Series) { s.Time[2] = -1 }), defaultOptions(1, 10)},
		{"columns of unequal length", "columns", bad(func(s *Series) { s.Err = s.Err[:5] }), defaultOptions(1, 10)},
		{"ten points", "too few", bad(func(s *Series) { s.Time, s.Flux, s.Err = s.Time[:10], s.Flux[:10], s.Err[:10] }), defaultOptions(1, 10)},
		{"a longest period beyond the span", "exceeds the data span", good, defaultOptions(1, 40)},
		{"an orbit inside the star", "inside the star", good, defaultOptions(0.05, 10)},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			_, err := Search(c.s, c.o, nil, nil)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want one mentioning %q", err, c.want)
			}
		})
	}
}
