package fit

import (
	"context"
	"math"
	"testing"
	"time"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/transit"
)

// third is an invented outer planet for the three-planet benchmark.
var third = truth{period: 11.3, t0: 5.1, k: 0.04, b: 0.5, rho: hot.rho, q1: hot.q1, q2: hot.q2}

// longCurve is one segment from 0 to days at cadence (days, exposure equal), holding the
// circular planets trs integrated over 15 sub-exposures, plus white noise of sigma.
func longCurve(trs []truth, days, cadence, sigma float64, seed uint64) *lightcurve.LightCurve {
	seg := lightcurve.Segment{ID: "1", Exposure: cadence, Contamination: math.NaN()}
	for t := 0.0; t < days; t += cadence {
		seg.Time = append(seg.Time, t)
	}
	const sub = 15
	fine := transit.SubexposureTimes(nil, seg.Time, cadence, sub)
	sum := make([]float64, len(fine))
	for i := range sum {
		sum[i] = 1
	}
	for _, tr := range trs {
		z := transit.SeparationCircular(nil, fine, tr.period, tr.t0, ScaledAxis(tr.period, tr.rho), tr.b)
		u1, u2 := transit.QuadraticFromKipping(tr.q1, tr.q2)
		for i, v := range transit.Flux(nil, z, tr.k, u1, u2) {
			sum[i] += v - 1
		}
	}
	f := transit.AverageBlocks(nil, sum, sub)
	r := rng.Derive(seed, "fit-test/long-noise", 0)
	for i := range f {
		seg.Flux = append(seg.Flux, f[i]+sigma*r.Normal())
		seg.Err = append(seg.Err, sigma)
	}
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5, Segments: []lightcurve.Segment{seg}}
}

// BenchmarkLogPost is one evaluation of the log posterior at the truth of three planets
// in two years of 30-min data (300 ppm), with supersampling and jitter, as the sampler
// calls it; it reports likelihood evaluations per second of one core. The sub-benchmarks
// compare the tabulated transit shape (the default) with direct evaluation of every
// sub-exposure in the same run.
func BenchmarkLogPost(b *testing.B) {
	b.Run("tabulated", func(b *testing.B) { benchLogPost(b, false) })
	b.Run("direct", func(b *testing.B) { benchLogPost(b, true) })
}

func benchLogPost(b *testing.B, direct bool) {
	trs := []truth{hot, small, third}
	lc := longCurve(trs, 730, 30.0/1440, 300e-6, 1)
	var sigs []signals.Signal
	for _, tr := range trs {
		sigs = append(sigs, start(tr))
	}
	m, art, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true, Jitter: true})
	if err != nil {
		b.Fatal(err)
	}
	m.direct = direct
	x := truthVector(m, art, trs)
	if lp := m.LogPost(x); math.IsInf(lp, 0) || math.IsNaN(lp) {
		b.Fatalf("log posterior %v at the truth", lp)
	}
	b.ReportAllocs()
	t0 := time.Now()
	n := 0
	for b.Loop() {
		m.LogPost(x)
		n++
	}
	b.ReportMetric(float64(n)/time.Since(t0).Seconds(), "evals/s")
	b.ReportMetric(float64(art.Segments[0].Points), "points")
	b.ReportMetric(float64(art.Segments[0].NSub), "nsub")
	b.ReportMetric(float64(m.dim()), "dim")
}

// BenchmarkFitSixtyDays is the default fit (max_steps 4000, jitter, two ensembles) of one
// planet in one 60-day segment of 2-min data (300 ppm), on a pool of 2 workers.
func BenchmarkFitSixtyDays(b *testing.B) {
	lc := longCurve([]truth{hot}, 60, 2.0/1440, 300e-6, 2)
	k := New()
	cfg, err := steptest.Config(k, map[string]any{"light_curve": "detrend.x", "signals": "search.x"})
	if err != nil {
		b.Fatal(err)
	}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{[]signals.Signal{start(hot)}}}}}
	for b.Loop() {
		a, err := k.Run(context.Background(), cfg, in, steps.Env{Seed: 1, Pool: steptest.Pool(2)})
		if err != nil {
			b.Fatal(err)
		}
		fa := a.(*Artifact)
		b.ReportMetric(float64(fa.Steps), "steps")
		b.ReportMetric(maxTau(fa), "tau")
	}
}

func maxTau(a *Artifact) float64 {
	t := 0.0
	for _, d := range a.Diag {
		t = math.Max(t, d.Tau)
	}
	return t
}

// BenchmarkLogPostSixtyDays is one evaluation of the log posterior of one planet in one
// 60-day segment of 2-min data (300 ppm), the case of BenchmarkFitSixtyDays.
func BenchmarkLogPostSixtyDays(b *testing.B) {
	lc := longCurve([]truth{hot}, 60, 2.0/1440, 300e-6, 2)
	m, art, _, _, _, err := setup(lc, Options{Signals: []signals.Signal{start(hot)}, Window: defaultWindow, Supersample: true, Jitter: true})
	if err != nil {
		b.Fatal(err)
	}
	x := truthVector(m, art, []truth{hot})
	b.ReportAllocs()
	for b.Loop() {
		m.LogPost(x)
	}
	b.ReportMetric(float64(art.Segments[0].Points), "points")
	b.ReportMetric(float64(art.Segments[0].NSub), "nsub")
}

// BenchmarkFitThreePlanetsTwoYears is the default fit of three planets in two years of
// 30-min data (300 ppm) on a pool of 2 workers, run until the kept chains are 50τ long or
// max_steps; it reports the steps, τ and whether 50τ was reached. Minutes:
// go test ./steps/fit -run '^$' -bench FitThreePlanetsTwoYears -benchtime 1x -timeout 60m
func BenchmarkFitThreePlanetsTwoYears(b *testing.B) {
	trs := []truth{hot, small, third}
	lc := longCurve(trs, 730, 30.0/1440, 300e-6, 1)
	var sigs []signals.Signal
	for _, tr := range trs {
		sigs = append(sigs, start(tr))
	}
	k := New()
	cfg, err := steptest.Config(k, map[string]any{"light_curve": "detrend.x", "signals": "search.x"})
	if err != nil {
		b.Fatal(err)
	}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{sigs}}}}
	for b.Loop() {
		a, err := k.Run(context.Background(), cfg, in, steps.Env{Seed: 1, Pool: steptest.Pool(2)})
		if err != nil {
			b.Fatal(err)
		}
		fa := a.(*Artifact)
		tau := maxTau(fa)
		b.ReportMetric(float64(fa.Steps), "steps")
		b.ReportMetric(tau, "tau")
		b.ReportMetric(float64(fa.Steps-fa.Burn)/tau, "kept/tau")
	}
}
