package fit

import (
	"fmt"
	"math"
	"os"
	"slices"
	"sort"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/transit"
)

// span is one segment of an invented light curve.
type span struct {
	id, band          string
	from, to, cadence float64 // days; the exposure equals the cadence
	q1, q2            float64 // the band's limb darkening
}

// invented is a light curve of segs with the planet tr (circular or eccentric) integrated
// over each exposure with sub sub-exposures, diluted by the flux ratio dil, plus white
// noise of sigma.
func invented(tr truth, segs []span, sub int, dil, sigma float64, seed uint64) *lightcurve.LightCurve {
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5}
	r := rng.Derive(seed, "fit-test/invented-noise", 0)
	aR := ScaledAxis(tr.period, tr.rho)
	for _, s := range segs {
		seg := lightcurve.Segment{ID: s.id, Band: s.band, Exposure: s.cadence, Contamination: math.NaN()}
		for t := s.from; t < s.to; t += s.cadence {
			seg.Time = append(seg.Time, t)
		}
		fine := transit.SubexposureTimes(nil, seg.Time, s.cadence, sub)
		var z []float64
		if tr.e > 0 {
			z = transit.SeparationEccentric(nil, fine, tr.period, tr.t0, aR, tr.b, tr.e, tr.omega)
		} else {
			z = transit.SeparationCircular(nil, fine, tr.period, tr.t0, aR, tr.b)
		}
		u1, u2 := transit.QuadraticFromKipping(s.q1, s.q2)
		f := transit.AverageBlocks(nil, transit.Flux(nil, z, tr.k, u1, u2), sub)
		for i := range f {
			seg.Flux = append(seg.Flux, (f[i]+dil)/(1+dil)+sigma*r.Normal())
			seg.Err = append(seg.Err, sigma)
		}
		lc.Segments = append(lc.Segments, seg)
	}
	return lc
}

// starArtifact stands in for a star step's result.
type starArtifact struct{ s *stellar.Star }

func (a starArtifact) StarDraws() *stellar.Star { return a.s }
func (a starArtifact) Encode() []byte           { return nil }
func (a starArtifact) Figures() []steps.Figure  { return nil }

// dilutionArtifact stands in for a dilution step's result.
type dilutionArtifact struct{ d *stellar.Dilution }

func (a dilutionArtifact) DilutionDraws() *stellar.Dilution { return a.d }
func (a dilutionArtifact) Encode() []byte                   { return nil }
func (a dilutionArtifact) Figures() []steps.Figure          { return nil }

// logNormalDraws are n draws of a quantity whose ln is normal with the ln of median and
// sigma, from a fixed stream.
func logNormalDraws(median, sigma float64, n int, seed uint64) []float64 {
	r := rng.Derive(seed, "fit-test/draws", 0)
	out := make([]float64, n)
	for i := range out {
		out[i] = median * math.Exp(sigma*r.Normal())
	}
	return out
}

func TestMeanAnomalyInvertsKeplersEquation(t *testing.T) {
	// Reference: transit.EccentricAnomaly (Kepler's equation solved to 1e-15) and the
	// half-angle relation tan(f/2) = √((1+e)/(1−e)) tan(E/2) (Winn 2010).
	for _, e := range []float64{0, 0.1, 0.3, 0.7, 0.95} {
		t.Run(fmt.Sprintf("mean anomalies come back through the true anomaly at e = %v", e), func(t *testing.T) {
			for m := -3.1; m < 3.1; m += 0.37 {
				ea := transit.EccentricAnomaly(m, e)
				f := 2 * math.Atan2(math.Sqrt(1+e)*math.Sin(ea/2), math.Sqrt(1-e)*math.Cos(ea/2))
				if got := meanAnomaly(f, e); math.Abs(math.Remainder(got-m, 2*math.Pi)) > 1e-12 {
					t.Errorf("e = %v, M = %v: got %v", e, m, got)
				}
			}
		})
	}
	t.Run("the mean anomaly increases with the true anomaly across ±π", func(t *testing.T) {
		prev := meanAnomaly(2.5, 0.6)
		for f := 2.5; f < 4.5; f += 0.01 {
			if m := meanAnomaly(f, 0.6); m < prev {
				t.Fatalf("f = %v: %v after %v", f, m, prev)
			} else {
				prev = m
			}
		}
	})
}

func TestPrunedEccentricLogPosteriorIsTheFullOne(t *testing.T) {
	// As TestPrunedLogPosteriorIsTheFullOneToTheBit, with eccentric orbits (draws of √e cos ω,
	// √e sin ω over the disk, so the contact reach of geometry is exercised) and a dilution.
	lc, sigs := windowCurve([]truth{hot, small}, 300, defaultWindow, 300e-6, 9)
	d := Prior{Shape: LogNormal, A: math.Log(0.2), B: 0.3}
	m, art, _, scale, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true, Jitter: true,
		Eccentric: []string{"b", "c"}, Dilution: &d})
	if err != nil {
		t.Fatal(err)
	}
	m.direct = true // the tabulated shape is compared with direct evaluation elsewhere
	x0 := truthVector(m, art, []truth{hot, small})
	x0[freePos(m, m.global()+gDilution)] = 0.2
	r := rng.Derive(1, "fit-test/ecc-pruning", 0)
	x := make([]float64, len(x0))
	finite := 0
	for trial := 0; trial < 150; trial++ {
		for i := range x {
			x[i] = x0[i] + scale[i]*r.Normal()
		}
		for j := 0; j < 2; j++ {
			e, w := 0.8*r.Float64(), 2*math.Pi*r.Float64()
			x[freePos(m, perPlanet*j+iSecosw)], x[freePos(m, perPlanet*j+iSesinw)] = math.Sqrt(e)*math.Cos(w), math.Sqrt(e)*math.Sin(w)
		}
		got, want := m.LogPost(x), fullLogPost(m, x)
		if math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("at %v: pruned %v, full %v", x, got, want)
		}
		if !math.IsInf(want, 0) {
			finite++
		}
	}
	if finite < 50 {
		t.Errorf("only %d of 150 points had a finite posterior; the check is too weak", finite)
	}
}

func TestEachBandHasItsOwnLimbDarkening(t *testing.T) {
	// Two bands of very different limb darkening and a third segment without a band, at low
	// noise: the log posterior at the truth must beat the one with the bands' q swapped by
	// far (the swap changes the transit shape by ~1e-3 against 100 ppm noise).
	segs := []span{
		{id: "1", band: "survey-red", from: 0, to: 3.5, cadence: 2.0 / 1440, q1: 0.2, q2: 0.2},
		{id: "2", band: "survey-blue", from: 3.5, to: 6.5, cadence: 2.0 / 1440, q1: 0.8, q2: 0.4},
		{id: "3", band: "", from: 6.5, to: 9.5, cadence: 2.0 / 1440, q1: 0.36, q2: 0.3},
	}
	lc := invented(hot, segs, 3, 0, 100e-6, 2)
	m, art, _, _, _, err := setup(lc, Options{Signals: []signals.Signal{start(hot)}, Window: defaultWindow, Supersample: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Run("the segments give three bands", func(t *testing.T) {
		if !slices.Equal(m.bands, []string{"survey-red", "survey-blue", ""}) {
			t.Errorf("bands %q", m.bands)
		}
	})
	t.Run("the limb-darkening columns are named by band", func(t *testing.T) {
		names := m.columns()
		for _, w := range []string{"q1[survey-red]", "q2[survey-red]", "q1[survey-blue]", "q2[survey-blue]", "q1", "q2"} {
			if !slices.Contains(names, w) {
				t.Errorf("no column %q in %q", w, names)
			}
		}
	})
	x := truthVector(m, art, []truth{hot})
	for i, s := range segs {
		x[freePos(m, m.qIndex(i))], x[freePos(m, m.qIndex(i)+1)] = logit(s.q1), logit(s.q2)
	}
	y := slices.Clone(x)
	y[freePos(m, m.qIndex(0))], y[freePos(m, m.qIndex(1))] = x[freePos(m, m.qIndex(1))], x[freePos(m, m.qIndex(0))]
	y[freePos(m, m.qIndex(0)+1)], y[freePos(m, m.qIndex(1)+1)] = x[freePos(m, m.qIndex(1)+1)], x[freePos(m, m.qIndex(0)+1)]
	t.Run("swapping the bands' limb darkening costs more than 100 in log posterior", func(t *testing.T) {
		if a, b := m.LogPost(x), m.LogPost(y); !(a-b > 100) {
			t.Errorf("truth %v, swapped %v", a, b)
		}
	})
	t.Run("segments without a band share one pair", func(t *testing.T) {
		lc2 := invented(hot, []span{segs[2], {id: "4", from: 9.5, to: 12.5, cadence: 2.0 / 1440, q1: 0.36, q2: 0.3}}, 3, 0, 100e-6, 2)
		m2, _, _, _, _, err := setup(lc2, Options{Signals: []signals.Signal{start(hot)}, Window: defaultWindow})
		if err != nil {
			t.Fatal(err)
		}
		if len(m2.bands) != 1 || m2.segs[0].band != 0 || m2.segs[1].band != 0 {
			t.Errorf("bands %q", m2.bands)
		}
	})
}

func TestMixedCadenceIsIntegratedPerSegment(t *testing.T) {
	// One 2-min and one 30-min segment of the same planet, each integrated in the invented
	// data with 31 sub-exposures; the fit chooses N per segment (subexposures) and must
	// recover the truth within 3σ.
	segs := []span{
		{id: "fast", from: 0, to: 3.5, cadence: 2.0 / 1440, q1: hot.q1, q2: hot.q2},
		{id: "slow", from: 3.5, to: 12.5, cadence: 30.0 / 1440, q1: hot.q1, q2: hot.q2},
	}
	lc := invented(hot, segs, 31, 0, 400e-6, 3)
	sig := start(hot)
	art, _ := runKind(t, map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 1000, "jitter": false},
		lc, []signals.Signal{sig}, 2, 17)
	// The bound of subexposures worked by hand for each segment: δ = the start's depth,
	// τ = its duration·k/(1+k), ε = 0.1·400 ppm; N = ⌈min(√(δT/(8τε)), δ/(2ε))⌉.
	k := math.Sqrt(sig.Depth)
	tau := sig.Duration * k / (1 + k)
	eps := integrationShare * 400e-6
	for i, c := range []struct {
		id       string
		exposure float64
	}{{"fast", 2.0 / 1440}, {"slow", 30.0 / 1440}} {
		want := int(math.Ceil(math.Min(math.Sqrt(sig.Depth*c.exposure/(8*tau*eps)), sig.Depth/(2*eps))))
		t.Run(fmt.Sprintf("segment %s is integrated with its own %d sub-exposures", c.id, want), func(t *testing.T) {
			if s := art.Segments[i]; s.ID != c.id || s.NSub != want {
				t.Errorf("segment %s: N = %d, want %d", s.ID, s.NSub, want)
			}
		})
	}
	t.Run("the 30-min segment needs several times the 2-min one's", func(t *testing.T) {
		if !(art.Segments[1].NSub >= 3*art.Segments[0].NSub) {
			t.Errorf("N = %d and %d", art.Segments[0].NSub, art.Segments[1].NSub)
		}
	})
	tref := hot.t0 + float64(art.Reference[0].Transit)*hot.period
	for _, c := range []struct {
		col  string
		want float64
	}{{"b.period", hot.period}, {"b.t0", tref}, {"b.k", hot.k}, {"b.b", hot.b}, {"star_density", hot.rho}} {
		t.Run(c.col+" lies within 3 sigma of the truth", func(t *testing.T) {
			med, sig := art.Summary(c.col)
			if !(sig > 0) || math.Abs(med-c.want) > 3*sig {
				t.Errorf("%s = %.6g ± %.3g, truth %.6g", c.col, med, sig, c.want)
			}
		})
	}
}

func TestCoupledDilutionUndoesTheDilution(t *testing.T) {
	// The invented light curve is diluted by a companion giving D = 0.5 (depth × 2/3). With
	// the dilution step's flux ratios as the prior on D the fitted k must be the true one;
	// the k of a fit without them is k/√1.5 (the depth scales by 1/(1+D) for a small planet).
	tr := hot
	lc := invented(tr, []span{{id: "1", from: 0, to: 9, cadence: 10.0 / 1440, q1: tr.q1, q2: tr.q2}}, 11, 0.5, 200e-6, 4)
	sig := start(tr)
	sig.Depth /= 1.5
	dil := dilutionArtifact{&stellar.Dilution{Band: "survey-red", Hypotheses: []stellar.Hypothesis{
		{Host: "target", FluxRatio: logNormalDraws(0.5, 0.04, 2000, 5)}}}}
	set := map[string]any{"light_curve": "detrend.x", "signals": "search.x", "dilution": "dilution.x", "max_steps": 1500}
	art, notes := runKindWith(t, set, steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{[]signals.Signal{sig}}}, "dilution": {dil}}}, 7)
	t.Run("dilution is a sampled column", func(t *testing.T) {
		if !slices.Contains(art.Names[:art.Sampled], "dilution") {
			t.Errorf("sampled %q", art.Names[:art.Sampled])
		}
	})
	t.Run("the prior is a log-normal fitted to the flux ratios", func(t *testing.T) {
		if len(art.Priors) != 1 || !slices.Contains(notes, art.Priors[0]) {
			t.Errorf("priors %q", art.Priors)
		}
	})
	t.Run("k lies within 3 sigma of the truth", func(t *testing.T) {
		med, s := art.Summary("b.k")
		if !(s > 0) || math.Abs(med-tr.k) > 3*s {
			t.Errorf("k = %.5g ± %.2g, truth %.5g", med, s, tr.k)
		}
	})
	t.Run("a figure reports the dilution", func(t *testing.T) {
		found := false
		for _, f := range art.Figures() {
			found = found || f.Name == "dilution"
		}
		if !found {
			t.Error("no dilution figure")
		}
	})
}

func runKindWith(t *testing.T, set map[string]any, in steps.Inputs, seed uint64) (*Artifact, []string) {
	t.Helper()
	k := New()
	cfg, err := steptest.Config(k, set)
	if err != nil {
		t.Fatal(err)
	}
	var notes []string
	env := steps.Env{Seed: seed, Pool: steptest.Pool(2), Notef: func(f string, a ...any) { notes = append(notes, fmt.Sprintf(f, a...)) }}
	a, err := k.Run(t.Context(), cfg, in, env)
	if err != nil {
		t.Fatal(err)
	}
	return a.(*Artifact), notes
}

// eccentricFit fits the invented eccentric planet tr in coupled mode (density prior from
// star draws of 5 % spread around the truth) on days of data at cadence (min).
func eccentricFit(t *testing.T, tr truth, days, cadence float64, maxSteps int, jitter bool) *Artifact {
	t.Helper()
	lc := invented(tr, []span{{id: "1", from: 0, to: days, cadence: cadence / 1440, q1: tr.q1, q2: tr.q2}}, 7, 0, 300e-6, 6)
	aR := ScaledAxis(tr.period, tr.rho)
	f := math.Sqrt(1-tr.e*tr.e) / (1 + tr.e*math.Sin(tr.omega))
	sig := signals.Signal{Period: tr.period + 2e-4, Epoch: tr.t0 + 0.003,
		Duration: 0.85 * f * totalDuration(tr.period, tr.k, tr.b, aR), Depth: 0.9 * tr.k * tr.k}
	star := starArtifact{&stellar.Star{Density: logNormalDraws(tr.rho, 0.05, 4000, 8)}}
	set := map[string]any{"light_curve": "detrend.x", "signals": "search.x", "star": "star.x",
		"eccentric": []string{"b"}, "max_steps": maxSteps, "jitter": jitter}
	art, _ := runKindWith(t, set, steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{[]signals.Signal{sig}}}, "star": {star}}}, 21)
	return art
}

// interval is the central 95 % interval of v.
func interval(v []float64) (lo, hi float64) {
	s := slices.Clone(v)
	sort.Float64s(s)
	return s[int(0.025*float64(len(s)))], s[int(0.975*float64(len(s)-1))]
}

func TestEccentricOrbitIsRecoveredWithADensityPrior(t *testing.T) {
	// The check: e = 0.3, ω = 40°, fitted in coupled mode with the star's density;
	// the true e must lie in the central 95 % interval of its posterior. The photo-eccentric
	// effect (the transit lasts (1 + e sin ω)/√(1 − e²) times shorter than on a circular
	// orbit around the same star) is what constrains e. The default run is the quick
	// variant (2 transits of 6-min data, no jitter, 1000 steps); DIPLINE_LONG=1 runs 3
	// transits of 4-min data with jitter and 3000 steps (about a minute on a loaded machine).
	tr := hot
	tr.e, tr.omega = 0.3, 40*math.Pi/180
	days, cadence, n, jitter := 6.5, 6.0, 1000, false
	if os.Getenv("DIPLINE_LONG") == "1" {
		days, cadence, n, jitter = 9.5, 4.0, 3000, true
	}
	art := eccentricFit(t, tr, days, cadence, n, jitter)
	t.Run("the true e lies in the 95 % interval", func(t *testing.T) {
		lo, hi := interval(art.Column("b.e"))
		t.Logf("e in [%.3g, %.3g] (95 %%), %d draws", lo, hi, len(art.Column("b.e")))
		if !(tr.e >= lo && tr.e <= hi) {
			t.Errorf("e in [%.3g, %.3g], truth %v", lo, hi, tr.e)
		}
	})
	t.Run("a circular orbit lies outside the 95 % interval", func(t *testing.T) {
		// The duration is 17 % shorter than circular; at this signal-to-noise e = 0 is excluded.
		if lo, _ := interval(art.Column("b.e")); !(lo > 0.05) {
			t.Errorf("e's interval starts at %.3g", lo)
		}
	})
	t.Run("the density follows the star's", func(t *testing.T) {
		if med, _ := art.Summary("star_density"); math.Abs(med/tr.rho-1) > 0.15 {
			t.Errorf("density %.4g, star %.4g", med, tr.rho)
		}
	})
	t.Run("e, omega and the eccentric duration are derived columns with figures", func(t *testing.T) {
		want := []string{"b.e", "b.omega", "b.t14", "b.a_over_rstar"}
		got := map[string]bool{}
		for _, f := range art.Figures() {
			got[f.Name] = true
		}
		for _, w := range want {
			if art.Column(w) == nil || !got[w] {
				t.Errorf("no column or figure %q", w)
			}
		}
	})
	t.Run("the derived T14 matches the invented planet's within 3 sigma", func(t *testing.T) {
		// Reference: the span with z < 1 + k of the invented orbit, found numerically from
		// transit.SeparationEccentric on a 1-s grid around the mid-transit.
		aR := ScaledAxis(tr.period, tr.rho)
		var grid []float64
		for dt := -0.2; dt < 0.2; dt += 1.0 / 86400 {
			grid = append(grid, tr.t0+dt)
		}
		in := 0
		for _, z := range transit.SeparationEccentric(nil, grid, tr.period, tr.t0, aR, tr.b, tr.e, tr.omega) {
			if z < 1+tr.k {
				in++
			}
		}
		want := float64(in) / 86400
		med, s := art.Summary("b.t14")
		if !(s > 0) || math.Abs(med-want) > 3*s+0.01*want { // Winn's formula is itself approximate at the per-cent level
			t.Errorf("T14 %.5g ± %.2g d, truth %.5g", med, s, want)
		}
	})
}

func TestEccentricOrbitsStayOffTheStar(t *testing.T) {
	// The prior's support: e < 1 and a periastron distance a/R*·(1 − e) beyond 1 + k (the
	// planet never touches the star), with a/R* from Kepler's third law (8.5 for the invented
	// hot Jupiter, so the limit is e < 1 − 1.1/8.5 ≈ 0.87).
	lc, sigs := windowCurve([]truth{hot}, 200, defaultWindow, 300e-6, 1)
	m, art, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Eccentric: []string{"b"}})
	if err != nil {
		t.Fatal(err)
	}
	aR := ScaledAxis(hot.period, hot.rho)
	limit := 1 - (1+hot.k)/aR
	cases := []struct {
		name string
		e    float64
		ok   bool
	}{
		{"a circular orbit is allowed", 0, true},
		{"e just inside the periastron limit is allowed", limit - 1e-6, true},
		{"e just beyond the periastron limit is refused", limit + 1e-6, false},
		{"e = 0.99 is refused", 0.99, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x := truthVector(m, art, []truth{hot})
			x[freePos(m, iSecosw)], x[freePos(m, iSesinw)] = 0, math.Sqrt(c.e)
			lp := m.LogPost(x)
			if ok := !math.IsInf(lp, -1); ok != c.ok {
				t.Errorf("e = %.6f (limit %.6f): log posterior %v", c.e, limit, lp)
			}
		})
	}
}

func TestCoupledPriorsFromDraws(t *testing.T) {
	// Reference: the draws are made log-normal with known ln-median and ln-sigma; the sample
	// mean and standard deviation of 4000 ln draws are within 4 standard errors (σ/√n and
	// σ/√(2n)) of them.
	const n = 4000
	d := logNormalDraws(1.8, 0.07, n, 3)
	t.Run("the density prior is the log-normal of the draws", func(t *testing.T) {
		p, err := DensityPrior(d)
		if err != nil {
			t.Fatal(err)
		}
		if p.Shape != LogNormal || math.Abs(p.A-math.Log(1.8)) > 4*0.07/math.Sqrt(n) || math.Abs(p.B-0.07) > 4*0.07/math.Sqrt(2*n) {
			t.Errorf("prior %v, want log_normal(%.5f, 0.07)", p, math.Log(1.8))
		}
	})
	t.Run("a negative density draw is bad input naming the draw", func(t *testing.T) {
		bad := slices.Clone(d)
		bad[17] = -1
		if _, err := DensityPrior(bad); !steps.IsInputError(err) || !strings.Contains(err.Error(), "draw 18") {
			t.Errorf("error %v", err)
		}
	})
	t.Run("flux ratios that are all zero fix the dilution at 0", func(t *testing.T) {
		if p, err := DilutionPrior(make([]float64, 10)); err != nil || p.Shape != Fixed || p.A != 0 {
			t.Errorf("prior %v, %v", p, err)
		}
	})
	t.Run("a star without density draws is bad input", func(t *testing.T) {
		lc := synthetic(hot, 7, 800e-6, 3)
		k := New()
		cfg, err := steptest.Config(k, map[string]any{"light_curve": "detrend.x", "signals": "search.x", "star": "star.x"})
		if err != nil {
			t.Fatal(err)
		}
		_, err = k.Run(t.Context(), cfg, steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{[]signals.Signal{start(hot)}}},
			"star": {starArtifact{&stellar.Star{Radius: []float64{1}}}}}}, steps.Env{Seed: 1})
		if !steps.IsInputError(err) {
			t.Errorf("error %v", err)
		}
	})
	t.Run("without star and dilution references the kind reads neither", func(t *testing.T) {
		for _, p := range New().Params() {
			if (p.Name == "star" || p.Name == "dilution") && (p.Required || p.Default != "") {
				t.Errorf("%s: required %v, default %q", p.Name, p.Required, p.Default)
			}
		}
		cfg := steptest.MustConfig(New(), map[string]any{"light_curve": "detrend.x", "signals": "search.x"}).(*Config)
		if cfg.Star != nil || cfg.Dilution != nil {
			t.Errorf("a block without them decodes star %v, dilution %v", cfg.Star, cfg.Dilution)
		}
	})
}
