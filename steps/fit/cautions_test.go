package fit

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/fit/timing"
)

// TestTheFitsCautions checks Artifact.Cautions, which derive's users read beside its
// own (it lives here because this task may not add files to steps/fit). The levels are the
// fit's: β above 1.2 (its note in steps/fit/fit.go), chains after burn-in shorter than 50
// autocorrelation times (its stopping rule, DEVELOPERS.md) and R-hat above 1.01 (Vehtari
// et al. 2021, Bayesian Analysis 16, 667).
func TestTheFitsCautions(t *testing.T) {
	settled := func() *Artifact {
		return &Artifact{Names: []string{"b.period", "b.k"}, Sampled: 2, Beta: 1.05, Steps: 9000, Burn: 3000,
			Diag: []Diagnostic{{Tau: 100, ESS: 5000, Rhat: 1.002}, {Tau: 110, ESS: 4500, Rhat: 1.004}}}
	}
	cases := []struct {
		name   string
		change func(a *Artifact)
		want   []string // each caution must contain its entry, in order; none when empty
	}{
		{"a settled fit on white residuals gives none", func(a *Artifact) {}, nil},
		{"β of 1.19 is below the fit's level", func(a *Artifact) { a.Beta = 1.19 }, nil},
		{"β of 1.5 warns that the widths may be too narrow", func(a *Artifact) { a.Beta = 1.5 },
			[]string{"scatter 1.5× more than white noise"}},
		{"β of 1.5 already multiplied into the errors gives none", func(a *Artifact) { a.Beta, a.Inflated = 1.5, true }, nil},
		{"an unmeasured β gives none", func(a *Artifact) { a.Beta = math.NaN() }, nil},
		// 50 × 110 steps = 5500 > 5400 kept.
		{"chains of 49 autocorrelation times are preliminary", func(a *Artifact) { a.Steps = 8400 },
			[]string{"5400 steps, shorter than 50 autocorrelation times (5500 steps)"}},
		{"an unmeasured autocorrelation time is preliminary", func(a *Artifact) { a.Diag[0].Tau = math.NaN() },
			[]string{"shorter than 50 autocorrelation times"}},
		{"R-hat of 1.05 names the parameter", func(a *Artifact) { a.Diag[1].Rhat = 1.05 },
			[]string{"R-hat of b.k is 1.05, above 1.01"}},
		{"an R-hat just above the level is not printed as the level itself", func(a *Artifact) { a.Diag[1].Rhat = 1.0149 },
			[]string{"R-hat of b.k is 1.015, above 1.01"}},
		{"scattered transit times name the planet", func(a *Artifact) {
			a.Times = []PlanetTimes{{Ephemeris: timing.Ephemeris{Caution: "the transit times scatter"}}}
		}, []string{"Planet b: the transit times scatter."}},
		{"every caution at once, in order", func(a *Artifact) {
			a.Beta, a.Steps, a.Diag[0].Rhat = 2, 4000, 1.2
		}, []string{"scatter 2×", "1000 steps, shorter", "R-hat of b.period is 1.2"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a := settled()
			c.change(a)
			got := steps.CautionsOf(a)
			if len(got) != len(c.want) {
				t.Fatalf("cautions %q, want %d", got, len(c.want))
			}
			for i, w := range c.want {
				if !strings.Contains(got[i], w) {
					t.Errorf("caution %d %q lacks %q", i, got[i], w)
				}
			}
		})
	}
}
