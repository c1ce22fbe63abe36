package completeness

import (
	"bytes"
	"context"
	"math"
	"reflect"
	"strings"
	"sync"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/proportion"
	"dipline/steps/internal/steptest"
)

// raw stands in for a photometry step's artifact.
type raw struct{ lc *lightcurve.LightCurve }

func (r raw) Encode() []byte                     { return r.lc.Encode() }
func (r raw) Figures() []steps.Figure            { return nil }
func (r raw) LightCurve() *lightcurve.LightCurve { return r.lc }

// memoParts is a steps.Parts in memory that counts what is put.
type memoParts struct {
	mu   sync.Mutex
	m    map[string][]byte
	puts int
}

func (p *memoParts) Get(k []byte) ([]byte, bool) {
	p.mu.Lock()
	defer p.mu.Unlock()
	b, ok := p.m[string(k)]
	return b, ok
}

func (p *memoParts) Put(k, b []byte) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.m[string(k)] = b
	p.puts++
}

// kindInputs are a 20-day white-noise light curve (1000 ppm at 30 min) and the default
// detrend and search settings around the Sun-like star.
func kindInputs(t testing.TB) steps.Inputs {
	dcfg, scfg := configs(t, sunLike, 1)
	return steps.Inputs{
		Refs:     map[string][]steps.Artifact{"light_curve": {raw{whiteCurve(20, 30.0/1440, 1e-3, 21)}}},
		Settings: map[string]any{"detrend": &dcfg, "search": &scfg},
	}
}

// runKind runs the kind with set (light_curve, detrend and search are filled in) and the
// given parts (nil: none), on two workers with seed 9.
func runKind(t testing.TB, set map[string]any, parts steps.Parts) *Result {
	t.Helper()
	full := map[string]any{"light_curve": "photometry.raw", "detrend": "detrend.flat", "search": "search.dips"}
	for k, v := range set {
		full[k] = v
	}
	cfg, err := steptest.Config(New(), full)
	if err != nil {
		t.Fatal(err)
	}
	env := steps.Env{Seed: 9, Pool: steptest.Pool(2), Parts: parts, Notef: func(string, ...any) {}}
	art, err := New().Run(context.Background(), cfg, kindInputs(t), env)
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Result)
}

func TestCheckNamesTheAttributeAtFault(t *testing.T) {
	base := map[string]any{"light_curve": "photometry.raw", "detrend": "detrend.flat", "search": "search.dips"}
	for _, tc := range []struct {
		name string
		set  map[string]any
		attr string
	}{
		{"radii in Earth radii need a star", map[string]any{"radius_range": []string{"1 R_earth", "4 R_earth"}}, "radius_range"},
		{"a period range that runs backwards is refused", map[string]any{"period_range": []string{"10 d", "1 d"}}, "period_range"},
		{"no injections per cell is refused", map[string]any{"per_cell": 0}, "per_cell"},
		{"a negative window is refused", map[string]any{"window": -0.1}, "window"},
		{"more full-range checks than injections are refused", map[string]any{"per_cell": 1, "period_cells": 1, "radius_cells": 2, "full_grid_checks": 3}, "full_grid_checks"},
		{"a grid of a thousand columns is refused", map[string]any{"period_cells": 1000}, "period_cells"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			set := map[string]any{}
			for k, v := range base {
				set[k] = v
			}
			for k, v := range tc.set {
				set[k] = v
			}
			_, err := steptest.Config(New(), set)
			var ae *steps.AttrError
			if !errorsAs(err, &ae) || ae.Attr != tc.attr {
				t.Errorf("error %v, want one about %s", err, tc.attr)
			}
		})
	}
}

func errorsAs(err error, target **steps.AttrError) bool {
	for e := err; e != nil; {
		if ae, ok := e.(*steps.AttrError); ok {
			*target = ae
			return true
		}
		u, ok := e.(interface{ Unwrap() error })
		if !ok {
			return false
		}
		e = u.Unwrap()
	}
	return false
}

// Source: the map's construction. With the default radius range (a quarter to four times
// the depth for SNR 7.1 at the middle period), the largest planets are recovered more
// often than the smallest, and the totals add up.
func TestTheMapRisesWithRadius(t *testing.T) {
	r := runKind(t, map[string]any{"period_range": []string{"1 d", "6 d"}, "period_cells": 1, "radius_cells": 2, "per_cell": 16}, nil)
	if len(r.Cells) != 2 || r.Cells[0].Injected != 16 || r.Cells[1].Injected != 16 {
		t.Fatalf("cells %+v", r.Cells)
	}
	small, large := r.Cells[0].Fraction, r.Cells[1].Fraction
	t.Logf("recovered: small %.2f, large %.2f (k %.3g–%.3g–%.3g)", small, large, r.RadiusEdges[0], r.RadiusEdges[1], r.RadiusEdges[2])
	// The large cell spans a signal to noise of about 7 to 28 at the middle period, mostly
	// above the threshold: more than half of it is recovered.
	if !(large > small) || large <= 0.5 {
		t.Errorf("recovered share %.2f for the small planets and %.2f for the large; want the large recovered more often than not, and more often than the small", small, large)
	}
	if got := figure(t, r, "injections"); got != 32 {
		t.Errorf("injections %v, want 32", got)
	}
}

func figure(t *testing.T, r *Result, name string) float64 {
	t.Helper()
	for _, f := range r.Figures() {
		if f.Name == name {
			return f.Value
		}
	}
	t.Fatalf("no figure %s", name)
	return 0
}

// Source: steps.Parts' contract. Raising per_cell makes only the new injections, and the
// result is the bytes a run without any kept pieces gives; a run with every piece kept
// makes none.
func TestMoreInjectionsReuseTheOnesMade(t *testing.T) {
	set := map[string]any{"period_range": []string{"1 d", "6 d"}, "period_cells": 2, "radius_cells": 1, "per_cell": 3}
	parts := &memoParts{m: map[string][]byte{}}
	runKind(t, set, parts)
	if parts.puts != 6 {
		t.Fatalf("first run kept %d pieces, want 6", parts.puts)
	}
	set["per_cell"] = 5
	parts.puts = 0
	kept := runKind(t, set, parts)
	if parts.puts != 4 {
		t.Errorf("raising per_cell to 5 made %d injections, want the 4 new ones", parts.puts)
	}
	fresh := runKind(t, set, nil)
	if !bytes.Equal(kept.Encode(), fresh.Encode()) {
		t.Error("the result with kept pieces differs from a fresh run's")
	}
	parts.puts = 0
	runKind(t, set, parts)
	if parts.puts != 0 {
		t.Errorf("a repeat made %d injections, want none", parts.puts)
	}
}

// Source: the Poisson limits of Gehrels (1986, ApJ 303, 336) Table 1 at S = 1 (from
// memory): for 0 events the upper limit is 1.841; for 1 event 0.173 and 3.300. One
// detection in a cell of efficiency e gives 1/e planets per star within [0.173, 3.300]/e;
// none gives at most 1.841/e.
func TestTheOccurrenceIsTheInverseEfficiency(t *testing.T) {
	r := &Result{Host: Host{Density: 1.41}, PeriodEdges: []float64{1, 4, 16}, RadiusEdges: []float64{0.01, 0.02}}
	cells, err := Grid(r.PeriodEdges, r.RadiusEdges)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range cells {
		r.Cells = append(r.Cells, CellSummary{Cell: c, Injected: 10, Recovered: 5, Fraction: 0.5, TransitProbability: 0.05})
	}
	r.Detections = []Detection{{Name: "b", Period: 2, RadiusRatio: 0.015}, {Name: "c", Period: 30, RadiusRatio: 0.015}}
	r.occurrence()
	b := r.Detections[0]
	if b.Cell != 0 || !(b.Efficiency > 0) {
		t.Fatalf("planet b placed in cell %d with efficiency %v", b.Cell, b.Efficiency)
	}
	o := r.Occurrence[0]
	want := 1 / b.Efficiency
	if math.Abs(o.Rate/want-1) > 1e-12 || math.Abs(o.Lower/(0.173/b.Efficiency)-1) > 2e-3 || math.Abs(o.Upper/(3.300/b.Efficiency)-1) > 2e-3 {
		t.Errorf("cell 1: rate %v (%v–%v), want %v (%v–%v)", o.Rate, o.Lower, o.Upper, want, 0.173/b.Efficiency, 3.300/b.Efficiency)
	}
	empty := r.Occurrence[1]
	if empty.Detections != 0 || empty.Rate != 0 || math.Abs(empty.Upper/(1.841/0.025)-1) > 2e-3 {
		t.Errorf("empty cell: %+v, want no detections and an upper limit of %v", empty, 1.841/0.025)
	}
	if r.Detections[1].Cell != -1 {
		t.Errorf("planet c at 30 d lies outside a map ending at 16 d, but was placed in cell %d", r.Detections[1].Cell)
	}
	joined := strings.Join(r.Cautions(), " ")
	if !strings.Contains(joined, "Planet c") || !strings.Contains(joined, "one star") {
		t.Errorf("cautions %q should name the planet off the map and the one star", joined)
	}
	// A cell the search recovers half of needs no caution; one it recovers 5 % of does.
	if o.Caution != "" {
		t.Errorf("a cell recovered at 50 %% is cautioned: %s", o.Caution)
	}
	r.Cells[0].Fraction = 0.05
	r.occurrence()
	if c := r.Occurrence[0].Caution; !strings.Contains(c, "Foreman-Mackey") {
		t.Errorf("a planet where 5 %% are recovered: caution %q, want the low-completeness bias named", c)
	}
	r.Cells[0].Fraction = 0.5
	r.occurrence()
	// The rate is Σ 1/efficiency for one star: what proportion.InverseEfficiency gives.
	occ, err := proportion.InverseEfficiency([]float64{b.Efficiency}, 1, 1)
	if err != nil || occ.Rate != o.Rate {
		t.Errorf("proportion gives %v (%v)", occ.Rate, err)
	}
}

func TestTheResultReadsBackAsWritten(t *testing.T) {
	r := runKind(t, map[string]any{"period_range": []string{"1 d", "6 d"}, "period_cells": 2, "radius_cells": 2, "per_cell": 2, "full_grid_checks": 2}, nil)
	r.Detections = []Detection{{Name: "b", Period: 2.2, RadiusRatio: r.RadiusEdges[1]}}
	r.occurrence()
	back, err := Decode(r.Encode())
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), r.Encode()) || !reflect.DeepEqual(back.Figures(), r.Figures()) {
		t.Error("the result read back differs")
	}
	if r.Check == nil || r.Check.Checked != 2 {
		t.Errorf("full-range check %+v, want 2 checked", r.Check)
	}
	for n := 0; n < len(r.Encode()); n += 7 {
		if _, err := Decode(r.Encode()[:n]); err == nil {
			t.Fatalf("a result cut to %d bytes was accepted", n)
		}
	}
	pr, err := New().(steps.Presenter).Present(&Config{}, r, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	data := steptest.CheckPresentation(t, pr)
	if got := steptest.Column(t, data["map"], "injected"); len(got) != 4 || got[0] != 2 {
		t.Errorf("the map's injected column %v, want 2 in each of 4 cells", got)
	}
	// Every search is listed: two per cell in its window, then the two checked over the
	// whole range (window 0), the same planets as the first two.
	win := steptest.Column(t, data["injections"], "window")
	per := steptest.Column(t, data["injections"], "period_d")
	if len(win) != 10 || win[0] != 0.3 || win[8] != 0 || win[9] != 0 || per[8] != per[0] || per[9] != per[1] {
		t.Errorf("the injections' windows %v and periods %v; want 8 windowed searches then 2 over the whole range of the first two planets", win, per)
	}
	golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), r)
}

// Source: Gehrels (1986) Table 1 at S = 1 (from memory), as above. Two stars of 0.5 R☉
// with the same map in Earth radii: one planet of efficiency e on the first gives
// (1/2)(1/e) planets per star within [0.173, 3.300]/(2e); a cell without planets gives at
// most 1.841/(2ē), ē the stars' mean efficiency there. A map with other cells is refused,
// naming the target.
func TestASurveysMapsAddUp(t *testing.T) {
	mk := func(radius float64, planets ...Detection) *Result {
		r := &Result{Host: Host{Density: 1.41, Radius: radius}, PeriodEdges: []float64{1, 4, 16},
			RadiusEdges: []float64{0.02 * 0.5 / radius, 0.04 * 0.5 / radius}}
		cells, _ := Grid(r.PeriodEdges, r.RadiusEdges)
		for _, c := range cells {
			r.Cells = append(r.Cells, CellSummary{Cell: c, Injected: 10, Recovered: 6, Fraction: 0.6, TransitProbability: 0.05})
		}
		r.Detections = planets
		r.occurrence()
		return r
	}
	a := mk(0.5, Detection{Name: "b", Period: 2, RadiusRatio: 0.03})
	b := mk(0.5)
	got, err := Kind{}.Combine([]string{"A", "B"}, []steps.Artifact{a, b})
	if err != nil {
		t.Fatal(err)
	}
	figs := map[string]steps.Figure{}
	for _, f := range got.Figures {
		figs[f.Name] = f
	}
	e := a.Detections[0].Efficiency
	occ := figs["p1_r1.occurrence"]
	if figs["p1_r1.detections"].Value != 1 || math.Abs(occ.Value/(1/(2*e))-1) > 1e-12 ||
		math.Abs((occ.Value-occ.Lower)/(0.173/(2*e))-1) > 2e-3 || math.Abs((occ.Value+occ.Upper)/(3.300/(2*e))-1) > 2e-3 {
		t.Errorf("cell p1_r1: %+v, want 1 detection and %v planets per star within %v–%v", occ, 1/(2*e), 0.173/(2*e), 3.300/(2*e))
	}
	none := figs["p2_r1.occurrence"]
	if none.Value != 0 || math.Abs(none.Upper/(1.841/(2*0.6*0.05))-1) > 2e-3 {
		t.Errorf("cell p2_r1: %+v, want 0 with an upper limit of %v", none, 1.841/(2*0.6*0.05))
	}
	if figs["targets"].Value != 2 || len(got.Cautions) == 0 {
		t.Errorf("targets %v, cautions %q", figs["targets"].Value, got.Cautions)
	}
	// A star of another radius with the same ratios has other cells in Earth radii.
	other := mk(0.5)
	other.Host.Radius = 0.6
	if _, err := (Kind{}).Combine([]string{"A", "C"}, []steps.Artifact{a, other}); err == nil || !strings.Contains(err.Error(), "target C") {
		t.Errorf("maps with other cells: error %v, want one naming target C", err)
	}
	// Through the engine's wrapper, as the survey merge calls it.
	if c, ok := New().(steps.Combiner); !ok {
		t.Error("the registered kind does not combine")
	} else if viaWrapper, err := c.Combine([]string{"A", "B"}, []steps.Artifact{a, b}); err != nil || !reflect.DeepEqual(viaWrapper, got) {
		t.Errorf("through the wrapper: %v", err)
	}
}

// A run stopped half-way returns the stop and keeps the injections it finished, so the
// next run makes only the rest and gives a fresh run's bytes.
func TestAStoppedRunKeepsWhatItFinished(t *testing.T) {
	set := map[string]any{"light_curve": "photometry.raw", "detrend": "detrend.flat", "search": "search.dips",
		"period_range": []string{"1 d", "6 d"}, "period_cells": 2, "radius_cells": 1, "per_cell": 4}
	cfg, err := steptest.Config(New(), set)
	if err != nil {
		t.Fatal(err)
	}
	parts := &memoParts{m: map[string][]byte{}}
	ctx, cancel := context.WithCancel(context.Background())
	env := steps.Env{Seed: 9, Parts: parts, Notef: func(string, ...any) {},
		Progress: func(done, total int) {
			if done == 3 {
				cancel()
			}
		}}
	if _, err := New().Run(ctx, cfg, kindInputs(t), env); err != context.Canceled {
		t.Fatalf("a stopped run returned %v, want the stop", err)
	}
	if parts.puts != 3 {
		t.Fatalf("the stopped run kept %d injections, want the 3 it finished", parts.puts)
	}
	parts.puts = 0
	resumed := runKind(t, set, parts)
	if parts.puts != 5 || !bytes.Equal(resumed.Encode(), runKind(t, set, nil).Encode()) {
		t.Errorf("the resumed run made %d injections (want 5) or differs from a fresh run", parts.puts)
	}
}
