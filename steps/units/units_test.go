package units

import (
	"math"
	"strings"
	"testing"
)

func TestParseTime(t *testing.T) {
	cases := []struct {
		in   string
		want float64
	}{
		{"18 h", 0.75},
		{"29.4 min", 29.4 / 1440},
		{"2d", 2},
		{"1.5e1 s", 15.0 / 86400},
		{"  1 yr ", 365.25}, // Julian year (IAU; from memory)
	}
	for _, c := range cases {
		got, err := Time.Parse(c.in)
		if err != nil {
			t.Fatalf("%q: %v", c.in, err)
		}
		if math.Abs(got-c.want) > 1e-15*math.Max(1, c.want) {
			t.Errorf("%q = %v d, want %v", c.in, got, c.want)
		}
	}
}

func TestParseRejects(t *testing.T) {
	for in, want := range map[string]string{
		"18":      "has no unit",
		"18 km":   "unknown time unit",
		"h":       "expected a number",
		"":        "expected a number",
		"1e400 h": "not a finite",
	} {
		_, err := Time.Parse(in)
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("Parse(%q) error = %v, want it to say %q", in, err, want)
		}
	}
}

func TestSolarDensity(t *testing.T) {
	// ρ☉ = 1409.78 kg m⁻³ from IAU 2015 B3 nominal values (REFERENCES.md §4, computed there).
	got, err := Density.Parse("1 rho_sun")
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(got-1.40978) > 1e-5 {
		t.Errorf("solar density = %v g/cm3, want 1.40978", got)
	}
	kg, _ := Density.Parse("1409.78 kg/m3")
	if math.Abs(kg-1.40978) > 1e-9 {
		t.Errorf("1409.78 kg/m3 = %v g/cm3", kg)
	}
}

func FuzzParse(f *testing.F) {
	for _, s := range []string{"18 h", "1e3s", "-2 d", "e", "1e", "..", "3 min"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, err := Time.Parse(s)
		if err == nil && (math.IsNaN(v) || math.IsInf(v, 0)) {
			t.Fatalf("Parse(%q) = %v without error", s, v)
		}
	})
}
