// Package lightcurve is the light-curve type that photometry, detrend, search and later
// steps pass along: segments of times, relative fluxes and errors, each with its exposure
// time, band and origin, all on one stated time scale and reference epoch. It knows how to
// encode itself canonically; it does not read files (photometry does) or filter (detrend).
package lightcurve

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"dipline/steps/internal/codec"
)

// Segment is one stretch of photometry from one file (or one FITS extension).
type Segment struct {
	// ID names the segment for people: the user's label or "1", "2", … in file order.
	ID string
	// Band is the photometric band, e.g. "survey-red"; empty when unknown.
	Band string
	// Instrument is the instrument or sector id from the file's header, if any.
	Instrument string
	// Exposure is the integration time of one point in days (not just the cadence).
	Exposure float64
	// CrowdingCorrected says the flux was already corrected for light of other stars.
	CrowdingCorrected bool
	// Contamination is the ratio of contaminating to target flux when known, else NaN.
	Contamination float64
	// Time is mid-exposure time in days since the light curve's reference epoch, sorted.
	Time []float64
	// Flux is relative flux (normalised to a median of 1 by photometry).
	Flux []float64
	// Err is the one-sigma error of Flux.
	Err []float64
}

// Len is the number of points.
func (s *Segment) Len() int { return len(s.Time) }

// Dropped counts the rows photometry did not keep, by reason.
type Dropped struct {
	// Unusable counts a missing or non-finite time, flux or error (NaN, ±Inf, a TNULL
	// value), or a flux no star can give (see the photometry step's usableRows).
	Unusable  int
	Flagged   int // a quality flag under the mask was set
	BadError  int // a zero or negative error
	Duplicate int // a time already taken by an earlier row of the same file
}

// Total is the number of rows dropped.
func (d Dropped) Total() int { return d.Unusable + d.Flagged + d.BadError + d.Duplicate }

// Add returns the sums of d's and o's counts.
func (d Dropped) Add(o Dropped) Dropped {
	return Dropped{Unusable: d.Unusable + o.Unusable, Flagged: d.Flagged + o.Flagged,
		BadError: d.BadError + o.BadError, Duplicate: d.Duplicate + o.Duplicate}
}

// write and readDropped keep the counts' encoding in one place.
func (d Dropped) write(w *codec.Writer) {
	for _, v := range []int{d.Unusable, d.Flagged, d.BadError, d.Duplicate} {
		w.Int(int64(v))
	}
}

// WriteDropped appends the counts to w, for artifacts that keep them apart from a light curve.
func WriteDropped(w *codec.Writer, d Dropped) { d.write(w) }

// ReadDropped reads counts written by WriteDropped.
func ReadDropped(r *codec.Reader) Dropped {
	return Dropped{Unusable: int(r.Int()), Flagged: int(r.Int()), BadError: int(r.Int()), Duplicate: int(r.Int())}
}

// LightCurve is a set of segments on one time scale and reference epoch.
type LightCurve struct {
	// TimeScale is the scale and origin of the times, e.g. "BJD_TDB".
	TimeScale string
	// RefInt and RefFrac are the Julian date of time zero, split to keep precision.
	RefInt  int64
	RefFrac float64
	// Segments are ordered by their first time.
	Segments []Segment
	// Dropped counts rows removed on reading, over all segments.
	Dropped Dropped
}

// Len is the total number of points.
func (lc *LightCurve) Len() int {
	n := 0
	for i := range lc.Segments {
		n += lc.Segments[i].Len()
	}
	return n
}

// Span returns the first and last time.
func (lc *LightCurve) Span() (first, last float64) {
	first, last = math.Inf(1), math.Inf(-1)
	for _, s := range lc.Segments {
		if len(s.Time) > 0 {
			first = math.Min(first, s.Time[0])
			last = math.Max(last, s.Time[len(s.Time)-1])
		}
	}
	return first, last
}

// Baseline is last minus first time in days.
func (lc *LightCurve) Baseline() float64 {
	f, l := lc.Span()
	if l < f {
		return 0
	}
	return l - f
}

// Flat returns all points of all segments concatenated in time order, with the index of
// the segment each came from.
func (lc *LightCurve) Flat() (t, f, e []float64, seg []int) {
	n := lc.Len()
	t, f, e, seg = make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]int, 0, n)
	for i, s := range lc.Segments {
		t = append(t, s.Time...)
		f = append(f, s.Flux...)
		e = append(e, s.Err...)
		for range s.Time {
			seg = append(seg, i)
		}
	}
	if !sort.Float64sAreSorted(t) {
		idx := make([]int, n)
		for i := range idx {
			idx[i] = i
		}
		sort.SliceStable(idx, func(a, b int) bool { return t[idx[a]] < t[idx[b]] })
		t2, f2, e2, s2 := make([]float64, n), make([]float64, n), make([]float64, n), make([]int, n)
		for j, i := range idx {
			t2[j], f2[j], e2[j], s2[j] = t[i], f[i], e[i], seg[i]
		}
		t, f, e, seg = t2, f2, e2, s2
	}
	return t, f, e, seg
}

// Validate checks the invariants other steps rely on.
func (lc *LightCurve) Validate() error {
	for _, s := range lc.Segments {
		if len(s.Flux) != len(s.Time) || len(s.Err) != len(s.Time) {
			return fmt.Errorf("segment %s: time, flux and error lengths differ", s.ID)
		}
		if !sort.Float64sAreSorted(s.Time) {
			return fmt.Errorf("segment %s: times are not sorted", s.ID)
		}
	}
	return nil
}

const (
	tag     = "lightcurve"
	version = 2
)

// Write appends the light curve to w (for artifacts that embed one).
func (lc *LightCurve) Write(w *codec.Writer) {
	w.String(lc.TimeScale)
	w.Int(lc.RefInt)
	w.Float(lc.RefFrac)
	lc.Dropped.write(w)
	w.Uint64(uint64(len(lc.Segments)))
	for _, s := range lc.Segments {
		w.String(s.ID)
		w.String(s.Band)
		w.String(s.Instrument)
		w.Float(s.Exposure)
		w.Bool(s.CrowdingCorrected)
		w.Float(s.Contamination)
		w.Floats(s.Time)
		w.Floats(s.Flux)
		w.Floats(s.Err)
	}
}

// Read reads a light curve written by Write.
func Read(r *codec.Reader) *LightCurve {
	lc := &LightCurve{}
	lc.TimeScale = r.String()
	lc.RefInt = r.Int()
	lc.RefFrac = r.Float()
	lc.Dropped = ReadDropped(r)
	n := r.Uint64()
	if n > 1<<20 {
		n = 0
	}
	for i := uint64(0); i < n; i++ {
		var s Segment
		s.ID = r.String()
		s.Band = r.String()
		s.Instrument = r.String()
		s.Exposure = r.Float()
		s.CrowdingCorrected = r.Bool()
		s.Contamination = r.Float()
		s.Time = r.Floats()
		s.Flux = r.Floats()
		s.Err = r.Floats()
		lc.Segments = append(lc.Segments, s)
	}
	return lc
}

// Encode returns the canonical encoding of a bare light curve.
func (lc *LightCurve) Encode() []byte {
	w := codec.NewWriter(tag, version)
	lc.Write(w)
	return w.Bytes()
}

// Decode reads a bare light curve.
func Decode(b []byte) (*LightCurve, error) {
	r := codec.NewReader(b, tag, version)
	lc := Read(r)
	if err := r.Err(); err != nil {
		return nil, err
	}
	return lc, lc.Validate()
}

// Source is implemented by every artifact that carries a light curve, so that a step can
// take its input from photometry or from detrend alike.
type Source interface {
	LightCurve() *LightCurve
}

// Variability is the star's own periodic variability (rotating spots, pulsation) as a
// detrend step measured it in the trend it removed. A signal at one of these periods, or at
// a small multiple or fraction of one, is more likely what the trend left of the star than
// a transit.
type Variability struct {
	// Periods are the strongest periods of the trend, strongest first, in days; empty when
	// none stands out of the periodogram's noise.
	Periods []float64
	// Amplitudes are the semi-amplitudes of the sinusoids at Periods, relative flux.
	Amplitudes []float64
}

// VariabilitySource is implemented by artifacts that measured the star's own variability
// (a detrend step's result).
type VariabilitySource interface {
	Variability() Variability
}

// Frame names a time axis: times are days since the Julian date RefInt + RefFrac on
// TimeScale. Artifacts that report times (a search's epochs, a fit's mid-times) carry one.
type Frame struct {
	TimeScale string
	RefInt    int64
	RefFrac   float64
}

// Frame returns the light curve's time axis.
func (lc *LightCurve) Frame() Frame {
	return Frame{TimeScale: lc.TimeScale, RefInt: lc.RefInt, RefFrac: lc.RefFrac}
}

// Since describes the axis for people: "days since BJD_TDB 2460000.5".
func (f Frame) Since() string {
	frac := ""
	if f.RefFrac != 0 {
		frac = strings.TrimPrefix(strconv.FormatFloat(f.RefFrac, 'f', -1, 64), "0")
	}
	return fmt.Sprintf("days since %s %d%s", f.TimeScale, f.RefInt, frac)
}

// Write appends the frame to w.
func (f Frame) Write(w *codec.Writer) {
	w.String(f.TimeScale)
	w.Int(f.RefInt)
	w.Float(f.RefFrac)
}

// ReadFrame reads a frame written by Frame.Write.
func ReadFrame(r *codec.Reader) Frame {
	return Frame{TimeScale: r.String(), RefInt: r.Int(), RefFrac: r.Float()}
}
