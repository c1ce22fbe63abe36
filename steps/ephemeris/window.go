package ephemeris

import (
	"math"
	"strings"

	"dipline/steps/internal/sky"
	"dipline/steps/internal/timescale"
)

// Seen says how much of one transit's window a site sees.
type Seen int64

// The outcomes of a window.
const (
	seenNone       Seen = iota // no part of the transit, ingress to egress, is seen
	seenPartly                 // some of the transit is seen, not the whole window
	seenObservable             // the whole window is dark with the target above the limit
)

// The parts of a window that are seen, as bits of Window.Parts.
const (
	partIngress int64 = 1 << iota // the ingress (first contact)
	partMid                       // the mid-transit
	partEgress                    // the egress (last contact)
	partBefore                    // the whole baseline before the ingress
	partAfter                     // the whole baseline after the egress
)

// sampleStep is the longest gap in days between two instants at which a window's darkness
// and the target's altitude are tested: 5 minutes, short beside any twilight's pace and the
// target's rise of at most 1.25° in that time.
const sampleStep = 5.0 / 1440

// Window is one transit seen from a site. Times are UTC Julian dates.
type Window struct {
	// Start and End bound the window: the ingress less the baseline and one σ of the
	// mid-time, the egress plus both.
	Start, Ingress, Mid, Egress, End float64
	Seen                             Seen
	Parts                            int64 // partIngress | partMid | … for what is seen
	// MoonSep is the Moon's distance from the target in degrees and MoonLit its
	// illuminated fraction, both at mid-transit.
	MoonSep, MoonLit float64
	// Night numbers the night the transit falls in: the Julian day number whose noon (UTC)
	// is the local mean noon that begins the night, less the longitude's offset, i.e.
	// floor(UTC + longitude/360°). The night's date is that of its evening.
	Night int64
}

// Lookout is what a window is judged by: the site, the target's ICRS direction in degrees,
// the lowest altitude in degrees and the darkness.
type Lookout struct {
	Site     sky.Site
	RA, Dec  float64
	MinAlt   float64
	Darkness sky.Darkness
}

// seenAt says whether the site sees the target at the UTC instant: the Sun below the
// darkness's altitude and the target at or above the limit.
func (l Lookout) seenAt(utc float64) (bool, error) {
	at, err := sky.At(timescale.FromJD(utc))
	if err != nil {
		return false, err
	}
	if sky.SunAltAz(l.Site, at).Alt >= l.Darkness.Altitude() {
		return false, nil
	}
	return sky.AltAz(l.Site, at, l.RA, l.Dec).Alt >= l.MinAlt, nil
}

// span says whether every instant of [a, b] sampled every sampleStep or less, both ends
// included, is seen; any says whether one of them is.
func (l Lookout) span(a, b float64) (all, any bool, err error) {
	n := int(math.Ceil((b - a) / sampleStep))
	if n < 1 {
		n = 1
	}
	all = true
	for i := 0; i <= n; i++ {
		ok, err := l.seenAt(a + (b-a)*float64(i)/float64(n))
		if err != nil {
			return false, false, err
		}
		all = all && ok
		any = any || ok
	}
	return all, any, nil
}

// Judge fills w.Seen, w.Parts, the Moon's figures and the night from w's five times.
func (l Lookout) Judge(w *Window) error {
	before, _, err := l.span(w.Start, w.Ingress)
	if err != nil {
		return err
	}
	during, some, err := l.span(w.Ingress, w.Egress)
	if err != nil {
		return err
	}
	after, _, err := l.span(w.Egress, w.End)
	if err != nil {
		return err
	}
	w.Parts = 0
	for _, c := range []struct {
		t   float64
		bit int64
	}{{w.Ingress, partIngress}, {w.Mid, partMid}, {w.Egress, partEgress}} {
		ok, err := l.seenAt(c.t)
		if err != nil {
			return err
		}
		if ok {
			w.Parts |= c.bit
		}
	}
	if before {
		w.Parts |= partBefore
	}
	if after {
		w.Parts |= partAfter
	}
	switch {
	case before && during && after:
		w.Seen = seenObservable
	case some:
		w.Seen = seenPartly
	default:
		w.Seen = seenNone
	}
	at, err := sky.At(timescale.FromJD(w.Mid))
	if err != nil {
		return err
	}
	w.MoonSep = sky.MoonSeparation(l.Site, at, l.RA, l.Dec)
	w.MoonLit = sky.MoonIlluminated(at)
	w.Night = NightNumber(w.Mid, l.Site.Lon)
	return nil
}

// NightSpan is the part of one night in which a site sees the target — dark, with the
// target above the limit — from Begin to End in UTC Julian dates, both NaN when it is never
// seen that night.
type NightSpan struct {
	Night      int64
	Begin, End float64
}

// edgeTolerance is the width in days to which a span's ends are bisected: 30 s, finer than
// a timeline shows.
const edgeTolerance = 30.0 / 86400

// Span finds the part of a night (see NightNumber) in which the target is seen: sampled
// every sampleStep from the night's local mean noon to the next, from the first seen instant
// to the last, each end bisected to edgeTolerance. Where the target sets and rises again
// within one dark night (only near a pole) the span runs over the gap.
func (l Lookout) Span(night int64) (NightSpan, error) {
	sp := NightSpan{Night: night, Begin: math.NaN(), End: math.NaN()}
	noon := float64(night) - normLon(l.Site.Lon)/360
	n := int(math.Ceil(1 / sampleStep))
	at := func(i int) float64 { return noon + float64(i)/float64(n) }
	first, last := -1, -1
	for i := 0; i <= n; i++ {
		ok, err := l.seenAt(at(i))
		if err != nil {
			return sp, err
		}
		if ok {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if first < 0 {
		return sp, nil
	}
	var err error
	if sp.Begin, err = l.edge(at(max(first-1, 0)), at(first)); err != nil {
		return sp, err
	}
	sp.End, err = l.edge(at(min(last+1, n)), at(last))
	return sp, err
}

// edge bisects between an instant out and an instant in (seen) to the edge of what is
// seen, returning the seen side; it returns in when the two are the same instant.
func (l Lookout) edge(out, in float64) (float64, error) {
	for math.Abs(in-out) > edgeTolerance {
		mid := (in + out) / 2
		ok, err := l.seenAt(mid)
		if err != nil {
			return 0, err
		}
		if ok {
			in = mid
		} else {
			out = mid
		}
	}
	return in, nil
}

// normLon returns a longitude in degrees in [−180°, 180°).
func normLon(lon float64) float64 {
	return math.Mod(math.Mod(lon+180, 360)+360, 360) - 180
}

// NightNumber returns the night a UTC instant falls in at east longitude lon (degrees): the
// nights run from one local mean noon to the next, as sky.NightOf's do, and are numbered by
// floor(UTC + lon/360°), the Julian day number of the night's evening.
func NightNumber(utc, lon float64) int64 {
	return int64(math.Floor(utc + normLon(lon)/360))
}

// NightDate returns the civil date (year, month, day) of the evening a night begins, the
// date sky.NightOf takes.
func NightDate(night int64) (y, m, d int) {
	y, m, d, _, _ = timescale.Calendar(timescale.FromJD(float64(night) - 0.5))
	return y, m, d
}

// Described says in plain words what of a partly seen transit is seen: the contacts and
// whether the baselines before and after are whole.
func Described(w Window) string {
	var seen []string
	for _, c := range []struct {
		bit  int64
		name string
	}{{partIngress, "ingress"}, {partMid, "mid-transit"}, {partEgress, "egress"}} {
		if w.Parts&c.bit != 0 {
			seen = append(seen, c.name)
		}
	}
	var s string
	switch len(seen) {
	case 0:
		s = "part of the transit between its contacts seen"
	case 1:
		s = seen[0] + " seen"
	case 2:
		s = seen[0] + " and " + seen[1] + " seen"
	default:
		s = "ingress, mid-transit and egress seen"
	}
	var base []string
	if w.Parts&partBefore != 0 {
		base = append(base, "before")
	}
	if w.Parts&partAfter != 0 {
		base = append(base, "after")
	}
	switch len(base) {
	case 0:
		s += "; neither baseline whole"
	case 1:
		s += "; the baseline " + base[0] + " whole, the other cut"
	default:
		s += "; both baselines whole"
	}
	return strings.TrimSpace(s)
}
