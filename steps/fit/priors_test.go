package fit

import (
	"context"
	"errors"
	"math"
	"slices"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/transit"
)

func TestParsePriorReadsTheFourFamilies(t *testing.T) {
	cases := []struct {
		name, in string
		want     Prior
	}{
		{"a normal prior gives its mean and sigma", "normal(3.7185, 0.0004)", Prior{Normal, 3.7185, 0.0004}},
		{"a uniform prior gives its bounds", " uniform( 0 ,0.9 ) ", Prior{Uniform, 0, 0.9}},
		{"a log-uniform prior gives its bounds", "log_uniform(1, 30)", Prior{LogUniform, 1, 30}},
		{"a fixed value is one number", "fixed(0.05)", Prior{Fixed, 0.05, 0.05}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := ParsePrior(c.in)
			if err != nil || got != c.want {
				t.Errorf("ParsePrior(%q) = %+v, %v; want %+v", c.in, got, err, c.want)
			}
			if back, err := ParsePrior(got.String()); err != nil || back != got {
				t.Errorf("String %q does not parse back: %+v, %v", got.String(), back, err)
			}
		})
	}
	bad := []struct{ name, in string }{
		{"an unknown family is refused", "gamma(1, 2)"},
		{"a missing parenthesis is refused", "normal(1, 2"},
		{"a fixed prior with two numbers is refused", "fixed(1, 2)"},
		{"a zero sigma is refused", "normal(1, 0)"},
		{"reversed bounds are refused", "uniform(2, 1)"},
		{"a log-uniform from zero is refused", "log_uniform(0, 1)"},
		{"a word for a number is refused", "normal(one, 2)"},
		{"an infinite bound is refused", "uniform(0, Inf)"},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			if p, err := ParsePrior(c.in); err == nil {
				t.Errorf("ParsePrior(%q) = %+v, want an error", c.in, p)
			}
		})
	}
}

func TestParseLimbPrior(t *testing.T) {
	t.Run("the plus-minus sign and its ASCII spelling both parse", func(t *testing.T) {
		want := LimbPrior{0.35, 0.05, 0.25, 0.04}
		for _, s := range []string{"u1 = 0.35 ± 0.05, u2 = 0.25 ± 0.04", "u2=0.25+/-0.04,u1=0.35+/-0.05"} {
			if got, err := ParseLimbPrior(s); err != nil || got != want {
				t.Errorf("%q: %+v, %v; want %+v", s, got, err, want)
			}
		}
	})
	for _, s := range []string{"u1 = 0.35 ± 0.05", "u1 = 0.35, u2 = 0.25", "u1 = 0.3 ± 0, u2 = 0.2 ± 0.1", "u3 = 0.1 ± 0.1, u1 = 0.3 ± 0.1", "u1 = 0.3 ± 0.1, u1 = 0.3 ± 0.1"} {
		t.Run("a malformed prior is refused: "+s, func(t *testing.T) {
			if _, err := ParseLimbPrior(s); err == nil {
				t.Error("no error")
			}
		})
	}
}

func TestKippingJacobianMatchesFiniteDifferences(t *testing.T) {
	// Reference: central finite differences of transit.QuadraticFromKipping (numerical
	// differentiation, step 1e-6, error O(h²) ≈ 1e-12 relative to the derivatives).
	const h = 1e-6
	for _, q := range [][2]float64{{0.36, 0.33}, {0.05, 0.9}, {0.8, 0.1}, {0.5, 0.5}, {0.99, 0.01}} {
		t.Run("the determinant agrees at a point inside the unit square", func(t *testing.T) {
			u1p, u2p := transit.QuadraticFromKipping(q[0]+h, q[1])
			u1m, u2m := transit.QuadraticFromKipping(q[0]-h, q[1])
			a11, a21 := (u1p-u1m)/(2*h), (u2p-u2m)/(2*h)
			u1p, u2p = transit.QuadraticFromKipping(q[0], q[1]+h)
			u1m, u2m = transit.QuadraticFromKipping(q[0], q[1]-h)
			a12, a22 := (u1p-u1m)/(2*h), (u2p-u2m)/(2*h)
			num := a11*a22 - a12*a21
			if got := JacobianQ(q[0], q[1]); math.Abs(got-num) > 1e-7 {
				t.Errorf("q = %v: analytic %v, finite differences %v", q, got, num)
			}
		})
	}
}

func TestLimbPriorDrawsMapToTheStatedMoments(t *testing.T) {
	// Monte Carlo: draws of (q1, q2) from the prior density LogPDF (rejection sampling from
	// the uniform square) mapped to (u1, u2) must have the stated means and sigmas, because
	// the density in q includes the Jacobian. The stated priors lie well inside the physical
	// triangle, so truncation moves the moments by far less than the tolerance. 40 000
	// accepted draws: the standard error of a mean is σ/200, of a σ about σ/280; tolerance
	// 4 standard errors.
	cases := []struct {
		name string
		lp   LimbPrior
	}{
		{"a Sun-like red-band prior", LimbPrior{0.40, 0.05, 0.25, 0.05}},
		{"a cool star's strongly darkened prior", LimbPrior{0.55, 0.04, 0.15, 0.06}},
	}
	for ci, c := range cases {
		t.Run(c.name+" gives back its means and sigmas", func(t *testing.T) {
			r := rng.Derive(uint64(ci), "fit-test/limb-prior", 0)
			const want = 40000
			var u1s, u2s []float64
			for len(u1s) < want {
				q1, q2 := r.Float64(), r.Float64()
				if math.Log(r.Float64()) < c.lp.LogPDF(q1, q2) { // the density's maximum is exp(0)
					u1, u2 := transit.QuadraticFromKipping(q1, q2)
					u1s, u2s = append(u1s, u1), append(u2s, u2)
				}
			}
			for _, v := range []struct {
				name      string
				x         []float64
				mean, sig float64
			}{{"u1", u1s, c.lp.U1, c.lp.U1Sigma}, {"u2", u2s, c.lp.U2, c.lp.U2Sigma}} {
				m, s := meanSD(v.x)
				if math.Abs(m-v.mean) > 4*v.sig/math.Sqrt(want) {
					t.Errorf("%s mean %.5f, stated %.5f", v.name, m, v.mean)
				}
				if math.Abs(s-v.sig) > 4*v.sig/math.Sqrt(2*want) {
					t.Errorf("%s sigma %.5f, stated %.5f", v.name, s, v.sig)
				}
			}
		})
	}
}

func meanSD(x []float64) (float64, float64) {
	m := 0.0
	for _, v := range x {
		m += v
	}
	m /= float64(len(x))
	s := 0.0
	for _, v := range x {
		s += (v - m) * (v - m)
	}
	return m, math.Sqrt(s / float64(len(x)-1))
}

// chordAt is the chord coordinate (Model.impact) of hot at impact parameter b.
func chordAt(b float64) float64 { return chord(b, ScaledAxis(hot.period, hot.rho)) }

func TestPriorsEnterTheLogPosteriorExactly(t *testing.T) {
	// Two points differing in one parameter: the change of LogPost with a prior minus the
	// change without it must be the prior's own log ratio, computed here by hand from the
	// densities' definitions (normal: −½((x−μ)/σ)²; on the density, a prior p(ρ) is
	// compared with the default log-uniform one, ∝ 1/ρ, so the ratio gains ln(ρ1/ρ2), and a
	// log-uniform prior differs from the default by a constant inside its range).
	lc, sigs := windowCurve([]truth{hot}, 300, defaultWindow, 300e-6, 4)
	cases := []struct {
		name   string
		key    string
		prior  Prior
		idx    int // full index changed
		x1, x2 float64
		want   float64
	}{
		{"a normal prior on the period", "b.period", Prior{Normal, 3.0, 2e-4}, iPeriod, 3.0001, 2.9997,
			-0.5 * (math.Pow(0.0001/2e-4, 2) - math.Pow(-0.0003/2e-4, 2))},
		// b is sampled through its chord coordinate (Model.impact) under any prior that is
		// not fixed; the Jacobians cancel between the two models.
		{"a uniform prior on b is flat inside", "b.b", Prior{Uniform, 0, 0.9}, iB, chordAt(0.3), chordAt(0.5), 0},
		// The density is sampled as log10 ρ, so a prior p(ρ) carries the Jacobian ρ ln 10.
		{"a log-uniform prior on the density is flat in log density", "star_density", Prior{LogUniform, 0.5, 3}, perPlanet + gDensity,
			math.Log10(1.2), math.Log10(1.6), 0},
		{"a normal prior on the density carries the Jacobian", "star_density", Prior{Normal, 1.4, 0.1}, perPlanet + gDensity,
			math.Log10(1.3), math.Log10(1.55), -0.5*(math.Pow(-0.1/0.1, 2)-math.Pow(0.15/0.1, 2)) + math.Log(1.3/1.55)},
	}
	for _, c := range cases {
		t.Run(c.name+" changes the log posterior by its log ratio", func(t *testing.T) {
			base := Options{Signals: sigs, Window: defaultWindow, Supersample: true}
			with := base
			with.Priors = map[string]Prior{c.key: c.prior}
			m0, art, _, _, _, err := setup(lc, base)
			if err != nil {
				t.Fatal(err)
			}
			m1, _, _, _, _, err := setup(lc, with)
			if err != nil {
				t.Fatal(err)
			}
			x := truthVector(m0, art, []truth{hot})
			pos := freePos(m0, c.idx)
			at := func(m *Model, v float64) float64 {
				y := slices.Clone(x)
				y[pos] = v
				return m.LogPost(y)
			}
			got := (at(m1, c.x1) - at(m1, c.x2)) - (at(m0, c.x1) - at(m0, c.x2))
			if math.Abs(got-c.want) > 1e-8*math.Max(1, math.Abs(c.want)) {
				t.Errorf("prior log ratio %.12g, want %.12g", got, c.want)
			}
		})
	}
	t.Run("a uniform prior excludes points outside it", func(t *testing.T) {
		o := Options{Signals: sigs, Window: defaultWindow, Priors: map[string]Prior{"b.b": {Uniform, 0, 0.9}}}
		m, art, _, _, _, err := setup(lc, o)
		if err != nil {
			t.Fatal(err)
		}
		x := truthVector(m, art, []truth{hot})
		x[freePos(m, iB)] = 0.95
		if lp := m.LogPost(x); !math.IsInf(lp, -1) {
			t.Errorf("b = 0.95 under uniform(0, 0.9): log posterior %v", lp)
		}
	})
}

func TestFixedParametersAreNotSampled(t *testing.T) {
	lc := synthetic(hot, 7, 800e-6, 3)
	art, notes := runKind(t, map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 200,
		"priors": map[string]string{"b.k": "fixed(0.1)", "star_density": "log_uniform(0.5, 3)"}}, lc, []signals.Signal{start(hot)}, 1, 3)
	t.Run("b.k is not among the sampled columns", func(t *testing.T) {
		if slices.Contains(art.Names[:art.Sampled], "b.k") || art.Sampled != 7 {
			t.Errorf("sampled %v", art.Names[:art.Sampled])
		}
	})
	t.Run("b.k is a constant column at its fixed value", func(t *testing.T) {
		col := art.Column("b.k")
		if len(col) == 0 {
			t.Fatal("no b.k column")
		}
		for _, v := range col {
			if v != 0.1 {
				t.Fatalf("b.k draw %v", v)
			}
		}
	})
	t.Run("every density draw lies inside the log-uniform prior's range", func(t *testing.T) {
		for _, v := range art.Column("star_density") {
			if !(v >= 0.5 && v <= 3) {
				t.Fatalf("density draw %v outside 0.5–3", v)
			}
		}
	})
	t.Run("the priors are listed in the artifact and the notes", func(t *testing.T) {
		want := []string{"prior: b.k fixed(0.1)", "prior: star_density log_uniform(0.5, 3)"}
		if !slices.Equal(art.Priors, want) {
			t.Errorf("priors %q", art.Priors)
		}
		for _, w := range want {
			if !slices.Contains(notes, w) {
				t.Errorf("no note %q", w)
			}
		}
	})
}

func TestPriorErrorsNameTheAttributeAndKey(t *testing.T) {
	cases := []struct {
		name string
		set  map[string]any
		attr string
	}{
		{"an unknown prior family", map[string]any{"priors": map[string]string{"b.k": "gamma(1, 2)"}}, "priors"},
		{"an unknown parameter", map[string]any{"priors": map[string]string{"b.mass": "normal(1, 2)"}}, "priors"},
		{"a prior on the mid-transit time", map[string]any{"priors": map[string]string{"b.t0": "normal(1, 2)"}}, "priors"},
		{"a negative density", map[string]any{"priors": map[string]string{"star_density": "uniform(-1, 2)"}}, "priors"},
		{"a density prior beside a star reference", map[string]any{"star": "star.x", "priors": map[string]string{"star_density": "normal(1, 0.1)"}}, "priors"},
		{"a fixed k of 2", map[string]any{"priors": map[string]string{"c.k": "fixed(2)"}}, "priors"},
		{"a malformed limb-darkening prior", map[string]any{"limb_darkening": map[string]string{"red": "u1 = 0.3"}}, "limb_darkening"},
		{"an eccentric planet e", map[string]any{"eccentric": []string{"e"}}, "eccentric"},
		{"an eccentric planet beyond those fitted", map[string]any{"planets": 1, "eccentric": []string{"c"}}, "eccentric"},
	}
	for _, c := range cases {
		t.Run(c.name+" is refused naming "+c.attr, func(t *testing.T) {
			c.set["light_curve"], c.set["signals"] = "detrend.x", "search.x"
			_, err := steptest.Config(New(), c.set)
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one naming %q", err, c.attr)
			}
		})
	}
	t.Run("a prior on a planet the search did not give is refused at run time", func(t *testing.T) {
		lc := synthetic(hot, 7, 800e-6, 3)
		_, _, err := Fit(context.Background(), lc, Options{Signals: []signals.Signal{start(hot)}, MaxSteps: 100, Ensembles: 2,
			Window: 2.5, Priors: map[string]Prior{"c.b": {Uniform, 0, 0.9}}})
		var ae *steps.AttrError
		if !errors.As(err, &ae) || ae.Attr != "priors" {
			t.Errorf("error %v", err)
		}
	})
	t.Run("a limb-darkening band no segment has is refused at run time", func(t *testing.T) {
		lc := synthetic(hot, 7, 800e-6, 3)
		_, _, err := Fit(context.Background(), lc, Options{Signals: []signals.Signal{start(hot)}, MaxSteps: 100, Ensembles: 2,
			Window: 2.5, Limb: map[string]LimbPrior{"blue": {0.5, 0.1, 0.2, 0.1}}})
		var ae *steps.AttrError
		if !errors.As(err, &ae) || ae.Attr != "limb_darkening" {
			t.Errorf("error %v", err)
		}
	})
}

func FuzzParsePrior(f *testing.F) {
	for _, s := range []string{"normal(3.7185, 0.0004)", "uniform(0, 0.9)", "log_uniform(1, 30)", "fixed(0.05)", "normal(", "(,)"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		p, err := ParsePrior(s)
		if err != nil {
			return
		}
		// Whatever parses is a proper prior that prints back to itself.
		if q, err := ParsePrior(p.String()); err != nil || q != p {
			t.Errorf("%q → %+v → %q → %+v, %v", s, p, p.String(), q, err)
		}
		if math.IsNaN(p.LogPDF(p.centre())) || math.IsInf(p.LogPDF(p.centre()), 0) {
			t.Errorf("%q: density at the centre %v", s, p.LogPDF(p.centre()))
		}
	})
}

func FuzzParseLimbPrior(f *testing.F) {
	for _, s := range []string{"u1 = 0.35 ± 0.05, u2 = 0.25 ± 0.05", "u1=1+/-2,u2=3+/-4", "u1 = ±, u2"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		lp, err := ParseLimbPrior(s)
		if err != nil {
			return
		}
		if !(lp.U1Sigma > 0 && lp.U2Sigma > 0) {
			t.Errorf("%q: sigmas %v, %v", s, lp.U1Sigma, lp.U2Sigma)
		}
		if v := lp.LogPDF(0.5, 0.5); math.IsNaN(v) {
			t.Errorf("%q: NaN density", s)
		}
	})
}

func TestDepthParameterKeepsTheRadiusRatioPrior(t *testing.T) {
	// With the fit's own prior, each planet samples δ = k²/c(b, u) in place of k
	// (radius); the map must invert exactly (sampledFrom ∘ radius = identity)
	// and its log-Jacobian ln|∂k/∂δ| must match a central finite difference, so that the
	// prior stays uniform in k.
	lc, sigs := windowCurve([]truth{hot}, 300, defaultWindow, 300e-6, 4)
	m, art, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true})
	if err != nil {
		t.Fatal(err)
	}
	if !m.depthParam[0] {
		t.Fatal("δ is not sampled with the default prior on k")
	}
	// A full vector in documented coordinates (b and q1, q2 themselves) with δ in the k
	// entry, as physical hands it to radius.
	doc := m.row(truthVector(m, art, []truth{hot}))
	pos, bpos := freePos(m, iK), freePos(m, iB)
	u1, u2 := transit.QuadraticFromKipping(hot.q1, hot.q2)
	fullAt := func(b, d float64) []float64 {
		f := m.expand(make([]float64, len(m.params)), doc[:m.dim()])
		f[iB], f[iK] = b, d
		return f
	}
	for _, b := range []float64{0, 0.5, 0.9, 1.05} {
		for _, d := range []float64{1e-4, 4e-3, 0.02} {
			full := fullAt(b, d)
			jac, ok := radius(full, 0, u1, u2)
			if !ok {
				t.Fatalf("b %.2f δ %g: no k", b, d)
			}
			row := slices.Clone(doc)
			row[pos], row[bpos] = full[iK], b
			if back := m.sampledFrom(row)[pos]; math.Abs(back/d-1) > 1e-12 {
				t.Errorf("b %.2f δ %g: round trip gives %g", b, d, back)
			}
			kAt := func(dd float64) float64 {
				f := fullAt(b, dd)
				radius(f, 0, u1, u2)
				return f[iK]
			}
			h := 1e-6 * d
			fd := math.Log((kAt(d+h) - kAt(d-h)) / (2 * h))
			if math.Abs(fd-jac) > 1e-6 {
				t.Errorf("b %.2f δ %g: ln|dk/dδ| = %.9f, finite difference %.9f", b, d, jac, fd)
			}
		}
	}
}

func TestChordParameterKeepsTheImpactPrior(t *testing.T) {
	// Each planet samples its chord coordinate w = (1 − b²)/(a² − b²) in place of b
	// (Model.impact); here the second. The map must invert exactly, and its log-Jacobian ln|db/dw| must match
	// a central finite difference, at ordinary, nearly central and grazing b.
	lc, sigs := windowCurve([]truth{hot, small}, 300, defaultWindow, 300e-6, 4)
	m, _, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true})
	if err != nil {
		t.Fatal(err)
	}
	if !m.chordParam[0] || !m.chordParam[1] {
		t.Fatalf("chord coordinates for planets %v, want both", m.chordParam)
	}
	idx := perPlanet + iB
	full := make([]float64, len(m.params))
	full[perPlanet+iPeriod] = small.period
	bAt := func(w, rho float64) (float64, float64) {
		full[idx] = w
		lp, ok := m.impact(full, 1, rho)
		if !ok {
			return math.NaN(), 0
		}
		return full[idx], lp
	}
	for _, rho := range []float64{0.3, 1.41, 8} {
		a := ScaledAxis(small.period, rho)
		for _, b := range []float64{0.02, 0.3, 0.9, 1.01} {
			w := chord(b, a)
			got, jac := bAt(w, rho)
			if math.Abs(got-b) > 1e-12 {
				t.Errorf("ρ %.2f b %.2f: round trip gives %v", rho, b, got)
			}
			h := 1e-7 * math.Abs(w)
			up, _ := bAt(w+h, rho)
			down, _ := bAt(w-h, rho)
			if fd := math.Log(math.Abs(up-down) / (2 * h)); math.Abs(fd-jac) > 1e-5 {
				t.Errorf("ρ %.2f b %.2f: ln|db/dw| = %.8f, finite difference %.8f", rho, b, jac, fd)
			}
		}
		if b, _ := bAt(1.0001/(a*a), rho); !math.IsNaN(b) {
			t.Errorf("ρ %.2f: a chord beyond 1/a² (no real b) was accepted", rho)
		}
	}
}

func TestLogPosteriorCarriesTheJacobianOfDepthAndChord(t *testing.T) {
	// End to end: with the data removed, LogPost at the sampled point x(θ) must be the
	// documented prior of θ times |∂θ/∂x|. For the second planet θ = (k, b), sampled as
	// (δ, chord) with the limb darkening and the density held, so
	// LogPost(x(θ)) + ln|det ∂x/∂θ| − ln p(b) must not depend on (k, b); the determinant is
	// taken by central finite differences of sampledFrom (an independent route: it only
	// inverts the maps). p(b) is a normal prior given in the workflow, so its use is checked
	// as well as the flat prior on k.
	lc, sigs := windowCurve([]truth{hot, small}, 300, defaultWindow, 300e-6, 4)
	bPrior := Prior{Normal, 0.4, 0.3}
	m, art, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true,
		Priors: map[string]Prior{"c.b": bPrior}})
	if err != nil {
		t.Fatal(err)
	}
	if !m.chordParam[1] || !m.depthParam[1] {
		t.Fatalf("planet c samples chord %v, depth %v; want both", m.chordParam[1], m.depthParam[1])
	}
	m.segs = nil
	row := m.row(truthVector(m, art, []truth{hot, small}))
	ik, ib := freePos(m, perPlanet+iK), freePos(m, perPlanet+iB)
	xOf := func(k, b float64) []float64 {
		r := append([]float64(nil), row...)
		r[ik], r[ib] = k, b
		return m.sampledFrom(r)
	}
	var ref float64
	for n, kb := range [][2]float64{{0.025, 0.2}, {0.025, 0.03}, {0.1, 0.7}, {0.05, 0.98}, {0.1, 1.05}, {0.3, 0.5}} {
		k, b := kb[0], kb[1]
		x := xOf(k, b)
		hk, hb := 1e-6*k, 1e-6*b
		dk := [2]float64{(xOf(k+hk, b)[ik] - xOf(k-hk, b)[ik]) / (2 * hk), (xOf(k+hk, b)[ib] - xOf(k-hk, b)[ib]) / (2 * hk)}
		db := [2]float64{(xOf(k, b+hb)[ik] - xOf(k, b-hb)[ik]) / (2 * hb), (xOf(k, b+hb)[ib] - xOf(k, b-hb)[ib]) / (2 * hb)}
		logDet := math.Log(math.Abs(dk[0]*db[1] - dk[1]*db[0]))
		c := m.LogPost(x) + logDet - bPrior.LogPDF(b)
		if math.IsInf(c, 0) || math.IsNaN(c) {
			t.Fatalf("k %.3f b %.2f: log posterior %v", k, b, m.LogPost(x))
		}
		if n == 0 {
			ref = c
			continue
		}
		if math.Abs(c-ref) > 1e-5 {
			t.Errorf("k %.3f b %.2f: LogPost + ln|det ∂x/∂θ| − ln p(b) = %.8f, at the first point %.8f", k, b, c, ref)
		}
	}
}

func TestLogitCoordinatesKeepTheUniformPriorOnQ(t *testing.T) {
	// q1, q2 are sampled as v = ln(q/(1 − q)); a flat prior on q becomes the density
	// |dq/dv| = q(1 − q) in v. The Jacobian LogPost carries for q1 (Model.logJacobian, the
	// other coordinates held) must change with v as ln|dq/dv| by a central finite difference
	// of the logistic, and the round trip v → q → v is exact to rounding.
	// A workflow prior on k keeps k itself sampled, whose δ's Jacobian would depend on q.
	lc, sigs := windowCurve([]truth{hot}, 300, defaultWindow, 300e-6, 4)
	m, art, _, _, _, err := setup(lc, Options{Signals: sigs, Window: defaultWindow, Supersample: true,
		Priors: map[string]Prior{"b.k": {Uniform, 0.05, 0.2}}})
	if err != nil {
		t.Fatal(err)
	}
	if m.depthParam[0] {
		t.Fatal("δ sampled despite a workflow prior on k")
	}
	x := truthVector(m, art, []truth{hot})
	pos := freePos(m, m.qIndex(0))
	fdLog := func(v float64) float64 {
		h := 1e-6
		return math.Log((logistic(v+h) - logistic(v-h)) / (2 * h))
	}
	x[pos] = logit(0.36)
	ref := m.logJacobian(x) - fdLog(x[pos])
	for _, q := range []float64{1e-4, 0.1, 0.5, 0.9, 0.9999} {
		v := logit(q)
		if back := logistic(v); math.Abs(back-q) > 1e-15 {
			t.Errorf("q %g: round trip %g", q, back)
		}
		x[pos] = v
		// The difference of two numbers near 1 limits the finite difference at q = 0.9999.
		if got := m.logJacobian(x) - fdLog(v); math.Abs(got-ref) > 1e-6 {
			t.Errorf("q %g: Jacobian less ln|dq/dv| is %.10f, at q = 0.36 %.10f", q, got, ref)
		}
	}
}
