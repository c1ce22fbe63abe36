package transit

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"testing"
)

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// TestCarlsonCheckValues reduces Carlson's complete-case check values to K, E and Π.
// Values: Carlson (1995), Numer. Algorithms 10, 13 (from memory; recomputed
// independently at high precision). Homogeneity: R_F(λx,λy,λz) = λ^-½ R_F, R_D and R_J
// scale as λ^-3/2.
func TestCarlsonCheckValues(t *testing.T) {
	kcHalf := math.Sqrt(0.5)
	kHalf := math.Sqrt(0.5)
	cases := []struct {
		name string
		got  float64
		want float64
	}{
		// R_F(1,2,0) = R_F(0,1,2) = 2^-½ R_F(0,½,1) = K(m=½)/√2.
		{"R_F(1,2,0) equals K(m=1/2)/sqrt2", Cel(kcHalf, 1, 1, 1) / math.Sqrt2, 1.3110287771461},
		// R_D(0,2,1) = 3(K−E)/m with 1−m = 2, i.e. m = −1, kc = √2.
		{"R_D(0,2,1) equals 3(E-K) at m=-1", 3 * (Cel(math.Sqrt2, 1, 1, 2) - Cel(math.Sqrt2, 1, 1, 1)), 1.7972103521034},
		// R_J(0,1,2,3) = 2^-3/2 R_J(0,½,1,3/2); Π(n,m=½) = K + (n/3) R_J(0,½,1,1−n) with n = −½.
		{"R_J(0,1,2,3) from Pi(-1/2, m=1/2)", math.Pow(2, -1.5) * 3 * (EllipticPi(-0.5, kHalf) - EllipticK(kHalf)) / -0.5, 0.77688623778582},
		// K, E, Π at m = ½, computed independently at high precision.
		{"K at m=1/2", EllipticK(kHalf), 1.8540746773014},
		{"E at m=1/2", EllipticE(kHalf), 1.3506438810477},
		{"Pi at n=0.3, m=1/2", EllipticPi(0.3, kHalf), 2.2503768219439},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if e := relErr(c.got, c.want); e > 1e-12 {
				t.Errorf("got %.15g, want %.14g (rel err %.2g)", c.got, c.want, e)
			}
		})
	}
}

// TestEllipticAgainstScipy compares with golden values from Debian's python3-scipy 1.10.1
// (testdata/transit/elliptic_goldens.py → elliptic_goldens.json).
func TestEllipticAgainstScipy(t *testing.T) {
	raw, err := os.ReadFile("../../../testdata/transit/elliptic_goldens.json")
	if err != nil {
		t.Fatal(err)
	}
	var g struct {
		Source string
		Rows   []struct {
			M1, K, E float64
			Pi       []struct{ N, Pi float64 }
		}
	}
	if err := json.Unmarshal(raw, &g); err != nil {
		t.Fatal(err)
	}
	if len(g.Rows) < 10 {
		t.Fatalf("only %d golden rows", len(g.Rows))
	}
	t.Logf("golden source: %s", g.Source)
	for _, r := range g.Rows {
		kc := math.Sqrt(r.M1)
		t.Run(fmt.Sprintf("complementary parameter %g", r.M1), func(t *testing.T) {
			if e := relErr(Cel(kc, 1, 1, 1), r.K); e > 1e-14 {
				t.Errorf("K: got %.17g want %.17g (rel %.2g)", Cel(kc, 1, 1, 1), r.K, e)
			}
			if e := relErr(Cel(kc, 1, 1, kc*kc), r.E); e > 1e-14 {
				t.Errorf("E: got %.17g want %.17g (rel %.2g)", Cel(kc, 1, 1, kc*kc), r.E, e)
			}
			for _, p := range r.Pi {
				got := Cel(kc, 1-p.N, 1, 1)
				// The golden is R_F + (n/3) R_J: it cancels by about K/Π, so its own
				// rounding grows by that factor (large negative n).
				tol := 1e-14 * math.Max(1, r.K/math.Abs(p.Pi))
				if p.N > 1 {
					tol = 1e-11 // principal value: scipy's R_J and cel both lose a few digits
				}
				if e := relErr(got, p.Pi); e > tol {
					t.Errorf("Pi(n=%g): got %.17g want %.17g (rel %.2g)", p.N, got, p.Pi, e)
				}
			}
		})
	}
}

func TestEllipticLimits(t *testing.T) {
	t.Run("K and E at k=0 are pi/2 (definition)", func(t *testing.T) {
		if relErr(EllipticK(0), math.Pi/2) > 1e-15 || relErr(EllipticE(0), math.Pi/2) > 1e-15 {
			t.Errorf("K(0)=%v E(0)=%v", EllipticK(0), EllipticE(0))
		}
	})
	t.Run("K diverges and E is 1 at k=1 (definition)", func(t *testing.T) {
		if !math.IsInf(EllipticK(1), 1) || EllipticE(1) != 1 {
			t.Errorf("K(1)=%v E(1)=%v", EllipticK(1), EllipticE(1))
		}
	})
	t.Run("cel with kc=0 and b=0 matches a tiny kc (continuity)", func(t *testing.T) {
		for _, p := range []float64{0.3, 1, 7} {
			if e := relErr(Cel(0, p, 2, 0), Cel(1e-12, p, 2, 0)); e > 1e-9 {
				t.Errorf("p=%g: %v vs %v", p, Cel(0, p, 2, 0), Cel(1e-12, p, 2, 0))
			}
		}
	})
}
