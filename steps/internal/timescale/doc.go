// Package timescale converts instants between the time scales a transit analysis meets:
// UTC, TAI, TT, TDB and the barycentric Julian date BJD_TDB of a target's light. It holds a
// leap-second table (TAI − UTC from 1972), Julian and modified Julian dates with the
// proleptic Gregorian calendar, the TDB − TT series of Fairhead & Bretagnon (1990) truncated
// to its main terms, and the Earth's barycentric position from planetary mean elements, each
// checked against ERFA (testdata/timescale/erfa_reference.py).
//
// A target may carry a proper motion from its catalogue epoch (Target.DirectionAt; within
// a thousandth of a mas of ERFA's pmsafe). It does not place the observer on the Earth (the
// geocentre stands in: up to 21 ms of light time and a few µs of TDB − TT are left out),
// apply parallax or the radial velocity's perspective term, add
// the Shapiro delay (tens of µs at most), or know UTC before 1972, where it refuses. BJD_TDB is
// within 0.05 s of an ERFA-built value over 2000–2040 (figures in the tests): ample for
// transit times, not the microseconds a pulsar timer needs. The main entry points are BJDTDB and its
// inverse UTCFromBJDTDB; UTCToTT, TDBMinusTT and EarthBarycentric are the parts.
package timescale
