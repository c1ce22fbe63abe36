package ephemeris

import (
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/sky"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/timescale"
)

// The constructed site and night. An invented site at latitude +28.8°, longitude −17.9°
// (local mean time = UTC − 1.19 h). On the evening of 2027-01-15 (0h UTC is JD 2461420.5:
// 2027-01-01 is 2461406.5) the Sun sets near 18h local and nautical twilight ends near 19h,
// so the night is dark from about 20:15 to 07:00 UTC. Local midnight is 01:12 UTC; the
// Greenwich sidereal time at 0h UT in mid-January is about 7h35m (it is 0h near the
// September equinox and gains 3m56s a day), so the meridian at local midnight is at
// RA ≈ 7h36m ≈ 114°: a target at RA 114°, Dec +28.8° passes the zenith then, and at an hour
// angle of ±3.7 h (21:30 and 04:55 UTC) stands at asin(sin²φ + cos²φ cos 56°) ≈ 41°. The test checks these figures with sky.AltAz and sky.NightOf.
const (
	siteLat, siteLon = 28.8, -17.9
	jan15            = 2461420.5 // 2027-01-15 0h UTC
	highRA, highDec  = 114.0, 28.8
)

var testSite = sky.Site{Lat: siteLat, Lon: siteLon}

// siteAttrs are the block's site attributes.
func siteAttrs(ra, dec float64) map[string]any {
	return map[string]any{
		"ra": ftoa(ra) + " deg", "dec": ftoa(dec) + " deg",
		"site_latitude": ftoa(siteLat) + " deg", "site_longitude": ftoa(siteLon) + " deg", "site_elevation": "2300 m",
		"altitude_limit": "30 deg", "darkness": "nautical",
	}
}

func ftoa(x float64) string { return strconvF(x) }

// bjdOf returns the BJD_TDB of a UTC Julian date for the target.
func bjdOf(t *testing.T, utc, ra, dec float64) float64 {
	t.Helper()
	b, err := timescale.BJDTDB(timescale.FromJD(utc), timescale.Fixed(ra, dec))
	if err != nil {
		t.Fatal(err)
	}
	return b.Float()
}

// altitudeAt is the target's altitude at the site at a UTC Julian date.
func altitudeAt(t *testing.T, utc, ra, dec float64) float64 {
	t.Helper()
	at, err := sky.At(timescale.FromJD(utc))
	if err != nil {
		t.Fatal(err)
	}
	return sky.AltAz(testSite, at, ra, dec).Alt
}

// twoPlanetFit is a fit of planets b and c (durations 2 h) whose transits have their
// mid-times at the given UTC Julian dates, seen from the direction (ra, dec).
func twoPlanetFit(t *testing.T, ra, dec, midB, midC float64) *fit.Artifact {
	const ref = 2461000
	tb, tc := bjdOf(t, midB, ra, dec)-ref, bjdOf(t, midC, ra, dec)-ref
	g := rng.New(11)
	a := &fit.Artifact{
		Frame:     lightcurve.Frame{TimeScale: "BJD_TDB", RefInt: ref},
		Names:     []string{"b.period", "b.t0", "b.t14", "c.period", "c.t0", "c.t14"},
		Reference: []fit.Reference{{Time: tb}, {Time: tc}},
	}
	for i := 0; i < 2000; i++ {
		a.Samples = append(a.Samples, 3.1+1e-6*g.Normal(), tb+1e-4*g.Normal(), 2.0/24, 5.3+1e-6*g.Normal(), tc+1e-4*g.Normal(), 2.0/24)
	}
	return a
}

// windowOf returns the window of the transit nearest the UTC mid-time.
func windowOf(t *testing.T, a *Artifact, planet string, mid float64) Window {
	t.Helper()
	for _, p := range a.Planets {
		if p.Name != planet {
			continue
		}
		for _, w := range p.Windows {
			if math.Abs(w.Mid-mid) < 0.01 {
				return w
			}
		}
	}
	t.Fatalf("no window of planet %s at %.4f in %+v", planet, mid, a.Planets)
	return Window{}
}

func TestTwoTransitsInOneDarkNightMakeADoubleNight(t *testing.T) {
	midB := jan15 + (23+40.0/60)/24    // 2027-01-15 23:40 UTC
	midC := jan15 + 1 + (2+40.0/60)/24 // 2027-01-16 02:40 UTC
	// The reasoning above, checked: the night is dark from before the first window (21:30 −
	// σ) to after the last (04:40 + σ), and the target is high throughout.
	n, err := sky.NightOf(testSite, 2027, 1, 15, sky.Nautical)
	if err != nil {
		t.Fatal(err)
	}
	if !n.Dark || n.Begin.Float() > midB-2.2/24 || n.End.Float() < midC+2.2/24 {
		t.Fatalf("the night of 2027-01-15 is dark %v from %.4f to %.4f", n.Dark, n.Begin.Float(), n.End.Float())
	}
	for x := midB - 2.2/24; x <= midC+2.2/24; x += 0.01 {
		if alt := altitudeAt(t, x, highRA, highDec); alt < 40 {
			t.Fatalf("the target is %.1f° high at %s", alt, isoUTC(x))
		}
	}
	f := twoPlanetFit(t, highRA, highDec, midB, midC)
	set := siteAttrs(highRA, highDec)
	set["from"], set["to"] = "2027-01-14", "2027-01-17"
	a, notes := runFit(t, f, set)
	wb, wc := windowOf(t, a, "b", midB), windowOf(t, a, "c", midC)
	if wb.Seen != seenObservable || wc.Seen != seenObservable {
		t.Fatalf("b seen %d, c seen %d; both should be observable", wb.Seen, wc.Seen)
	}
	if wb.Night != wc.Night {
		t.Fatalf("the two transits fall in nights %d and %d", wb.Night, wc.Night)
	}
	if y, m, d := NightDate(wb.Night); y != 2027 || m != 1 || d != 15 {
		t.Errorf("the night is named %04d-%02d-%02d, want the evening of 2027-01-15", y, m, d)
	}
	if len(a.Doubles) != 1 || a.Doubles[0] != wb.Night {
		t.Errorf("double nights %v, want [%d]", a.Doubles, wb.Night)
	}
	// The run's summary names the night and its transits in time order, b's mid-time first.
	want := "two or more transits on the night of 2027-01-15: b mid 23:40 UTC"
	found := false
	for _, n := range notes {
		if strings.HasPrefix(n, want) && strings.Contains(n, ", c mid 02:40 UTC") {
			found = true
		}
	}
	if !found {
		t.Errorf("no note %q… with c at 02:40 among %q", want, notes)
	}
	if !(wb.MoonSep >= 0 && wb.MoonSep <= 180 && wb.MoonLit >= 0 && wb.MoonLit <= 1) {
		t.Errorf("Moon %v° away, %v lit", wb.MoonSep, wb.MoonLit)
	}
	figs := map[string]float64{}
	for _, fg := range a.Figures() {
		figs[fg.Name] = fg.Value
	}
	if figs["double_nights"] != 1 || figs["b.observable"] < 1 || figs["c.observable"] < 1 {
		t.Errorf("figures %v", figs)
	}
	pr, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	steptest.CheckPresentation(t, pr)
	checkTimelinePlot(t, a, pr, wb.Night)
	tl := pr.Panels[1].Table
	if tl == nil {
		t.Fatalf("the second panel is %q, without a table", pr.Panels[1].Title)
	}
	var row []string
	for _, r := range tl.Rows {
		if r[0] == "2027-01-15" {
			row = r
		}
	}
	if row == nil || row[2] != "yes" || strings.Index(row[1], "planet b") > strings.Index(row[1], "planet c") ||
		!strings.Contains(row[1], "mid-transit 23:40") || !strings.Contains(row[1], "mid-transit 02:40") {
		t.Errorf("timeline rows %q", tl.Rows)
	}
	if c := strings.Join(a.Cautions(), "\n"); strings.Contains(c, "No predicted transit") || !strings.Contains(c, "observer's judgement") {
		t.Errorf("cautions %q", c)
	}
}

// runWritten runs one written planet of duration 2 h whose transit has its mid-time at the
// UTC Julian date, seen from the site.
func runWritten(t *testing.T, ra, dec, mid float64) *Artifact {
	t.Helper()
	set := siteAttrs(ra, dec)
	set["period"] = "10 ± 0.00001 d"
	set["epoch"] = strconvF(bjdOf(t, mid, ra, dec)) + " ± 0.0001 d"
	set["duration"] = "2 ± 0.01 h"
	set["from"], set["to"] = "2027-01-14", "2027-01-20"
	art, _, err := steptest.Run(New(), set, steps.Inputs{}, nil)
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Artifact)
}

func TestATransitInDaylightIsNotObservable(t *testing.T) {
	// 13:00 UTC is 11:49 local mean time: the Sun is up.
	mid := jan15 + 1 + 13.0/24
	a := runWritten(t, highRA, highDec, mid)
	if w := windowOf(t, a, "b", mid); w.Seen != seenNone {
		t.Errorf("a transit at noon is seen %d (parts %b)", w.Seen, w.Parts)
	}
	if c := strings.Join(a.Cautions(), "\n"); !strings.Contains(c, "No predicted transit in the range is observable") {
		t.Errorf("no caution that nothing is observable: %q", c)
	}
}

func TestATargetBelowTheLimitIsNotObservable(t *testing.T) {
	// Dec −58° culminates at 90° − 28.8° − 58° = 3.2° from latitude +28.8°.
	const dec = -58.0
	mid := jan15 + 1 + 1.2/24
	if alt := altitudeAt(t, mid, highRA, dec); alt > 4 {
		t.Fatalf("the target is %.1f° high", alt)
	}
	a := runWritten(t, highRA, dec, mid)
	if w := windowOf(t, a, "b", mid); w.Seen != seenNone {
		t.Errorf("a target below the limit is seen %d (parts %b)", w.Seen, w.Parts)
	}
}

func TestAPartlySeenTransitNamesTheContactsSeen(t *testing.T) {
	// Mid-transit 10 minutes before the end of nautical twilight at dawn: ingress and
	// mid-transit are in the dark, the egress 50 minutes later is not. The target is put on
	// the meridian at dawn: the sidereal time then is about 7h36m + 6h, so RA ≈ 205°.
	n, err := sky.NightOf(testSite, 2027, 1, 15, sky.Nautical)
	if err != nil {
		t.Fatal(err)
	}
	const ra = 205.0
	mid := n.End.Float() - 10.0/1440
	if alt := altitudeAt(t, mid, ra, highDec); alt < 60 {
		t.Fatalf("the target is %.1f° high at dawn", alt)
	}
	a := runWritten(t, ra, highDec, mid)
	w := windowOf(t, a, "b", mid)
	if w.Seen != seenPartly {
		t.Fatalf("seen %d, want partly", w.Seen)
	}
	if got, want := Described(w), "ingress and mid-transit seen; the baseline before whole, the other cut"; got != want {
		t.Errorf("described as %q, want %q", got, want)
	}
	pr, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	// Drawn, the window runs past the end of the time the target is seen (dawn).
	pl := pr.Panels[0].Plots[0]
	if len(pl.Layers) != 2 || pl.Layers[1].Label != "planet b, partly seen" || len(pl.Layers[1].X) != 1 {
		t.Fatalf("timeline layers %+v", pl.Layers)
	}
	if up, win := pl.Layers[0], pl.Layers[1]; !(win.XHi[0] > up.XHi[0] && win.XLo[0] >= up.XLo[0]) {
		t.Errorf("the window %.2f to %.2f h against the target's time %.2f to %.2f h", win.XLo[0], win.XHi[0], up.XLo[0], up.XHi[0])
	}
	if tl := pr.Panels[1].Table; len(tl.Rows) != 1 || !strings.Contains(tl.Rows[0][1], "partly seen: ingress and mid-transit seen") || tl.Rows[0][2] != "" {
		t.Errorf("timeline %q", tl.Rows)
	}
}

func TestSiteMistakesPointAtTheAttribute(t *testing.T) {
	written := siteAttrs(highRA, highDec)
	written["period"], written["epoch"], written["duration"] = "3.7 ± 0.001 d", "2460450.9 ± 0.001 d", "2 ± 0.1 h"
	written["from"], written["to"] = "2460460", "2460470"
	base := func(set map[string]any, drop ...string) map[string]any { return edited(written, set, drop...) }
	cases := []struct {
		name string
		set  map[string]any
		drop []string
		attr string
	}{
		{"a latitude without a longitude", nil, []string{"site_longitude"}, "site_latitude"},
		{"a longitude without a latitude", nil, []string{"site_latitude"}, "site_longitude"},
		{"a site without the target's direction", nil, []string{"ra", "dec"}, "site_latitude"},
		{"a latitude beyond the pole", map[string]any{"site_latitude": "100 deg"}, nil, "site_latitude"},
		{"a site on a mountain too high", map[string]any{"site_elevation": "20000 m"}, nil, "site_elevation"},
		{"an altitude limit at the zenith", map[string]any{"altitude_limit": "95 deg"}, nil, "altitude_limit"},
		{"a baseline of a day", map[string]any{"baseline": "1 d"}, nil, "baseline"},
		{"a baseline without a site", map[string]any{"baseline": "1 h"}, []string{"site_latitude", "site_longitude", "site_elevation"}, "baseline"},
		{"a written planet without a duration", nil, []string{"duration"}, "duration"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := steptest.Config(New(), base(c.set, c.drop...))
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one on %s", err, c.attr)
			}
		})
	}
	t.Run("a site without dec names dec", func(t *testing.T) {
		_, err := steptest.Config(New(), base(nil, "dec", "ra"))
		if err == nil || !strings.Contains(err.Error(), "ra and dec is missing") {
			t.Errorf("error %v does not name what is missing", err)
		}
	})
}

func strconvF(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }

// checkTimelinePlot holds the drawn timeline to the artifact: the double night is labelled
// ×2, and on its row both observable windows lie within the time the site sees the target
// (found by Span, apart from the windows' own judgement), each with its mid-transit on it.
func checkTimelinePlot(t *testing.T, a *Artifact, pr steps.Presentation, night int64) {
	t.Helper()
	if pr.Panels[0].Title != "Nights at the site" || len(pr.Panels[0].Plots) != 1 {
		t.Fatalf("the first panel is %q with %d plots", pr.Panels[0].Title, len(pr.Panels[0].Plots))
	}
	pl := pr.Panels[0].Plots[0]
	y, found := 0.0, false
	for _, m := range pl.YTicks {
		if m.Label == "2027-01-15 ×2" {
			y, found = m.Value, true
		}
	}
	if !found {
		t.Fatalf("no row labelled 2027-01-15 ×2 among %+v", pl.YTicks)
	}
	var upLo, upHi float64
	windows := 0
	for k, l := range pl.Layers {
		for j := range l.Y {
			if l.Y[j] != y {
				continue
			}
			if k == 0 {
				upLo, upHi = l.XLo[j], l.XHi[j]
				continue
			}
			windows++
			if !strings.HasSuffix(l.Label, "observable") || !(l.XLo[j] < l.X[j] && l.X[j] < l.XHi[j]) {
				t.Errorf("layer %q on the double night: window %.2f to %.2f h, mid %.2f h", l.Label, l.XLo[j], l.XHi[j], l.X[j])
			}
			if l.XLo[j] < upLo || l.XHi[j] > upHi {
				t.Errorf("layer %q: the window %.2f to %.2f h is not within the target's time %.2f to %.2f h", l.Label, l.XLo[j], l.XHi[j], upLo, upHi)
			}
		}
	}
	if windows != 2 {
		t.Errorf("%d windows drawn on the double night, want 2", windows)
	}
}

// TestTheTargetsTimeInANightFollowsTheSkyAndTheSun checks Span three ways. A target near
// the pole, always higher than the limit at this site, is seen for the whole dark night, so
// its span matches sky.NightOf's nautical night (itself checked against ERFA) to within the
// bisection's 30 s. A target that rises during the night is first seen when its altitude
// crosses the limit, found here by a separate scan of sky.AltAz. A target that never rises
// is not seen at all.
func TestTheTargetsTimeInANightFollowsTheSkyAndTheSun(t *testing.T) {
	n, err := sky.NightOf(testSite, 2027, 1, 15, sky.Nautical)
	if err != nil {
		t.Fatal(err)
	}
	night := NightNumber(n.Begin.Float(), testSite.Lon)
	look := func(ra, dec float64) NightSpan {
		l := Lookout{Site: testSite, RA: ra, Dec: dec, MinAlt: 30, Darkness: sky.Nautical}
		sp, err := l.Span(night)
		if err != nil {
			t.Fatal(err)
		}
		return sp
	}
	const tol = 31.0 / 86400
	polar := look(10, 89.5)
	if math.Abs(polar.Begin-n.Begin.Float()) > tol || math.Abs(polar.End-n.End.Float()) > tol {
		t.Errorf("a polar target is seen %s to %s, the night is dark %s to %s",
			isoUTC(polar.Begin), isoUTC(polar.End), isoUTC(n.Begin.Float()), isoUTC(n.End.Float()))
	}
	// A target at RA 200° is low at dusk in January and crosses 30° during the night.
	const ra = 200.0
	rise := math.NaN()
	for x := n.Begin.Float(); x < n.End.Float(); x += 1.0 / 86400 * 10 {
		if altitudeAt(t, x, ra, highDec) >= 30 {
			rise = x
			break
		}
	}
	if math.IsNaN(rise) || rise-n.Begin.Float() < 1.0/24 {
		t.Fatalf("the test's target is not rising during the night (reaches 30° at %s)", isoUTC(rise))
	}
	sp := look(ra, highDec)
	if math.Abs(sp.Begin-rise) > tol || math.Abs(sp.End-n.End.Float()) > tol {
		t.Errorf("a rising target is seen %s to %s; it reaches 30° at %s and dawn is at %s",
			isoUTC(sp.Begin), isoUTC(sp.End), isoUTC(rise), isoUTC(n.End.Float()))
	}
	if never := look(10, -80); !math.IsNaN(never.Begin) || !math.IsNaN(never.End) {
		t.Errorf("a target that never rises is seen %v to %v", never.Begin, never.End)
	}
}
