package sky

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"sync"
	"testing"

	"dipline/steps/internal/timescale"
)

// reference is testdata/sky/erfa_reference.json, written by erfa_reference.py beside it
// from ERFA (the version is in the file). UT1 = UTC and no polar motion on both sides.
type reference struct {
	ERFAVersion string `json:"erfa_version"`
	Sites       []struct {
		Name             string
		Lat, Lon, Height float64
	}
	LST []struct {
		Site int
		UTC  [2]float64
		LST  float64
	}
	AltAz []struct {
		Site             int
		UTC              [2]float64
		RA, Dec, Az, Alt float64
	}
	Sun []struct {
		Site             int
		UTC              [2]float64
		RA, Dec, Az, Alt float64
		DistAU           float64 `json:"dist_au"`
	}
	Moon []struct {
		Site             int
		UTC              [2]float64
		RA, Dec, Az, Alt float64
		DistAU           float64 `json:"dist_au"`
		Illuminated      float64
		Sep              []float64
	}
	Stars      []struct{ RA, Dec float64 }
	Refraction []struct{ Alt, Refraction float64 }
	Twilight   []struct {
		Site     int
		Date     [3]int
		Altitude float64
		Evening  *[2]float64
		Morning  *[2]float64
	}
}

var (
	refOnce sync.Once
	ref     reference
	refErr  error
)

func loadReference(t *testing.T) *reference {
	t.Helper()
	refOnce.Do(func() {
		b, err := os.ReadFile("../../../testdata/sky/erfa_reference.json")
		if err != nil {
			refErr = err
			return
		}
		refErr = json.Unmarshal(b, &ref)
	})
	if refErr != nil {
		t.Fatalf("reading the ERFA reference: %v", refErr)
	}
	return &ref
}

func (r *reference) site(i int) Site {
	s := r.Sites[i]
	return Site{Lat: s.Lat, Lon: s.Lon, Height: s.Height}
}

func instant(t *testing.T, utc [2]float64) Instant {
	t.Helper()
	in, err := At(timescale.JD{Day: utc[0], Frac: utc[1]})
	if err != nil {
		t.Fatal(err)
	}
	return in
}

// angleDiff returns |a − b| in degrees, reduced to [0, 180].
func angleDiff(a, b float64) float64 {
	d := math.Abs(math.Mod(a-b, 360))
	return math.Min(d, 360-d)
}

func TestLSTIsERFAsGMST06PlusLongitude(t *testing.T) {
	r := loadReference(t)
	var worst float64
	for _, c := range r.LST {
		worst = math.Max(worst, angleDiff(LST(r.site(c.Site), instant(t, c.UTC)), c.LST))
	}
	t.Logf("LST: max |ours − gmst06 − λ| = %.2g° = %.2g s over %d instants, 4 sites, 2026–2030 (ERFA %s)",
		worst, worst*240, len(r.LST), r.ERFAVersion)
	if worst > 1e-7 {
		t.Errorf("LST differs from ERFA's by %.3g°, more than 1e-7°", worst)
	}
}

func TestTargetsAreWithinHundredthOfADegreeOfERFAsObservedPlace(t *testing.T) {
	r := loadReference(t)
	var worst, worstAlt float64
	for _, c := range r.AltAz {
		h := AltAz(r.site(c.Site), instant(t, c.UTC), c.RA, c.Dec)
		worst = math.Max(worst, Separation(h.Az, h.Alt, c.Az, c.Alt))
		worstAlt = math.Max(worstAlt, math.Abs(h.Alt-c.Alt))
	}
	t.Logf("target direction: max angle to atco13 (no refraction) = %.4f°, max |Δalt| = %.4f° over %d cases",
		worst, worstAlt, len(r.AltAz))
	if worst > 0.02 {
		t.Errorf("a target lies %.4f° from ERFA's observed place, more than 0.02°", worst)
	}
}

func TestTheSunIsWithinHundredthOfADegreeOfEPV00(t *testing.T) {
	r := loadReference(t)
	var worstPlace, worstAlt, worstDist float64
	for _, c := range r.Sun {
		in := instant(t, c.UTC)
		p := Sun(in)
		worstPlace = math.Max(worstPlace, Separation(p.RA, p.Dec, c.RA, c.Dec))
		worstDist = math.Max(worstDist, math.Abs(p.Distance-c.DistAU))
		worstAlt = math.Max(worstAlt, math.Abs(SunAltAz(r.site(c.Site), in).Alt-c.Alt))
	}
	t.Logf("Sun: max angle to epv00 (light time applied) = %.4f°, max |Δalt| = %.4f°, max |Δr| = %.2g au over %d cases",
		worstPlace, worstAlt, worstDist, len(r.Sun))
	// The Almanac's 0.01° for the place; the altitude also carries what AltAz leaves out
	// (nutation in the hour angle and declination), hence 0.015°.
	if worstPlace > 0.01 || worstAlt > 0.015 || worstDist > 1e-4 {
		t.Errorf("the Sun is %.4f° (altitude %.4f°, distance %.2g au) from ERFA's; allowed 0.01°, 0.015°, 1e-4 au",
			worstPlace, worstAlt, worstDist)
	}
}

func TestTheMoonIsWithinAFewTenthsOfADegreeOfMoon98(t *testing.T) {
	r := loadReference(t)
	var geo, topo, dist, illum, sep float64
	for _, c := range r.Moon {
		in := instant(t, c.UTC)
		s := r.site(c.Site)
		p := Moon(in)
		geo = math.Max(geo, Separation(p.RA, p.Dec, c.RA, c.Dec))
		dist = math.Max(dist, math.Abs(p.Distance-c.DistAU)/c.DistAU)
		h := MoonAltAz(s, in)
		topo = math.Max(topo, Separation(h.Az, h.Alt, c.Az, c.Alt))
		illum = math.Max(illum, math.Abs(MoonIlluminated(in)-c.Illuminated))
		for i, star := range r.Stars {
			sep = math.Max(sep, math.Abs(MoonSeparation(s, in, star.RA, star.Dec)-c.Sep[i]))
		}
	}
	t.Logf("Moon against moon98: geocentric max %.3f°, seen from the site max %.3f°, distance max %.2f %%, "+
		"illuminated fraction max %.4f, separation from a star max %.3f° over %d instants",
		geo, topo, 100*dist, illum, sep, len(r.Moon))
	if geo > 0.4 || topo > 0.4 || sep > 0.4 || illum > 0.01 || dist > 0.005 {
		t.Errorf("the Moon is off: %.3f° geocentric, %.3f° topocentric, %.3f° in separation (allowed 0.4°), "+
			"%.4f in illuminated fraction (0.01), %.2g in distance (0.005)", geo, topo, sep, illum, dist)
	}
}

func TestRefractionIsSaemundssonsAndNearERFAsRefco(t *testing.T) {
	// Saemundsson (1986): 1.02′/tan(10.3°/5.11°) = 28.98′ at the horizon (computed from the
	// formula); refco above 15°, where its model holds, within 0.2′.
	if got := Refraction(0) * 60; math.Abs(got-28.98) > 0.01 {
		t.Errorf("refraction at the horizon is %.3f′, want 28.98′", got)
	}
	if Refraction(90) != 0 || Refraction(-5) != Refraction(-1) {
		t.Errorf("refraction at the zenith %g, below −1° %g (want 0 and the value at −1°)", Refraction(90), Refraction(-5))
	}
	r := loadReference(t)
	var worst float64
	for _, c := range r.Refraction {
		worst = math.Max(worst, math.Abs(Refraction(c.Alt)-c.Refraction))
	}
	t.Logf("refraction: max |Saemundsson − refco| = %.3f′ over altitudes 15–85°", worst*60)
	if worst*60 > 0.2 {
		t.Errorf("refraction differs from refco by %.3f′, more than 0.2′", worst*60)
	}
}

func TestTwilightTimesAreWithinTwoMinutesOfERFAs(t *testing.T) {
	r := loadReference(t)
	kinds := map[float64]Darkness{0: Geometric, -0.833: Sunset, -6: Civil, -12: Nautical, -18: Astronomical}
	var worst float64
	var count int
	for _, c := range r.Twilight {
		d, ok := kinds[c.Altitude]
		if !ok {
			t.Fatalf("no darkness at %g°", c.Altitude)
		}
		n, err := NightOf(r.site(c.Site), c.Date[0], c.Date[1], c.Date[2], d)
		if err != nil {
			t.Fatal(err)
		}
		name := r.Sites[c.Site].Name
		if (c.Evening == nil) != !n.Dark || (c.Morning == nil) != !n.Dark {
			t.Errorf("%s %v %s: dark %v, ERFA has evening %v morning %v", name, c.Date, d, n.Dark, c.Evening, c.Morning)
			continue
		}
		if !n.Dark {
			continue
		}
		if n.Clipped {
			t.Errorf("%s %v %s: clipped at noon, ERFA has crossings", name, c.Date, d)
		}
		for _, p := range []struct {
			got  timescale.JD
			want *[2]float64
		}{{n.Begin, c.Evening}, {n.End, c.Morning}} {
			dt := math.Abs(p.got.SecondsSince(timescale.JD{Day: p.want[0], Frac: p.want[1]}))
			worst = math.Max(worst, dt)
			count++
		}
	}
	t.Logf("twilight: max |ours − ERFA-built| = %.1f s over %d crossings (4 sites, 5 dates, 5 altitudes)", worst, count)
	if worst > 120 {
		t.Errorf("a crossing is %.0f s from ERFA's, more than 2 min", worst)
	}
}

func TestNoDarknessOnAMidsummerNightAt64North(t *testing.T) {
	// At 64.1° N on 2026-06-21 the Sun's centre gets no lower than about
	// −(90° − 64.1° − 23.44°) = −2.5° (computed): it sets, but civil twilight never ends.
	s := Site{Lat: 64.13, Lon: -21.9, Height: 50}
	set, err := NightOf(s, 2026, 6, 21, Sunset)
	if err != nil {
		t.Fatal(err)
	}
	civil, err := NightOf(s, 2026, 6, 21, Civil)
	if err != nil {
		t.Fatal(err)
	}
	if !set.Dark || civil.Dark {
		t.Errorf("after sunset: %v, after civil twilight: %v; want true, false", set.Dark, civil.Dark)
	}
}

func TestAPolarNightIsDarkFromNoonToNoon(t *testing.T) {
	// At 80° N in late December the Sun stays below −10° all day (90° − 80° − 23.4°,
	// computed), so the night is dark all through and clipped at both noons.
	n, err := NightOf(Site{Lat: 80}, 2027, 12, 21, Civil)
	if err != nil {
		t.Fatal(err)
	}
	if !n.Dark || !n.Clipped || n.End.SecondsSince(n.Begin) != 86400 {
		t.Errorf("polar night: dark %v clipped %v length %.0f s; want dark and clipped, 86400 s",
			n.Dark, n.Clipped, n.End.SecondsSince(n.Begin))
	}
}

func TestDarkAgreesWithTheNight(t *testing.T) {
	s := Site{Lat: -30.17, Lon: -70.8, Height: 2200}
	n, err := NightOf(s, 2028, 12, 21, Astronomical)
	if err != nil {
		t.Fatal(err)
	}
	mid := timescale.JD{Day: n.Begin.Day, Frac: n.Begin.Frac + 0.5*n.End.SecondsSince(n.Begin)/86400}
	for _, c := range []struct {
		name string
		at   timescale.JD
		want bool
	}{
		{"a minute after astronomical twilight ends", n.Begin.AddSeconds(60), true},
		{"in the middle of the night", mid, true},
		{"a minute before it begins again", n.End.AddSeconds(-60), true},
		{"a minute before it ends", n.Begin.AddSeconds(-60), false},
		{"at local noon", n.Noon, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			got, err := Dark(s, c.at, Astronomical)
			if err != nil {
				t.Fatal(err)
			}
			if got != c.want {
				t.Errorf("Dark = %v, want %v", got, c.want)
			}
		})
	}
}

func TestBadSitesAndDatesAreRefused(t *testing.T) {
	for _, s := range []Site{{Lat: 91}, {Lat: math.NaN()}, {Lon: math.Inf(1)}, {Height: 20000}} {
		if _, err := NightOf(s, 2027, 1, 1, Civil); err == nil {
			t.Errorf("site %+v was accepted", s)
		}
	}
	if _, err := NightOf(Site{}, 2027, 2, 30, Civil); err == nil {
		t.Error("2027-02-30 was accepted")
	}
	if _, err := Dark(Site{}, timescale.FromJD(2440000.5), Civil); !errors.Is(err, timescale.ErrBefore1972) {
		t.Errorf("UTC in 1968: err = %v, want ErrBefore1972", err)
	}
}

func TestSeparationIsExactAtSmallAndLargeAngles(t *testing.T) {
	for _, c := range []struct {
		name                 string
		l1, b1, l2, b2, want float64
	}{
		{"one arcsecond along the equator", 10, 0, 10 + 1.0/3600, 0, 1.0 / 3600},
		{"pole to pole", 0, 90, 123, -90, 180},
		{"a quarter turn", 0, 0, 90, 0, 90},
		{"across RA 0", 359.5, 0, 0.5, 0, 1},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := Separation(c.l1, c.b1, c.l2, c.b2); math.Abs(got-c.want) > 1e-12 {
				t.Errorf("Separation = %.15g, want %.15g", got, c.want)
			}
		})
	}
}
