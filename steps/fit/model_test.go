package fit

import (
	"context"
	"math"
	"testing"

	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/transit"
)

// small is a second invented planet, a super-Earth whose short ingress asks for the most
// sub-exposures per point.
var small = truth{period: 4.7, t0: 2.2, k: 0.025, b: 0.2, rho: hot.rho, q1: hot.q1, q2: hot.q2}

// windowCurve is a single segment of n points at 29.4-min cadence and exposure, taken only
// where the fit keeps points (within window search durations of a mid-transit of any of
// trs, as started by start), with the planets' model integrated over 41 sub-exposures plus
// white noise of sigma.
func windowCurve(trs []truth, n int, window, sigma float64, seed uint64) (*lightcurve.LightCurve, []signals.Signal) {
	const exposure = 29.4 / 1440
	var sigs []signals.Signal
	for _, tr := range trs {
		sigs = append(sigs, start(tr))
	}
	seg := lightcurve.Segment{ID: "1", Exposure: exposure, Contamination: math.NaN()}
	for t := 0.0; len(seg.Time) < n; t += exposure {
		for _, s := range sigs {
			if s.InTransit(t, 2*window) {
				seg.Time = append(seg.Time, t)
				break
			}
		}
	}
	const sub = 41
	fine := transit.SubexposureTimes(nil, seg.Time, exposure, sub)
	sum := make([]float64, len(fine))
	for i := range sum {
		sum[i] = 1
	}
	for _, tr := range trs {
		aR := ScaledAxis(tr.period, tr.rho)
		z := transit.SeparationCircular(nil, fine, tr.period, tr.t0, aR, tr.b)
		u1, u2 := transit.QuadraticFromKipping(tr.q1, tr.q2)
		for i, v := range transit.Flux(nil, z, tr.k, u1, u2) {
			sum[i] += v - 1
		}
	}
	f := transit.AverageBlocks(nil, sum, sub)
	r := rng.Derive(seed, "fit-test/window-noise", 0)
	for i := range f {
		seg.Flux = append(seg.Flux, f[i]+sigma*r.Normal())
		seg.Err = append(seg.Err, sigma)
	}
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5, Segments: []lightcurve.Segment{seg}}, sigs
}

// truthVector is the sampled vector of trs in the layout of m (jitter 10 ppm when fitted).
func truthVector(m *Model, art *Artifact, trs []truth) []float64 {
	full := make([]float64, len(m.params))
	for i := range m.params {
		full[i] = m.params[i].value
	}
	for j, tr := range trs {
		p := full[perPlanet*j:]
		p[iPeriod], p[iK], p[iB] = tr.period, tr.k, tr.b
		p[iT0] = tr.t0 + float64(art.Reference[j].Transit)*tr.period
		if m.ecc[j] {
			p[iSecosw] = math.Sqrt(tr.e) * math.Cos(tr.omega)
			p[iSesinw] = math.Sqrt(tr.e) * math.Sin(tr.omega)
		}
	}
	g := m.global()
	full[g+gDensity] = math.Log10(trs[0].rho)
	u1, u2 := transit.QuadraticFromKipping(trs[0].q1, trs[0].q2)
	for j, tr := range trs {
		if m.depthParam[j] {
			c, _ := darkening(tr.b, u1, u2)
			full[perPlanet*j+iK] = tr.k * tr.k / c
		}
		if m.chordParam[j] {
			full[perPlanet*j+iB] = chord(tr.b, ScaledAxis(tr.period, tr.rho))
		}
	}
	for i := range m.bands {
		full[m.qIndex(i)], full[m.qIndex(i)+1] = logit(trs[0].q1), logit(trs[0].q2)
	}
	if m.jitter {
		for s := range m.segs {
			full[m.jitterIndex(s)] = math.Log(1e-5)
		}
	}
	x := make([]float64, 0, m.dim())
	for _, i := range m.free {
		x = append(x, full[i])
	}
	return x
}

// freePos is the position in the sampled vector of full entry idx, or −1 when it is fixed.
func freePos(m *Model, idx int) int {
	for i, f := range m.free {
		if f == idx {
			return i
		}
	}
	return -1
}

// BenchmarkLogPosterior times one evaluation of the log posterior at the truth, for 500
// points at 29.4-min exposure with the default window, supersampling and jitter.
func BenchmarkLogPosterior(b *testing.B) {
	for _, c := range []struct {
		name string
		trs  []truth
	}{
		{"one planet", []truth{hot}},
		{"two planets", []truth{hot, small}},
	} {
		b.Run(c.name, func(b *testing.B) {
			lc, sigs := windowCurve(c.trs, 500, defaultWindow, 300e-6, 1)
			m, art, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true, Jitter: true})
			if err != nil {
				b.Fatal(err)
			}
			x := truthVector(m, art, c.trs)
			if lp := m.LogPost(x); math.IsInf(lp, 0) || math.IsNaN(lp) {
				b.Fatalf("log posterior %v at the truth", lp)
			}
			b.ReportAllocs()
			for b.Loop() {
				m.LogPost(x)
			}
			b.ReportMetric(float64(art.Segments[0].NSub), "nsub")
			b.ReportMetric(float64(art.Segments[0].Points), "points")
		})
	}
}

// fullLogPost is LogPost computed the plain way, as the first version of this package did:
// every planet's flux at every sub-exposure of every point, then the block means. It is the
// reference that the pruned LogPost must match bit for bit.
func fullLogPost(m *Model, x []float64) float64 {
	lp := 0.0
	for i, idx := range m.free {
		p := &m.params[idx]
		if !(x[i] >= p.lo && x[i] <= p.hi) {
			return math.Inf(-1)
		}
		lp += p.logPrior(x[i])
	}
	if math.IsInf(lp, -1) {
		return lp
	}
	full := m.expand(make([]float64, len(m.params)), x)
	// The priors, orbits and limb darkening come from the model's own Model.at; what this
	// reference computes its own way is the light curve.
	pt, ok := m.at(full, lp)
	if !ok {
		return math.Inf(-1)
	}
	lp, orb, dil, np := pt.lp, pt.orb, pt.dil, m.planets
	for s := range m.segs {
		sd := &m.segs[s]
		u1, u2 := transit.QuadraticFromKipping(full[m.qIndex(sd.band)], full[m.qIndex(sd.band)+1])
		sum := make([]float64, len(sd.fine))
		for i := range sum {
			sum[i] = 1
		}
		for j := 0; j < np; j++ {
			z := m.separation(nil, sd.fine, full, j, orb[j])
			for i, v := range transit.Flux(nil, z, full[perPlanet*j+iK], u1, u2) {
				sum[i] += v - 1
			}
		}
		mod := transit.AverageBlocks(nil, sum, sd.nsub)
		if dil != 0 {
			for i, v := range mod {
				mod[i] = (v + dil) / (1 + dil)
			}
		}
		s2 := 0.0
		if m.jitter {
			js := math.Exp(full[m.jitterIndex(s)])
			s2 = js * js
		}
		lp += segmentLogLike(mod, sd.f, sd.v, s2)
	}
	return lp
}

func TestPrunedLogPosteriorIsTheFullOneToTheBit(t *testing.T) {
	// The reference is the unpruned computation (fullLogPost); equality of the bits is the
	// claim of Model.model's comment. Points: the truth, draws around it of a few widths
	// (transits shifted through the points), and draws from the whole prior box (grazing
	// and large planets, stars of any density).
	cases := []struct {
		name          string
		trs           []truth
		super, jitter bool
	}{
		{"one planet, integrated, with jitter", []truth{hot}, true, true},
		{"one planet, instantaneous, without jitter", []truth{hot}, false, false},
		{"two planets, integrated, with jitter", []truth{hot, small}, true, true},
		{"two planets, integrated, without jitter", []truth{hot, small}, true, false},
	}
	for ci, c := range cases {
		t.Run(c.name+" gives the same bits", func(t *testing.T) {
			lc, sigs := windowCurve(c.trs, 300, defaultWindow, 300e-6, uint64(ci))
			m, art, _, scale, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: c.super, Jitter: c.jitter})
			if err != nil {
				t.Fatal(err)
			}
			m.direct = true // the tabulated shape is checked against this one separately
			x0 := truthVector(m, art, c.trs)
			r := rng.Derive(uint64(ci), "fit-test/pruning", 0)
			x := make([]float64, len(x0))
			finite := 0
			const trials = 800 // about a quarter of the draws from the prior box are valid
			for trial := 0; trial < trials; trial++ {
				switch {
				case trial == 0:
					copy(x, x0)
				case trial%2 == 1:
					for i, idx := range m.free {
						w := 3.0
						if idx < m.global() && m.chordParam[idx/perPlanet] && idx%perPlanet == iB {
							w = 1 // a chord near b = 0 lies within a step of its edge
						}
						x[i] = x0[i] + w*scale[i]*r.Normal()
					}
				default:
					for i, idx := range m.free {
						lo, hi := m.params[idx].lo, m.params[idx].hi
						if math.IsInf(hi, 1) {
							hi = 1 // δ, bounded through k ≤ 1
						}
						if m.params[idx].logit {
							lo, hi = -6, 6 // q from 0.0025 to 0.9975
						}
						if idx == m.global()+gDensity {
							lo, hi = -2, 2 // the default prior's range
						}
						x[i] = lo + (hi-lo)*r.Float64()
						if idx < m.global() && m.chordParam[idx/perPlanet] && idx%perPlanet == iB {
							x[i] = 0 // b = 1 for now; drawn below at the drawn density
						}
					}
					// A chord coordinate's valid range depends on the density: draw b
					// uniformly in [0, 1.1] and store its chord.
					rho, _, _, _ := m.physical(m.expand(make([]float64, len(m.params)), x))
					for i, idx := range m.free {
						if j := idx / perPlanet; idx < m.global() && m.chordParam[j] && idx%perPlanet == iB && rho > 0 {
							x[i] = chord(1.1*r.Float64(), ScaledAxis(x[freePos(m, perPlanet*j+iPeriod)], rho))
						}
					}
				}
				got, want := m.LogPost(x), fullLogPost(m, x)
				if math.Float64bits(got) != math.Float64bits(want) {
					t.Fatalf("at %v: pruned %v, full %v", x, got, want)
				}
				if !math.IsInf(want, 0) {
					finite++
				}
			}
			if finite < 100 {
				t.Errorf("only %d of %d points had a finite posterior; the check is too weak", finite, trials)
			}
		})
	}
}

func TestChosenSubexposuresMatchAMuchFinerIntegration(t *testing.T) {
	// The reference is the same model integrated with 8 times the sub-exposures (numerical
	// quadrature by the midpoint rule, whose error falls as 1/N², Kipping 2010): its
	// difference from the chosen N must stay below integrationShare·σ, the design bound of
	// subexposures, for a deep and a shallow planet at two noise levels.
	cases := []struct {
		name  string
		trs   []truth
		sigma float64
	}{
		{"a hot Jupiter at 300 ppm", []truth{hot}, 300e-6},
		{"a hot Jupiter at 50 ppm", []truth{hot}, 50e-6},
		{"a super-Earth beside it at 300 ppm", []truth{hot, small}, 300e-6},
		{"a lone super-Earth at 100 ppm", []truth{small}, 100e-6},
	}
	for _, c := range cases {
		t.Run(c.name+" is integrated to a tenth of the noise", func(t *testing.T) {
			lc, sigs := windowCurve(c.trs, 400, defaultWindow, c.sigma, 2)
			o := Options{Signals: sigs, Window: defaultWindow, Supersample: true}
			m, art, _, _, _, err := setup(lc, o)
			if err != nil {
				t.Fatal(err)
			}
			o.nsub = 8 * art.Segments[0].NSub
			fine, _, _, _, _, err := setup(lc, o)
			if err != nil {
				t.Fatal(err)
			}
			x := truthVector(m, art, c.trs)
			worst := 0.0
			for _, tr := range []float64{0, 0.3, 0.5} { // the truth and longer ingresses
				for j := range c.trs {
					x[freePos(m, perPlanet*j+iB)] = c.trs[j].b + tr
				}
				a := modelAt(m, x)
				b := modelAt(fine, x)
				for i := range a {
					worst = math.Max(worst, math.Abs(a[i]-b[i]))
				}
			}
			if !(worst <= integrationShare*c.sigma) {
				t.Errorf("N = %d: largest difference %.3g from N = %d, more than %.3g", art.Segments[0].NSub, worst, o.nsub, integrationShare*c.sigma)
			}
			if art.Segments[0].NSub < 2 {
				t.Errorf("N = %d: a 29.4-min exposure of these transits needs integrating", art.Segments[0].NSub)
			}
		})
	}
}

// modelAt is the integrated model of the first segment at x.
func modelAt(m *Model, x []float64) []float64 {
	full := m.expand(make([]float64, len(m.params)), x)
	pt, _ := m.at(full, 0)
	ws := m.workspace()
	return append([]float64(nil), m.model(ws, &m.segs[0], full, pt.orb[:m.planets], pt.u[0][0], pt.u[0][1], 0)...)
}

func TestFitWithChosenSubexposuresAgreesWithAFinerOne(t *testing.T) {
	// The posterior sampled with the chosen N, reweighted to the posterior with 6 times as
	// many sub-exposures (importance sampling: weights exp(ln p_fine − ln p); the finer one
	// is the better quadrature, Kipping 2010), must keep every parameter's mean within a
	// tenth of its σ; and the log ratio must be nearly constant over the samples (standard
	// deviation under 0.1), which bounds any mean's shift by about that many σ.
	lc := synthetic(hot, 12, 300e-6, 7)
	o := Options{Signals: []signals.Signal{start(hot)}, MaxSteps: 600, Ensembles: 2, Window: defaultWindow, Supersample: true, Seed: 3}
	art, _, err := Fit(context.Background(), lc, o)
	if err != nil {
		t.Fatal(err)
	}
	m, _, _, _, _, err := setup(lc, o)
	if err != nil {
		t.Fatal(err)
	}
	o.nsub = 6 * art.Segments[0].NSub
	fine, _, _, _, _, err := setup(lc, o)
	if err != nil {
		t.Fatal(err)
	}
	cols, dim := len(art.Names), art.Sampled
	rows := len(art.Samples) / cols
	delta := make([]float64, rows)
	mean, top := 0.0, math.Inf(-1)
	for r := range delta {
		x := m.sampledFrom(art.Samples[r*cols : r*cols+dim])
		delta[r] = fine.LogPost(x) - m.LogPost(x)
		mean += delta[r] / float64(rows)
		top = math.Max(top, delta[r])
	}
	spread := 0.0
	for _, d := range delta {
		spread += (d - mean) * (d - mean) / float64(rows-1)
	}
	spread = math.Sqrt(spread)
	t.Run("the log ratio of the two posteriors varies by less than 0.1", func(t *testing.T) {
		if !(spread < 0.1) || rows < 100 {
			t.Errorf("N = %d against %d: standard deviation %.3g over %d samples", art.Segments[0].NSub, o.nsub, spread, rows)
		}
	})
	for p, name := range art.Names[:dim] {
		t.Run(name+"'s mean moves by less than a tenth of its sigma", func(t *testing.T) {
			var sw, sx, swx float64
			for r, d := range delta {
				w := math.Exp(d - top)
				x := art.Samples[r*cols+p]
				sw += w
				swx += w * x
				sx += x / float64(rows)
			}
			_, sig := art.Summary(name)
			if shift := math.Abs(swx/sw - sx); !(sig > 0) || !(shift < 0.1*sig) {
				t.Errorf("N = %d: mean %.8g, reweighted to N = %d: %.8g, σ %.3g", art.Segments[0].NSub, sx, o.nsub, swx/sw, sig)
			}
		})
	}
}

// TestTabulatedShapeKeepsTheLogPosterior compares the default log posterior, whose transit
// shapes are tabulated per planet and interpolated (Model.tabulate), with direct evaluation
// of every sub-exposure, for one and two planets in 200 days of 30-min data (where the
// table is used). What moves a posterior is how the difference varies across it, so the
// check is on Δ(x) − Δ(truth) at points inside the posterior's bulk (within 20 nats of
// the truth's log posterior): it must stay below 0.02 nats (measured: 0.006 and 0.010),
// which shifts no quantile by more than a per cent or so of σ. A constant offset would not
// matter at all. The planets here are deep (k = 0.1 at 300 ppm), which makes the check hard.
func TestTabulatedShapeKeepsTheLogPosterior(t *testing.T) {
	for ci, trs := range [][]truth{{hot}, {hot, small}} {
		lc := longCurve(trs, 200, 30.0/1440, 300e-6, uint64(ci+10))
		var sigs []signals.Signal
		for _, tr := range trs {
			sigs = append(sigs, start(tr))
		}
		m, art, _, scale, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true, Jitter: true})
		if err != nil {
			t.Fatal(err)
		}
		both := func(x []float64) (tab, dir float64) {
			m.direct = false
			tab = m.LogPost(x)
			m.direct = true
			dir = m.LogPost(x)
			return tab, dir
		}
		x0 := truthVector(m, art, trs)
		tab0, dir0 := both(x0)
		if tab0 == dir0 {
			t.Fatalf("%d planet(s): the tabulated path was not taken", len(trs))
		}
		r := rng.Derive(uint64(ci), "fit-test/tabulated", 0)
		x := make([]float64, len(x0))
		worst, compared := 0.0, 0
		for trial := 0; trial < 2000 && compared < 200; trial++ {
			f := 0.02 * float64(1+trial%10) // from a small fraction of the start scale upwards
			for i := range x {
				x[i] = x0[i] + f*scale[i]*r.Normal()
			}
			tab, dir := both(x)
			if math.IsInf(dir, -1) || dir0-dir > 20 {
				continue
			}
			compared++
			worst = math.Max(worst, math.Abs((tab-dir)-(tab0-dir0)))
		}
		t.Logf("%d planet(s): |Δ − Δ(truth)| up to %.2g nats over %d points in the bulk (Δ(truth) = %.2g)", len(trs), worst, compared, tab0-dir0)
		if worst > 0.02 || compared < 100 {
			t.Errorf("%d planet(s): tabulated and direct ln posterior vary apart by up to %.3g (%d points compared)", len(trs), worst, compared)
		}
	}
}

func TestSegmentLogLikeTakesTheLogDeterminantInBlocks(t *testing.T) {
	// Against the plain sum of logarithms, for errors spread over four decades and jitters
	// from none to 10 % (the prior's top), over lengths that do and do not fill the blocks.
	r := rng.Derive(5, "fit-test/logdet", 0)
	for _, n := range []int{1, 15, 16, 17, 1000} {
		for _, s2 := range []float64{0, 1e-12, 1e-2} {
			mod, f, v := make([]float64, n), make([]float64, n), make([]float64, n)
			for i := range mod {
				mod[i] = 1 - 0.01*r.Float64()
				f[i] = mod[i] + 1e-3*r.Normal()
				v[i] = math.Pow(10, -12+4*r.Float64())
			}
			var A, B, C, logDet float64
			for i := range mod {
				w := 1 / (v[i] + s2)
				A += w * mod[i] * mod[i]
				B += w * f[i] * mod[i]
				C += w * f[i] * f[i]
				logDet += math.Log(v[i] + s2)
			}
			want := -0.5*(C-B*B/A) - 0.5*logDet + 0.5*math.Log(2*math.Pi/A) - 0.5*float64(n)*math.Log(2*math.Pi)
			got := segmentLogLike(mod, f, v, s2)
			if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
				t.Errorf("n %d, s² %g: %.15g, plain sum %.15g", n, s2, got, want)
			}
		}
	}
}
