package fit

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/transit"
)

// curveArtifact stands in for a photometry or detrend result.
type curveArtifact struct{ lc *lightcurve.LightCurve }

func (c curveArtifact) LightCurve() *lightcurve.LightCurve { return c.lc }
func (c curveArtifact) Encode() []byte                     { return c.lc.Encode() }
func (c curveArtifact) Figures() []steps.Figure            { return nil }

// searchArtifact stands in for a search result.
type searchArtifact struct{ sigs []signals.Signal }

func (s searchArtifact) Signals() []signals.Signal { return s.sigs }
func (s searchArtifact) Encode() []byte            { return nil }
func (s searchArtifact) Figures() []steps.Figure   { return nil }

// truth is the invented planet of the synthetic light curves: a hot Jupiter-sized body
// around a Sun-density star.
type truth struct {
	period, t0, k, b, rho, q1, q2 float64
	e, omega                      float64 // eccentricity and argument of periastron (rad)
}

var hot = truth{period: 3.0, t0: 1.3, k: 0.1, b: 0.4, rho: 1.41, q1: 0.36, q2: 0.3}

// synthetic is a single-segment light curve of span days at 30-min cadence and 30-min
// exposure, the model integrated with 41 sub-exposures (so its own integration error,
// ∝ 1/N², is far below the noise), plus white noise of sigma from a fixed rng stream.
func synthetic(tr truth, span, sigma float64, seed uint64) *lightcurve.LightCurve {
	const exposure = 30.0 / 1440
	seg := lightcurve.Segment{ID: "1", Exposure: exposure, Contamination: math.NaN()}
	for t := 0.0; t < span; t += exposure {
		seg.Time = append(seg.Time, t)
	}
	const n = 41
	fine := transit.SubexposureTimes(nil, seg.Time, exposure, n)
	aR := ScaledAxis(tr.period, tr.rho)
	z := transit.SeparationCircular(nil, fine, tr.period, tr.t0, aR, tr.b)
	u1, u2 := transit.QuadraticFromKipping(tr.q1, tr.q2)
	f := transit.AverageBlocks(nil, transit.Flux(nil, z, tr.k, u1, u2), n)
	r := rng.Derive(seed, "fit-test/noise", 0)
	for i := range f {
		seg.Flux = append(seg.Flux, f[i]+sigma*r.Normal())
		seg.Err = append(seg.Err, sigma)
	}
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5, Segments: []lightcurve.Segment{seg}}
}

// start is what a box search might report for tr: slightly off period and epoch, a box
// shorter than the total duration and a depth near k².
func start(tr truth) signals.Signal {
	aR := ScaledAxis(tr.period, tr.rho)
	return signals.Signal{Period: tr.period + 4e-4, Epoch: tr.t0 + 0.004,
		Duration: 0.85 * totalDuration(tr.period, tr.k, tr.b, aR), Depth: 0.9 * tr.k * tr.k}
}

func runKind(t *testing.T, set map[string]any, lc *lightcurve.LightCurve, sig []signals.Signal, workers int, seed uint64) (*Artifact, []string) {
	t.Helper()
	k := New()
	cfg, err := steptest.Config(k, set)
	if err != nil {
		t.Fatal(err)
	}
	var notes []string
	env := steps.Env{Seed: seed, Pool: steptest.Pool(workers), Notef: func(f string, a ...any) { notes = append(notes, fmt.Sprintf(f, a...)) }}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{sig}}}}
	art, err := k.Run(context.Background(), cfg, in, env)
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Artifact), notes
}

func TestHelpersMatchPublishedValues(t *testing.T) {
	// Check values computed independently at high precision: the nominal Sun's density
	// 1.40978 g/cm³ (IAU 2015 B3 nominal GM and R, CODATA 2018 G) and P = 365.25 d give
	// a/R* = 215.029 (Seager & Mallén-Ornelas 2003, ApJ 585, 1038).
	const rhoSun = 1.40978
	cases := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		{"a/R* of a one-year orbit around the nominal Sun is 215.029", ScaledAxis(365.25, rhoSun), 215.029, 2e-3},
		{"the density inverts the scaled axis", DensityFromAxis(365.25, ScaledAxis(365.25, rhoSun)), rhoSun, 1e-12},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if math.Abs(c.got-c.want) > c.tol*math.Abs(c.want) {
				t.Errorf("got %.7g, want %.7g", c.got, c.want)
			}
		})
	}
}

func TestPosteriorCoversTheTruth(t *testing.T) {
	lc := synthetic(hot, 12, 500e-6, 7)
	art, notes := runKind(t, map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 3000},
		lc, []signals.Signal{start(hot)}, 2, 11)
	// The true values of the invented planet; 3σ from the posterior median (σ from the
	// 16th/84th percentiles), the reference epoch's mid-time computed from the truth.
	tref := hot.t0 + float64(art.Reference[0].Transit)*hot.period
	for _, c := range []struct {
		col  string
		want float64
	}{
		{"b.period", hot.period}, {"b.t0", tref}, {"b.k", hot.k}, {"b.b", hot.b},
	} {
		t.Run(c.col+" lies within 3 sigma of the truth", func(t *testing.T) {
			med, sig := art.Summary(c.col)
			if !(sig > 0) || math.Abs(med-c.want) > 3*sig {
				t.Errorf("%s = %.6g ± %.3g, truth %.6g", c.col, med, sig, c.want)
			}
		})
	}
	t.Run("a note says which points enter the likelihood", func(t *testing.T) {
		found := false
		for _, n := range notes {
			found = found || strings.HasPrefix(n, "likelihood: ")
		}
		if !found {
			t.Errorf("notes %q", notes)
		}
	})
	t.Run("each segment is supersampled", func(t *testing.T) {
		if art.Segments[0].NSub < 3 {
			t.Errorf("N_sub = %d for a 30-min exposure and a ~20-min ingress", art.Segments[0].NSub)
		}
	})
	t.Run("ensembles agree", func(t *testing.T) {
		for i, d := range art.Diag[:4] {
			if !(d.Rhat < 1.1) {
				t.Errorf("%s: R-hat %.3g", art.Names[i], d.Rhat)
			}
		}
	})
}

// The guided phase (independence moves after the first phase) is deterministic too: a run
// long enough to reach it gives the same bytes on one and two workers, and says it used it.
func TestGuidedPhaseIsDeterministicAcrossWorkers(t *testing.T) {
	if testing.Short() {
		t.Skip("-short skips the 3,000-step fits")
	}
	lc := synthetic(hot, 7, 800e-6, 3)
	set := map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 3000}
	a1, notes := runKind(t, set, lc, []signals.Signal{start(hot)}, 1, 5)
	a2, _ := runKind(t, set, lc, []signals.Signal{start(hot)}, 2, 5)
	if !slices.ContainsFunc(notes, func(n string) bool { return strings.Contains(n, "Student-t guide") }) {
		t.Fatalf("the run never reached the guided phase; notes: %q", notes)
	}
	if !bytes.Equal(a1.Encode(), a2.Encode()) {
		t.Error("one and two workers give different bytes")
	}
}

func TestDeterministicAcrossWorkers(t *testing.T) {
	lc := synthetic(hot, 7, 800e-6, 3)
	set := map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 200}
	a1, _ := runKind(t, set, lc, []signals.Signal{start(hot)}, 1, 99)
	a2, _ := runKind(t, set, lc, []signals.Signal{start(hot)}, 2, 99)
	t.Run("one and two workers give identical bytes", func(t *testing.T) {
		if !bytes.Equal(a1.Encode(), a2.Encode()) {
			t.Error("encodings differ")
		}
	})
	t.Run("the encoding decodes to the same bytes", func(t *testing.T) {
		d, err := Decode(a1.Encode())
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(d.Encode(), a1.Encode()) {
			t.Error("round trip changed the bytes")
		}
	})
	t.Run("a truncated encoding is an error", func(t *testing.T) {
		b := a1.Encode()
		if _, err := Decode(b[:len(b)-5]); err == nil {
			t.Error("no error")
		}
	})
	t.Run("another seed gives other samples", func(t *testing.T) {
		a3, _ := runKind(t, set, lc, []signals.Signal{start(hot)}, 1, 100)
		if bytes.Equal(a1.Encode(), a3.Encode()) {
			t.Error("seed has no effect")
		}
	})
	t.Run("the figures are named as documented", func(t *testing.T) {
		want := []string{"b.period", "b.t0", "b.k", "b.b", "b.depth", "b.a_over_rstar", "b.t14", "star_density",
			"window.points", "diag.max_tau", "diag.min_ess", "diag.max_rhat", "diag.acceptance", "noise.beta",
			"b.timing.transits", "b.timing.period", "b.timing.t_ref", "b.timing.chi2", "b.timing.p_value"}
		figs := a1.Figures()
		if len(figs) < len(want) {
			t.Fatalf("%d figures, want at least %d", len(figs), len(want))
		}
		for i, f := range figs[:len(want)] {
			if f.Name != want[i] {
				t.Errorf("figure %d is %q, want %q", i, f.Name, want[i])
			}
		}
		// Then per timed transit its time and O−C.
		rest := figs[len(want):]
		if len(rest) == 0 || len(rest)%2 != 0 {
			t.Fatalf("%d per-transit figures, want a time and an O−C per timed transit", len(rest))
		}
		for i := 0; i < len(rest); i += 2 {
			if !strings.HasPrefix(rest[i].Name, "b.transit") || !strings.HasSuffix(rest[i].Name, ".time") ||
				!strings.HasSuffix(rest[i+1].Name, ".o_minus_c") {
				t.Errorf("per-transit figures %q, %q", rest[i].Name, rest[i+1].Name)
			}
		}
	})
	golden.Check(t, "../..", "fit", version, a1)
}

func TestCheckNamesTheAttribute(t *testing.T) {
	cases := []struct {
		name string
		set  map[string]any
		attr string
	}{
		{"four planets are too many", map[string]any{"planets": 4}, "planets"},
		{"zero planets are too few", map[string]any{"planets": 0}, "planets"},
		{"fifty steps are too few", map[string]any{"max_steps": 50}, "max_steps"},
		{"one ensemble cannot give R-hat", map[string]any{"ensembles": 1}, "ensembles"},
		{"a window under one duration is refused", map[string]any{"window": 0.5}, "window"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := steptest.Config(New(), c.set)
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one naming %q", err, c.attr)
			}
		})
	}
	t.Run("the defaults are accepted", func(t *testing.T) {
		cfg, err := steptest.Config(New(), map[string]any{"light_curve": "detrend.x", "signals": "search.x"})
		if err != nil {
			t.Fatal(err)
		}
		// The tags' defaults are the constants whose reasons are given beside them.
		c := cfg.(*Config)
		if c.MaxSteps != defaultMaxSteps || c.Ensembles != defaultEnsembles || c.Window != defaultWindow ||
			!c.Supersample || !c.Jitter || c.InflateByBeta || c.planets() != 0 ||
			c.Priors != nil || c.Limb != nil || c.Eccentric != nil || c.Star != nil || c.Dilution != nil {
			t.Fatalf("defaults decoded as %+v", c)
		}
	})
	t.Run("the priors as written are parsed", func(t *testing.T) {
		c := steptest.MustConfig(New(), map[string]any{"light_curve": "detrend.x", "signals": "search.x",
			"priors":         map[string]string{"b.b": "uniform(0, 0.9)"},
			"limb_darkening": map[string]string{"survey-red": "u1 = 0.3 ± 0.1, u2 = 0.2 ± 0.1"}}).(*Config)
		if p := c.Priors["b.b"]; len(c.Priors) != 1 || p != (Prior{Shape: Uniform, A: 0, B: 0.9}) {
			t.Errorf("priors %v", c.Priors)
		}
		if lp := c.Limb["survey-red"]; len(c.Limb) != 1 || lp != (LimbPrior{U1: 0.3, U1Sigma: 0.1, U2: 0.2, U2Sigma: 0.1}) {
			t.Errorf("limb darkening %v", c.Limb)
		}
	})
}

func TestBadStartIsBadInput(t *testing.T) {
	lc := synthetic(hot, 7, 800e-6, 3)
	_, _, err := Fit(context.Background(), lc, Options{Signals: []signals.Signal{{Period: 3, Epoch: 1.3, Duration: 0, Depth: 0.01}},
		MaxSteps: 100, Ensembles: 2, Window: 2.5})
	if !steps.IsInputError(err) {
		t.Errorf("error %v, want bad input", err)
	}
}

func TestExposureIntegrationRemovesABias(t *testing.T) {
	// Kipping (2010, MNRAS 408, 1758): fitting 30-min data without integrating the model over
	// the exposure biases the shape, notably the light-curve density low. Same data (100 ppm
	// noise, so the bias dwarfs the noise), same seed; posterior medians and σ compared.
	lc := synthetic(hot, 12, 100e-6, 5)
	fit := func(super bool) *Artifact {
		a, _, err := Fit(context.Background(), lc, Options{Signals: []signals.Signal{start(hot)},
			MaxSteps: 1500, Ensembles: 2, Window: 2.5, Supersample: super, Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		return a
	}
	on, off := fit(true), fit(false)
	for _, c := range []struct {
		col  string
		want float64
	}{{"star_density", hot.rho}, {"b.b", hot.b}} {
		mOn, sOn := on.Summary(c.col)
		mOff, sOff := off.Summary(c.col)
		t.Run(c.col+" without integration is more than 4 sigma from the truth", func(t *testing.T) {
			if !(math.Abs(mOff-c.want) > 4*sOff) {
				t.Errorf("%.4g ± %.3g, truth %.4g", mOff, sOff, c.want)
			}
		})
		t.Run(c.col+" with integration is within 3 sigma of the truth", func(t *testing.T) {
			if !(math.Abs(mOn-c.want) < 3*sOn) {
				t.Errorf("%.4g ± %.3g, truth %.4g", mOn, sOn, c.want)
			}
		})
	}
}

func TestTwoPlanetsAreNamedInSignalOrder(t *testing.T) {
	// Two invented planets in one light curve: the second, shallower one at 4.7 d.
	second := truth{period: 4.7, t0: 2.2, k: 0.06, b: 0.2, rho: hot.rho, q1: hot.q1, q2: hot.q2}
	lc := synthetic(hot, 12, 500e-6, 7)
	two := synthetic(second, 12, 0, 0)
	for i := range lc.Segments[0].Flux {
		lc.Segments[0].Flux[i] += two.Segments[0].Flux[i] - 1
	}
	art, _ := runKind(t, map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 200},
		lc, []signals.Signal{start(hot), start(second)}, 1, 5)
	for _, c := range []struct {
		col  string
		want float64
	}{{"b.period", hot.period}, {"c.period", second.period}} {
		t.Run(c.col+" is fitted near its truth", func(t *testing.T) {
			// Loose: the chain is short; the period must be within 0.1 % (the start is 0.01 % off).
			if med, _ := art.Summary(c.col); math.Abs(med-c.want) > 1e-3*c.want {
				t.Errorf("%s = %.6g, truth %.6g", c.col, med, c.want)
			}
		})
	}
}

func FuzzDecode(f *testing.F) {
	lc := synthetic(hot, 7, 800e-6, 3)
	a, _, err := Fit(context.Background(), lc, Options{Signals: []signals.Signal{start(hot)},
		MaxSteps: 100, Ensembles: 2, Window: 2.5, Seed: 1})
	if err != nil {
		f.Fatal(err)
	}
	f.Add(a.Encode())
	f.Add([]byte("dpl1"))
	f.Fuzz(func(t *testing.T, b []byte) {
		d, err := Decode(b)
		if err != nil {
			return
		}
		// Whatever decodes must encode to the same bytes and give its figures without panic.
		if !bytes.Equal(d.Encode(), b) {
			t.Error("decode then encode changed the bytes")
		}
		_ = d.Figures()
	})
}

// BenchmarkFitMonth is the default fit (max_steps 4000, jitter on, two ensembles) of one
// planet in 27 days of 30-min data with 500 ppm noise, on a pool of 2 workers.
func BenchmarkFitMonth(b *testing.B) {
	lc := synthetic(hot, 27, 500e-6, 7)
	k := New()
	cfg, err := steptest.Config(k, map[string]any{"light_curve": "detrend.x", "signals": "search.x"})
	if err != nil {
		b.Fatal(err)
	}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{[]signals.Signal{start(hot)}}}}}
	for b.Loop() {
		if _, err := k.Run(context.Background(), cfg, in, steps.Env{Seed: 1, Pool: steptest.Pool(2)}); err != nil {
			b.Fatal(err)
		}
	}
}

// totalDuration is T14 of a circular orbit (astro.TotalDuration, Winn 2010), 0 when the
// planet misses the star.
func totalDuration(period, k, b, aR float64) float64 {
	t, err := astro.TotalDuration(period, aR, k, b, 0, 0)
	if err != nil {
		return 0
	}
	return t
}

// countdown is a context that reports itself cancelled after its first left calls of Err:
// a stop that arrives part-way through an optimisation, at a point fixed by the call count.
type countdown struct {
	context.Context
	left int
}

func (c *countdown) Err() error {
	if c.left <= 0 {
		return context.Canceled
	}
	c.left--
	return nil
}

// An interrupted run stops the optimiser at its next iteration instead of letting it run
// its three rounds of up to a thousand evaluations per parameter (a runaway fit held a
// Ctrl-C for half a minute): stopped after 5 iterations it is still far from the optimum,
// and Fit returns the interruption before sampling.
func TestAStopEndsTheOptimisation(t *testing.T) {
	lc := synthetic(hot, 20, 1e-3, 7)
	o := Options{Signals: []signals.Signal{start(hot)}, Window: defaultWindow, Supersample: true}
	p, err := newProblem(lc, o)
	if err != nil {
		t.Fatal(err)
	}
	_, whole := optimum(context.Background(), p.m, p.x0, p.scale)
	_, cut := optimum(&countdown{Context: context.Background(), left: 6}, p.m, p.x0, p.scale)
	if !(whole-cut > 1) {
		t.Errorf("log posterior %.3f after a stop at iteration 5, %.3f when left to finish: the stop was not heard", cut, whole)
	}
	if _, _, err := Fit(&countdown{Context: context.Background(), left: 6}, lc, o); !errors.Is(err, context.Canceled) {
		t.Errorf("Fit stopped during its optimisation returned %v", err)
	}
}

// The depth reported is the light lost at mid-transit, not k²: for a small planet across
// the centre it is k² I(1)/⟨I⟩ = k²/(1 − u1/3 − u2/6) (Mandel & Agol 2002, their small-planet
// limit), diluted by 1/(1 + D); a grazing planet (b = 1, half its disc on the star) loses
// far less than k², which a 2 % grazing eclipse once reported as 66,559 ppm.
func TestTheDepthIsTheLightLostAtMidTransit(t *testing.T) {
	const k, u1, u2 = 0.02, 0.4, 0.25
	central := k * k / (1 - u1/3 - u2/6)
	if got := transitDepth(k, 0, u1, u2, 0); math.Abs(got/central-1) > 0.01 {
		t.Errorf("central depth %.6g, want %.6g within 1 %%", got, central)
	}
	if got := transitDepth(k, 0, u1, u2, 0.5); math.Abs(got/(central/1.5)-1) > 0.01 {
		t.Errorf("diluted depth %.6g, want %.6g", got, central/1.5)
	}
	// Grazing, b = 1, k = 0.1: the light of the star inside the planet's disc, integrated
	// numerically with python3-scipy (integrate.dblquad of the quadratic-law intensity over
	// the disc, over the star's flux π(1 − u1/3 − u2/6)): 0.00338565. The central case by
	// the same quadrature: 0.000484829.
	if got := transitDepth(k, 0, u1, u2, 0); math.Abs(got/0.000484829-1) > 1e-4 {
		t.Errorf("central depth %.9g, want 0.000484829 (quadrature)", got)
	}
	grazing := transitDepth(0.1, 1, u1, u2, 0)
	if !(grazing < 0.01/2) || math.Abs(grazing/0.00338565-1) > 1e-4 {
		t.Errorf("grazing depth %.9g: want 0.00338565 (quadrature), well under k² = 0.01", grazing)
	}
}
