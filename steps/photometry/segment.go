package photometry

import (
	"fmt"
	"math"
	"sort"
	"strconv"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
)

// Julian dates outside [minJD, maxJD] are refused as the start of a light curve: JD 2 000 000
// falls in AD 763 and JD 3 000 000 in AD 3501 (from memory). A time outside is almost
// always a relative time read without its reference, or a reference added twice.
const (
	minJD = 2.0e6
	maxJD = 3.0e6
)

// madToSigma turns the median absolute deviation of normal deviates into their standard
// deviation: 1/Φ⁻¹(3/4) = 1.4826 (common practice).
const madToSigma = 1.4826

// maxExposureRatio is how far a header exposure may exceed the median cadence before it is
// taken for a total over the file rather than one point's integration: 1 %, for rounding.
const maxExposureRatio = 1.01

// noteFunc records a derived default (env.Note).
type noteFunc func(format string, args ...any)

// rawSegment is one file's columns before any row is dropped, with what its header says.
type rawSegment struct {
	file  string           // the name as written, for messages
	where func(int) string // names row i for messages: "x.csv:12" or "x.fits HDU 1 row 13"
	cols  [nRoles]string   // the column names used ("" when absent)

	// time is in days since the reference; err and flag are nil when the file has none.
	time, flux, err, flag []float64

	hasRef  bool // refInt + refFrac is the Julian date of time 0; else times are full JDs
	refInt  int64
	refFrac float64
	refFrom string // for messages: "time_zero", "BJDREFI/BJDREFF", …

	exposure   []exposureCandidate // header values in order of preference
	band       string
	instrument string
}

// exposureCandidate is one header keyword that may give the exposure of one point.
type exposureCandidate struct {
	key  string  // e.g. "EXPOSURE"
	days float64 // converted
	text string  // as written, with its unit, for notes
}

// built is a finished segment before segments are put on one reference.
type built struct {
	seg     lightcurve.Segment
	stats   SegmentStats
	refInt  int64
	refFrac float64
	file    string
}

// splitJD splits a Julian date into its integer part and a fraction in [0, 1).
func splitJD(i, f float64) (int64, float64) {
	ii := math.Floor(i)
	f += i - ii // exact for the integral part of a date in float64
	fi := math.Floor(f)
	return int64(ii) + int64(fi), f - fi
}

// median returns the median of v, sorting scratch (a copy of v).
func median(v, scratch []float64) float64 {
	scratch = append(scratch[:0], v...)
	sort.Float64s(scratch)
	n := len(scratch)
	if n == 0 {
		return math.NaN()
	}
	if n%2 == 1 {
		return scratch[n/2]
	}
	return (scratch[n/2-1] + scratch[n/2]) / 2
}

// diffs writes v[i+1] − v[i] into dst.
func diffs(dst, v []float64) []float64 {
	dst = dst[:0]
	for i := 1; i < len(v); i++ {
		dst = append(dst, v[i]-v[i-1])
	}
	return dst
}

// PointScatter estimates the white-noise error of one point from successive differences:
// 1.4826 × MAD(Δf) / √2. Differencing removes slow trends; the √2 undoes the doubling of the
// variance of a difference of two independent points (common practice).
func PointScatter(flux []float64) float64 {
	d := diffs(make([]float64, 0, len(flux)), flux)
	scratch := make([]float64, len(d))
	m := median(d, scratch)
	for i := range d {
		d[i] = math.Abs(d[i] - m)
	}
	return madToSigma * median(d, scratch) / math.Sqrt2
}

// flagBits reads a flag value as a bit pattern. An undefined flag (NaN, from TNULL or an
// empty field) sets every bit, so that any nonzero mask drops it.
func flagBits(v float64) (uint64, bool) {
	if math.IsNaN(v) {
		return ^uint64(0), true
	}
	if v != math.Trunc(v) || math.Abs(v) >= 1<<63 {
		return 0, false
	}
	return uint64(int64(v)), true
}

// dropDuplicateTimes keeps, among rows of equal time (keep is in time order, ties in file
// order), only the first in the file, counts the others in d.Duplicate and says so with the
// first example. Two measurements at one instant cannot both be right, and keeping both
// would weigh that instant twice; the first is kept rather than the mean so that no flux is
// invented, and the note says whether the dropped fluxes differed.
func dropDuplicateTimes(r *rawSegment, keep []int, d *lightcurve.Dropped, note noteFunc) []int {
	out := keep[:0]
	first, differ := -1, 0
	for k, i := range keep {
		if k > 0 && r.time[i] == r.time[out[len(out)-1]] {
			d.Duplicate++
			if first < 0 {
				first = i
			}
			if r.flux[i] != r.flux[out[len(out)-1]] {
				differ++
			}
			continue
		}
		out = append(out, i)
	}
	if d.Duplicate > 0 {
		note("%s: the time %s is also on an earlier row; %d row(s) repeating an earlier time dropped, the first of each kept (%d of them with a different flux)",
			r.where(first), strconv.FormatFloat(r.time[first], 'g', -1, 64), d.Duplicate, differ)
	}
	return out
}

// build drops the unusable rows of one file, sorts, normalises by the median flux,
// estimates errors if the file has none, and settles the cadence and exposure.
//
// A row is dropped for the first reason that applies, in this order: its flag AND the mask
// is nonzero; its time, flux or error is not finite (NaN, ±Inf, or a FITS TNULL value); its
// error is zero or negative; its flux is one no star gives (dropImpossibleFlux); its time
// repeats an earlier usable row's.
func build(cfg *Config, r *rawSegment, id string, note noteFunc) (built, error) {
	keep, d, err := usableRows(cfg, r, note)
	if err != nil {
		return built{}, err
	}
	keep = inTimeOrder(r, keep, note)
	keep = dropDuplicateTimes(r, keep, &d, note)
	if len(keep) < 2 {
		return built{}, steps.BadInputf("%s: every usable row has the same time; a segment needs at least 2 distinct times", r.file)
	}

	m := len(keep)
	s := lightcurve.Segment{
		ID: id, Band: cfg.band(), Instrument: r.instrument,
		CrowdingCorrected: cfg.CrowdingCorrected, Contamination: cfg.contamination(),
		Time: make([]float64, m), Flux: make([]float64, m), Err: make([]float64, m),
	}
	for k, i := range keep {
		s.Time[k], s.Flux[k] = r.time[i], r.flux[i]
		if r.err != nil {
			s.Err[k] = r.err[i]
		}
	}
	if s.Band == "" && r.band != "" {
		s.Band = r.band
		note("%s: band %q from the FITS FILTER keyword", r.file, r.band)
	}
	if err := settleReference(r, &s, r.where(keep[0]), note); err != nil {
		return built{}, err
	}
	if err := normalise(r, &s, note); err != nil {
		return built{}, err
	}
	cadence := median(diffs(make([]float64, 0, m), s.Time), make([]float64, m-1))
	if err := settleExposure(cfg, r, &s, cadence, note); err != nil {
		return built{}, err
	}
	return built{
		seg:    s,
		stats:  SegmentStats{Cadence: cadence, Dropped: d},
		refInt: r.refInt, refFrac: r.refFrac, file: r.file,
	}, nil
}

// usableRows lists the rows kept, counting the others by reason (see build), and refuses a
// file that leaves fewer than 2.
func usableRows(cfg *Config, r *rawSegment, note noteFunc) ([]int, lightcurve.Dropped, error) {
	n := len(r.time)
	keep := make([]int, 0, n)
	var d lightcurve.Dropped
	mask := cfg.flagMask()
	firstBad := -1
	for i := 0; i < n; i++ {
		if r.flag != nil {
			bits, ok := flagBits(r.flag[i])
			if !ok {
				return nil, d, steps.BadInputf("%s: column %s: %v is not a whole-number flag", r.where(i), r.cols[FlagCol], r.flag[i])
			}
			if bits&mask != 0 {
				d.Flagged++
				continue
			}
		}
		e := 1.0
		if r.err != nil {
			e = r.err[i]
		}
		if !finite(r.time[i]) || !finite(r.flux[i]) || !finite(e) {
			d.Unusable++
			continue
		}
		if e <= 0 {
			d.BadError++
			if firstBad < 0 {
				firstBad = i
			}
			continue
		}
		keep = append(keep, i)
	}
	if firstBad >= 0 {
		note("%s: column %s: %s is not a positive error; %d such rows dropped", r.where(firstBad), r.cols[ErrorCol], strconv.FormatFloat(r.err[firstBad], 'g', -1, 64), d.BadError)
	}
	keep = dropImpossibleFlux(r, keep, &d, note)
	if len(keep) < 2 {
		return nil, d, steps.BadInputf("%s: %d of %d rows are left (%d flagged, %d unusable, %d with a non-positive error); a segment needs at least 2",
			r.file, len(keep), n, d.Flagged, d.Unusable, d.BadError)
	}
	return keep, d, nil
}

// maxBrightening is the most a point may exceed the median flux and still be taken as the
// star's: no star brightens a hundredfold in a light curve taken for transits (the largest
// flares of cool dwarfs reach a few times their quiescent flux in red bands; from memory),
// so such a value is an instrument's or an export's fault.
const maxBrightening = 100

// maxImpossibleShare is the largest share of a file's rows that dropImpossibleFlux drops;
// beyond it the values are not a few faults but the file's own (a flux about zero, or noise
// reaching zero), and dropping them would bias what is left.
const maxImpossibleShare = 0.01

// dropImpossibleFlux drops rows whose flux no star gives while the file's median flux is
// positive: at or below zero (the star would have vanished; even a total eclipse leaves the
// companion's light) or above maxBrightening times the median. One such row among
// thousands is a fault that a box search reads as a dip of more than 100 % (or that ruins a
// fit); they are counted as unusable and the first is named. When more than
// maxImpossibleShare of the rows (and more than one) are such, they are kept and the note says the light curve
// is too noisy, or not a flux, for the rule to apply.
func dropImpossibleFlux(r *rawSegment, keep []int, d *lightcurve.Dropped, note noteFunc) []int {
	flux := make([]float64, len(keep))
	for k, i := range keep {
		flux[k] = r.flux[i]
	}
	med := median(flux, nil)
	if !(med > 0) {
		return keep // normalise refuses the file
	}
	impossible := func(f float64) bool { return f <= 0 || f > maxBrightening*med }
	var first, n int
	for _, i := range keep {
		if impossible(r.flux[i]) {
			if n == 0 {
				first = i
			}
			n++
		}
	}
	switch {
	case n == 0:
		return keep
	case float64(n) > math.Max(1, maxImpossibleShare*float64(len(keep))):
		note("%s: column %s: %d of %d rows (the first this one, %s) have a flux at or below zero or above %d times the median %s; they are kept, as so many are not a few faults: a light curve whose flux reaches zero is too noisy for a transit search to be trusted, or the column is not a flux",
			r.where(first), r.cols[FluxCol], n, len(keep), strconv.FormatFloat(r.flux[first], 'g', -1, 64), maxBrightening, strconv.FormatFloat(med, 'g', 6, 64))
		return keep
	}
	out := keep[:0]
	for _, i := range keep {
		if !impossible(r.flux[i]) {
			out = append(out, i)
		}
	}
	d.Unusable += n
	note("%s: column %s: a flux of %s while the median is %s; %d row(s) with a flux at or below zero or above %d times the median dropped, as no star gives one",
		r.where(first), r.cols[FluxCol], strconv.FormatFloat(r.flux[first], 'g', -1, 64), strconv.FormatFloat(med, 'g', 6, 64), n, maxBrightening)
	return out
}

// inTimeOrder sorts the kept rows by time (stably, so ties keep their file order) when
// the file did not, and says so.
func inTimeOrder(r *rawSegment, keep []int, note noteFunc) []int {
	for k := 1; k < len(keep); k++ {
		if r.time[keep[k]] < r.time[keep[k-1]] {
			sort.SliceStable(keep, func(a, b int) bool { return r.time[keep[a]] < r.time[keep[b]] })
			note("%s: rows are not in time order; sorted by time", r.file)
			break
		}
	}
	return keep
}

// settleReference refuses a first time that is no plausible Julian date, naming its row
// (firstAt), and for full Julian dates takes the first point's whole day as the reference.
func settleReference(r *rawSegment, s *lightcurve.Segment, firstAt string, note noteFunc) error {
	start := s.Time[0]
	if r.hasRef {
		start += float64(r.refInt) + r.refFrac
	}
	if start < minJD || start > maxJD {
		how := "with no reference given (no time_zero for a text file; no BJDREFI/BJDREFF, JDREF or MJDREF keyword in a FITS file)"
		if r.hasRef {
			how = fmt.Sprintf("with the reference JD %d + %g from %s", r.refInt, r.refFrac, r.refFrom)
		}
		hint := "state the Julian date of time 0 with time_zero, or remove it if the file holds full Julian dates"
		if v, _, ok := statedOffset(r.cols[TimeCol]); ok && !r.hasRef {
			hint = fmt.Sprintf("the time column's name, %q, says the times count from JD %s: write time_zero = %s if they do",
				r.cols[TimeCol], strconv.FormatFloat(v, 'f', -1, 64), strconv.FormatFloat(v, 'f', -1, 64))
		}
		return steps.BadInputf("%s: the earliest time, %g, %s is JD %.7g, not a plausible Julian date; %s (or mend the row, if this one time is damaged)",
			firstAt, s.Time[0], how, start, hint)
	}
	if !r.hasRef {
		// Full Julian dates: keep the whole day of the first point as the reference, so
		// that times are small; subtracting a whole number of days near the values is exact.
		day := math.Floor(s.Time[0])
		for k := range s.Time {
			s.Time[k] -= day
		}
		r.refInt, r.refFrac = int64(day), 0
		note("%s: times read as full Julian dates; reference set to JD %d, the first point's day", r.file, r.refInt)
	}
	return nil
}

// normalise divides flux and errors by the median flux and, for a file without errors,
// sets every error to the point-to-point scatter.
func normalise(r *rawSegment, s *lightcurve.Segment, note noteFunc) error {
	m := len(s.Flux)
	med := median(s.Flux, make([]float64, m))
	if !(med > 0) || math.IsInf(med, 0) {
		return steps.BadInputf("%s: column %s: the median flux is %g; relative flux needs a positive median", r.file, r.cols[FluxCol], med)
	}
	for k := range s.Flux {
		s.Flux[k] /= med
		s.Err[k] /= med
	}
	note("%s: flux and errors divided by the median flux %s", r.file, strconv.FormatFloat(med, 'g', 8, 64))
	if r.err != nil {
		return nil
	}
	if m < 3 {
		return steps.BadInputf("%s: no error column, and %d points are too few to estimate errors from their scatter", r.file, m)
	}
	sigma := PointScatter(s.Flux)
	if !(sigma > 0) || math.IsInf(sigma, 0) {
		return steps.BadInputf("%s: no error column, and the point-to-point scatter is %g, so no error can be estimated; add an error column", r.file, sigma)
	}
	for k := range s.Err {
		s.Err[k] = sigma
	}
	note("%s: no error column; every point's error set to %s (1.4826 × MAD of successive differences / √2 of the normalised flux)", r.file, strconv.FormatFloat(sigma, 'g', 4, 64))
	return nil
}

// settleExposure takes one point's exposure from the workflow, a header keyword no longer
// than the cadence, or the median cadence, in that order, and says which.
func settleExposure(cfg *Config, r *rawSegment, s *lightcurve.Segment, cadence float64, note noteFunc) error {
	if cfg.Exposure != nil {
		s.Exposure = *cfg.Exposure
		return nil
	}
	for _, c := range r.exposure {
		if c.days > 0 && c.days <= maxExposureRatio*cadence {
			s.Exposure = c.days
			note("%s: exposure %s of one point from the header keyword %s = %s", r.file, minutes(c.days), c.key, c.text)
			return nil
		}
		note("%s: header keyword %s = %s ignored as the exposure of one point: it is not between 0 and the median cadence %s", r.file, c.key, c.text, minutes(cadence))
	}
	if !(cadence > 0) {
		return steps.BadInputf("%s: the median time step is %g d, so no exposure can be derived from it; state exposure", r.file, cadence)
	}
	s.Exposure = cadence
	note("%s: exposure of one point taken as the median cadence, %s", r.file, minutes(cadence))
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// minutes formats days as minutes for notes.
func minutes(days float64) string {
	return strconv.FormatFloat(days*1440, 'g', 6, 64) + " min"
}

// combine orders segments by their first time and puts them on the reference of the
// earliest. Offsets are formed from the integer and fractional parts apart, so moving a
// segment by whole days loses nothing.
func combine(cfg *Config, bs []built, note noteFunc) *lightcurve.LightCurve {
	start := func(b *built) float64 {
		return float64(b.refInt) + b.refFrac + b.seg.Time[0]
	}
	sort.SliceStable(bs, func(i, j int) bool { return start(&bs[i]) < start(&bs[j]) })
	lc := &lightcurve.LightCurve{TimeScale: cfg.TimeScale, RefInt: bs[0].refInt, RefFrac: bs[0].refFrac}
	for i := range bs {
		b := &bs[i]
		if b.refInt != lc.RefInt || b.refFrac != lc.RefFrac {
			off := float64(b.refInt-lc.RefInt) + (b.refFrac - lc.RefFrac)
			for k := range b.seg.Time {
				b.seg.Time[k] += off
			}
			note("%s: times moved by %s d onto the reference JD %d + %g of %s", b.file, strconv.FormatFloat(off, 'g', -1, 64), lc.RefInt, lc.RefFrac, bs[0].file)
		}
		lc.Segments = append(lc.Segments, b.seg)
		lc.Dropped = lc.Dropped.Add(b.stats.Dropped)
	}
	return lc
}
