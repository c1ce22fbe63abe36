// Package sky computes the geometry of a night at an observing site: local sidereal time,
// the altitude and azimuth of a target, the apparent places of the Sun and the Moon, the
// Moon's illuminated fraction and its distance from a target, and the times of sunset,
// twilight and sunrise. Its functions take a Site and an Instant (At turns a UTC Julian date
// into one, with TT from the timescale package) and return plain numbers.
//
// These are planning figures, good to about 0.01° for stars and the Sun, 0.2° for the Moon
// and seconds for twilight (figures against ERFA in the tests; see testdata/sky). They are not
// pointing positions, and whether and when to observe — safety of people and instrument
// near twilight, the Sun and the horizon included — is for the observatory's rules and the
// observer's judgement, which come first.
//
// What it leaves out: UT1 is taken equal to UTC (|UT1 − UTC| < 0.9 s moves the sky by
// under 0.004°); polar motion; nutation, annual aberration and light deflection for targets
// (together under about 0.01°); proper motion and parallax of targets; and refraction,
// which AltAz never adds — Refraction gives Saemundsson's mean correction for a caller who
// wants it, and sunset and sunrise use the conventional −0.833° that includes it.
//
// The main entry points are At, AltAz, Sun, MoonFrom, MoonIlluminated, Separation,
// NightOf and Dark.
package sky
