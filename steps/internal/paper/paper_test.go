package paper

import (
	"math"
	"testing"
)

// TestRoundingWorkedByHand works the rule (two significant figures of the smaller error,
// the value and the other error to the same decimal place) on examples rounded by hand;
// each case's name says the reasoning.
func TestRoundingWorkedByHand(t *testing.T) {
	cases := []struct {
		name        string
		v           Value
		text, latex string
	}{
		{"errors 0.1203 and 0.1189 both print 0.12 at two decimals, so once as ±",
			Value{Median: 3.2134, Lower: 0.1203, Upper: 0.1189}, "3.21 ± 0.12", `$3.21 \pm 0.12$`},
		{"errors 0.1012 and 0.1234: the smaller sets two decimals, 0.10 and 0.12 differ",
			Value{Median: 3.2134, Lower: 0.1012, Upper: 0.1234}, "3.21 +0.12/−0.10", `$3.21^{+0.12}_{-0.10}$`},
		{"the smaller error 0.0123 sets three decimals; 0.0347 is 0.035 and 1.23456 is 1.235",
			Value{Median: 1.23456, Lower: 0.0123, Upper: 0.0347}, "1.235 +0.035/−0.012", `$1.235^{+0.035}_{-0.012}$`},
		{"0.0996 to two figures carries into 0.100, so one place fewer: 0.10",
			Value{Median: 0.5432, Lower: 0.0996, Upper: 0.0996}, "0.54 ± 0.10", `$0.54 \pm 0.10$`},
		{"0.0994 stays at three places: 0.099, and the value 0.543",
			Value{Median: 0.5432, Lower: 0.0994, Upper: 0.0994}, "0.543 ± 0.099", `$0.543 \pm 0.099$`},
		{"an error of 678 keeps two figures by rounding to tens: 680, and 12345.6 is 12350",
			Value{Median: 12345.6, Lower: 678, Upper: 678}, "12350 ± 680", `$12350 \pm 680$`},
		{"an error of 1.0 keeps one decimal",
			Value{Median: 1.23, Lower: 1, Upper: 1}, "1.2 ± 1.0", `$1.2 \pm 1.0$`},
		{"a negative value keeps its sign, written as a minus in text",
			Value{Median: -0.0423, Lower: 0.0051, Upper: 0.0049}, "−0.0423 +0.0049/−0.0051", `$-0.0423^{+0.0049}_{-0.0051}$`},
		{"a value that rounds to zero is never −0",
			Value{Median: -0.0004, Lower: 0.012, Upper: 0.012}, "0.000 ± 0.012", `$0.000 \pm 0.012$`},
		{"one error zero: the other sets the places",
			Value{Median: 2.5, Lower: 0, Upper: 0.034}, "2.500 +0.034/−0.000", `$2.500^{+0.034}_{-0.000}$`},
		{"no error at all: the bare value",
			Value{Median: 5772}, "5772", `$5772$`},
		{"a symmetric sigma from Symmetric",
			Symmetric(0.392, 0.004), "0.3920 ± 0.0040", `$0.3920 \pm 0.0040$`},
		{"percentiles 3.0 and 3.5 about 3.2: errors 0.2 and 0.3, kept to two figures as 0.20 and 0.30",
			Percentiles(3.2, 3.0, 3.5), "3.20 +0.30/−0.20", `$3.20^{+0.30}_{-0.20}$`},
		{"an upper limit keeps two significant figures of its 95th percentile",
			Limit(UpperLimit, 0.41873, 0.95), "< 0.42 (95 %)", `$<0.42$`},
		{"a lower limit likewise",
			Limit(LowerLimit, 0.8712, 0.95), "> 0.87 (95 %)", `$>0.87$`},
		{"a limit of 9.96 to two figures is 10, not 10.0",
			Limit(UpperLimit, 9.96, 0.95), "< 10 (95 %)", `$<10$`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.v.Text(); got != c.text {
				t.Errorf("Text() = %q, want %q", got, c.text)
			}
			if got := c.v.LaTeX(); got != c.latex {
				t.Errorf("LaTeX() = %q, want %q", got, c.latex)
			}
		})
	}
}

func TestSigFigs(t *testing.T) {
	cases := []struct {
		x    float64
		n    int
		want string
	}{
		{0.41873, 2, "0.42"},
		{9.96, 2, "10"},
		{123456, 2, "120000"},
		{-0.0876, 2, "-0.088"},
		{1.234e-9, 2, "0.0000000012"}, // 10 places: still fixed
		{1.234e-14, 2, "1.2e-14"},     // beyond 12 places: an exponent
		{0, 2, "0"},
	}
	for _, c := range cases {
		if got := SigFigs(c.x, c.n); got != c.want {
			t.Errorf("SigFigs(%g, %d) = %q, want %q", c.x, c.n, got, c.want)
		}
	}
}

func TestDecimals(t *testing.T) {
	cases := []struct {
		s    float64
		want int
	}{
		{0.12, 2}, {0.0123, 3}, {1, 1}, {9.4, 1}, {9.96, 0}, {678, -1}, {0.0996, 2},
	}
	for _, c := range cases {
		if got := Decimals(c.s); got != c.want {
			t.Errorf("Decimals(%g) = %d, want %d", c.s, got, c.want)
		}
	}
}

// ramp returns n draws f(i/(n−1)), i = 0 … n−1: a deterministic sample of f(U).
func ramp(n int, f func(u float64) float64) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = f(float64(i) / float64(n-1))
	}
	return s
}

func TestFromDraws(t *testing.T) {
	t.Run("draws piled at zero give the 95th percentile as an upper limit", func(t *testing.T) {
		// U² has density ∝ 1/√x on [0, 1]: its mode is at zero. With 2001 draws the 95th
		// percentile falls on draw 1900 exactly, (1900/2000)² = 0.9025, two figures 0.90.
		v := FromDraws(ramp(2001, func(u float64) float64 { return u * u }), AtLeast(0))
		if v.Limit != UpperLimit || math.Abs(v.Bound-0.9025) > 1e-12 {
			t.Fatalf("got %+v, want an upper limit at 0.9025", v)
		}
		if got := v.Text(); got != "< 0.90 (95 %)" {
			t.Errorf("Text() = %q", got)
		}
	})
	t.Run("draws piled at an upper bound give the 5th percentile as a lower limit", func(t *testing.T) {
		// 1 − U²: the 5th percentile is 1 − 0.95² = 0.0975, two figures 0.098.
		one := 1.0
		v := FromDraws(ramp(2001, func(u float64) float64 { return 1 - u*u }), Bounds{Hi: &one})
		if v.Limit != LowerLimit || math.Abs(v.Bound-0.0975) > 1e-12 {
			t.Fatalf("got %+v, want a lower limit at 0.0975", v)
		}
		if got := v.Text(); got != "> 0.098 (95 %)" {
			t.Errorf("Text() = %q", got)
		}
	})
	t.Run("a posterior peaked away from its bound is a median with errors", func(t *testing.T) {
		// Normal quantiles at (i + ½)/n of N(5, 0.1²): median 5, ±1σ fractions at ±0.1.
		n := 10001
		draws := make([]float64, n)
		for i := range draws {
			p := (float64(i) + 0.5) / float64(n)
			draws[i] = 5 + 0.1*math.Sqrt2*math.Erfinv(2*p-1)
		}
		v := FromDraws(draws, AtLeast(0))
		if v.Limit != NoLimit {
			t.Fatalf("got a limit: %+v", v)
		}
		if got := v.Text(); got != "5.00 ± 0.10" {
			t.Errorf("Text() = %q, want \"5.00 ± 0.10\"", got)
		}
	})
	t.Run("non-finite draws are left out", func(t *testing.T) {
		v := FromDraws([]float64{math.NaN(), 1, 2, 3, math.Inf(1)}, Bounds{})
		if v.Median != 2 {
			t.Errorf("median %v, want 2", v.Median)
		}
	})
	t.Run("draws all at the bound are an upper limit at the bound", func(t *testing.T) {
		v := FromDraws([]float64{0, 0, 0}, AtLeast(0))
		if v.Limit != UpperLimit || v.Bound != 0 {
			t.Errorf("got %+v", v)
		}
	})
}

func TestLimitKindWords(t *testing.T) {
	for k, want := range map[LimitKind]string{NoLimit: "none", UpperLimit: "upper", LowerLimit: "lower"} {
		if k.String() != want {
			t.Errorf("%d is %q, want %q", k, k.String(), want)
		}
	}
}

func TestEscapeLaTeX(t *testing.T) {
	got := EscapeLaTeX(`A&B_1 50% {x} $5 #2 ~ ^ \ <>|`)
	want := `A\&B\_1 50\% \{x\} \$5 \#2 \textasciitilde{} \textasciicircum{} \textbackslash{} \textless{}\textgreater{}\textbar{}`
	if got != want {
		t.Errorf("EscapeLaTeX = %q, want %q", got, want)
	}
}
