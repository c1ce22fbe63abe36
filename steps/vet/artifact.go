package vet

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/codec"
)

// NotRun is the state of a test that could not run (no fit, no star, too few points); its
// Reason says why. It is not a verdict on the signal: the three verdicts are
// steps.VerdictAgree, steps.VerdictCaution and steps.VerdictDisagree.
const NotRun = steps.VerdictNotRun

// Test is one test's outcome for one signal.
type Test struct {
	// Name is the test in snake case ("odd_even"), as in the figure names.
	Name string
	// Verdict is steps.VerdictAgree, steps.VerdictCaution, steps.VerdictDisagree or NotRun.
	Verdict string
	// Threshold says what the values were measured against and where that comes from.
	Threshold string
	// Reason is one plain line saying why.
	Reason string
	// Figures are the test's numbers, named "<signal>.<test>.<figure>".
	Figures []steps.Figure
}

// Signal is the vetting of one signal.
type Signal struct {
	// Name is "signal1", "signal2" … in the search's order.
	Name string
	// Planet is the letter the fit gives this signal ("b", "c", "d"), or "" when the fit
	// was not used for it (none given, fewer planets, or a different period).
	Planet string
	// FitNote says how the fit was matched to the signal, or why it was not; "" without a
	// fit.
	FitNote string
	// NoiseScale is the factor applied to the stated errors in the signal's box fits (see
	// noiseScale); NaN when the light curve was too short to measure it.
	NoiseScale float64
	// Single, when not empty, says that the dip rests on one transit and its period is not
	// measured; the odd/even test then cannot be run.
	Single string
	// Tests are in a fixed order: odd_even, secondary, shape, density, search_density,
	// blend, depth, period_ratio, radius, star_period.
	Tests []Test
}

// Artifact is the vet step's result: per signal, each test's figures and verdict.
type Artifact struct {
	Signals []Signal
}

// testTitles are the tests' names in plain words, for the run summary.
var testTitles = map[string]string{
	"odd_even":       "odd/even depths",
	"secondary":      "secondary eclipse",
	"shape":          "shape",
	"density":        "stellar density",
	"search_density": "the search's stellar density",
	"blend":          "blended source",
	"depth":          "depth consistency",
	"period_ratio":   "period ratios",
	"radius":         "radius",
	"star_period":    "the star's own period",
}

// settingTests are the tests that judge how an earlier step was set rather than the
// planet, each with what its disagreement says in the signal's summary line.
var settingTests = map[string]string{
	"search_density": "the search assumed a star unlike the star step's, so it searched with the wrong transit durations (the search's stellar density): set star_density on the search to the star's, or write star = star.<label> there, and run it again",
}

func title(test string) string {
	if t, ok := testTitles[test]; ok {
		return t
	}
	return test
}

// count returns the number of the signal's tests with the given verdict.
func (s Signal) count(verdict string) int {
	n := 0
	for _, t := range s.Tests {
		if t.Verdict == verdict {
			n++
		}
	}
	return n
}

// Figures lists, per signal, the noise scale, each test's figures and "<signal>.disagree", the number of
// tests that disagree, and "<signal>.cautions", the number that give a caution.
func (a *Artifact) Figures() []steps.Figure {
	var figs []steps.Figure
	for _, s := range a.Signals {
		if !math.IsNaN(s.NoiseScale) {
			figs = append(figs, steps.Figure{Name: s.Name + ".noise_scale", Value: s.NoiseScale,
				Doc: "factor applied to the stated errors in this signal's box fits: the robust scatter of the flux outside every transit over its errors, times the excess scatter of means over bins one duration long when above 1"})
		}
		for _, t := range s.Tests {
			for _, f := range t.Figures {
				if !f.Defined() && f.Reason == "" && t.Verdict == NotRun && t.Reason != "" {
					f.Reason = "the " + title(t.Name) + " test could not run: " + t.Reason
				}
				figs = append(figs, f)
			}
		}
		figs = append(figs,
			steps.Figure{Name: s.Name + ".disagree", Value: float64(s.count(steps.VerdictDisagree)),
				Doc: "number of tests that disagree (0 when none): the data with a planet transiting the target, or, for search_density, the star the search assumed with the star step's"},
			steps.Figure{Name: s.Name + ".cautions", Value: float64(s.count(steps.VerdictCaution)),
				Doc: "number of tests that give a caution: worth a look, not a failure on its own"})
	}
	return figs
}

// Verdicts lists every test of every signal, the ones that could not run included (with
// the verdict NotRun and the reason).
func (a *Artifact) Verdicts() []steps.Verdict {
	var out []steps.Verdict
	for _, s := range a.Signals {
		for _, t := range s.Tests {
			out = append(out, steps.Verdict{Subject: s.Name, Test: t.Name, Verdict: t.Verdict, Threshold: t.Threshold, Reason: t.Reason})
		}
	}
	return out
}

// validationCaution is printed with every vetting.
const validationCaution = "vetting supports, and does not replace, a statistical validation of a planet: these tests can show that a signal is unlikely to be a planet on the target, but passing them does not make it one; the judgement is the scientist's"

// Cautions gives one line per doubtful signal summarising its disagreements, cautions and
// tests not run, and the caution that vetting does not validate a planet.
func (a *Artifact) Cautions() []string {
	var out []string
	for _, s := range a.Signals {
		if s.doubtful() {
			out = append(out, s.summary())
		}
	}
	return append(out, validationCaution)
}

// doubtful reports whether a signal needs a line among the cautions: a test disagrees or
// gives a caution, or the fit could not be matched to it. A signal every test agrees with
// is counted in the run summary ("0 of 7 tests disagree") and needs no caution of its own.
func (s Signal) doubtful() bool {
	for _, t := range s.Tests {
		if t.Verdict == steps.VerdictDisagree || t.Verdict == steps.VerdictCaution {
			return true
		}
	}
	return s.Single != "" || (s.FitNote != "" && s.Planet == "")
}

// summary is the signal's line for the run summary.
func (s Signal) summary() string {
	var b strings.Builder
	b.WriteString(s.Name)
	if s.Planet != "" {
		fmt.Fprintf(&b, " (planet %s of the fit)", s.Planet)
	}
	b.WriteString(": ")
	// A disagreement of a setting test (settingTests) is about how an earlier step was set,
	// not about the planet, and is said apart.
	by := func(verdict string, settings bool) []string {
		var names []string
		for _, t := range s.Tests {
			if _, setting := settingTests[t.Name]; t.Verdict == verdict && (settings || !setting) {
				names = append(names, title(t.Name))
			}
		}
		return names
	}
	dis, cau, nr := by(steps.VerdictDisagree, false), by(steps.VerdictCaution, true), by(NotRun, true)
	var parts []string
	switch len(dis) {
	case 0:
		parts = append(parts, "no test disagrees with a planet on the target")
	default:
		parts = append(parts, fmt.Sprintf("the data disagree with a planet on the target in %d test(s) (%s)", len(dis), strings.Join(dis, ", ")))
	}
	for _, t := range s.Tests {
		if say, setting := settingTests[t.Name]; setting && t.Verdict == steps.VerdictDisagree {
			parts = append(parts, say)
		}
	}
	if len(cau) > 0 {
		parts = append(parts, fmt.Sprintf("a caution from %s", strings.Join(cau, ", ")))
	}
	if len(nr) > 0 {
		parts = append(parts, fmt.Sprintf("not run: %s", strings.Join(nr, ", ")))
	}
	b.WriteString(strings.Join(parts, "; "))
	if s.Single != "" {
		b.WriteString("; " + s.Single)
	}
	if s.FitNote != "" && s.Planet == "" {
		b.WriteString("; " + s.FitNote)
	}
	return b.String()
}

const (
	tag    = "vet"
	format = 2
	// Decode's sanity bounds on counts.
	maxSignalsDecoded, maxTests, maxFigures = 1024, 64, 4096
)

// Encode returns the canonical encoding.
func (a *Artifact) Encode() []byte {
	w := codec.NewWriter(tag, format)
	w.Uint64(uint64(len(a.Signals)))
	for _, s := range a.Signals {
		w.String(s.Name)
		w.String(s.Planet)
		w.String(s.FitNote)
		w.Float(s.NoiseScale)
		w.String(s.Single)
		w.Uint64(uint64(len(s.Tests)))
		for _, t := range s.Tests {
			w.String(t.Name)
			w.String(t.Verdict)
			w.String(t.Threshold)
			w.String(t.Reason)
			w.Uint64(uint64(len(t.Figures)))
			for _, f := range t.Figures {
				w.String(f.Name)
				w.Float(f.Value)
				w.Float(f.Sigma)
				w.Float(f.MCError)
				w.String(f.Unit)
				w.String(f.Doc)
			}
		}
	}
	return w.Bytes()
}

// Decode reads an artifact back from its canonical encoding.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// verdicts are the values a decoded test may hold.
var verdicts = map[string]bool{steps.VerdictAgree: true, steps.VerdictCaution: true, steps.VerdictDisagree: true, NotRun: true}

// Decode reads an artifact written by Encode; truncated, foreign or inconsistent bytes
// are an error.
func Decode(b []byte) (*Artifact, error) {
	r := codec.NewReader(b, tag, format)
	a := &Artifact{}
	var bad error
	// After a read error every read gives zero, so the counts below end the loops.
	n := r.Uint64()
	if n > maxSignalsDecoded {
		return nil, fmt.Errorf("vet artifact: %d signals is out of range", n)
	}
	for i := uint64(0); i < n; i++ {
		s := Signal{Name: r.String(), Planet: r.String(), FitNote: r.String(), NoiseScale: r.Float(), Single: r.String()}
		nt := r.Uint64()
		if nt > maxTests {
			return nil, fmt.Errorf("vet artifact: signal %d has %d tests, out of range", i+1, nt)
		}
		for j := uint64(0); j < nt; j++ {
			t := Test{Name: r.String(), Verdict: r.String(), Threshold: r.String(), Reason: r.String()}
			nf := r.Uint64()
			if nf > maxFigures {
				return nil, fmt.Errorf("vet artifact: test %s of %s has %d figures, out of range", t.Name, s.Name, nf)
			}
			for k := uint64(0); k < nf; k++ {
				t.Figures = append(t.Figures, steps.Figure{Name: r.String(), Value: r.Float(), Sigma: r.Float(),
					MCError: r.Float(), Unit: r.String(), Doc: r.String()})
			}
			if !verdicts[t.Verdict] && bad == nil {
				bad = fmt.Errorf("vet artifact: test %s of %s has the verdict %q", t.Name, s.Name, t.Verdict)
			}
			s.Tests = append(s.Tests, t)
		}
		a.Signals = append(a.Signals, s)
	}
	if err := r.Err(); err != nil {
		return nil, fmt.Errorf("vet artifact: %w", err)
	}
	if bad != nil {
		return nil, bad
	}
	return a, nil
}
