package report

import (
	"strings"
	"testing"
)

func TestTickLabelsAreTrueToTheirPlace(t *testing.T) {
	// A transit of 770 ppm: the plotting library's own labels write the tick at 1.00025 as
	// "1", a quarter of the depth away from where 1 is.
	for _, tc := range []struct {
		min, max float64
		want     map[float64]string
	}{
		{0.99915, 1.0004, map[float64]string{1.00025: "1.00025", 0.99975: "0.99975"}},
		{0.99755, 1.0012, map[float64]string{1: "1.000", 1.001: "1.001"}},
		{410, 490, map[float64]string{450: "450"}},
	} {
		got := map[float64]string{}
		for _, tk := range (plainTicks{}).Ticks(tc.min, tc.max) {
			if tk.Label != "" {
				got[round9(tk.Value)] = tk.Label
			}
		}
		for v, label := range tc.want {
			if got[v] != label {
				t.Errorf("range %v–%v: the tick at %v reads %q, want %q (all: %v)", tc.min, tc.max, v, got[v], label, got)
			}
		}
	}
}

func round9(v float64) float64 {
	const p = 1e9
	return float64(int64(v*p+0.5)) / p
}

// A logarithmic axis of less than three decades is labelled at 1, 2 and 5 times the powers
// of ten (a period axis from 1 to 20 d gets five labels, not one); a wider one at the
// powers of ten alone.
func TestALogAxisOfFewDecadesIsLabelledOften(t *testing.T) {
	labels := func(min, max float64) []string {
		var out []string
		for _, tk := range (logTicks{}).Ticks(min, max) {
			if tk.Label != "" {
				out = append(out, tk.Label)
			}
		}
		return out
	}
	if got, want := strings.Join(labels(1, 20), " "), "1 2 5 10 20"; got != want {
		t.Errorf("1–20: labels %q, want %q", got, want)
	}
	if got, want := strings.Join(labels(0.15, 0.6), " "), "0.2 0.5"; got != want {
		t.Errorf("0.15–0.6: labels %q, want %q", got, want)
	}
	for _, l := range labels(0.01, 1e5) {
		if l != "0.01" && l != "0.1" && l != "1" && l != "10" && l != "100" && l != "1000" && l != "10000" && l != "100000" {
			t.Errorf("0.01–1e5: label %q is not a power of ten", l)
		}
	}
}
