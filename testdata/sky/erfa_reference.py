#!/usr/bin/python3
"""Reference values of sky geometry for dipline's sky tests.

Run with Debian's python3-erfa (pyerfa 2.0.0.1 over liberfa 2.0.0, Debian package
2.0.0.1+ds-3), from this folder:
    /usr/bin/python3 erfa_reference.py > erfa_reference.json

Everything here comes from ERFA, the open reference library of fundamental astronomy, with
UT1 taken equal to UTC (dut1 = 0) and the pole at the origin (xp = yp = 0), as dipline does:
  - lst:      gmst06 (IAU 2006 GMST) + the site's east longitude;
  - altaz:    a star's observed azimuth and altitude from atco13 (ICRS to observed: light
              deflection, annual and diurnal aberration, precession-nutation IAU 2006/2000A,
              Earth rotation), with the air pressure set to 0 so that no refraction is added;
  - sun:      the Sun's apparent direction as the Earth's heliocentric position from epv00
              reversed, taken one light time (about 8.3 min) earlier so that it carries the
              Sun's annual aberration, seen from the site; its RA/Dec referred to the mean equator
              and equinox of date by pmat06 (frame bias and IAU 2006 precession);
  - moon:     moon98 (GCRS), geocentric RA/Dec of date by pmat06, and seen from the site
              (the site's ITRS position by gd2gc on WGS84 subtracted after c2t06a);
              its illuminated fraction from the Sun-Moon-Earth angle with the epv00 Sun;
              its separation from each star, both in the site's horizon frame;
  - refraction: refco's A tan z + B tan^3 z at 1010 hPa, 10 C, dry air, 0.55 um (the
              conditions of Saemundsson's formula), for altitudes 15-85 degrees, where refco's
              model holds;
  - twilight: the times the Sun's altitude (the 'sun' chain above) crosses 0, -0.833, -6,
              -12 and -18 degrees between one local mean noon (0h UTC + 0.5 d - east
              longitude / 360) and the next, by sampling every 10 min and bisecting; a night
              with no crossing is written as null.
Sites are plain coordinates, not named observatories. The grids are fixed formulas, so the
file does not depend on any random generator.
"""
import json
import math
import warnings

import erfa
import numpy as np

DAY = erfa.DAYSEC

# (description, latitude deg, east longitude deg, height m)
SITES = [
    ("a site at 28.8 deg N", 28.76, -17.88, 2350.0),
    ("a site at 30.2 deg S", -30.17, -70.80, 2200.0),
    ("a site at 0.3 deg S", -0.30, 36.80, 1700.0),
    ("a site at 64.1 deg N", 64.13, -21.90, 50.0),
]
DATES = [(2026, 3, 20), (2026, 6, 21), (2027, 9, 15), (2028, 12, 21), (2030, 2, 10)]
HOURS = [0.0, 3.5, 7.25, 12.0, 18.75, 22.1]
STARS = [(0.0, 0.0), (83.82, -5.39), (201.3, -11.16), (279.23, 38.78), (37.95, 89.26), (310.36, 45.28)]
TWILIGHT = [0.0, -0.833, -6.0, -12.0, -18.0]


def utc_parts(y, m, d, hours):
    d1, d2 = erfa.cal2jd(y, m, d)
    return float(d1), float(d2) + hours / 24.0


def tt_of(u1, u2):
    a1, a2 = erfa.utctai(u1, u2)
    t1, t2 = erfa.taitt(a1, a2)
    return float(t1), float(t2)


def ut1_of(u1, u2):
    b1, b2 = erfa.utcut1(u1, u2, 0.0)
    return float(b1), float(b2)


def horizon(site, vec_itrs):
    """Azimuth (N through E) and altitude in degrees of an ITRS vector seen from the site."""
    _, lat, lon, _ = site
    p, l = math.radians(lat), math.radians(lon)
    up = np.array([math.cos(p) * math.cos(l), math.cos(p) * math.sin(l), math.sin(p)])
    east = np.array([-math.sin(l), math.cos(l), 0.0])
    north = np.array([-math.sin(p) * math.cos(l), -math.sin(p) * math.sin(l), math.cos(p)])
    v = vec_itrs / np.linalg.norm(vec_itrs)
    alt = math.degrees(math.asin(float(v @ up)))
    az = math.degrees(math.atan2(float(v @ east), float(v @ north))) % 360.0
    return az, alt, v


def unit_altaz(az, alt):
    """Unit vector in (north, east, up) of an azimuth and altitude in degrees."""
    a, h = math.radians(az), math.radians(alt)
    return np.array([math.cos(h) * math.cos(a), math.cos(h) * math.sin(a), math.sin(h)])


def site_itrs_au(site):
    _, lat, lon, h = site
    xyz = erfa.gd2gc(1, math.radians(lon), math.radians(lat), h)  # WGS84, metres
    return np.asarray(xyz) / erfa.DAU


def c2t(u1, u2):
    t1, t2 = tt_of(u1, u2)
    b1, b2 = ut1_of(u1, u2)
    return erfa.c2t06a(t1, t2, b1, b2, 0.0, 0.0)


def sun_gcrs(u1, u2):
    """The Sun's apparent geocentric direction (and distance in au): the Earth's heliocentric
    position reversed, taken one light time earlier, which is the annual aberration of the
    Sun to well under 0.1 arcsec."""
    t1, t2 = tt_of(u1, u2)  # TT for TDB: under 2 ms
    pvh, _ = erfa.epv00(t1, t2)
    tau = float(np.linalg.norm(pvh[0])) * erfa.DAU / erfa.CMPS / DAY
    pvh, _ = erfa.epv00(t1, t2 - tau)
    return -np.asarray(pvh[0])


def moon_gcrs(u1, u2):
    t1, t2 = tt_of(u1, u2)
    return np.asarray(erfa.moon98(t1, t2)[0])


def radec_of_date(u1, u2, v):
    t1, t2 = tt_of(u1, u2)
    w = erfa.pmat06(t1, t2) @ v
    ra, dec = erfa.c2s(w)
    return math.degrees(float(ra)) % 360.0, math.degrees(float(dec)), float(np.linalg.norm(v))


def sun_altaz(site, u1, u2):
    r = c2t(u1, u2)
    return horizon(site, r @ sun_gcrs(u1, u2) - site_itrs_au(site))


def star_altaz(site, u1, u2, ra, dec):
    _, lat, lon, h = site
    aob, zob, _, _, _, _ = erfa.atco13(math.radians(ra), math.radians(dec), 0.0, 0.0, 0.0, 0.0,
                                       u1, u2, 0.0, math.radians(lon), math.radians(lat), h,
                                       0.0, 0.0, 0.0, 0.0, 0.0, 0.55)
    return math.degrees(float(aob)) % 360.0, 90.0 - math.degrees(float(zob))


def crossings(site, y, m, d, h0):
    d1, d2 = erfa.cal2jd(y, m, d)
    start = float(d2) + 0.5 - site[2] / 360.0
    f = lambda x: sun_altaz(site, float(d1), x)[1] - h0
    step = 10.0 / 1440.0
    xs = [start + i * step for i in range(145)]
    fs = [f(x) for x in xs]
    evening = morning = None
    for a, b, fa, fb in zip(xs, xs[1:], fs, fs[1:]):
        if (fa > 0) == (fb > 0):
            continue
        lo, hi, flo = a, b, fa
        while hi - lo > 1e-7:  # 0.01 s
            mid = 0.5 * (lo + hi)
            fm = f(mid)
            if (fm > 0) == (flo > 0):
                lo, flo = mid, fm
            else:
                hi = mid
        x = [float(d1), 0.5 * (lo + hi)]
        if fa > 0 and evening is None:
            evening = x
        if fa <= 0:
            morning = x
    return evening, morning


def main():
    # ERFA flags dates more than 5 years past its own table's release as "dubious"; the
    # values are what ERFA computes with TAI-UTC held at 37 s, as dipline does.
    warnings.filterwarnings("ignore", message=".*dubious year.*")
    out = {
        "source": "ERFA via pyerfa; see erfa_reference.py",
        "erfa_version": erfa.__version__,
        "sites": [{"name": s[0], "lat": s[1], "lon": s[2], "height": s[3]} for s in SITES],
        "stars": [{"ra": r, "dec": d} for r, d in STARS],
        "twilight_altitudes": TWILIGHT,
    }
    lst, altaz, sun, moon, twilight = [], [], [], [], []
    for si, site in enumerate(SITES):
        for (y, m, d) in DATES:
            for hr in HOURS:
                u1, u2 = utc_parts(y, m, d, hr)
                t1, t2 = tt_of(u1, u2)
                b1, b2 = ut1_of(u1, u2)
                g = math.degrees(float(erfa.gmst06(b1, b2, t1, t2)))
                lst.append({"site": si, "utc": [u1, u2], "lst": (g + site[2]) % 360.0})
                stars_h = []
                for ra, dec in STARS:
                    az, alt = star_altaz(site, u1, u2, ra, dec)
                    altaz.append({"site": si, "utc": [u1, u2], "ra": ra, "dec": dec, "az": az, "alt": alt})
                    stars_h.append(unit_altaz(az, alt))
                saz, salt, _ = sun_altaz(site, u1, u2)
                sra, sdec, sdist = radec_of_date(u1, u2, sun_gcrs(u1, u2))
                sun.append({"site": si, "utc": [u1, u2], "ra": sra, "dec": sdec, "dist_au": sdist,
                            "az": saz, "alt": salt})
                r = c2t(u1, u2)
                mg = moon_gcrs(u1, u2)
                mra, mdec, mdist = radec_of_date(u1, u2, mg)
                maz, malt, _ = horizon(site, r @ mg - site_itrs_au(site))
                mh = unit_altaz(maz, malt)
                seps = [math.degrees(math.acos(max(-1.0, min(1.0, float(v @ mh))))) for v in stars_h]
                s = sun_gcrs(u1, u2)
                to_sun, to_earth = s - mg, -mg
                cosi = float(to_sun @ to_earth) / (np.linalg.norm(to_sun) * np.linalg.norm(to_earth))
                moon.append({"site": si, "utc": [u1, u2], "ra": mra, "dec": mdec, "dist_au": mdist,
                             "az": maz, "alt": malt, "illuminated": 0.5 * (1.0 + cosi), "sep": seps})
            for h0 in TWILIGHT:
                ev, mo = crossings(site, y, m, d, h0)
                twilight.append({"site": si, "date": [y, m, d], "altitude": h0, "evening": ev, "morning": mo})
    refa, refb = erfa.refco(1010.0, 10.0, 0.0, 0.55)
    refraction = []
    for alt in range(15, 90, 5):
        tz = math.tan(math.radians(90.0 - alt))
        refraction.append({"alt": float(alt), "refraction": math.degrees(refa * tz + refb * tz ** 3)})
    out.update(refraction=refraction, lst=lst, altaz=altaz, sun=sun, moon=moon, twilight=twilight)
    json.dump(out, __import__("sys").stdout, indent=1)
    print()


if __name__ == "__main__":
    main()
