#!/usr/bin/python3
"""Reference values of time scales and the barycentric correction for dipline's timescale tests.

Run with Debian's python3-erfa (pyerfa 2.0.0.1 over liberfa 2.0.0, Debian package
2.0.0.1+ds-3), from this folder:
    /usr/bin/python3 erfa_reference.py > erfa_reference.json

Everything here comes from ERFA, the open reference library of fundamental astronomy:
  - dat:      TAI-UTC at each date of dipline's leap-second table;
  - utctai, taitt: TT-UTC at instants across leap seconds (UTC as ERFA's two-part quasi-JD,
               in which a day holding a leap second is 86401 s long);
  - cal2jd, jd2cal: calendar date <-> Julian date;
  - dtdb:     TDB-TT at the geocentre (u = v = 0, so the observatory terms vanish);
  - epv00:    the Earth's barycentric position in au (BCRS, ICRS axes);
  - the barycentric correction built from them with the formula dipline uses:
        BJD_TDB = JD_UTC -> TAI -> TT -> TDB (TT + dtdb) + (r_earth . n) / c,
    r_earth from epv00 at TDB, n the unit vector to (RA, Dec) in ICRS, the observer at the
    geocentre, no Shapiro delay;
  - pmsafe:   a star's position moved by its proper motion from its catalogue epoch, and the
              BJD_TDB of its light built from the moved direction.
The grids are fixed formulas, so the file does not depend on any random generator.
"""
import json
import math
import warnings

import erfa
import numpy as np

AU_LIGHT_SECONDS = erfa.DAU / erfa.CMPS  # au/c in s
DAY = erfa.DAYSEC


def utc_to_tdb(u1, u2):
    a1, a2 = erfa.utctai(u1, u2)
    t1, t2 = erfa.taitt(a1, a2)
    dt = float(erfa.dtdb(t1, t2, 0.0, 0.0, 0.0, 0.0))
    return float(t1), float(t2) + dt / DAY, float(t2), dt


def main():
    # ERFA flags dates more than 5 years past its own table's release as "dubious"; the
    # table used here ends with 2017-01-01 and the values are what ERFA computes.
    warnings.filterwarnings("ignore", message=".*dubious year.*")
    out = {
        "source": "ERFA via pyerfa; see erfa_reference.py",
        "erfa_version": erfa.__version__,
        "au_light_seconds": AU_LIGHT_SECONDS,
    }

    # TAI-UTC at 0h of each day from 1972 to 2030 where it changes, and on the day before.
    leaps = []
    prev = None
    for y in range(1972, 2031):
        for m in (1, 7):
            d = float(erfa.dat(y, m, 1, 0.0))
            if prev is None or d != prev:
                leaps.append({"year": y, "month": m, "day": 1, "tai_minus_utc": d})
            prev = d
    out["leap_seconds"] = leaps

    # TT-UTC at instants around leap seconds (seconds of the UTC day given; 86400.5 lies
    # inside the leap second 23:59:60 of a day that has one).
    instants = []
    for (y, m, d) in [(1972, 1, 1), (1972, 6, 30), (1972, 7, 1), (1998, 12, 31), (1999, 1, 1),
                      (2008, 12, 31), (2012, 6, 30), (2015, 6, 30), (2016, 12, 31),
                      (2017, 1, 1), (2020, 3, 15), (2024, 12, 31)]:
        z1, z2 = erfa.cal2jd(y, m, d)
        for sec in (0.5, 43200.0, 86399.5, 86400.5):
            day_len = DAY
            a0 = erfa.dat(y, m, d, 0.0)
            j1, j2 = erfa.cal2jd(*erfa.jd2cal(z1, z2 + 1.5)[:3])
            y2, m2, d2, _ = erfa.jd2cal(j1, j2)
            a1 = erfa.dat(y2, m2, d2, 0.0)
            day_len += a1 - a0
            if sec >= day_len:
                continue
            # UTC as (JD of 0h, fraction of the day): the fraction keeps full precision.
            u1, u2 = float(z1 + z2), sec / day_len
            t1, t2 = erfa.taitt(*erfa.utctai(u1, u2))
            tt_minus_utc = ((t1 - u1) + t2) * DAY - sec
            instants.append({"date": f"{y:04d}-{m:02d}-{d:02d}", "utc_seconds": sec,
                             "utc_jd1": u1, "utc_jd2": u2,
                             "tt_jd1": float(t1), "tt_jd2": float(t2),
                             "tt_minus_utc": tt_minus_utc})
    out["tt_minus_utc"] = instants

    # Calendar <-> JD.
    cal = []
    for (y, m, d) in [(1900, 1, 1), (1900, 3, 1), (1972, 1, 1), (2000, 1, 1), (2000, 2, 29),
                      (2000, 3, 1), (2016, 12, 31), (2017, 1, 1), (2024, 2, 29), (2040, 12, 31),
                      (2100, 2, 28), (2100, 3, 1), (1582, 10, 15), (1, 1, 1)]:
        z1, z2 = erfa.cal2jd(y, m, d)
        cal.append({"year": y, "month": m, "day": d, "jd": float(z1 + z2), "mjd": float(z2)})
    out["cal2jd"] = cal
    back = []
    for jd in [2451544.5, 2451545.0, 2457754.4999, 2457754.75, 2460000.125, 2415020.0,
               2466154.9, 2488069.5]:
        y, m, d, f = erfa.jd2cal(jd, 0.0)
        back.append({"jd": jd, "year": int(y), "month": int(m), "day": int(d), "frac": float(f)})
    out["jd2cal"] = back

    # Dense grid over 2000-2040 (TT = TDB to 2 ms for these): TDB-TT and Earth's
    # barycentric position. Step 7.31 d, incommensurate with the month and the year.
    t0 = 2451545.0
    grid = []
    n = int((2466154.5 - t0) / 7.31) + 1
    for i in range(n):
        jd = t0 + 7.31 * i
        dt = float(erfa.dtdb(jd, 0.0, 0.0, 0.0, 0.0, 0.0))
        _, pvb = erfa.epv00(jd, 0.0)
        p = [round(float(x), 13) for x in pvb[0]]
        grid.append([jd, dt, p[0], p[1], p[2]])
    out["grid_columns"] = ["tt_or_tdb_jd", "tdb_minus_tt_s", "earth_bary_x_au",
                           "earth_bary_y_au", "earth_bary_z_au"]
    out["grid"] = grid

    # BJD_TDB for 6 directions x 20 UTC dates over 2000-2040.
    dirs = [(0.0, 0.0), (90.0, 23.44), (270.0, -66.56), (123.4, 45.6),
            (299.9, -12.3), (45.0, 89.0)]
    bjd = []
    for k in range(20):
        mjd = 51544.0 + 13.0 + 741.37 * k  # 2000-01-14 onwards, to 2040
        frac = ((k * 0.618034) % 1.0)
        u1, u2 = erfa.DJM0 + mjd, frac
        tdb1, tdb2, _, dt = utc_to_tdb(u1, u2)
        _, pvb = erfa.epv00(tdb1, tdb2)
        for (ra, dec) in dirs:
            a, dd = math.radians(ra), math.radians(dec)
            n_hat = np.array([math.cos(dd) * math.cos(a), math.cos(dd) * math.sin(a), math.sin(dd)])
            romer = float(np.dot(pvb[0], n_hat)) * AU_LIGHT_SECONDS
            b2 = tdb2 + romer / DAY
            corr = ((tdb1 - u1) + (b2 - u2)) * DAY
            bjd.append({"utc_jd1": u1, "utc_jd2": u2, "ra_deg": ra, "dec_deg": dec,
                        "bjd_tdb_jd1": tdb1, "bjd_tdb_jd2": b2,
                        "bjd_minus_utc_s": corr, "romer_s": romer, "tdb_minus_tt_s": dt})
    out["bjd"] = bjd

    # Proper motion: positions at epoch J2016.0 moved by pmsafe (space motion, zero radial
    # velocity; the parallax given only sets the distance) to dates over 2000-2040, and the
    # BJD_TDB built from the moved direction. pmsafe takes dRA/dt in rad/yr, not mu_alpha*.
    stars = [(269.452, 4.694, -798.6, 10328.1, 0.5469), (164.12, -7.05, 2500.0, -1500.0, 0.1),
             (10.0, 85.0, 300.0, 200.0, 0.02)]
    moved = []
    ep1 = 2451545.0 + 16.0 * 365.25  # J2016.0, TDB
    for (ra, dec, pma, pmd, px) in stars:
        pmr = math.radians(pma / 3.6e6) / math.cos(math.radians(dec))
        pmdr = math.radians(pmd / 3.6e6)
        for k in range(5):
            mjd = 51544.0 + 13.0 + 3650.0 * k + 91.7 * k
            u1, u2 = erfa.DJM0 + mjd, 0.3
            tdb1, tdb2, _, _ = utc_to_tdb(u1, u2)
            ra2, dec2, _, _, _, _ = erfa.pmsafe(math.radians(ra), math.radians(dec), pmr, pmdr, px, 0.0,
                                                   ep1, 0.0, tdb1, tdb2)
            ra2, dec2 = float(ra2), float(dec2)
            _, pvb = erfa.epv00(tdb1, tdb2)
            n_hat = np.array([math.cos(dec2) * math.cos(ra2), math.cos(dec2) * math.sin(ra2), math.sin(dec2)])
            romer = float(np.dot(pvb[0], n_hat)) * AU_LIGHT_SECONDS
            moved.append({"ra_deg": ra, "dec_deg": dec, "pm_ra_cosdec_mas_yr": pma, "pm_dec_mas_yr": pmd,
                          "epoch_jyear": 2016.0, "utc_jd1": u1, "utc_jd2": u2,
                          "ra_now_deg": math.degrees(ra2) % 360.0, "dec_now_deg": math.degrees(dec2),
                          "bjd_tdb_jd1": tdb1, "bjd_tdb_jd2": tdb2 + romer / DAY})
    out["proper_motion"] = moved
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
