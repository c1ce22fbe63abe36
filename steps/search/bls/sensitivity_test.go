package bls

import (
	"math"
	"os"
	"strconv"
	"testing"
)

// TestFastFoldKeepsTheSensitivity compares the two methods over one injection grid and on
// pure noise, on one-year light curves at 30 minutes (17,532 points, white noise of
// 1000 ppm) around a red dwarf of 4 ρ☉, searched from 0.4 d to half the span with the
// default threshold: each injection a box of random period (log-uniform, 0.4–180 d), epoch
// and impact parameter (0–0.9, the duration per the density), its depth set for an SNR
// drawn from 7 to 15; recovered when the first signal's period is within 0.5 % of the
// injected one and its epoch within half a duration. The same light curves go to both
// methods, so the difference is counted pair by pair. On noise, the false alarms are the
// light curves on which the first pass reaches the threshold.
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run KeepsTheSensitivity -v -timeout 2h
//
// (DIPLINE_INJECTIONS sets the injections and the noise light curves, default 300 each.)
func TestFastFoldKeepsTheSensitivity(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("injection comparison of the two methods; set DIPLINE_LONG=1 to run it")
	}
	n := 300
	if v, err := strconv.Atoi(os.Getenv("DIPLINE_INJECTIONS")); err == nil && v > 0 {
		n = v
	}
	density := 4 * solarDensity
	type outcome struct{ fast, direct, fastHarm, directHarm, fastNoise, directNoise bool }
	out := make([]outcome, n)
	run := func(i int) {
		d, signal, noise := comparisonCase(i, density)
		o := Options{Density: density, PeriodMin: 0.4, PeriodMax: 182, Oversampling: 3,
			MaxSignals: 1, MaskFactor: 2}
		for _, m := range []Method{MethodFast, MethodDirect} {
			o.Method = m
			res, err := Search(signal, o, nil, nil)
			if err != nil {
				t.Error(err)
				return
			}
			hit, harm := recovered(res, d)
			nres, err := Search(noise, o, nil, nil)
			if err != nil {
				t.Error(err)
				return
			}
			alarm := nres.Passes[0].Found != nil || nres.Passes[0].SDE >= nres.Threshold
			if m == MethodFast {
				out[i].fast, out[i].fastHarm, out[i].fastNoise = hit, harm, alarm
			} else {
				out[i].direct, out[i].directHarm, out[i].directNoise = hit, harm, alarm
			}
		}
	}
	forEach(n, run)
	var f, d, both, onlyF, onlyD, fh, dh, fa, da int
	for _, o := range out {
		f, d = f+b2i(o.fast), d+b2i(o.direct)
		both, onlyF, onlyD = both+b2i(o.fast && o.direct), onlyF+b2i(o.fast && !o.direct), onlyD+b2i(o.direct && !o.fast)
		fh, dh = fh+b2i(o.fastHarm), dh+b2i(o.directHarm)
		fa, da = fa+b2i(o.fastNoise), da+b2i(o.directNoise)
	}
	t.Logf("%d injections (SNR 7–15, 0.4–180 d): fast fold recovers %d, fold-and-scan %d (both %d, fast only %d, fold-and-scan only %d); at a harmonic: %d and %d",
		n, f, d, both, onlyF, onlyD, fh, dh)
	t.Logf("%d noise light curves: false alarms at the default threshold (%.2f here): fast fold %d, fold-and-scan %d", n, DefaultThreshold(oneYearGrid().N), fa, da)
	if float64(f) < 0.98*float64(d) {
		t.Errorf("the fast fold recovers %d, fold-and-scan %d: more than 2 %% fewer", f, d)
	}
}

// comparisonCase is the comparison's i-th pair of one-year light curves at 30 minutes:
// one with a box of random period (log-uniform, 0.4–180 d), epoch, impact parameter (0–0.9)
// and SNR (7–15), and one of noise alone.
func comparisonCase(i int, density float64) (d dip, signal, noise Series) {
	u := normals{state: uint64(900_000 + i)}
	per := 0.4 * math.Pow(180/0.4, u.uniform())
	b := 0.9 * u.uniform()
	d = dip{period: per, epoch: per * u.uniform()}
	d.duration = CentralDuration(per, density) * math.Sqrt(1-b*b)
	snr := 7 + 8*u.uniform()
	d.depth = snr * 1e-3 / math.Sqrt(365/per*d.duration/(30.0/1440))
	return d, synth(uint64(700_000+i), 365, 30.0/1440, 1e-3, 0, d), synth(uint64(800_000+i), 365, 30.0/1440, 1e-3, 0)
}

// oneYearGrid is the grid of the comparison's light curves.
func oneYearGrid() Grid {
	s := synth(1, 365, 30.0/1440, 1e-3, 0)
	g, _ := NewGrid(4*solarDensity, s.Time[len(s.Time)-1]-s.Time[0], 0.4, 182, 3)
	return g
}

// recovered says whether the first signal is the injected one (period within 0.5 %, epoch
// within half a duration) or a harmonic of it (P/2 or 2P within 0.5 %).
func recovered(res *Result, d dip) (hit, harmonic bool) {
	if len(res.Passes) == 0 || res.Passes[0].Found == nil {
		return false, false
	}
	tm := res.Passes[0].Found.Timing
	if math.Abs(tm.Period/d.period-1) < 0.005 {
		x := (tm.Epoch - d.epoch) / d.period
		return math.Abs(x-math.Round(x))*d.period < d.duration/2, false
	}
	for _, r := range []float64{0.5, 2} {
		if math.Abs(tm.Period/(r*d.period)-1) < 0.005 {
			return false, true
		}
	}
	return false, false
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// TestAProfileNearZeroFrequencyRefinesWithoutFault is the light curve on which the
// sensitivity comparison first found the refinement stepping past zero frequency (a peak
// near the longest period, its profile flat): the search must end with or without a
// signal, never with a fault, by either method.
func TestAProfileNearZeroFrequencyRefinesWithoutFault(t *testing.T) {
	const i = 44
	density := 4 * solarDensity
	_, signal, noise := comparisonCase(i, density)
	for _, s := range []Series{signal, noise} {
		for _, m := range []Method{MethodFast, MethodDirect} {
			o := Options{Density: density, PeriodMin: 0.4, PeriodMax: 182, Oversampling: 3,
				MaxSignals: 1, MaskFactor: 2, Method: m}
			res, err := Search(s, o, nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			if f := res.Passes[0].Found; f != nil && !(f.Timing.Period > 0) {
				t.Errorf("%v: a signal of period %v", m, f.Timing.Period)
			}
		}
	}
}
