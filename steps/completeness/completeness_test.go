package completeness

import (
	"context"
	"math"
	"os"
	"reflect"
	"testing"

	"dipline/steps"
	"dipline/steps/detrend"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/proportion"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/synth"
	"dipline/steps/internal/transit"
	"dipline/steps/search"
	"dipline/steps/search/bls"
)

// sunLike is an invented Sun-like star: 1.41 g/cm³ (the Sun's mean density, from memory)
// and quadratic limb darkening (0.40, 0.26), typical of a G dwarf in a red band (from
// memory; any plausible pair serves these tests).
var sunLike = Star{Density: 1.41, U1: 0.40, U2: 0.26}

// long says whether the long measurements were asked for (DIPLINE_LONG=1).
func long() bool { return os.Getenv("DIPLINE_LONG") != "" }

// whiteCurve is an invented light curve: one segment of days days at cadence (days), each
// point integrated over the whole cadence, constant flux with white noise of relative size
// noise drawn from seed; errors equal noise (noise 0 gives a flat curve with errors 0).
func whiteCurve(days, cadence, noise float64, seed uint64) *lightcurve.LightCurve {
	n := int(math.Floor(days/cadence)) + 1
	seg := lightcurve.Segment{ID: "1", Exposure: cadence, Contamination: math.NaN(),
		Time: make([]float64, n), Flux: make([]float64, n), Err: make([]float64, n)}
	r := rng.New(seed)
	for i := range seg.Time {
		seg.Time[i] = float64(i) * cadence
		seg.Flux[i] = 1 + noise*r.Normal()
		seg.Err[i] = noise
	}
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{seg}}
}

// configs returns the detrend and search configurations a workflow gets by default, with
// the search's star density set to st's and at most maxSignals signals.
func configs(t testing.TB, st Star, maxSignals int) (detrend.Config, search.Config) {
	t.Helper()
	d := steptest.MustConfig(detrend.New(), map[string]any{"light_curve": "photometry.raw"}).(*detrend.Config)
	s := steptest.MustConfig(search.New(), map[string]any{"light_curve": "detrend.flat", "max_signals": maxSignals}).(*search.Config)
	rho := st.Density
	s.Density = &rho
	return *d, *s
}

// matchedSNR is the optimal (matched-filter) signal to noise of an injection into lc:
// √Σ((1 − m_i)/σ_i)² over the noiseless injected model m on lc's times, σ lc's errors.
func matchedSNR(t testing.TB, lc *lightcurve.LightCurve, inj Injection, st Star) float64 {
	t.Helper()
	flat := copyCurve(lc)
	for i := range flat.Segments {
		for j := range flat.Segments[i].Flux {
			flat.Segments[i].Flux[j] = 1
		}
	}
	m, err := Inject(flat, inj, st)
	if err != nil {
		t.Fatal(err)
	}
	s := 0.0
	for _, seg := range m.Segments {
		for j, f := range seg.Flux {
			s += (1 - f) * (1 - f) / (seg.Err[j] * seg.Err[j])
		}
	}
	return math.Sqrt(s)
}

// copyCurve is a deep copy of lc's columns.
func copyCurve(lc *lightcurve.LightCurve) *lightcurve.LightCurve {
	out := *lc
	out.Segments = append([]lightcurve.Segment(nil), lc.Segments...)
	for i := range out.Segments {
		s := &out.Segments[i]
		s.Time = append([]float64(nil), s.Time...)
		s.Flux = append([]float64(nil), s.Flux...)
		s.Err = append([]float64(nil), s.Err...)
	}
	return &out
}

// withSNR returns inj with the radius ratio that gives it a matched SNR of about target in
// lc: the SNR of a small planet grows nearly as k², so two rescalings from a trial k come
// within a few per cent. The impact parameter is kept below 1 − k.
func withSNR(t testing.TB, lc *lightcurve.LightCurve, inj Injection, st Star, target float64) Injection {
	t.Helper()
	inj.RadiusRatio = 0.01
	for pass := 0; pass < 3; pass++ {
		inj.Impact = math.Min(inj.Impact, 0.95*(1-inj.RadiusRatio))
		inj.RadiusRatio *= math.Sqrt(target / matchedSNR(t, lc, inj, st))
	}
	inj.Impact = math.Min(inj.Impact, 0.95*(1-inj.RadiusRatio))
	return inj
}

// aR is a/R* from Kepler's third law written out, a/R* = (G ρ P²/3π)^{1/3} (Seager &
// Mallén-Ornelas 2003), with G = 6.674e-11 m³ kg⁻¹ s⁻² (CODATA 2018, from memory), as an
// independent check on the package's own route through bls.ScaledAxis.
func aR(period, density float64) float64 {
	p := period * 86400
	return math.Cbrt(6.674e-11 * density * 1000 * p * p / (3 * math.Pi))
}

func TestInjectMidTransitIsTheModel(t *testing.T) {
	// Source: with an exposure of 1e-7 d the average over the exposure is the instantaneous
	// Mandel & Agol flux (transit.Flux) at z = b to second order in the exposure, ~1e-15 here.
	for _, c := range []struct{ k, b float64 }{{0.01, 0}, {0.05, 0.3}, {0.1, 0.7}, {0.2, 0.79}, {0.1, 1.0}} {
		lc := whiteCurve(10, 0.01, 0, 1)
		lc.Segments[0].Exposure = 1e-7
		inj := Injection{Period: 3.3, Epoch: 2.5, RadiusRatio: c.k, Impact: c.b} // t = 2.5 is point 250
		got, err := Inject(lc, inj, sunLike)
		if err != nil {
			t.Fatal(err)
		}
		want := transit.Flux(nil, []float64{c.b}, c.k, sunLike.U1, sunLike.U2)[0]
		if d := math.Abs(got.Segments[0].Flux[250] - want); d > 1e-9 {
			t.Errorf("k %v, b %v: mid-transit flux %.12f, Mandel & Agol %.12f (off by %.2g)", c.k, c.b, got.Segments[0].Flux[250], want, d)
		}
		if want >= 1 {
			t.Errorf("k %v, b %v: no transit at mid-transit (flux %v)", c.k, c.b, want)
		}
	}
}

// simpson integrates the instantaneous model over [t − T/2, t + T/2] by the composite
// Simpson rule with 1000 intervals (a quadrature independent of the midpoint rule Inject
// uses), returning the mean.
func simpson(t, exposure float64, inj Injection, st Star) float64 {
	const n = 1000
	ts := make([]float64, n+1)
	for i := range ts {
		ts[i] = t - exposure/2 + exposure*float64(i)/n
	}
	a := bls.ScaledAxis(inj.Period, st.Density)
	z := transit.SeparationCircular(nil, ts, inj.Period, inj.Epoch, a, inj.Impact)
	f := transit.Flux(nil, z, inj.RadiusRatio, st.U1, st.U2)
	s := f[0] + f[n]
	for i := 1; i < n; i++ {
		s += float64(2+2*(i%2)) * f[i]
	}
	return s / (3 * n)
}

func TestInjectIntegratesTheExposure(t *testing.T) {
	// Source: numerical quadrature (composite Simpson, 1000 intervals) of the same model
	// over each 30-minute exposure; agreement within 1e-6 in relative flux.
	for _, inj := range []Injection{
		{Period: 3.3, Epoch: 1.23, RadiusRatio: 0.1, Impact: 0.2},
		{Period: 1.1, Epoch: 0.41, RadiusRatio: 0.2, Impact: 0.75},
		{Period: 7.9, Epoch: 5.07, RadiusRatio: 0.05, Impact: 1.02}, // grazing
		{Period: 0.6, Epoch: 0.33, RadiusRatio: 0.02, Impact: 0},
	} {
		lc := whiteCurve(12, 30.0/1440, 0, 1)
		got, err := Inject(lc, inj, sunLike)
		if err != nil {
			t.Fatal(err)
		}
		seg := got.Segments[0]
		worst, inside := 0.0, 0
		for i, ti := range seg.Time {
			want := simpson(ti, seg.Exposure, inj, sunLike)
			worst = math.Max(worst, math.Abs(seg.Flux[i]-want))
			if want < 1 {
				inside++
			}
		}
		if worst > 1e-6 || inside == 0 {
			t.Errorf("%+v: largest difference from the quadrature %.3g over %d points in transit", inj, worst, inside)
		}
	}
}

func TestInjectLeavesOutOfTransitBitForBit(t *testing.T) {
	// Source: a point whose whole exposure lies beyond first contact is multiplied by
	// nothing; its bits must be the input's. Contact from Winn (2010) T14 (astro, through
	// duration), with one exposure to spare.
	lc := whiteCurve(30, 30.0/1440, 1e-3, 7)
	before := copyCurve(lc)
	inj := Injection{Period: 4.1, Epoch: 2.2, RadiusRatio: 0.08, Impact: 0.4}
	got, err := Inject(lc, inj, sunLike)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(lc.Segments[0].Flux, before.Segments[0].Flux) {
		t.Fatal("Inject changed its input")
	}
	s, in := got.Segments[0], lc.Segments[0]
	half := duration(inj, sunLike)/2 + s.Exposure
	changed, outside := 0, 0
	for i, ti := range s.Time {
		x := (ti - inj.Epoch) / inj.Period
		far := math.Abs(x-math.Round(x))*inj.Period > half
		if far {
			outside++
			if math.Float64bits(s.Flux[i]) != math.Float64bits(in.Flux[i]) {
				t.Fatalf("point %d at %v, out of transit: flux %v became %v", i, ti, in.Flux[i], s.Flux[i])
			}
		} else if s.Flux[i] != in.Flux[i] {
			changed++
		}
		if math.Float64bits(s.Err[i]) != math.Float64bits(in.Err[i]) || s.Time[i] != in.Time[i] {
			t.Fatalf("point %d: time or error changed", i)
		}
	}
	if changed == 0 || outside == 0 {
		t.Errorf("%d points changed in transit, %d out of transit: the test saw nothing", changed, outside)
	}
}

func TestInjectRejectsBadInput(t *testing.T) {
	// Source: the domain of the model (0 < k < 1, 0 ≤ b < 1 + k, a/R* > 1 + k).
	lc := whiteCurve(5, 0.02, 0, 1)
	ok := Injection{Period: 2, Epoch: 1, RadiusRatio: 0.1, Impact: 0.3}
	cases := map[string]func() (Injection, Star){
		"zero period":           func() (Injection, Star) { i := ok; i.Period = 0; return i, sunLike },
		"NaN epoch":             func() (Injection, Star) { i := ok; i.Epoch = math.NaN(); return i, sunLike },
		"radius ratio 1":        func() (Injection, Star) { i := ok; i.RadiusRatio = 1; return i, sunLike },
		"impact beyond 1+k":     func() (Injection, Star) { i := ok; i.Impact = 1.2; return i, sunLike },
		"negative density":      func() (Injection, Star) { s := sunLike; s.Density = -1; return ok, s },
		"orbit inside the star": func() (Injection, Star) { i := ok; i.Period = 0.01; return i, sunLike },
	}
	for name, c := range cases {
		inj, st := c()
		if _, err := Inject(lc, inj, st); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	if _, err := Inject(nil, ok, sunLike); err == nil {
		t.Error("nil light curve: no error")
	}
}

var testCells = []Cell{
	{PeriodLo: 0.5, PeriodHi: 2, RadiusLo: 0.01, RadiusHi: 0.02},
	{PeriodLo: 2, PeriodHi: 10, RadiusLo: 0.02, RadiusHi: 0.2},
	{PeriodLo: 10, PeriodHi: 100, RadiusLo: 0.3, RadiusHi: 0.6},
}

func TestPlanIsReproducibleAndExtends(t *testing.T) {
	// Source: the stream of draw j of a cell depends on the seed, the cell's bounds and j
	// alone (Plan's doc).
	span := [2]float64{100, 190}
	a, err := Plan(testCells, 20, 42, span)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := Plan(testCells, 20, 42, span)
	if !reflect.DeepEqual(a, b) {
		t.Fatal("two plans from one seed differ")
	}
	c, _ := Plan(testCells, 35, 42, span)
	if !reflect.DeepEqual(a, c[:len(a)]) {
		t.Fatal("raising the injections per cell changed the earlier draws")
	}
	d, _ := Plan(testCells, 20, 43, span)
	if reflect.DeepEqual(a, d) {
		t.Fatal("another seed gave the same plan")
	}
	if len(c) != 35*len(testCells) {
		t.Fatalf("%d draws, want %d", len(c), 35*len(testCells))
	}
	// A grid with a cell added in front keeps every other cell's draws.
	wider := append([]Cell{{PeriodLo: 0.3, PeriodHi: 0.5, RadiusLo: 0.01, RadiusHi: 0.02}}, testCells...)
	e, _ := Plan(wider, 20, 42, span)
	for _, dr := range e {
		if dr.Cell == 0 {
			continue
		}
		want := a[dr.Index*len(testCells)+dr.Cell-1]
		if want.Injection != dr.Injection {
			t.Fatalf("adding a cell moved draw %d of cell %d: %+v, was %+v", dr.Index, dr.Cell, dr.Injection, want.Injection)
		}
	}
}

func TestPlanDrawsInsideCells(t *testing.T) {
	// Source: Plan's stated ranges: P and k in the cell, epoch in [start, start + P),
	// b in [0, 1 − k).
	span := [2]float64{100, 190}
	drawn, err := Plan(testCells, 500, 7, span)
	if err != nil {
		t.Fatal(err)
	}
	count := make([]int, len(testCells))
	for _, d := range drawn {
		c, inj := testCells[d.Cell], d.Injection
		count[d.Cell]++
		if inj.Period < c.PeriodLo || inj.Period >= c.PeriodHi || inj.RadiusRatio < c.RadiusLo || inj.RadiusRatio >= c.RadiusHi {
			t.Fatalf("draw %+v outside its cell %+v", d, c)
		}
		if inj.Epoch < span[0] || inj.Epoch >= span[0]+inj.Period {
			t.Fatalf("draw %+v: epoch outside the first period of the data", d)
		}
		if inj.Impact < 0 || inj.Impact >= 1-inj.RadiusRatio {
			t.Fatalf("draw %+v: impact parameter not in [0, 1 − k)", d)
		}
	}
	for c, n := range count {
		if n != 500 {
			t.Errorf("cell %d has %d draws, want 500", c, n)
		}
	}
	// Log-uniform periods: a quarter of the draws of cell 1 lie below 2·5^(1/4) d; with
	// 500 draws the count's standard deviation is ~9.7, so 125 ± 45 holds beyond 4.5σ.
	below := 0
	for _, d := range drawn {
		if d.Cell == 1 && d.Injection.Period < 2*math.Pow(5, 0.25) {
			below++
		}
	}
	if below < 80 || below > 170 {
		t.Errorf("%d of 500 periods below the first log-quartile, want about 125", below)
	}
}

func TestPlanAndGridRejectBadInput(t *testing.T) {
	// Source: Plan's and Grid's documented domains.
	if _, err := Plan([]Cell{{PeriodLo: 2, PeriodHi: 1, RadiusLo: 0.01, RadiusHi: 0.02}}, 1, 1, [2]float64{0, 1}); err == nil {
		t.Error("decreasing periods accepted")
	}
	if _, err := Plan([]Cell{{PeriodLo: 1, PeriodHi: 2, RadiusLo: 0.5, RadiusHi: 1.5}}, 1, 1, [2]float64{0, 1}); err == nil {
		t.Error("radius ratio beyond 1 accepted")
	}
	if _, err := Plan(testCells, -1, 1, [2]float64{0, 1}); err == nil {
		t.Error("negative count accepted")
	}
	if _, err := Plan(testCells, 1, 1, [2]float64{1, 1}); err == nil {
		t.Error("empty data span accepted")
	}
	if _, err := Grid([]float64{1}, []float64{0.01, 0.1}); err == nil {
		t.Error("one period edge accepted")
	}
	if _, err := Grid([]float64{1, 3, 2}, []float64{0.01, 0.1}); err == nil {
		t.Error("unsorted period edges accepted")
	}
}

func TestGridFromEdges(t *testing.T) {
	// Source: Grid's documented order, period by period.
	cells, err := Grid([]float64{1, 3, 10}, []float64{0.01, 0.02, 0.05, 0.1})
	if err != nil {
		t.Fatal(err)
	}
	if len(cells) != 6 {
		t.Fatalf("%d cells, want 6", len(cells))
	}
	want := Cell{PeriodLo: 3, PeriodHi: 10, RadiusLo: 0.02, RadiusHi: 0.05} // i = 1, j = 1
	if cells[1*3+1] != want {
		t.Errorf("cell 4 is %+v, want %+v", cells[4], want)
	}
}

func TestSummariseCountsAndProbability(t *testing.T) {
	// Source: counts by hand; the interval is proportion.Jeffreys at the one-sigma level;
	// the transit probability is (1 − k)R*/a (Winn 2010 eq. 9 with e = 0, from memory)
	// with a/R* written out in aR.
	cells := testCells[:2]
	drawn := []Drawn{
		{Cell: 0, Injection: Injection{Period: 1, RadiusRatio: 0.01}},
		{Cell: 0, Injection: Injection{Period: 1.5, RadiusRatio: 0.015}},
		{Cell: 0, Injection: Injection{Period: 1.9, RadiusRatio: 0.02}},
		{Cell: 0, Injection: Injection{Period: 0.6, RadiusRatio: 0.012}},
	}
	out := []Outcome{{Recovered: true}, {Harmonic: true}, {Recovered: true}, {}}
	sum, err := Summarise(drawn, out, cells, sunLike.Density)
	if err != nil {
		t.Fatal(err)
	}
	s := sum[0]
	if s.Injected != 4 || s.Recovered != 2 || s.Harmonic != 1 || s.Fraction != 0.5 {
		t.Errorf("counts %+v, want 4 injected, 2 recovered, 1 harmonic", s)
	}
	iv, _ := proportion.Jeffreys(2, 4, proportion.OneSigma)
	if s.Interval != iv || !(iv.Lower < 0.5 && iv.Upper > 0.5) {
		t.Errorf("interval %+v, want %+v around 0.5", s.Interval, iv)
	}
	meanP, meanK := (1+1.5+1.9+0.6)/4, (0.01+0.015+0.02+0.012)/4
	want := (1 - meanK) / aR(meanP, sunLike.Density)
	if math.Abs(s.TransitProbability-want) > 1e-3*want || math.Abs(s.MeanPeriod-meanP) > 1e-12 {
		t.Errorf("transit probability %v at mean period %v, want %v at %v", s.TransitProbability, s.MeanPeriod, want, meanP)
	}
	if sum[1].Injected != 0 || !math.IsNaN(sum[1].Fraction) {
		t.Errorf("empty cell summarised as %+v", sum[1])
	}
	if _, err := Summarise(drawn, out[:3], cells, 1.4); err == nil {
		t.Error("outcomes of another length accepted")
	}
}

func TestFlattenIsTheDetrendCurve(t *testing.T) {
	// Source: detrend.Detrend itself; detrend.Flatten, which the injections use, must give
	// its light curve byte for byte for every estimator (an invented spotted star with
	// flares of white noise).
	s := synth.Curve{Span: 25, Cadence: 30.0 / 1440, Noise: 1e-3, Seed: 3,
		Star: synth.Rotation{Period: 4.2, Amplitudes: []float64{0.01, 0.003}}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", Segments: []lightcurve.Segment{{ID: "1", Exposure: 30.0 / 1440,
		Contamination: math.NaN(), Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	for _, set := range []map[string]any{
		{}, {"span": "0.8 d"}, {"estimator": "biweight"}, {"estimator": "robust-spline"},
		{"estimator": "running-median", "split_at_gap": "0.3 d"}, {"degree": 1},
	} {
		set["light_curve"] = "photometry.raw"
		cfg := *steptest.MustConfig(detrend.New(), set).(*detrend.Config)
		want, _ := detrend.Detrend(cfg, lc, nil, nil)
		got := detrend.Flatten(cfg, lc, nil, nil)
		if string(got.Encode()) != string(want.Curve.Encode()) {
			t.Errorf("%v: detrend.Flatten differs from detrend.Detrend", set)
		}
	}
}

func TestWindowClipsToTheSearchRange(t *testing.T) {
	// Source: search.Search itself; a window wider than everything must come back as the
	// range of the full search's grid, by default and with periods given.
	lc := whiteCurve(45, 30.0/1440, 1e-3, 29)
	_, scfg := configs(t, sunLike, 1)
	given := scfg
	given.Periods = &[2]float64{0.7, 60} // the longest beyond the span: lowered to it
	for _, cfg := range []search.Config{scfg, given} {
		art, _, err := search.Search(cfg, lc, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		lo, hi, ok := periodWindow(lc, cfg, 5, 1e6)
		if !ok || math.Abs(lo*art.Grid.FMax-1) > 1e-12 || math.Abs(hi*art.Grid.FMin-1) > 1e-12 {
			t.Errorf("periods %v: window %v–%v d, the search's grid %v–%v d", cfg.Periods, lo, hi, 1/art.Grid.FMax, 1/art.Grid.FMin)
		}
		lo, hi, _ = periodWindow(lc, cfg, 5, 0.3)
		if math.Abs(lo-5/1.3) > 1e-12 || math.Abs(hi-6.5) > 1e-12 {
			t.Errorf("a 30 %% window around 5 d is %v–%v d", lo, hi)
		}
	}
	if _, _, ok := periodWindow(lc, scfg, 100, 0.3); ok {
		t.Error("a window beyond the longest period searched was not empty")
	}
}

func TestJudgeRules(t *testing.T) {
	// Source: the rules of judge and periodTolerance, on hand-made search results.
	inj := Injection{Period: 5, Epoch: 1, RadiusRatio: 0.05, Impact: 0.2}
	half := duration(inj, sunLike) / 2
	tol := periodTolerance(inj, sunLike, 60)
	if want := 5 * 2 * half / 60; math.Abs(tol-want) > 1e-12 {
		t.Fatalf("tolerance %v, want P·T14/baseline = %v", tol, want)
	}
	cases := []struct {
		name           string
		period, epoch  float64
		recovered, har bool
	}{
		{"exact", 5, 1, true, false},
		{"three periods later", 5, 16, true, false},
		{"period within tolerance", 5 + 0.9*tol, 1, true, false},
		{"period outside tolerance", 5 + 1.1*tol, 1, false, false},
		{"epoch off by 0.9 half-durations", 5, 1 + 0.9*half, true, false},
		{"epoch off by 1.1 half-durations", 5, 1 + 1.1*half, false, false},
		{"half the period, between transits", 2.5, 3.5, false, true},
		{"twice the period", 10, 6, false, true},
		{"twice the period off phase", 10, 3.5, false, false},
		{"unrelated", 3.7, 1, false, false},
	}
	for _, c := range cases {
		var out Outcome
		judge(&out, []found{{timing: bls.Timing{Period: c.period, Epoch: c.epoch}, sde: 9}}, inj, sunLike, tol)
		if out.Recovered != c.recovered || out.Harmonic != c.har || out.FoundPeriod != c.period {
			t.Errorf("%s: %+v, want recovered %v, harmonic %v", c.name, out, c.recovered, c.har)
		}
	}
}

func TestReferenceIsTheSearchSDE(t *testing.T) {
	// Source: bls.SDESpectrum, the search's own SDE of every frequency; the reference
	// repeats its arithmetic and must agree to rounding on the full grid, and on a spectrum
	// too short for the trend.
	lc := whiteCurve(45, 30.0/1440, 1e-3, 23)
	dcfg, scfg := configs(t, sunLike, 1)
	art, _, err := search.Search(scfg, detrend.Flatten(dcfg, lc, nil, nil), nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	power := art.Passes[0].Power
	for _, n := range []int{len(power), 200} {
		ref := bls.NoiseOf(art.Grid, power[:n])
		want := bls.SDESpectrum(power[:n])
		worst := 0.0
		for j := range want {
			worst = math.Max(worst, math.Abs(ref.SDE(art.Grid.Freq(j), power[j])-want[j]))
		}
		if worst > 1e-9 {
			t.Errorf("%d frequencies: reference SDE differs from the search's by up to %.3g", n, worst)
		}
	}
	if got := bls.NoiseOf(art.Grid, power).SDE(art.Grid.Freq(art.Passes[0].Peak), power[art.Passes[0].Peak]); math.Abs(got-art.Passes[0].SDE) > 1e-3 {
		// The pass's SDE comes from the unrounded power; the artifact keeps float32.
		t.Errorf("peak SDE %v against the pass's %v", got, art.Passes[0].SDE)
	}
}

func TestRecoverStrongAndFaint(t *testing.T) {
	// Scenario (invented): 60 d at 30 min, 1000 ppm white noise, the Sun-like star, a
	// 3.3 d planet. k = 0.05 gives a depth near 3000 ppm over ~18 transits of ~6 points,
	// a matched SNR near 30, far above the search's threshold; k = 0.003 gives ~10 ppm and
	// SNR ~0.1, far below it.
	lc := whiteCurve(60, 30.0/1440, 1e-3, 21)
	dcfg, scfg := configs(t, sunLike, 3)
	for _, c := range []struct {
		k    float64
		want bool
	}{{0.05, true}, {0.003, false}} {
		d := Drawn{Injection: Injection{Period: 3.3, Epoch: 1.7, RadiusRatio: c.k, Impact: 0.3}}
		o, err := Recover(lc, d, sunLike, dcfg, scfg, 0, nil)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("k %v (matched SNR %.3g): %+v", c.k, matchedSNR(t, lc, d.Injection, sunLike), o)
		if o.Recovered != c.want || o.Windowed {
			t.Errorf("k %v: recovered %v, want %v", c.k, o.Recovered, c.want)
		}
	}
}

// snrPlan draws n planets of 1–8 d from seed and sizes each for a matched SNR drawn
// uniformly in [lo, hi) (an invented population for the SNR tests).
func snrPlan(t testing.TB, lc *lightcurve.LightCurve, n int, seed uint64, lo, hi float64) []Drawn {
	t.Helper()
	first, last := lc.Span()
	drawn, err := Plan([]Cell{{PeriodLo: 1, PeriodHi: 8, RadiusLo: 0.01, RadiusHi: 0.02}}, n, seed, [2]float64{first, last})
	if err != nil {
		t.Fatal(err)
	}
	r := rng.New(seed)
	for i := range drawn {
		drawn[i].Injection = withSNR(t, lc, drawn[i].Injection, sunLike, lo+(hi-lo)*r.Float64())
	}
	return drawn
}

// thresholdSNR is the matched SNR at which a planet's periodogram peak should reach the
// SDE threshold on this noise: the search's power is √Δχ², about the SNR of the best box
// (bls.Pass.Power), and the SDE is measured against the median and 1.4826·MAD of the
// power (sde.go), so the threshold sits at power ≈ median + SDE·σ_MAD of a noise-only
// spectrum. Taken over the trial periods 1–8 d of a first pass on lc without a planet.
func thresholdSNR(t testing.TB, lc *lightcurve.LightCurve, dcfg detrend.Config, scfg search.Config) float64 {
	t.Helper()
	art, _, err := search.Search(scfg, detrend.Flatten(dcfg, lc, nil, nil), nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var band []float64
	for j, p := range art.Passes[0].Power {
		if per := art.Grid.Period(j); per >= 1 && per <= 8 {
			band = append(band, p)
		}
	}
	med := quantile(band, 0.5)
	dev := make([]float64, len(band))
	for i, v := range band {
		dev[i] = math.Abs(v - med)
	}
	return med + art.Threshold*1.4826*quantile(dev, 0.5)
}

// quantile is the q-quantile of v by sorting a copy (nearest rank).
func quantile(v []float64, q float64) float64 {
	s := append([]float64(nil), v...)
	for i := 1; i < len(s); i++ {
		for j := i; j > 0 && s[j] < s[j-1]; j-- {
			s[j], s[j-1] = s[j-1], s[j]
		}
	}
	return s[int(q*float64(len(s)-1)+0.5)]
}

func TestRecoveredFractionRisesWithSNR(t *testing.T) {
	// Scenario (invented): 45 d at 30 min, 1000 ppm white noise; planets of 1–8 d sized for
	// matched SNRs in bins. The recovered fraction must not fall from one bin to the next
	// by more than binomial noise allows (2σ of the difference), must be low well below
	// the threshold SNR and high well above it; with DIPLINE_LONG=1 finer bins and more
	// injections, and the 50 % crossing within a factor 1.5 of thresholdSNR's estimate.
	lc := whiteCurve(45, 30.0/1440, 1e-3, 5)
	dcfg, scfg := configs(t, sunLike, 1)
	dcfg = FixSpan(dcfg, lc, nil)
	snr0 := thresholdSNR(t, lc, dcfg, scfg)
	bins, per := []float64{0.3, 1, 2.5}, 6
	if long() {
		bins, per = []float64{0.4, 0.6, 0.8, 1, 1.2, 1.4, 1.7, 2.2}, 40
	}
	pool := steps.NewPool(2)
	frac := make([]float64, len(bins))
	for b, x := range bins {
		drawn := snrPlan(t, lc, per, uint64(100+b), 0.95*x*snr0, 1.05*x*snr0)
		out, err := RunAll(context.Background(), lc, drawn, sunLike, dcfg, scfg, 0, pool, nil)
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for _, o := range out {
			if o.Recovered {
				n++
			}
		}
		frac[b] = float64(n) / float64(per)
		t.Logf("SNR %.3g (%.2g × threshold estimate %.3g): %d of %d recovered", x*snr0, x, snr0, n, per)
	}
	for b := 1; b < len(bins); b++ {
		p := (frac[b] + frac[b-1]) / 2
		sigma := math.Sqrt(2 * math.Max(p*(1-p), 0.25/float64(per)) / float64(per))
		if frac[b] < frac[b-1]-2*sigma {
			t.Errorf("fraction falls from %.2f to %.2f between SNR bins %d and %d", frac[b-1], frac[b], b-1, b)
		}
	}
	if frac[0] > 0.34 || frac[len(frac)-1] < 0.66 {
		t.Errorf("fractions %v: want low at the bottom bin, high at the top", frac)
	}
	if long() {
		x := crossing(bins, frac)
		t.Logf("50 %% crossing at %.3g × the threshold estimate", x)
		if !(x > 1/1.5 && x < 1.5) {
			t.Errorf("50 %% crossing at %.3g × the threshold estimate, want within a factor 1.5", x)
		}
	}
}

// crossing is the x at which the fraction first reaches one half, interpolated linearly
// between bins; NaN when it never does.
func crossing(x, f []float64) float64 {
	for i := range f {
		if f[i] >= 0.5 {
			if i == 0 {
				return x[0]
			}
			return x[i-1] + (x[i]-x[i-1])*(0.5-f[i-1])/(f[i]-f[i-1])
		}
	}
	return math.NaN()
}

func TestWindowedAgreesWithFull(t *testing.T) {
	// Scenario (invented): 45 d at 30 min, 1000 ppm. By default four planets at matched
	// SNR 25–35 must be recovered both ways; with DIPLINE_LONG=1, 50 planets at SNR 0.7–2×
	// the threshold estimate, logging how many the window misses that the full grid finds
	// and the reverse, which together must stay under a fifth (our bound).
	lc := whiteCurve(45, 30.0/1440, 1e-3, 9)
	dcfg, scfg := configs(t, sunLike, 3)
	n, lo, hi := 4, 25.0, 35.0
	if long() {
		snr0 := thresholdSNR(t, lc, FixSpan(dcfg, lc, nil), scfg)
		n, lo, hi = 50, 0.7*snr0, 2*snr0
	}
	drawn := snrPlan(t, lc, n, 77, lo, hi)
	pool := steps.NewPool(2)
	full, err := RunAll(context.Background(), lc, drawn, sunLike, dcfg, scfg, 0, pool, nil)
	if err != nil {
		t.Fatal(err)
	}
	win, err := RunAll(context.Background(), lc, drawn, sunLike, dcfg, scfg, 0.3, pool, nil)
	if err != nil {
		t.Fatal(err)
	}
	var both, onlyFull, onlyWin int
	for i := range drawn {
		if !win[i].Windowed || full[i].Windowed {
			t.Fatalf("injection %d: windowed flags %v (window) and %v (full)", i, win[i].Windowed, full[i].Windowed)
		}
		switch {
		case full[i].Recovered && win[i].Recovered:
			both++
		case full[i].Recovered:
			onlyFull++
			t.Logf("window misses %+v (full SDE %.3g, window SDE %.3g)", drawn[i].Injection, full[i].SDE, win[i].SDE)
		case win[i].Recovered:
			onlyWin++
		}
	}
	t.Logf("%d injections at SNR %.3g–%.3g: both %d, full grid only %d, window only %d", n, lo, hi, both, onlyFull, onlyWin)
	if !long() && both != n {
		t.Errorf("high-SNR injections: %d of %d recovered both ways", both, n)
	}
	// Near the threshold the two differ where a peak's SDE falls between the two grids'
	// samplings of it; a fifth of the injections is far more than that (the window's own
	// SDE, before the reference, lost 26 of 37).
	if long() && onlyFull+onlyWin > n/5 {
		t.Errorf("window and full grid disagree on %d of %d injections", onlyFull+onlyWin, n)
	}
}

func TestOutcomesIndependentOfWorkers(t *testing.T) {
	// Source: DESIGN.md, determinism: the same inputs give the same outcomes for any
	// number of workers.
	lc := whiteCurve(30, 30.0/1440, 1e-3, 13)
	dcfg, scfg := configs(t, sunLike, 2)
	first, last := lc.Span()
	drawn, err := Plan([]Cell{{PeriodLo: 1, PeriodHi: 6, RadiusLo: 0.02, RadiusHi: 0.06}}, 6, 5, [2]float64{first, last})
	if err != nil {
		t.Fatal(err)
	}
	for _, window := range []float64{0, 0.3} {
		serial, err := RunAll(context.Background(), lc, drawn, sunLike, dcfg, scfg, window, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		calls, last := 0, 0
		told := make([]Outcome, len(drawn))
		two, err := RunAll(context.Background(), lc, drawn, sunLike, dcfg, scfg, window, steps.NewPool(2), func(i int, o Outcome, done int) {
			calls++
			if done < last || done > len(drawn) {
				t.Errorf("progress %d of %d after %d", done, len(drawn), last)
			}
			told[i], last = o, done
		})
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(serial, two) {
			t.Errorf("window %v: outcomes differ between one and two workers:\n%+v\n%+v", window, serial, two)
		}
		if !reflect.DeepEqual(told, two) {
			t.Errorf("window %v: the outcomes told one by one differ from those returned", window)
		}
		if calls != len(drawn) || last != len(drawn) {
			t.Errorf("window %v: progress called %d times, last %d", window, calls, last)
		}
	}
}

func TestFixedSpanChangesLittle(t *testing.T) {
	// Source: FixSpan's claim. The span robust.ChooseSpan picks on a light curve with a
	// planet near the detection limit injected must lie within one step of its ladder
	// (a factor √2, span.go) of the span it picks without (invented spotted star, 45 d).
	s := synth.Curve{Span: 45, Cadence: 30.0 / 1440, Noise: 1e-3, Seed: 17,
		Star: synth.Rotation{Period: 6.5, Amplitudes: []float64{0.004, 0.001}}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", Segments: []lightcurve.Segment{{ID: "1", Exposure: 30.0 / 1440,
		Contamination: math.NaN(), Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	dcfg, _ := configs(t, sunLike, 1)
	fixed := *FixSpan(dcfg, lc, nil).Span
	same := 0
	drawn := snrPlan(t, lc, 5, 31, 8, 15)
	for _, d := range drawn {
		inj, err := Inject(lc, d.Injection, sunLike)
		if err != nil {
			t.Fatal(err)
		}
		got := *FixSpan(dcfg, inj, nil).Span
		if got == fixed {
			same++
		}
		// The ladder's windows are written to three decimals (2.828, then 4), so one step
		// is √2 to within 2·10⁻⁴.
		if r := got / fixed; r < 1/math.Sqrt2-1e-3 || r > math.Sqrt2+1e-3 {
			t.Errorf("%+v: span %v d with the planet, %v d without", d.Injection, got, fixed)
		}
	}
	t.Logf("span %.3g d; the same with the planet in %d of %d cases", fixed, same, len(drawn))
}
