package search

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/search/bls"
)

// Artifact is the search step's result: the grid, one periodogram per pass, and the
// signals found, in the order found (each the strongest left after masking the ones before).
type Artifact struct {
	// Frame is the time scale and reference epoch of the light curve: every epoch below is
	// in days since RefInt + RefFrac on TimeScale.
	Frame lightcurve.Frame
	// Grid is the frequency grid, identical for every pass.
	Grid bls.Grid
	// Cadence is the median spacing of the points searched, days.
	Cadence float64
	// Method is how the periodograms were computed (bls.MethodFast or bls.MethodDirect),
	// Threshold the SDE a peak had to reach.
	Method    bls.Method
	Threshold float64
	// FromStar is true when the grid's density is a star step's (star), false when it was
	// written as star_density or is the Sun's by default; RocheCut is true when the star's
	// Roche-type limit, longer than the default 0.2 d, set the shortest period searched
	// (no periods written). The caution on a giant's star_density reads them.
	FromStar, RocheCut bool
	// Passes holds one periodogram per pass; its power and durations are kept at float32
	// precision (seven digits, ample for plots), which keeps a four-year search's artifact
	// near 3 MB per pass.
	Passes []bls.Pass
}

func newArtifact(lc *lightcurve.LightCurve, r *bls.Result) *Artifact {
	a := &Artifact{
		Frame:   lc.Frame(),
		Grid:    r.Grid,
		Cadence: r.Cadence,
		Method:  r.Method, Threshold: r.Threshold,
		Passes: r.Passes,
	}
	for i := range a.Passes {
		round32(a.Passes[i].Power)
		round32(a.Passes[i].Duration)
	}
	return a
}

// round32 rounds every value to float32 precision in place, so that the artifact in memory
// equals the one decoded from its bytes.
func round32(v []float64) {
	for i, x := range v {
		v[i] = float64(float32(x))
	}
}

// Detections returns the signals found, with their errors and the evidence behind them.
func (a *Artifact) Detections() []bls.Detection {
	var out []bls.Detection
	for _, p := range a.Passes {
		if p.Found != nil {
			out = append(out, *p.Found)
		}
	}
	return out
}

// Signals returns the signals found, strongest first, in the shared form later steps take.
// Duration is the length of the best box: for a real transit it lies between the full
// (second to third contact) and total (first to last contact) durations.
func (a *Artifact) Signals() []signals.Signal {
	var out []signals.Signal
	for _, d := range a.Detections() {
		out = append(out, signals.Signal{
			Period: d.Timing.Period, Epoch: d.Timing.Epoch, Duration: d.Shape.Duration,
			Depth: d.Shape.Depth, DepthErr: d.Shape.DepthSigma,
			SNR: d.Strength.SNR, SDE: d.Strength.SDE, Transits: d.Strength.Transits,
		})
	}
	return out
}

// AssumedDensity is the star's mean density, g/cm³, that the grid and the box durations
// were built for (star_density, or the star step's with star); the vet step compares it
// with the star's.
func (a *Artifact) AssumedDensity() float64 { return a.Grid.Density }

// TriedDurations returns the shortest and longest box durations, in days, that the search
// scans at period p for a star of the given density on its light curve's cadence: at
// AssumedDensity, the ones it tried.
func (a *Artifact) TriedDurations(p, density float64) (lo, hi float64) {
	return bls.DurationRange(p, density, a.Cadence)
}

// SNRFormula is how the signals' SNR is defined, for the results schema.
const SNRFormula = "SNR = depth / σ_T × √N_tr, where σ_T is the standard deviation of the out-of-transit flux averaged in bins one transit duration long (so correlated noise on that time scale counts) and N_tr the number of transits with data; depth / σ_depth when fewer than 10 such bins exist"

// Figures lists n_freq and, per signal k (from 1, in the order found), its period, epoch,
// duration, depth, SNR, SDE and transits with data.
func (a *Artifact) Figures() []steps.Figure {
	figs := []steps.Figure{{Name: "n_freq", Value: float64(a.Grid.N),
		Doc: "number of trial frequencies of the grid uniform in f^(1/3) (Ofir 2014)"}}
	frame := a.Frame.Since()
	for k, d := range a.Detections() {
		p := fmt.Sprintf("signal%d.", k+1)
		figs = append(figs,
			steps.Figure{Name: p + "period", Value: d.Timing.Period, Sigma: d.Timing.PeriodSigma, Unit: "d",
				Doc: "orbital period; error from the profile likelihood of the box model"},
			steps.Figure{Name: p + "epoch", Value: d.Timing.Epoch, Sigma: d.Timing.EpochSigma, Unit: "d",
				Doc: "a mid-transit time near the middle of the data, " + frame + "; error of the box model"},
			steps.Figure{Name: p + "duration", Value: d.Shape.Duration * 24, Sigma: d.Shape.DurationSigma * 24, Unit: "h",
				Doc: "length of the best box, between the full and the total transit duration"},
			steps.Figure{Name: p + "depth", Value: d.Shape.Depth * 1e6, Sigma: d.Shape.DepthSigma * 1e6, Unit: "ppm",
				Doc: "weighted mean flux out of transit minus in transit"},
			steps.Figure{Name: p + "snr", Value: d.Strength.SNR,
				Doc: SNRFormula},
			steps.Figure{Name: p + "sde", Value: d.Strength.SDE,
				Doc: "signal detection efficiency of the periodogram peak: (peak − mean)/standard deviation over the spectrum after subtracting its slow trend (medians of 64 stretches of the grid)"},
			steps.Figure{Name: p + "transits", Value: float64(d.Strength.Transits),
				Doc: "transits with data: at least half the points their duration spans"},
		)
		figs = append(figs, checkFigures(p, d)...)
	}
	return figs
}

const (
	tag = "search"
	// format 2 adds each signal's rival periods and spread over its transits; 3 the method;
	// 4 the threshold; 5 why each pass's peak above the threshold gave no signal; 6 where
	// the density came from and whether the Roche-type limit set the shortest period.
	format = 6
	// maxPasses bounds the passes a decoder accepts (max_signals is at most 20).
	maxPasses = 64
)

// Encode returns the canonical encoding.
func (a *Artifact) Encode() []byte {
	w := codec.NewWriter(tag, format)
	a.Frame.Write(w)
	g := a.Grid
	w.Float(g.Density)
	w.Float(g.Baseline)
	w.Float(g.Oversampling)
	w.Float(g.FMin)
	w.Float(g.FMax)
	w.Float(g.Step)
	w.Int(int64(g.N))
	w.Float(a.Cadence)
	w.Int(int64(a.Method))
	w.Float(a.Threshold)
	w.Bool(a.FromStar)
	w.Bool(a.RocheCut)
	w.Uint64(uint64(len(a.Passes)))
	for _, p := range a.Passes {
		w.String(packFloat32(p.Power))
		w.String(packFloat32(p.Duration))
		w.Int(int64(p.Peak))
		w.Float(p.SDE)
		w.String(p.Refused)
		w.Bool(p.Found != nil)
		if d := p.Found; d != nil {
			for _, x := range []float64{d.Timing.Period, d.Timing.PeriodSigma, d.Timing.Epoch, d.Timing.EpochSigma,
				d.Shape.Duration, d.Shape.DurationSigma, d.Shape.Depth, d.Shape.DepthSigma,
				d.Strength.SDE, d.Strength.SNR, d.Strength.DeltaChi2, d.Strength.BinnedNoise} {
				w.Float(x)
			}
			w.Int(int64(d.Shape.InTransitPoints))
			w.Int(int64(d.Strength.Transits))
			writeChecks(w, d)
		}
	}
	return w.Bytes()
}

// packFloat32 writes the values as little-endian float32s, NaN in one form.
func packFloat32(v []float64) string {
	b := make([]byte, 4*len(v))
	for i, x := range v {
		bits := math.Float32bits(float32(x))
		if x != x {
			bits = 0x7fc00001
		} else if x == 0 {
			bits = 0
		}
		binary.LittleEndian.PutUint32(b[4*i:], bits)
	}
	return string(b)
}

func unpackFloat32(s string) []float64 {
	out := make([]float64, len(s)/4)
	for i := range out {
		out[i] = float64(math.Float32frombits(binary.LittleEndian.Uint32([]byte(s[4*i : 4*i+4]))))
	}
	return out
}

// Decode reads an artifact back; truncated, foreign or inconsistent bytes are an error.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads an artifact written by Encode.
func Decode(b []byte) (*Artifact, error) {
	r := codec.NewReader(b, tag, format)
	a := &Artifact{}
	a.Frame = lightcurve.ReadFrame(r)
	g := &a.Grid
	g.Density, g.Baseline, g.Oversampling = r.Float(), r.Float(), r.Float()
	g.FMin, g.FMax, g.Step = r.Float(), r.Float(), r.Float()
	n := r.Int()
	a.Cadence = r.Float()
	a.Method = bls.Method(r.Int())
	a.Threshold = r.Float()
	a.FromStar, a.RocheCut = r.Bool(), r.Bool()
	np := r.Uint64()
	if r.Err() == nil && a.Method != bls.MethodFast && a.Method != bls.MethodDirect {
		return nil, fmt.Errorf("search artifact: method %d is not one the search runs", a.Method)
	}
	if n < 0 || n > 1<<31 || np > maxPasses {
		return nil, fmt.Errorf("search artifact: %d frequencies and %d passes are out of range", n, np)
	}
	g.N = int(n)
	var bad error
	for k := uint64(0); k < np && bad == nil; k++ {
		var p bls.Pass
		pw, du := r.String(), r.String()
		p.Peak = int(r.Int())
		p.SDE = r.Float()
		p.Refused = r.String()
		if r.Bool() {
			d := &bls.Detection{}
			for _, x := range []*float64{&d.Timing.Period, &d.Timing.PeriodSigma, &d.Timing.Epoch, &d.Timing.EpochSigma,
				&d.Shape.Duration, &d.Shape.DurationSigma, &d.Shape.Depth, &d.Shape.DepthSigma,
				&d.Strength.SDE, &d.Strength.SNR, &d.Strength.DeltaChi2, &d.Strength.BinnedNoise} {
				*x = r.Float()
			}
			d.Shape.InTransitPoints = int(r.Int())
			d.Strength.Transits = int(r.Int())
			if err := readChecks(r, d); err != nil && bad == nil {
				bad = fmt.Errorf("search artifact: pass %d: %w", k+1, err)
			}
			p.Found = d
		}
		if len(pw) != 4*g.N || len(du) != 4*g.N || p.Peak < 0 || p.Peak >= max(g.N, 1) {
			bad = fmt.Errorf("search artifact: pass %d holds %d and %d values for %d frequencies (peak %d)", k+1, len(pw)/4, len(du)/4, g.N, p.Peak)
			break
		}
		p.Power, p.Duration = unpackFloat32(pw), unpackFloat32(du)
		a.Passes = append(a.Passes, p)
	}
	err := r.Err()
	switch {
	case errors.Is(err, codec.ErrShort):
		return nil, fmt.Errorf("search artifact: %w", err)
	case bad != nil:
		return nil, bad
	case err != nil:
		return nil, fmt.Errorf("search artifact: %w", err)
	}
	return a, nil
}
