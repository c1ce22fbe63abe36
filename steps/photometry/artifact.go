package photometry

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/lightcurve"
)

// The artifact's encoding: its own tag and format version, bumped with any layout change.
const (
	artifactTag     = "photometry"
	artifactVersion = 2
)

// SegmentStats are the per-segment facts the light curve itself does not keep.
type SegmentStats struct {
	// Cadence is the median time between successive kept points, in days.
	Cadence float64
	// Dropped counts this segment's rows that were not kept, by reason.
	Dropped lightcurve.Dropped
}

// Result is the photometry step's artifact: the light curve and, for each of its segments
// in the same order, its statistics.
type Result struct {
	LC    *lightcurve.LightCurve
	Stats []SegmentStats
}

// LightCurve implements lightcurve.Source.
func (r *Result) LightCurve() *lightcurve.LightCurve { return r.LC }

// Encode writes the canonical encoding.
func (r *Result) Encode() []byte {
	w := codec.NewWriter(artifactTag, artifactVersion)
	r.LC.Write(w)
	w.Uint64(uint64(len(r.Stats)))
	for _, s := range r.Stats {
		w.Float(s.Cadence)
		lightcurve.WriteDropped(w, s.Dropped)
	}
	return w.Bytes()
}

// DecodeResult reads an encoding written by Encode; a truncated or foreign record is an
// error.
func DecodeResult(b []byte) (*Result, error) {
	rd := codec.NewReader(b, artifactTag, artifactVersion)
	res := &Result{LC: lightcurve.Read(rd)}
	n := rd.Uint64()
	if n != uint64(len(res.LC.Segments)) {
		if err := rd.Err(); err != nil {
			return nil, fmt.Errorf("photometry artifact: %w", err)
		}
		return nil, fmt.Errorf("photometry artifact: %d segment statistics for %d segments", n, len(res.LC.Segments))
	}
	for i := uint64(0); i < n; i++ {
		var s SegmentStats
		s.Cadence = rd.Float()
		s.Dropped = lightcurve.ReadDropped(rd)
		res.Stats = append(res.Stats, s)
	}
	if err := rd.Err(); err != nil {
		return nil, fmt.Errorf("photometry artifact: %w", err)
	}
	if err := res.LC.Validate(); err != nil {
		return nil, fmt.Errorf("photometry artifact: %w", err)
	}
	return res, nil
}

// Figures lists, per segment, the points kept, the median cadence and the exposure (in
// minutes) and the rows dropped by reason, then the whole light curve's baseline in days.
func (r *Result) Figures() []steps.Figure {
	var out []steps.Figure
	for i, s := range r.LC.Segments {
		st := r.Stats[i]
		p := "segment" + steps.FigureKey(s.ID) + "."
		out = append(out,
			steps.Figure{Name: p + "points", Value: float64(s.Len()), Doc: "points kept"},
			steps.Figure{Name: p + "cadence", Value: st.Cadence * 1440, Unit: "min", Doc: "median time between points"},
			steps.Figure{Name: p + "exposure", Value: s.Exposure * 1440, Unit: "min", Doc: "integration time of one point"},
			steps.Figure{Name: p + "dropped_flagged", Value: float64(st.Dropped.Flagged), Doc: "rows dropped by their quality flag"},
			steps.Figure{Name: p + "dropped_unusable", Value: float64(st.Dropped.Unusable), Doc: "rows dropped for a missing or non-finite time, flux or error, or a flux no star gives"},
			steps.Figure{Name: p + "dropped_bad_error", Value: float64(st.Dropped.BadError), Doc: "rows dropped for a zero or negative error"},
			steps.Figure{Name: p + "dropped_duplicate_time", Value: float64(st.Dropped.Duplicate), Doc: "rows dropped because an earlier row of the file has the same time (the first is kept)"},
		)
	}
	out = append(out, steps.Figure{Name: "baseline", Value: r.LC.Baseline(), Unit: "d", Doc: "last time minus first time"})
	return out
}

// Cautions implements steps.Cautioner: segments of one band and instrument that overlap in
// time, which are most often the same photometry twice (one sector exported at two
// cadences, say), so that its points would count twice.
func (r *Result) Cautions() []string {
	var out []string
	segs := r.LC.Segments
	for i := range segs {
		for j := i + 1; j < len(segs); j++ {
			a, b := &segs[i], &segs[j]
			if a.Band != b.Band || a.Instrument != b.Instrument || a.Len() == 0 || b.Len() == 0 {
				continue
			}
			lo := math.Max(a.Time[0], b.Time[0])
			hi := math.Min(a.Time[a.Len()-1], b.Time[b.Len()-1])
			if hi > lo {
				out = append(out, fmt.Sprintf("segments %d and %d overlap in time for %.3g d with the same band and instrument; if they are the same photometry (one stretch at two cadences, say), its points count twice and the errors come out too small: keep one", i+1, j+1, hi-lo))
			}
		}
	}
	return out
}
