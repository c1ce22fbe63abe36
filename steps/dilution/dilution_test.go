package dilution

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/companions"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
)

// curve stands in for a photometry step's artifact.
type curve struct{ lc *lightcurve.LightCurve }

func (c curve) Encode() []byte                     { return c.lc.Encode() }
func (c curve) Figures() []steps.Figure            { return nil }
func (c curve) LightCurve() *lightcurve.LightCurve { return c.lc }

// star stands in for a star step's artifact.
type star struct{ s *stellar.Star }

func (s star) Encode() []byte           { return nil }
func (s star) Figures() []steps.Figure  { return nil }
func (s star) StarDraws() *stellar.Star { return s.s }
func (s star) with(n int, r, mk float64) star {
	st := &stellar.Star{Relation: "Mann et al. 2015"}
	for i := 0; i < n; i++ {
		st.Radius = append(st.Radius, r)
		if !math.IsNaN(mk) {
			st.MagK = append(st.MagK, mk)
		}
	}
	return star{st}
}

// lightCurve is two short segments in band with the given crowding state.
func lightCurve(band string, corrected ...bool) curve {
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000}
	for k, c := range corrected {
		lc.Segments = append(lc.Segments, lightcurve.Segment{ID: fmt.Sprint(k + 1), Band: band, CrowdingCorrected: c,
			Contamination: math.NaN(), Time: []float64{float64(k), float64(k) + 0.1}, Flux: []float64{1, 1}, Err: []float64{1e-3, 1e-3}})
	}
	return curve{lc}
}

// comp is a companion in band with a magnitude difference; radius NaN unless set.
func comp(name, band string, dm, dmErr float64) stellar.Companion {
	return stellar.Companion{Name: name, Band: band, DMag: dm, DMagErr: dmErr, Separation: 0.5, Radius: math.NaN(), RadiusErr: math.NaN()}
}

type setup struct {
	set   map[string]any
	lc    curve
	comps []stellar.Companion
	star  *star
	seed  uint64
}

// block is what a dilution block writes: the given attributes, a light curve and companions.
func block(set map[string]any) map[string]any {
	b := map[string]any{"light_curve": "photometry.survey", "companions": "companions.imaging"}
	for k, v := range set {
		b[k] = v
	}
	return b
}

func (s setup) run(t testing.TB) (*Result, []string, error) {
	t.Helper()
	set := block(s.set)
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {s.lc},
		"companions":  {&companions.List{Companions: s.comps}},
	}}
	if s.star != nil {
		set["star"] = "star.host"
		in.Refs["star"] = []steps.Artifact{*s.star}
	}
	cfg, err := steptest.Config(New(), set)
	if err != nil {
		return nil, nil, err
	}
	var notes []string
	env := steps.Env{Seed: s.seed, Notef: func(f string, a ...any) { notes = append(notes, fmt.Sprintf(f, a...)) }}
	art, err := New().Run(context.Background(), cfg, in, env)
	if err != nil {
		return nil, notes, err
	}
	return art.(*Result), notes, nil
}

func must(t testing.TB, s setup) (*Result, []string) {
	t.Helper()
	r, notes, err := s.run(t)
	if err != nil {
		t.Fatal(err)
	}
	return r, notes
}

func near(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

func TestTargetRadiusFactorMatchesCiardi(t *testing.T) {
	cases := []struct {
		name string
		dm   float64
		want float64
	}{
		// Ciardi et al. 2015 (ApJ 805, 16) form, from memory: X_R = √(1 + 10^(−0.4 Δm)).
		{"an equal twin doubles the light, X_R = √2", 0, math.Sqrt2},
		{"a companion 2.5 mag fainter gives X_R = √1.1", 2.5, math.Sqrt(1.1)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r, _ := must(t, setup{lc: lightCurve("survey-red", false), comps: []stellar.Companion{comp("B", "survey-red", c.dm, 1e-9)}, seed: 1})
			got := Summarize(RadiusFactor(r.Hypotheses[0])).Median
			if !near(got, c.want, 1e-8) {
				t.Errorf("X_R = %.10f, want %.10f", got, c.want)
			}
			// The shared library form agrees (steps/internal/astro, same reference).
			lib, err := astroTarget(c.dm)
			if err != nil || !near(got, lib, 1e-8) {
				t.Errorf("astro gives %v (%v)", lib, err)
			}
		})
	}
}

func TestPlanetOnCompanionMatchesClosedForm(t *testing.T) {
	// Two companions, Δm 1 and 2 in the light curve's band; B has R = 0.3 R_sun exactly and
	// the target 0.5 R_sun, so R_B/R_t = 0.6. Closed form (Ciardi et al. 2015, from memory):
	// X_R = 0.6 √((1 + 10^−0.4 + 10^−0.8) · 10^0.4) = 1.1864222253239811 and
	// FluxRatio_B = (1 + 10^−0.8)/10^−0.4 = 2.909993602063078, FluxRatio_C =
	// (1 + 10^−0.4)/10^−0.8 = 8.821459876311511, target 0.5565964897996085 (evaluated by
	// hand with python3).
	b := comp("B", "survey-red", 1, 0)
	b.Radius, b.RadiusErr = 0.3, 0
	st := star{}.with(50, 0.5, math.NaN())
	r, notes := must(t, setup{set: map[string]any{"draws": 200}, lc: lightCurve("survey-red", false),
		comps: []stellar.Companion{b, comp("C", "survey-red", 2, 0)}, star: &st, seed: 7})
	if len(r.Hypotheses) != 3 {
		t.Fatalf("%d hypotheses, want 3", len(r.Hypotheses))
	}
	checks := []struct {
		name string
		got  float64
		want float64
	}{
		{"the target's flux ratio", r.Hypotheses[0].FluxRatio[17], 0.5565964897996085},
		{"B's flux ratio", r.Hypotheses[1].FluxRatio[17], 2.909993602063078},
		{"C's flux ratio", r.Hypotheses[2].FluxRatio[17], 8.821459876311511},
		{"B's radius factor", RadiusFactor(r.Hypotheses[1])[17], 1.1864222253239811},
	}
	for _, c := range checks {
		if !near(c.got, c.want, 1e-12*c.want) {
			t.Errorf("%s = %.15g, want %.15g", c.name, c.got, c.want)
		}
	}
	if r.Hypotheses[2].RadiusScale != nil {
		t.Error("C has neither a radius nor Δm in Ks, yet it has a radius scale")
	}
	if !hasNote(notes, "bound, at the target's distance") || !hasNote(notes, "planet on C: no radius scale") {
		t.Errorf("notes %q", notes)
	}
	figs := figures(r)
	if _, ok := figs["c.flux_factor"]; !ok {
		t.Error("C has no flux_factor figure")
	}
	if f := figs["b.radius_factor"]; !near(f.Value, 1.1864222253239811, 1e-12) || !strings.Contains(f.Doc, "bound") {
		t.Errorf("b.radius_factor %+v", f)
	}
}

func TestMonteCarloSigmaMatchesFirstOrderPropagation(t *testing.T) {
	// σ_F ≈ 0.4 ln10 · F · σ_Δm for small σ_Δm (first-order propagation of
	// F = 10^(−0.4 Δm)); Δm = 3 ± 0.01 gives F = 0.0630957 and σ_F = 5.8113e-4 (python3).
	// 20000 draws estimate σ to about 1 % (half-width of order statistics), so 3 % holds.
	r, _ := must(t, setup{lc: lightCurve("survey-red", false), comps: []stellar.Companion{comp("B", "survey-red", 3, 0.01)}, seed: 99})
	s := Summarize(r.Hypotheses[0].FluxRatio)
	if !near(s.Median, 0.0630957344480193, 3*1.25*5.81e-4/math.Sqrt(20000)) {
		t.Errorf("median %v, want 0.0630957", s.Median)
	}
	if want := 5.811331902860807e-4; !near(s.Sigma, want, 0.03*want) {
		t.Errorf("σ %v, want %v", s.Sigma, want)
	}
}

func TestCompanionRadiusFromMann(t *testing.T) {
	// Target M_K = 6.0 and R = 0.44430 (Mann et al. 2015, ApJ 804, 64, at M_K 6.0, computed
	// independently); the companion is 1.5 mag fainter in Ks, M_K = 7.5, R = 0.25650 (same
	// check values), so R_B/R_t = 0.5773126; its draws carry the relation's 2.89 % scatter
	// (from memory), so σ = 0.0289 × 0.5773 = 0.01668. Tolerances: 4 standard errors of the
	// median (1.25 σ/√N) and 3 % on σ.
	st := star{}.with(20000, 0.44430, 6.0)
	r, _ := must(t, setup{lc: lightCurve("Ks", false), comps: []stellar.Companion{comp("B", "Ks", 1.5, 0)}, star: &st, seed: 3})
	rs := Summarize(r.Hypotheses[1].RadiusScale)
	if !near(rs.Median, 0.5773126266, 4*1.25*0.01668/math.Sqrt(20000)) {
		t.Errorf("R_B/R_t median %v, want 0.57731", rs.Median)
	}
	if !near(rs.Sigma, 0.0289*0.5773126, 0.03*0.01668) {
		t.Errorf("R_B/R_t σ %v, want 0.01668", rs.Sigma)
	}
	if !strings.Contains(r.RadiusSource[1], "Mann et al. 2015") {
		t.Errorf("radius source %q", r.RadiusSource[1])
	}
}

func TestCompanionOutsideMannRangeGetsNoRadius(t *testing.T) {
	// M_K = 9.0 + 1.5 = 10.5 is beyond the relation's 9.8 (Mann et al. 2015, from memory).
	st := star{}.with(100, 0.2, 9.0)
	r, notes := must(t, setup{set: map[string]any{"draws": 100}, lc: lightCurve("Ks", false),
		comps: []stellar.Companion{comp("B", "Ks", 1.5, 0)}, star: &st})
	if r.Hypotheses[1].RadiusScale != nil || !hasNote(notes, "outside the 4.6–9.8 range of Mann et al. 2015 in 100 of 100 draws") {
		t.Errorf("radius scale %v, notes %q", r.Hypotheses[1].RadiusScale != nil, notes)
	}
}

func TestCompanionNearTheRangeEdgeIsTakenAtTheEdge(t *testing.T) {
	// M_K = 6.0 + 3.75 ± 0.02 = 9.75 ± 0.02: about 0.6 % of draws (normal tail beyond 2.5σ,
	// from memory) pass 9.8 and are taken at the edge. Median R_B/R_t = R(9.75)/R(6.0) =
	// 0.11655/0.44430 = 0.2623228 (Mann et al. 2015 polynomial, from memory; python3);
	// tolerance 4 standard errors of the median, σ ≈ 0.0289 × 0.262.
	st := star{}.with(20000, 0.44430, 6.0)
	r, _ := must(t, setup{lc: lightCurve("Ks", false), comps: []stellar.Companion{comp("B", "Ks", 3.75, 0.02)}, star: &st, seed: 8})
	if r.Hypotheses[1].RadiusScale == nil {
		t.Fatalf("no radius scale: %s", r.RadiusSource[1])
	}
	if !strings.Contains(r.RadiusSource[1], "beyond the relation's range taken at its edge") {
		t.Errorf("radius source %q", r.RadiusSource[1])
	}
	if m := Summarize(r.Hypotheses[1].RadiusScale).Median; !near(m, 0.2623228, 4*1.25*0.0289*0.2623/math.Sqrt(20000)) {
		t.Errorf("median R_B/R_t %v, want 0.26232", m)
	}
}

func TestCrowdingCorrectedCurveIsNotCorrectedTwice(t *testing.T) {
	r, notes := must(t, setup{set: map[string]any{"draws": 100}, lc: lightCurve("survey-red", true, true),
		comps: []stellar.Companion{comp("B", "Ks", 1, 0.1)}})
	if !r.AlreadyCorrected || len(r.Hypotheses) != 1 {
		t.Fatalf("corrected %v with %d hypotheses", r.AlreadyCorrected, len(r.Hypotheses))
	}
	for _, x := range r.Hypotheses[0].FluxRatio {
		if x != 0 {
			t.Fatalf("flux ratio %v, want 0", x)
		}
	}
	if !hasNote(notes, "already corrected for crowding; no second correction") {
		t.Errorf("notes %q", notes)
	}
}

func TestRefusals(t *testing.T) {
	ks := []stellar.Companion{comp("B", "Ks", 1, 0.1)}
	cases := []struct {
		name string
		s    setup
		want string
	}{
		{"a companion in another band without a relation is refused", setup{lc: lightCurve("survey-red", false), comps: ks},
			`"B" has its magnitude difference in band "Ks" but the light curve is in band "survey-red"`},
		{"a relation for other bands is refused", setup{lc: lightCurve("survey-red", false), comps: ks,
			set: map[string]any{"band_relation": map[string]string{"from": "J", "to": "survey-red", "slope": "1", "source": "x"}}},
			`band_relation converts "J" to "survey-red"`},
		{"segments that disagree on crowding are refused", setup{lc: lightCurve("survey-red", true, false), comps: ks},
			"segment 1 is corrected for crowding but segment 2 is not corrected for crowding"},
		{"a light curve without a band is refused", setup{lc: lightCurve("", false), comps: ks},
			"the light curve has no band"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			c.s.set = withDraws(c.s.set)
			_, _, err := c.s.run(t)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want %q", err, c.want)
			}
			if !steps.IsInputError(err) {
				t.Errorf("%v is not an input error", err)
			}
		})
	}
	t.Run("segments in different bands are refused", func(t *testing.T) {
		lc := lightCurve("survey-red", false, false)
		lc.lc.Segments[1].Band = "V"
		_, _, err := setup{set: withDraws(nil), lc: lc, comps: ks}.run(t)
		if err == nil || !strings.Contains(err.Error(), `segment 1 is in band "survey-red" but segment 2 in band "V"`) {
			t.Errorf("error %v", err)
		}
	})
}

func withDraws(set map[string]any) map[string]any {
	out := map[string]any{"draws": 100}
	for k, v := range set {
		out[k] = v
	}
	return out
}

func TestBandRelationIsApplied(t *testing.T) {
	// Δm_Ks = 2 exactly, Δm_red = 0.1 + 1.2 × 2 = 2.5 → X_R = √1.1 (Ciardi et al. 2015 form,
	// from memory). With a scatter of 0.1 mag, σ_F ≈ 0.4 ln10 × 0.1 × 0.1 = 0.0092103
	// (first-order propagation, python3); 5 % allows the curvature at 0.1 mag and the
	// sampling error of 20000 draws.
	rel := map[string]string{"from": "Ks", "to": "survey-red", "slope": "1.2", "offset": "0.1", "source": "an invented colour relation"}
	r, notes := must(t, setup{set: map[string]any{"band_relation": rel}, lc: lightCurve("survey-red", false),
		comps: []stellar.Companion{comp("B", "Ks", 2, 0)}, seed: 5})
	if got := Summarize(RadiusFactor(r.Hypotheses[0])).Median; !near(got, math.Sqrt(1.1), 1e-12) {
		t.Errorf("X_R = %v, want √1.1", got)
	}
	if !hasNote(notes, "source: an invented colour relation") {
		t.Errorf("the relation's source is not echoed: %q", notes)
	}
	rel["scatter"] = "0.1"
	r, _ = must(t, setup{set: map[string]any{"band_relation": rel}, lc: lightCurve("survey-red", false),
		comps: []stellar.Companion{comp("B", "Ks", 2, 0)}, seed: 5})
	if s := Summarize(r.Hypotheses[0].FluxRatio); !near(s.Sigma, 0.0092103, 0.05*0.0092103) {
		t.Errorf("σ_F = %v, want 0.00921", s.Sigma)
	}
}

func TestCheckRefusesBadAttributes(t *testing.T) {
	cases := []struct {
		name string
		set  map[string]any
		want string
	}{
		{"too few draws are refused", map[string]any{"draws": 10}, "draws: must be between 100"},
		{"an unknown relation key is refused", map[string]any{"band_relation": map[string]string{"colour": "x"}}, `band_relation: unknown key "colour"`},
		{"a relation without a source is refused", map[string]any{"band_relation": map[string]string{"from": "Ks", "to": "r", "slope": "1"}}, "band_relation: source is missing"},
		{"a relation with a word for a slope is refused", map[string]any{"band_relation": map[string]string{"from": "Ks", "to": "r", "slope": "steep", "source": "s"}}, `slope: "steep" is not a finite number`},
		{"a negative scatter is refused", map[string]any{"band_relation": map[string]string{"from": "Ks", "to": "r", "slope": "1", "scatter": "-1", "source": "s"}}, "scatter -1 is negative"},
		{"a relation from a band to itself is refused", map[string]any{"band_relation": map[string]string{"from": "Ks", "to": "ks", "slope": "1", "source": "s"}}, "converts \"Ks\" to itself"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := steptest.Config(New(), block(c.set))
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want %q", err, c.want)
			}
		})
	}
	t.Run("the defaults are accepted", func(t *testing.T) {
		// The tag's default is the constant whose reason is given beside it.
		c := steptest.MustConfig(New(), block(nil)).(*Config)
		if c.Draws != defaultDraws || c.BandRelation != nil || c.relation != nil || c.Star != nil {
			t.Fatalf("defaults decoded as %+v", c)
		}
	})
}

func TestNoCompanionsGiveNoDilution(t *testing.T) {
	r, notes := must(t, setup{set: withDraws(nil), lc: lightCurve("", false)})
	if len(r.Hypotheses) != 1 || Summarize(RadiusFactor(r.Hypotheses[0])).Median != 1 || !hasNote(notes, "no companions") {
		t.Errorf("%d hypotheses, notes %q", len(r.Hypotheses), notes)
	}
}

func TestSameSeedSameBytes(t *testing.T) {
	b := comp("B", "Ks", 1.5, 0.1)
	st := star{}.with(300, 0.4443, 6.0)
	s := setup{set: map[string]any{"draws": 1000}, lc: lightCurve("Ks", false), comps: []stellar.Companion{b, comp("C", "Ks", 3, 0.2)}, star: &st, seed: 11}
	r1, _ := must(t, s)
	r2, _ := must(t, s)
	if !bytes.Equal(r1.Encode(), r2.Encode()) {
		t.Error("the same seed gave different bytes")
	}
	s.seed = 12
	r3, _ := must(t, s)
	if bytes.Equal(r1.Encode(), r3.Encode()) {
		t.Error("another seed gave the same bytes")
	}
}

func TestEncodingRoundTripsAndRejectsDamage(t *testing.T) {
	b := comp("B", "Ks", 1.5, 0.1)
	st := star{}.with(300, 0.4443, 6.0)
	rel := map[string]string{"from": "V", "to": "Ks", "slope": "0.5", "source": "invented"}
	r, _ := must(t, setup{set: map[string]any{"draws": 100, "band_relation": rel}, lc: lightCurve("Ks", false),
		comps: []stellar.Companion{b, comp("C", "V", 3, 0.2)}, star: &st, seed: 11})
	enc := r.Encode()
	back, err := Decode(enc)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), enc) {
		t.Error("decode then encode changed the bytes")
	}
	for _, cut := range []int{0, 10, len(enc) / 2, len(enc) - 1} {
		if _, err := Decode(enc[:cut]); err == nil {
			t.Errorf("a record cut to %d bytes decoded", cut)
		}
	}
	bad := *back
	bad.Hypotheses = append([]stellar.Hypothesis(nil), back.Hypotheses...)
	bad.Hypotheses[0], bad.Hypotheses[1] = bad.Hypotheses[1], bad.Hypotheses[0]
	if _, err := Decode(bad.Encode()); err == nil {
		t.Error("a record without the target first decoded")
	}
}

func TestImplausible(t *testing.T) {
	// 2.5 R_J = 2.5 × 71492/6378.1 = 28.023 R_earth (IAU 2015 B3 nominal radii).
	cases := []struct {
		name string
		r    float64
		want bool
	}{
		{"an Earth is a planet", 1, false},
		{"Jupiter is a planet", 11.2, false},
		{"two Jupiter radii are still a planet", 22.4, false},
		{"three Jupiter radii are a star", 33.6, true},
		{"a negative radius is no radius", -1, true},
		{"NaN is no radius", math.NaN(), true},
	}
	if !near(MaxPlanetRadiusEarth, 28.023, 1e-3) {
		t.Errorf("threshold %v R_earth, want 28.023", MaxPlanetRadiusEarth)
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, why := Implausible(c.r)
			if got != c.want || got != (why != "") {
				t.Errorf("Implausible(%v) = %v, %q", c.r, got, why)
			}
		})
	}
}

func TestGolden(t *testing.T) {
	b := comp("B", "Ks", 1.5, 0.1)
	b.Radius, b.RadiusErr = 0.3, 0.02
	st := star{}.with(300, 0.4443, 6.0)
	r, _ := must(t, setup{set: map[string]any{"draws": 1000}, lc: lightCurve("Ks", false),
		comps: []stellar.Companion{b, comp("C", "Ks", 3, 0.2)}, star: &st, seed: 4711})
	golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), r)
}

// astroTarget is the shared library's X_R for one companion.
func astroTarget(dm float64) (float64, error) { return astro.TargetRadiusCorrection([]float64{dm}) }

func hasNote(notes []string, s string) bool {
	for _, n := range notes {
		if strings.Contains(n, s) {
			return true
		}
	}
	return false
}

func figures(r *Result) map[string]steps.Figure {
	m := map[string]steps.Figure{}
	for _, f := range r.Figures() {
		m[f.Name] = f
	}
	return m
}

func TestSummarizeOnKnownDraws(t *testing.T) {
	// 1…101: median 51; the 15.87 % and 84.13 % points by linear interpolation between order
	// statistics are 16.8655 and 85.1345, half their distance 34.1345 (hand-computed).
	xs := make([]float64, 101)
	for i := range xs {
		xs[len(xs)-1-i] = float64(i + 1)
	}
	s := Summarize(xs)
	if s.Median != 51 || !near(s.Sigma, 34.1344746, 1e-6) {
		t.Errorf("median %v, σ %v", s.Median, s.Sigma)
	}
	if xs[0] != 101 {
		t.Error("Summarize reordered its input")
	}
}

func TestStatedContaminationIsReported(t *testing.T) {
	lc := lightCurve("survey-red", false, false)
	lc.lc.Segments[0].Contamination, lc.lc.Segments[1].Contamination = 0.08, 0.05
	_, notes := must(t, setup{set: withDraws(nil), lc: lc, comps: []stellar.Companion{comp("B", "survey-red", 2.5, 0)}})
	if !hasNote(notes, "contamination ratio of 0.05 to 0.08; the companions give 0.1 ± 0") {
		t.Errorf("notes %q", notes)
	}
}

func TestWrongReferencesAreRefused(t *testing.T) {
	cfg := steptest.MustConfig(New(), block(map[string]any{"draws": 100}))
	lc := lightCurve("Ks", false)
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {lc}, "companions": {lc}}}
	if _, err := New().Run(context.Background(), cfg, in, steps.Env{}); err == nil || !strings.Contains(err.Error(), "companion list") {
		t.Errorf("error %v", err)
	}
}

func TestSchemaIsAccepted(t *testing.T) {
	if _, err := steps.NewRegistry(New(), companions.New()); err != nil {
		t.Fatal(err)
	}
}

// BenchmarkRun draws the default 20000 samples for a target with three companions in Ks
// and a star with M_K, the usual case of one imaging result.
func BenchmarkRun(b *testing.B) {
	st := star{}.with(20000, 0.4443, 6.0)
	s := setup{lc: lightCurve("Ks", false), star: &st, seed: 1,
		comps: []stellar.Companion{comp("B", "Ks", 1.5, 0.1), comp("C", "Ks", 2.5, 0.1), comp("D", "Ks", 3.0, 0.2)}}
	for b.Loop() {
		if _, _, err := s.run(b); err != nil {
			b.Fatal(err)
		}
	}
}

// FuzzDecode feeds damaged records to Decode: it must never panic, and what it accepts must
// decode again from its canonical encoding to the same bytes (a NaN of another bit pattern
// is written in the one canonical form, so the input itself may differ).
func FuzzDecode(f *testing.F) {
	b := comp("B", "Ks", 1.5, 0.1)
	st := star{}.with(10, 0.4443, 6.0)
	r, _, err := setup{set: map[string]any{"draws": 100}, lc: lightCurve("Ks", false), comps: []stellar.Companion{b}, star: &st}.run(f)
	if err != nil {
		f.Fatal(err)
	}
	f.Add(r.Encode())
	f.Fuzz(func(t *testing.T, data []byte) {
		d, err := Decode(data)
		if err != nil {
			return
		}
		enc := d.Encode()
		again, err := Decode(enc)
		if err != nil {
			t.Fatalf("the canonical encoding of an accepted record is refused: %v", err)
		}
		if !bytes.Equal(again.Encode(), enc) {
			t.Fatal("decoding and encoding the canonical bytes changed them")
		}
	})
}

func TestACompanionInTwoBandsUsesTheLightCurvesBand(t *testing.T) {
	// The flux ratio comes from the row in the light curve's band (Δm 2.5 → F_c/F_t = 0.1,
	// common practice); the Ks row is there for the radius only.
	comps := []stellar.Companion{
		{Name: "B", Band: "Ks", DMag: 1.0, DMagErr: 1e-9, Separation: 1, Radius: math.NaN(), RadiusErr: math.NaN()},
		{Name: "B", Band: "red", DMag: 2.5, DMagErr: 1e-9, Separation: 1, Radius: math.NaN(), RadiusErr: math.NaN()},
	}
	res, _, err := Compute(Options{Draws: 200}, Input{Band: "red", Companions: comps}, 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Hypotheses) != 2 {
		t.Fatalf("%d hypotheses, want the target and one companion", len(res.Hypotheses))
	}
	if got := res.Hypotheses[0].FluxRatio[0]; math.Abs(got-0.1) > 1e-6 {
		t.Errorf("flux ratio on the target %v, want 0.1", got)
	}
}
