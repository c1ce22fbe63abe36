package sky

import (
	"fmt"

	"dipline/steps/internal/timescale"
)

// Darkness names an altitude of the Sun's centre below which a night counts as dark for
// some purpose.
type Darkness int

const (
	// Geometric: the Sun's centre on the airless horizon (0°).
	Geometric Darkness = iota
	// Sunset: the Sun's upper limb on the horizon, −0.833° — 34′ of refraction and a 16′
	// semi-diameter (common practice).
	Sunset
	// Civil twilight ends with the Sun's centre at −6° (common practice).
	Civil
	// Nautical twilight ends at −12° (common practice).
	Nautical
	// Astronomical twilight ends at −18° (common practice).
	Astronomical
)

// Altitude returns the Sun's altitude in degrees that bounds the darkness.
func (d Darkness) Altitude() float64 {
	switch d {
	case Sunset:
		return -0.833
	case Civil:
		return -6
	case Nautical:
		return -12
	case Astronomical:
		return -18
	}
	return 0
}

// String names the darkness in words.
func (d Darkness) String() string {
	switch d {
	case Geometric:
		return "Sun's centre below the horizon"
	case Sunset:
		return "after sunset"
	case Civil:
		return "after civil twilight"
	case Nautical:
		return "after nautical twilight"
	case Astronomical:
		return "after astronomical twilight"
	}
	return fmt.Sprintf("darkness(%d)", int(d))
}

// Dark reports whether, at the UTC instant, the Sun's centre is below the darkness's
// altitude at the site (geometric altitude, as SunAltAz gives it).
func Dark(s Site, utc timescale.JD, d Darkness) (bool, error) {
	if err := s.Check(); err != nil {
		return false, err
	}
	t, err := At(utc)
	if err != nil {
		return false, err
	}
	return SunAltAz(s, t).Alt < d.Altitude(), nil
}

// Night is the stretch between one local mean noon and the next in which the Sun is below
// a darkness's altitude at a site.
type Night struct {
	Darkness Darkness
	// Noon is the local mean noon (12h at the site's longitude, in UTC) the window starts at;
	// it ends one day later.
	Noon timescale.JD
	// Dark is false when the Sun never gets that low in the window (a summer night at high
	// latitude); Begin and End are then unset.
	Dark bool
	// Begin is when the Sun sinks below the altitude in the evening and End when it rises
	// above it in the morning, both in UTC. When the Sun is already below at the first noon
	// (or still below at the second: a polar night and its edges), Begin (End) is that noon
	// and Clipped is true.
	Begin, End timescale.JD
	Clipped    bool
}

// nightStep is the sampling step of the Sun's altitude, in days. A dip below the altitude
// shorter than it (only at the latitude and date where a twilight first appears) can be
// missed.
const nightStep = 10.0 / 1440

// nightTolerance is the width in days to which a crossing is bisected (about 0.1 s).
const nightTolerance = 1e-6

// NightOf returns the night at the site that begins on the evening of the given calendar
// date (local mean time): the crossings of the Sun's geometric altitude through the
// darkness's altitude between that date's local mean noon and the next, found by sampling
// every 10 minutes and bisecting to about 0.1 s. Over the tests' sites and dates the times
// are within a few seconds of those from ERFA's Sun.
func NightOf(s Site, year, month, day int, d Darkness) (Night, error) {
	if err := s.Check(); err != nil {
		return Night{}, err
	}
	jd0, err := timescale.CalendarJD(year, month, day)
	if err != nil {
		return Night{}, err
	}
	lon := norm360(s.Lon+180) - 180 // in [−180°, 180°)
	noon := timescale.JD{Day: jd0, Frac: 0.5 - lon/360}
	h0 := d.Altitude()
	below := func(frac float64) (float64, error) { // the Sun's altitude less h0
		t, err := At(timescale.JD{Day: noon.Day, Frac: noon.Frac + frac})
		if err != nil {
			return 0, err
		}
		return SunAltAz(s, t).Alt - h0, nil
	}
	n := Night{Darkness: d, Noon: noon}
	const steps = 144 // one day of nightStep
	prev, err := below(0)
	if err != nil {
		return Night{}, err
	}
	if prev < 0 {
		n.Dark, n.Clipped, n.Begin = true, true, noon
	}
	descended := false
	for i := 1; i <= steps; i++ {
		x := float64(i) / steps
		f, err := below(x)
		if err != nil {
			return Night{}, err
		}
		if (prev < 0) != (f < 0) {
			lo, hi, flo := x-nightStep, x, prev
			for hi-lo > nightTolerance {
				mid := 0.5 * (lo + hi)
				fm, err := below(mid)
				if err != nil {
					return Night{}, err
				}
				if (fm < 0) == (flo < 0) {
					lo, flo = mid, fm
				} else {
					hi = mid
				}
			}
			at := timescale.JD{Day: noon.Day, Frac: noon.Frac + 0.5*(lo+hi)}
			if f < 0 && !descended && !n.Dark {
				n.Dark, n.Begin, descended = true, at, true
			}
			if f >= 0 {
				n.End = at
			}
		}
		prev = f
	}
	if n.Dark && prev < 0 {
		n.End, n.Clipped = timescale.JD{Day: noon.Day, Frac: noon.Frac + 1}, true
	}
	return n, nil
}
