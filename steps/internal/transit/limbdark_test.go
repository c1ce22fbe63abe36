package transit

import (
	"fmt"
	"math"
	"testing"
)

// Kipping (2013), MNRAS 435, 2152: the unit square in (q1, q2) maps onto the physical
// triangle u1 + u2 ≤ 1, u1 ≥ 0, u1 + 2u2 ≥ 0 (strict inside the open square), and back.
func TestKippingMapsSquareOntoPhysicalTriangle(t *testing.T) {
	const n = 64
	for i := 0; i <= n; i++ {
		for j := 0; j <= n; j++ {
			q1, q2 := float64(i)/n, float64(j)/n
			u1, u2 := QuadraticFromKipping(q1, q2)
			const slack = 1e-15
			if u1+u2 > 1+slack || u1 < -slack || u1+2*u2 < -slack {
				t.Fatalf("q=(%g,%g) gives unphysical u=(%g,%g)", q1, q2, u1, u2)
			}
			interior := i > 0 && i < n && j > 0 && j < n
			if interior && !(u1+u2 < 1 && u1 > 0 && u1+2*u2 > 0) {
				t.Fatalf("interior q=(%g,%g) gives u=(%g,%g) on the boundary", q1, q2, u1, u2)
			}
			if i == 0 {
				continue // q2 is undefined at q1 = 0
			}
			b1, b2 := KippingFromQuadratic(u1, u2)
			if math.Abs(b1-q1) > 1e-14 || math.Abs(b2-q2) > 1e-14 {
				t.Fatalf("round trip q=(%g,%g) → (%g,%g)", q1, q2, b1, b2)
			}
		}
	}
}

func TestKippingKnownPoints(t *testing.T) {
	// Worked by hand from the formulas of Kipping (2013, MNRAS 435, 2152).
	cases := []struct{ u1, u2, q1, q2 float64 }{
		{0.4, 0.25, 0.4225, 0.4 / 1.3},
		{1, 0, 1, 0.5}, // linear law, fully dark limb
		{0, 0, 0, 0},   // uniform disk: q2 returned as 0 by convention
		{2, -1, 1, 1},  // corner u1 + 2u2 = 0
		{0, 1, 1, 0},   // corner u1 = 0
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("u=(%g,%g) maps to q=(%.4g,%.4g)", c.u1, c.u2, c.q1, c.q2), func(t *testing.T) {
			q1, q2 := KippingFromQuadratic(c.u1, c.u2)
			if math.Abs(q1-c.q1) > 1e-15 || math.Abs(q2-c.q2) > 1e-15 {
				t.Errorf("got (%g,%g)", q1, q2)
			}
		})
	}
}
