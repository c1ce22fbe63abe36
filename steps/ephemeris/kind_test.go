package ephemeris

import (
	"bytes"
	"errors"
	"math"
	"reflect"
	"regexp"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/fit/timing"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/timescale"
)

// fakeFit is a fit artifact of one planet b with Gaussian draws of its period, mid-time
// (days since BJD_TDB 2460000) and duration, and, when scatter, transit times whose χ²
// about the line fails the fit's test.
func fakeFit(scatter bool) *fit.Artifact {
	g := rng.New(5)
	a := &fit.Artifact{
		Frame:     lightcurve.Frame{TimeScale: "BJD_TDB", RefInt: 2460000},
		Names:     []string{"b.period", "b.t0", "b.k", "b.b", "b.t14"},
		Reference: []fit.Reference{{Transit: 3, Time: 450.9}},
		Sampled:   4,
		Diag:      []fit.Diagnostic{{ESS: 900}, {ESS: 800}, {ESS: 1000}, {ESS: 1000}},
	}
	for i := 0; i < 4000; i++ {
		x, y := g.Normal(), g.Normal()
		a.Samples = append(a.Samples, 3.7185+4e-4*(0.2*x+math.Sqrt(0.96)*y), 450.9146+5e-4*x, 0.1, 0.3, 0.1+0.002*g.Normal())
	}
	e := timing.Ephemeris{Chi2: 3, Dof: 4, PValue: 0.56}
	if scatter {
		e = timing.Ephemeris{Chi2: 40, Dof: 4, PValue: 1.5e-7}
	}
	for i, oc := range []float64{3, -3, 4, -4, 0, 0} { // minutes; RMS √(50/6) = 2.887 min
		e.Rows = append(e.Rows, timing.OC{Epoch: int64(i - 3), OC: oc, SigmaOC: 1})
	}
	a.Times = []fit.PlanetTimes{{Ephemeris: e}}
	return a
}

func runFit(t *testing.T, f *fit.Artifact, set map[string]any) (*Artifact, []string) {
	t.Helper()
	b := map[string]any{"fit": "fit.planets", "from": "2460460", "to": "2460475"}
	for k, v := range set {
		b[k] = v
	}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"fit": {f}}}
	art, notes, err := steptest.Run(New(), b, in, nil)
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Artifact), notes
}

// fixture is the golden case: a fit whose timing test fails, with the target's direction
// and an observing site.
func fixture(t *testing.T) *Artifact {
	a, _ := runFit(t, fakeFit(true), map[string]any{"ra": "285.1234 deg", "dec": "-12.5 deg",
		"site_latitude": "-30.2 deg", "site_longitude": "-70.7 deg", "site_elevation": "2200 m", "baseline": "1.5 h"})
	return a
}

func TestGoldenRecord(t *testing.T) {
	golden.Check(t, "../..", "ephemeris", version, fixture(t))
}

func TestTheSameInputsGiveTheSameBytes(t *testing.T) {
	if !bytes.Equal(fixture(t).Encode(), fixture(t).Encode()) {
		t.Error("two runs on the same inputs gave different bytes")
	}
}

func TestEncodingRoundTripsAndRejectsDamage(t *testing.T) {
	a := fixture(t)
	b := a.Encode()
	back, err := Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), b) {
		t.Error("the decoded artifact encodes differently")
	}
	for _, n := range []int{0, 10, len(b) / 2, len(b) - 1} {
		if _, err := Decode(b[:n]); err == nil {
			t.Errorf("%d of %d bytes decoded without an error", n, len(b))
		}
	}
	if _, err := Decode(append(append([]byte(nil), b...), 0)); err == nil {
		t.Error("a trailing byte decoded without an error")
	}
	if a, err := (Kind{}).Decode(b[:len(b)-3]); err == nil || a != nil {
		t.Error("the kind's decoder accepted truncated bytes")
	}
}

// A period and epoch written in the block, checked by hand: T_n = 2460450.9146 + n·3.7185;
// in BJD_TDB 2460460–2460475 lie n = 3 (2460462.0701) to n = 6 (2460473.2256).
func TestAWrittenEphemerisGivesTheHandComputedTimes(t *testing.T) {
	art, notes, err := steptest.Run(New(), map[string]any{
		"period": "3.7185 ± 0.0004 d", "epoch": "2460450.9146 ± 0.0005 d", "duration": "2.4 ± 0.1 h",
		"from": "2460460", "to": "2460475", "planets": []string{"c"},
	}, steps.Inputs{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	a := art.(*Artifact)
	p := a.Planets[0]
	if p.Name != "c" || len(p.Transits) != 4 || p.Transits[0].Epoch != 3 || p.Transits[3].Epoch != 6 {
		t.Fatalf("planet %s, %d transits: %+v", p.Name, len(p.Transits), p.Transits)
	}
	tr := p.Transits[1] // n = 4
	if math.Abs(tr.Mid-2460465.7886) > 1e-7 {
		t.Errorf("T_4 = %.6f, by hand 2460465.7886", tr.Mid)
	}
	// σ² = 0.0005² + 16 × 0.0004² = 2.81e-6 d².
	if math.Abs(p.Sigma(1)-math.Sqrt(2.81e-6)) > 1e-12 || math.Abs(p.SigmaAnalytic(1)-math.Sqrt(2.81e-6)) > 1e-12 {
		t.Errorf("σ(T_4) = %v, by hand %v", p.Sigma(1), math.Sqrt(2.81e-6))
	}
	// Ingress = T_4 − 1.2 h = 2460465.7386; σ² = 2.81e-6 + (0.05 h in days)².
	if math.Abs(tr.Ingress-2460465.7386) > 1e-7 || math.Abs(tr.SigmaIngress-math.Sqrt(2.81e-6+math.Pow(0.05/24, 2))) > 1e-12 {
		t.Errorf("ingress %.6f ± %v", tr.Ingress, tr.SigmaIngress)
	}
	if !math.IsNaN(tr.UTC) {
		t.Errorf("UTC %v without a direction", tr.UTC)
	}
	if !strings.Contains(strings.Join(notes, "\n"), "UTC needs the target's direction") &&
		!strings.Contains(strings.Join(notes, "\n"), "their UTC needs the target's direction") {
		t.Errorf("no note that UTC needs the direction: %q", notes)
	}
}

func TestAFitsDrawsArePropagatedWithTheirCovariance(t *testing.T) {
	f := fakeFit(false)
	a, _ := runFit(t, f, nil)
	p := a.Planets[0]
	// The fit's reference mid-time 2460450.9146, period 3.7185: n = 3..6 as by hand.
	if len(p.Transits) != 4 || p.Transits[0].Epoch != 3 {
		t.Fatalf("%d transits from %d", len(p.Transits), p.Transits[0].Epoch)
	}
	for i, tr := range p.Transits {
		want := trueSigma(5e-4, 4e-4, 0.2, tr.Epoch)
		if math.Abs(p.Sigma(i)/want-1) > 0.05 || math.Abs(p.SigmaAnalytic(i)/want-1) > 0.05 {
			t.Errorf("transit %d: σ %.5g (percentiles), %.5g (analytic), true %.5g", tr.Epoch, p.Sigma(i), p.SigmaAnalytic(i), want)
		}
		if math.Abs(tr.Mid-(2460450.9146+float64(tr.Epoch)*3.7185)) > 3*want/math.Sqrt(4000)*1.25 {
			t.Errorf("transit %d at %.6f", tr.Epoch, tr.Mid)
		}
		if math.Abs((tr.Egress-tr.Ingress)-0.1) > 1e-3 {
			t.Errorf("transit %d: egress − ingress %v, the duration is 0.1 d", tr.Epoch, tr.Egress-tr.Ingress)
		}
	}
	if p.Scatter != 0 || len(a.Cautions()) != 1 {
		t.Errorf("a timing test that passes widened σ by %v or cautioned: %q", p.Scatter, a.Cautions())
	}
}

func TestScatteredTransitTimesWidenSigmaAndCaution(t *testing.T) {
	a := fixture(t)
	p := a.Planets[0]
	rms := math.Sqrt(50.0/6) / 1440 // the O−C residuals' RMS in days
	if math.Abs(p.Scatter-rms) > 1e-15 {
		t.Fatalf("scatter %v, want %v", p.Scatter, rms)
	}
	for i, tr := range p.Transits {
		if math.Abs(p.Sigma(i)-math.Hypot(tr.Sigma, rms)) > 1e-15 {
			t.Errorf("transit %d: σ %v is not the draws' %v widened by %v", tr.Epoch, p.Sigma(i), tr.Sigma, rms)
		}
	}
	c := strings.Join(a.Cautions(), "\n")
	for _, want := range []string{"ignores transit-timing variations", "observer's judgement", "O−C scatter (2.89 min RMS)"} {
		if !strings.Contains(c, want) {
			t.Errorf("the cautions lack %q:\n%s", want, c)
		}
	}
}

// TestTimingScatterSaysWhenTheOCWidensSigma runs the three modes on transit times that
// pass the timing test (p = 0.56) and on ones that fail it (p = 1.5e-7): "always" widens
// both by the O−C RMS, "never" widens neither but keeps the caution of the failing ones,
// and the default widens only the failing ones.
func TestTimingScatterSaysWhenTheOCWidensSigma(t *testing.T) {
	rms := math.Sqrt(50.0/6) / 1440
	for _, c := range []struct {
		mode         string
		scattered    bool
		widen        bool
		cautionNever bool
	}{
		{"if_significant", false, false, false}, {"if_significant", true, true, false},
		{"always", false, true, false}, {"always", true, true, false},
		{"never", false, false, false}, {"never", true, false, true},
	} {
		a, _ := runFit(t, fakeFit(c.scattered), map[string]any{"timing_scatter": c.mode})
		p := a.Planets[0]
		want := 0.0
		if c.widen {
			want = rms
		}
		if math.Abs(p.Scatter-want) > 1e-15 || math.Abs(p.Sigma(0)-math.Hypot(p.Transits[0].Sigma, want)) > 1e-15 {
			t.Errorf("%s, scattered %v: σ widened by %v, want %v", c.mode, c.scattered, p.Scatter, want)
		}
		cautions := strings.Join(a.Cautions(), "\n")
		if got := strings.Contains(cautions, "leaves every predicted σ as the posterior draws give it"); got != c.cautionNever {
			t.Errorf("%s, scattered %v: the caution of unwidened scatter is there: %v", c.mode, c.scattered, got)
		}
		if got := strings.Contains(cautions, "scatter about a linear ephemeris"); got != c.scattered {
			t.Errorf("%s, scattered %v: the timing caution is there: %v", c.mode, c.scattered, got)
		}
	}
}

func TestUTCPastTheLeapSecondTableIsCautioned(t *testing.T) {
	set := map[string]any{"period": "3.7185 ± 0.0004 d", "epoch": "2460450.9146 ± 0.0005 d",
		"from": "2026-06-20", "to": "2026-07-10", "ra": "285.1234 deg", "dec": "-12.5 deg"}
	art, _, err := steptest.Run(New(), set, steps.Inputs{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	a := art.(*Artifact)
	var stale []string
	for _, tr := range a.Planets[0].Transits {
		if !timescale.LeapTableCovers(timescale.FromJD(tr.UTC)) {
			stale = append(stale, isoUTC(tr.UTC))
		}
	}
	if len(stale) == 0 || len(stale) == len(a.Planets[0].Transits) {
		t.Fatalf("the range should straddle the table's end (2026-07-01): stale %v", stale)
	}
	want := "UTC times from " + stale[0] + " on: " + timescale.StaleLeapTableNote + "."
	if c := a.Cautions(); c[len(c)-1] != want {
		t.Errorf("last caution %q, want %q", c[len(c)-1], want)
	}
	delete(set, "ra")
	delete(set, "dec")
	art, _, _ = steptest.Run(New(), set, steps.Inputs{}, nil)
	if c := art.(*Artifact).Cautions(); len(c) != 1 {
		t.Errorf("without UTC times the leap-second table needs no caution: %q", c)
	}
}

func TestUTCTimesReadBackToTheMidTimes(t *testing.T) {
	a := fixture(t)
	for _, tr := range a.Planets[0].Transits {
		back, err := timescale.BJDTDB(timescale.FromJD(tr.UTC), timescale.Fixed(285.1234, -12.5))
		if err != nil {
			t.Fatal(err)
		}
		if d := math.Abs(back.Float()-tr.Mid) * 86400; d > 1e-3 {
			t.Errorf("transit %d: UTC %.6f reads back %.3f s off", tr.Epoch, tr.UTC, d)
		}
		// BJD_TDB − UTC = TT − UTC (69.184 s since 2017, USNO) + TDB − TT (≤ 1.7 ms) + the
		// Rømer delay (≤ 499 s for 1 au, more by the Earth's eccentricity: ≤ 508 s).
		if d := (tr.Mid-tr.UTC)*86400 - 69.184; math.Abs(d) > 508 {
			t.Errorf("transit %d: BJD_TDB − UTC − 69.184 s = %.1f s", tr.Epoch, d)
		}
	}
}

// TestAProperMotionMovesTheUTCTimes runs one written ephemeris of a star moving 10″/yr in
// declination, with and without its motion: each transit's UTC moves by the change of the
// Rømer delay, (r_earth · Δn̂)/c, computed here from the time-scale package's parts.
func TestAProperMotionMovesTheUTCTimes(t *testing.T) {
	base := map[string]any{"period": "3.7185 ± 0.0004 d", "epoch": "2460450.9146 ± 0.0005 d",
		"from": "2035-01-01", "to": "2035-01-20", "ra": "269.45 deg", "dec": "4.69 deg"}
	moving := edited(base, map[string]any{"pm_ra": "-800 mas/yr", "pm_dec": "10300 mas/yr", "position_epoch": 2016.0})
	run := func(set map[string]any) *Artifact {
		art, _, err := steptest.Run(New(), set, steps.Inputs{}, nil)
		if err != nil {
			t.Fatal(err)
		}
		return art.(*Artifact)
	}
	still, moved := run(base), run(moving)
	if moved.PMDec != 10300 || moved.PositionEpoch != 2016 {
		t.Fatalf("the artifact keeps the motion as %v, %v", moved.PMDec, moved.PositionEpoch)
	}
	tg := timescale.Target{RA: 269.45, Dec: 4.69, PMRA: -800, PMDec: 10300, Epoch: 2016}
	for i, tr := range moved.Planets[0].Transits {
		mid := timescale.FromJD(tr.Mid)
		dn := tg.DirectionAt(mid)
		n0 := timescale.Direction(269.45, 4.69)
		for k := range dn {
			dn[k] -= n0[k]
		}
		want := timescale.RomerDelay(mid, dn) // light from the moved direction arrives this much earlier
		got := (still.Planets[0].Transits[i].UTC - tr.UTC) * 86400
		if math.Abs(got-want) > 1e-3 || math.Abs(want) < 0.05 {
			t.Errorf("transit %d: UTC moved by %.4f s, the Rømer delay by %.4f s", tr.Epoch, got, want)
		}
	}
}

func TestCalendarDatesAreUTCMidnights(t *testing.T) {
	c := steptest.MustConfig(New(), map[string]any{"period": "1 ± 0.001 d", "epoch": "2461400.1 ± 0.001 d",
		"from": "2027-01-01", "to": "2027-01-02"}).(*Config)
	// 2027-01-01 0h UTC is JD 2461406.5 (2451544.5 for 2000-01-01 plus 27 × 365 + 7 days);
	// in TDB at the geocentre 69.184 s later (TT − UTC), give or take 1.7 ms.
	if d := (c.from - 2461406.5) * 86400; math.Abs(d-69.184) > 2e-3 {
		t.Errorf("from is %.4f s after 0h UTC", d)
	}
	// The end of the range is the end of the day written.
	if d := (c.to - 2461408.5) * 86400; math.Abs(d-69.184) > 2e-3 {
		t.Errorf("to is %.4f s after 2027-01-03 0h UTC", d)
	}
	if got := isoUTC(2461406.5 + 0.25 + 0.4/1440); got != "2027-01-01T06:00Z" {
		t.Errorf("isoUTC = %q", got)
	}
	if got := isoUTC(2461406.5 - 0.2/1440); got != "2027-01-01T00:00Z" {
		t.Errorf("isoUTC rounds to the next day's midnight as %q", got)
	}
}

func TestFiguresAreNamedAndDefined(t *testing.T) {
	name := regexp.MustCompile(`^[a-z0-9_]+(\.[a-z0-9_]+)*$`)
	figs := fixture(t).Figures()
	got := map[string]steps.Figure{}
	for _, f := range figs {
		if !name.MatchString(f.Name) {
			t.Errorf("figure name %q", f.Name)
		}
		got[f.Name] = f
	}
	for _, n := range []string{"b.transits", "b.first_mid", "b.largest_sigma"} {
		if f, ok := got[n]; !ok || !f.Defined() {
			t.Errorf("figure %s: %+v", n, f)
		}
	}
	if got["b.transits"].Value != 4 || got["b.first_mid"].MCError <= 0 {
		t.Errorf("%+v %+v", got["b.transits"], got["b.first_mid"])
	}
}

func TestThePresentationHoldsATableAndTheData(t *testing.T) {
	a := fixture(t)
	pr, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	data := steptest.CheckPresentation(t, pr)
	d, ok := data["transits_b"]
	if !ok {
		t.Fatal("no transits_b")
	}
	var names []string
	for _, s := range d.Series {
		names = append(names, s.Name)
	}
	want := []string{"epoch", "mid_bjd_tdb", "sigma_d", "sigma_analytic_d", "ingress_bjd_tdb", "egress_bjd_tdb", "mid_jd_utc",
		"seen", "window_start_jd_utc", "window_end_jd_utc", "moon_separation_deg", "moon_illuminated"}
	if !reflect.DeepEqual(names, want) {
		t.Errorf("columns %v, want %v", names, want)
	}
	if len(pr.Panels) != 3 || pr.Panels[0].Title != "Nights at the site" || len(pr.Panels[0].Plots) != 1 ||
		pr.Panels[2].Table == nil || len(pr.Panels[2].Table.Rows) != 4 {
		t.Fatalf("panels: %+v", pr.Panels)
	}
	tab := pr.Panels[2].Table
	row := tab.Rows[0]
	if !strings.HasPrefix(row[3], "2024-05-") {
		t.Errorf("UTC cell %q", row[3])
	}
	// The last column says what the site sees of each transit, as the data's "seen" does.
	if last := tab.Header[len(tab.Header)-1]; last != "from the site" {
		t.Errorf("last column %q", last)
	}
	for i, r := range tab.Rows {
		if want := seenText(a.Planets[0].Windows[i]); r[len(r)-1] != want || want == "" {
			t.Errorf("row %d says %q, want %q", i, r[len(r)-1], want)
		}
	}
	if !bytes.Equal(steptest.PresentationBytes(t, pr), steptest.PresentationBytes(t, mustPresent(t, a))) {
		t.Error("two presentations of one artifact differ")
	}
}

func mustPresent(t *testing.T, a *Artifact) steps.Presentation {
	pr, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	return pr
}

func TestMistakesPointAtTheAttribute(t *testing.T) {
	base := map[string]any{"period": "3.7 ± 0.001 d", "epoch": "2460450.9 ± 0.001 d", "from": "2460460", "to": "2460470"}
	with := func(set map[string]any, drop ...string) map[string]any { return edited(base, set, drop...) }
	cases := []struct {
		name string
		set  map[string]any
		attr string
	}{
		{"a fit beside a written period", with(map[string]any{"fit": "fit.x"}), "period"},
		{"neither a fit nor a period and epoch", with(nil, "period", "epoch"), "fit"},
		{"an epoch without a period", with(nil, "period"), "period"},
		{"a period without an epoch", with(nil, "epoch"), "epoch"},
		{"an epoch that is not a full Julian date", with(map[string]any{"epoch": "450.9 ± 0.001 d"}), "epoch"},
		{"a date that is not a date", with(map[string]any{"from": "2027-02-30"}), "from"},
		{"a range written in words", with(map[string]any{"to": "next spring"}), "to"},
		{"a short Julian date", with(map[string]any{"to": "60470"}), "to"},
		{"a range that runs backward", with(map[string]any{"to": "2460455"}), "to"},
		{"a date before 1972", with(map[string]any{"from": "1960-01-01"}), "from"},
		{"ra without dec", with(map[string]any{"ra": "10 deg"}), "ra"},
		{"a declination beyond the pole", with(map[string]any{"ra": "10 deg", "dec": "95 deg"}), "dec"},
		{"a proper motion without its epoch", with(map[string]any{"ra": "10 deg", "dec": "5 deg", "pm_ra": "100 mas/yr", "pm_dec": "5 mas/yr"}), "position_epoch"},
		{"half a proper motion", with(map[string]any{"ra": "10 deg", "dec": "5 deg", "pm_ra": "100 mas/yr", "position_epoch": 2016.0}), "pm_dec"},
		{"a proper motion without a direction", with(map[string]any{"pm_ra": "100 mas/yr", "pm_dec": "5 mas/yr", "position_epoch": 2016.0}), "pm_ra"},
		{"a proper motion in the wrong unit", with(map[string]any{"ra": "10 deg", "dec": "5 deg", "pm_ra": "100 arcsec/yr", "pm_dec": "5 mas/yr", "position_epoch": 2016.0}), "pm_ra"},
		{"an epoch that is not a year", with(map[string]any{"ra": "10 deg", "dec": "5 deg", "pm_ra": "100 mas/yr", "pm_dec": "5 mas/yr", "position_epoch": 16.0}), "position_epoch"},
		{"a planet that is not a letter", with(map[string]any{"planets": []string{"B"}}), "planets"},
		{"two planets for one written ephemeris", with(map[string]any{"planets": []string{"b", "c"}}), "planets"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := steptest.Config(New(), c.set)
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one on %s", err, c.attr)
			}
		})
	}
	t.Run("a range of too many transits", func(t *testing.T) {
		_, _, err := steptest.Run(New(), with(map[string]any{"period": "0.2 ± 0.001 d", "to": "2470000"}), steps.Inputs{}, nil)
		var ae *steps.AttrError
		if !errors.As(err, &ae) || ae.Attr != "to" {
			t.Errorf("error %v, want one on to", err)
		}
	})
	t.Run("a planet the fit lacks", func(t *testing.T) {
		in := steps.Inputs{Refs: map[string][]steps.Artifact{"fit": {fakeFit(false)}}}
		_, _, err := steptest.Run(New(), map[string]any{"fit": "fit.p", "from": "2460460", "to": "2460475", "planets": []string{"c"}}, in, nil)
		var ae *steps.AttrError
		if !errors.As(err, &ae) || ae.Attr != "planets" {
			t.Errorf("error %v, want one on planets", err)
		}
	})
}

// edited returns a copy of a block's attributes without drop and with set on top.
func edited(base, set map[string]any, drop ...string) map[string]any {
	out := map[string]any{}
	for k, v := range base {
		out[k] = v
	}
	for _, d := range drop {
		delete(out, d)
	}
	for k, v := range set {
		out[k] = v
	}
	return out
}
