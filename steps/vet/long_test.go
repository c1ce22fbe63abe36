package vet

import (
	"os"
	"sort"
	"strconv"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/signals"
)

// TestFalseDisagreementRateOnPlanets measures how often a test disagrees on the injected
// planet (SNR near 25) over many noise draws, with the light curve alone. The thresholds
// predict 0.27 % for the odd/even test (3σ, two-sided) and 0.135 % for the secondary
// search (family-wise); the test fails above 2 %, which a wrong error scale would pass.
//
//	DIPLINE_LONG=1 go test ./steps/vet -run FalseDisagreementRate -v
//
// DIPLINE_VET_DRAWS sets the number of draws (default 400).
func TestFalseDisagreementRateOnPlanets(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("a long measurement; set DIPLINE_LONG=1 to run it")
	}
	draws := 400
	if s := os.Getenv("DIPLINE_VET_DRAWS"); s != "" {
		draws, _ = strconv.Atoi(s)
	}
	count := map[string]map[string]int{}
	anyDis := 0
	for seed := 1000; seed < 1000+draws; seed++ {
		lc := makeCurve(planetNoise, uint64(seed), planet)
		a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, nil, nil, nil))
		dis := false
		for _, v := range a.Verdicts() {
			if count[v.Test] == nil {
				count[v.Test] = map[string]int{}
			}
			count[v.Test][v.Verdict]++
			dis = dis || v.Verdict == steps.VerdictDisagree
		}
		if dis {
			anyDis++
		}
	}
	tests := make([]string, 0, len(count))
	for test := range count {
		tests = append(tests, test)
	}
	sort.Strings(tests)
	for _, test := range tests {
		c := count[test]
		t.Logf("%-12s agree %4d  caution %4d  disagree %4d  not run %4d", test, c[steps.VerdictAgree], c[steps.VerdictCaution], c[steps.VerdictDisagree], c[NotRun])
	}
	rate := float64(anyDis) / float64(draws)
	t.Logf("draws with at least one disagreement: %d of %d (%.2f %%)", anyDis, draws, 100*rate)
	if rate > 0.02 {
		t.Errorf("%.2f %% of the planet's draws disagree somewhere", 100*rate)
	}
}

// TestBinaryDetectionRate measures how often the odd/even and secondary tests disagree on
// the binary at half its period over many noise draws, at a noise three times the default
// test's (3000 ppm), where the eclipses' difference is about 18σ.
//
//	DIPLINE_LONG=1 go test ./steps/vet -run BinaryDetectionRate -v
func TestBinaryDetectionRate(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("a long measurement; set DIPLINE_LONG=1 to run it")
	}
	const draws = 100
	both := 0
	for seed := 2000; seed < 2000+draws; seed++ {
		lc := makeCurve(3000e-6, uint64(seed), binary)
		a, _ := run(t, inputs(lc, []signals.Signal{binaryHalfSignal()}, nil, nil, nil))
		if verdict(t, a, "signal1", "odd_even").Verdict == steps.VerdictDisagree && verdict(t, a, "signal1", "secondary").Verdict == steps.VerdictDisagree {
			both++
		}
	}
	t.Logf("odd/even and secondary both disagree on %d of %d draws", both, draws)
	if both < draws*99/100 {
		t.Errorf("only %d of %d", both, draws)
	}
}
