package vet

import (
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/periodogram"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/synth"
)

// detrendedArtifact stands in for a detrend step's result: a light curve and the star's
// own variability it measured in its trend.
type detrendedArtifact struct {
	curveArtifact
	vb lightcurve.Variability
}

func (d detrendedArtifact) Variability() lightcurve.Variability { return d.vb }

// The spotted star of these tests is invented: it turns in 1.3 days, and its trend shows
// that period with a semi-amplitude of 0.5 %, under twice the planet's 2800 ppm box depth.
const starP = 1.3

var spotted = lightcurve.Variability{Periods: []float64{starP}, Amplitudes: []float64{0.005}}

// starInputs are the vet step's inputs for one signal at the given period (the planet's
// signal otherwise) on the planet's light curve, with the star's variability.
func starInputs(lc *lightcurve.LightCurve, period float64, vb lightcurve.Variability) steps.Inputs {
	sig := planetSignal()
	sig.Period = period
	in := inputs(lc, []signals.Signal{sig}, nil, nil, nil)
	in.Refs["light_curve"] = []steps.Artifact{detrendedArtifact{curveArtifact{lc}, vb}}
	return in
}

func TestASignalAtTheStarsPeriodIsCautioned(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	cases := []struct {
		name    string
		period  float64
		verdict string
		says    string
	}{
		{"a signal at the star's period, 0.03 % off", starP * 0.9997, steps.VerdictCaution, "the star's own period"},
		{"a signal at twice the star's period", 2 * starP, steps.VerdictCaution, "twice the star's period"},
		{"a signal at half the star's period", starP / 2, steps.VerdictCaution, "half the star's period"},
		{"a signal at a third of the star's period", starP / 3, steps.VerdictCaution, "a third of the star's period"},
		{"a signal at three times the star's period", 3 * starP, steps.VerdictCaution, "three times the star's period"},
		{"a signal at an unrelated period", planet.Period, steps.VerdictAgree, "not within the tolerance"},
		{"a signal 1.37 times the star's period", 1.37 * starP, steps.VerdictAgree, "not within the tolerance"},
	}
	for _, c := range cases {
		t.Run(c.name+" gives "+c.verdict, func(t *testing.T) {
			a, _ := run(t, starInputs(lc, c.period, spotted))
			got := verdict(t, a, "signal1", "star_period")
			if got.Verdict != c.verdict || !strings.Contains(got.Reason, c.says) {
				t.Errorf("%s: %s", got.Verdict, got.Reason)
			}
			if got.Verdict == steps.VerdictCaution && !strings.Contains(got.Reason, "seen in the trend the detrend removed") {
				t.Errorf("the reason does not say where the star's period comes from: %s", got.Reason)
			}
		})
	}
}

func TestTheFiguresGiveTheNearestMultipleAndTheRatio(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	a, _ := run(t, starInputs(lc, 2*starP*1.001, spotted))
	nearest := figure(t, a, "signal1.star_period.nearest")
	ratio := figure(t, a, "signal1.star_period.ratio")
	if nearest.Value != 2*starP || nearest.Unit != "d" || math.Abs(ratio.Value-2.002) > 1e-9 {
		t.Errorf("nearest %v %s, ratio %v; want 2.6 d and 2.002", nearest.Value, nearest.Unit, ratio.Value)
	}
	// The tolerance is P★/(4L) + D/T: L = 13 d, the longer of the two stretches either side
	// of the one-day gap (helpers_test.go: 0–13 d and 14–27 d at a 2-minute cadence), T the
	// baseline, 27 d, and D the signal's box duration.
	want := starP/(4*13) + planetSignal().Duration/27
	if tol := figure(t, a, "signal1.star_period.tolerance"); math.Abs(tol.Value-want) > 2e-4*want {
		t.Errorf("tolerance %v, want %v", tol.Value, want)
	}
	if amp := figure(t, a, "signal1.star_period.amplitude"); amp.Value != 0.005 {
		t.Errorf("amplitude %v", amp.Value)
	}
}

func TestAStrongStarMakesItsOwnPeriodDisagree(t *testing.T) {
	// A 3 % semi-amplitude over a 2800 ppm dip is 11 times the depth: at P★ and P★/2 the
	// data disagree; at 2P★, a multiple the star's light does not hold, a caution only.
	strong := lightcurve.Variability{Periods: []float64{starP}, Amplitudes: []float64{0.03}}
	lc := makeCurve(planetNoise, 4, planet)
	cases := []struct {
		name    string
		period  float64
		verdict string
	}{
		{"at the star's period", starP, steps.VerdictDisagree},
		{"at half the star's period", starP / 2, steps.VerdictDisagree},
		{"at twice the star's period", 2 * starP, steps.VerdictCaution},
	}
	for _, c := range cases {
		t.Run("a signal "+c.name+" gives "+c.verdict, func(t *testing.T) {
			a, _ := run(t, starInputs(lc, c.period, strong))
			got := verdict(t, a, "signal1", "star_period")
			if got.Verdict != c.verdict {
				t.Errorf("%s: %s", got.Verdict, got.Reason)
			}
			if got.Verdict == steps.VerdictDisagree && (!strings.Contains(got.Reason, "11 times the dip's depth") || figure(t, a, "signal1.disagree").Value != 1) {
				t.Errorf("reason %q, disagree count %v", got.Reason, figure(t, a, "signal1.disagree").Value)
			}
		})
	}
}

func TestAWeakStarIsSaidToBeUnlikelyToMakeTheDip(t *testing.T) {
	weak := lightcurve.Variability{Periods: []float64{starP}, Amplitudes: []float64{0.001}}
	a, _ := run(t, starInputs(makeCurve(planetNoise, 4, planet), starP, weak))
	got := verdict(t, a, "signal1", "star_period")
	if got.Verdict != steps.VerdictCaution || !strings.Contains(got.Reason, "below the dip's depth") {
		t.Errorf("%s: %s", got.Verdict, got.Reason)
	}
}

func TestWithoutTheStarsVariabilityTheTestIsNotRun(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	t.Run("a light curve from a step that does not measure it is not run, with the reason", func(t *testing.T) {
		a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, nil, nil, nil))
		got := verdict(t, a, "signal1", "star_period")
		if got.Verdict != NotRun || !strings.Contains(got.Reason, "does not measure the star's own variability") {
			t.Errorf("%s: %s", got.Verdict, got.Reason)
		}
	})
	t.Run("a detrend that found no period agrees", func(t *testing.T) {
		a, _ := run(t, starInputs(lc, starP, lightcurve.Variability{}))
		got := verdict(t, a, "signal1", "star_period")
		if got.Verdict != steps.VerdictAgree || !strings.Contains(got.Reason, "no period that stands out") {
			t.Errorf("%s: %s", got.Verdict, got.Reason)
		}
	})
	t.Run("a light curve too short for the other tests still runs it", func(t *testing.T) {
		short := &lightcurve.LightCurve{TimeScale: "BJD_TDB", Segments: []lightcurve.Segment{{ID: "1",
			Time: []float64{0, 1, 2, 3, 4}, Flux: []float64{1, 1, 1, 1, 1}, Err: []float64{1e-3, 1e-3, 1e-3, 1e-3, 1e-3}, Contamination: math.NaN()}}}
		a, _ := run(t, starInputs(short, starP, spotted))
		if got := verdict(t, a, "signal1", "star_period"); got.Verdict != steps.VerdictCaution {
			t.Errorf("%s: %s", got.Verdict, got.Reason)
		}
	})
}

func TestTheStarPeriodOptionsAreChecked(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	t.Run("a stated tolerance replaces the derived one", func(t *testing.T) {
		art, _, err := steptest.Run(New(), block(map[string]any{"star_period_tolerance": 0.1}), starInputs(lc, 1.08*starP, spotted), nil)
		if err != nil {
			t.Fatal(err)
		}
		if got := verdict(t, art.(*Artifact), "signal1", "star_period"); got.Verdict != steps.VerdictCaution || !strings.Contains(got.Threshold, "star_period_tolerance") {
			t.Errorf("%s: %s (%s)", got.Verdict, got.Reason, got.Threshold)
		}
	})
	for _, c := range []struct {
		attr string
		val  float64
	}{{"star_period_tolerance", 0.7}, {"star_period_tolerance", -0.1}, {"variability_depth_ratio", 0}} {
		t.Run("it refuses "+c.attr+" = "+strconv.FormatFloat(c.val, 'g', -1, 64), func(t *testing.T) {
			_, err := steptest.Config(New(), block(map[string]any{c.attr: c.val}))
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one naming %s", err, c.attr)
			}
		})
	}
	t.Run("a variability whose lists do not pair up is refused as bad input", func(t *testing.T) {
		bad := lightcurve.Variability{Periods: []float64{1, 2}, Amplitudes: []float64{0.01}}
		_, _, err := steptest.Run(New(), block(nil), starInputs(lc, starP, bad), nil)
		if err == nil || !steps.IsInputError(err) || !strings.Contains(err.Error(), "2 periods and 1 amplitudes") {
			t.Errorf("error %v", err)
		}
	})
}

func TestTheStarsPeriodFromItsTrendFlagsWhatTheDetrendLeft(t *testing.T) {
	// End to end through the periodogram: an invented star turning in 1.000 d with a 3 %
	// semi-amplitude, its trend measured in the two gap-free stretches of the light curve
	// (smoothed at 0.5 d, the default detrend span), and a residual the search reports at
	// 0.9997 d with a 1000 ppm depth: the data disagree.
	rot := synth.Rotation{Period: 1.0, Amplitudes: []float64{0.03}}
	lc := makeCurve(planetNoise, 4, planet)
	var pieces []periodogram.Piece
	for _, s := range lc.Segments {
		trend := make([]float64, len(s.Time))
		rot.Apply(trend, s.Time)
		for i := range trend {
			trend[i]++
		}
		pieces = append(pieces, periodogram.Piece{Time: s.Time, Value: trend})
	}
	vb, err := periodogram.Variability(pieces, periodogram.Options{Smoothing: 0.5})
	if err != nil || len(vb.Periods) == 0 {
		t.Fatalf("variability %+v, error %v", vb, err)
	}
	sig := signals.Signal{Period: 0.9997, Epoch: 0.3, Duration: 0.08, Depth: 1e-3, DepthErr: 1e-4, SNR: 12, SDE: 9, Transits: 26}
	in := inputs(lc, []signals.Signal{sig}, nil, nil, nil)
	in.Refs["light_curve"] = []steps.Artifact{detrendedArtifact{curveArtifact{lc}, vb}}
	a, _ := run(t, in)
	got := verdict(t, a, "signal1", "star_period")
	if got.Verdict != steps.VerdictDisagree || !strings.Contains(got.Reason, "1.000 d") || !strings.Contains(got.Reason, "3.0 %") {
		t.Errorf("%s: %s", got.Verdict, got.Reason)
	}
}

func TestATenthOfTheStarsLightIsWhatAWindowLeaves(t *testing.T) {
	// defaultVariabilityRatio's reason: the share of a sinusoid of period P left by a local
	// fit with tricube weights (1 − |u|³)³ over a window of full width h, evaluated at the
	// window's centre: 1 − gain, the gain computed by weighted least squares through gonum
	// on 4001 evenly spaced points. The values quoted beside the constant, to 0.5 % of P's
	// amplitude.
	cases := []struct {
		name         string
		window       float64 // in units of P
		degree       int
		left, within float64
	}{
		{"a location over half a period leaves 17 %", 0.5, 0, 0.17, 0.005},
		{"a location over a quarter period leaves 4 %", 0.25, 0, 0.04, 0.005},
		{"a quadratic over half a period leaves 0.7 %", 0.5, 2, 0.007, 0.001},
		{"a quadratic over a quarter period leaves 0.04 %", 0.25, 2, 0.0004, 0.0001},
		{"a quadratic over a whole period leaves 9 %", 1, 2, 0.09, 0.005},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if left := 1 - windowGain(c.window, c.degree); math.Abs(left-c.left) > c.within {
				t.Errorf("left %.4f, quoted %.3f", left, c.left)
			}
		})
	}
}

// windowGain is the value at the centre of the weighted least-squares polynomial of the
// given degree fitted to cos(2πt) over |t| ≤ h/2 with tricube weights (period 1).
func windowGain(h float64, degree int) float64 {
	const n = 4001
	x := mat.NewDense(n, degree+1, nil)
	y := mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		t := -h/2 + h*float64(i)/(n-1)
		u := math.Abs(t) / (h / 2)
		w := math.Sqrt(math.Pow(math.Max(0, 1-u*u*u), 3))
		for k := 0; k <= degree; k++ {
			x.Set(i, k, w*math.Pow(t, float64(k)))
		}
		y.SetVec(i, w*math.Cos(2*math.Pi*t))
	}
	var beta mat.VecDense
	if err := beta.SolveVec(x, y); err != nil {
		return math.NaN()
	}
	return beta.AtVec(0)
}
