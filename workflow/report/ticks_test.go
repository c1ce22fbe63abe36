package report

import "testing"

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
