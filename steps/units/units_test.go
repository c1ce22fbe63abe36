package units

import (
	"fmt"
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
	// ρ☉ = 1409.78 kg m⁻³ from IAU 2015 B3 nominal values (computed independently).
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

func TestParseMeasurement(t *testing.T) {
	cases := []struct {
		in          string
		dim         *Dimension
		value, sigm float64
	}{
		{"35.2 ± 0.1 mas", Angle, 0.0352, 1e-4},
		{"0.45 +/- 0.02 R_sun", Radius, 0.45, 0.02},
		{"3300 ± 60 K", Temperature, 3300, 60},
		// 1 R_jup = 71492 km / 695700 km (IAU 2015 B3 nominal equatorial values).
		{"1 ± 0.1 R_jup", Radius, 71492.0 / 695700, 7149.2 / 695700},
		{"1e-3 ± 2e-5 erg/s/cm2", Irradiance, 1e-6, 2e-8},
	}
	for _, c := range cases {
		v, s, err := c.dim.ParseMeasurement(c.in)
		if err != nil {
			t.Fatalf("%q: %v", c.in, err)
		}
		if math.Abs(v-c.value) > 1e-12*math.Abs(c.value) || math.Abs(s-c.sigm) > 1e-12*math.Abs(c.sigm) {
			t.Errorf("%q = %v ± %v, want %v ± %v", c.in, v, s, c.value, c.sigm)
		}
	}
	for in, want := range map[string]string{
		"35.2 mas":      "no uncertainty",
		"35.2 ± mas":    "uncertainty",
		"35.2 ± -1 mas": "must not be negative",
		"35.2 ± 0.1":    "no unit",
		"35.2 ± 0.1 km": "unknown angle unit",
		"abc ± 0.1 mas": "the value",
	} {
		if _, _, err := Angle.ParseMeasurement(in); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("ParseMeasurement(%q) error = %v, want it to say %q", in, err, want)
		}
	}
}

func TestNominalRatios(t *testing.T) {
	// IAU 2015 Resolution B3: R☉ = 695700 km, R⊕ (equatorial) = 6378.1 km; GM☉/GM⊕ =
	// 1.3271244e20 / 3.986004e14 = 332946.0 (the Sun-Earth mass ratio, from memory 332946).
	if r, _ := Radius.Parse("1 R_sun"); math.Abs(r*695700/6378.1-Radius.Units["R_sun"]/Radius.Units["R_earth"]) > 1e-9 {
		t.Errorf("R_sun/R_earth = %v", Radius.Units["R_sun"]/Radius.Units["R_earth"])
	}
	if got := 1 / Mass.Units["M_earth"]; math.Abs(got-332946.0) > 0.5 {
		t.Errorf("M_sun/M_earth = %v, want 332946", got)
	}
	// 1 pc = 206264.806 au (from the definition 648000/π au, IAU 2015 B2).
	if got := 1 / Distance.Units["au"]; math.Abs(got-206264.806) > 1e-3 {
		t.Errorf("au per pc = %v", got)
	}
}

func TestParseLength(t *testing.T) {
	// SI prefixes (BIPM SI Brochure, 9th edition): nano 1e-9, micro 1e-6, milli 1e-3.
	cases := []struct {
		name, in string
		want     float64
	}{
		{"a band's wavelength in nanometres", "800 nm", 8e-7},
		{"the same wavelength in micrometres", "0.8 um", 8e-7},
		{"an infrared wavelength in micrometres", "4.5 um", 4.5e-6},
		{"a millimetre", "1 mm", 1e-3},
		{"a metre", "1 m", 1},
	}
	for _, c := range cases {
		t.Run(c.name+" converts to metres", func(t *testing.T) {
			got, err := Length.Parse(c.in)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-c.want) > 1e-15*c.want {
				t.Errorf("%q = %v m, want %v", c.in, got, c.want)
			}
		})
	}
	t.Run("a wavelength without a unit is refused", func(t *testing.T) {
		if _, err := Length.Parse("800"); err == nil || !strings.Contains(err.Error(), "has no unit") {
			t.Errorf("Parse(\"800\") error = %v", err)
		}
	})
}

func TestMeasurementSigns(t *testing.T) {
	// The same measurement in each accepted spelling of the sign gives the same numbers.
	for _, in := range []string{"0.70 ± 0.03 R_sun", "0.70 +/- 0.03 R_sun", "0.70 +- 0.03 R_sun", "0.70+-0.03 R_sun", " 0.70  +-  0.03  R_sun "} {
		t.Run(fmt.Sprintf("%q reads as 0.70 and 0.03 solar radii", in), func(t *testing.T) {
			v, s, err := Radius.ParseMeasurement(in)
			if err != nil {
				t.Fatal(err)
			}
			if v != 0.70 || math.Abs(s-0.03) > 1e-15 {
				t.Errorf("got %v ± %v R_sun", v, s)
			}
		})
	}
	t.Run("a negative value keeps its sign before +-", func(t *testing.T) {
		v, s, err := Time.ParseMeasurement("-1.5 +- 0.25 d")
		if err != nil || v != -1.5 || s != 0.25 {
			t.Errorf("got %v ± %v d, %v", v, s, err)
		}
	})
	t.Run("a value with an exponent and +- reads", func(t *testing.T) {
		v, s, err := Temperature.ParseMeasurement("3.3e+3 +- 6e+1 K")
		if err != nil || v != 3300 || s != 60 {
			t.Errorf("got %v ± %v K, %v", v, s, err)
		}
	})
	t.Run("a missing uncertainty is refused, naming every accepted sign", func(t *testing.T) {
		_, _, err := Radius.ParseMeasurement("0.70 R_sun")
		if err == nil {
			t.Fatal("accepted a measurement without an uncertainty")
		}
		for _, sign := range []string{"±", "+/-", "+-", "no uncertainty"} {
			if !strings.Contains(err.Error(), sign) {
				t.Errorf("the message does not mention %q: %v", sign, err)
			}
		}
	})
}

func FuzzParseMeasurement(f *testing.F) {
	for _, s := range []string{"0.70 +- 0.03 R_sun", "1 ± 0.1 R_jup", "2 +/- 1 d", "+-", "1+-", "+- 1 d"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, sigma, err := Radius.ParseMeasurement(s)
		if err == nil && (math.IsNaN(v) || math.IsInf(v, 0) || !(sigma >= 0) || math.IsInf(sigma, 0)) {
			t.Fatalf("ParseMeasurement(%q) = %v ± %v without error", s, v, sigma)
		}
	})
}
