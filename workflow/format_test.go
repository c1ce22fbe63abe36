package workflow

import "testing"

func TestFormatValueRoundsByUncertainty(t *testing.T) {
	// Two significant digits in the uncertainty, the value to the same place (common practice).
	cases := []struct {
		v, s float64
		want string
	}{
		{3.712345678, 0.000123, "3.71235 ± 0.00012"},
		{2512.7, 87.3, "2513 ± 87"},
		{0.98, 0, "0.98"},
		{12345.6, 1234, "12300 ± 1200"},
		{1.5, 0.25, "1.50 ± 0.25"},
	}
	for _, c := range cases {
		if got := FormatValue(c.v, c.s); got != c.want {
			t.Errorf("FormatValue(%v, %v) = %q, want %q", c.v, c.s, got, c.want)
		}
	}
}
