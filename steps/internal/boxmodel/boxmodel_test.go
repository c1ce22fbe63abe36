package boxmodel

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The closed form must equal a general weighted least-squares solve of the same design
// (gonum's QR on √w-scaled rows; gonum is the reference, not our algebra), with the
// parameter covariance (XᵀWX)⁻¹ for the errors.
func TestFitEqualsGeneralLeastSquares(t *testing.T) {
	n := 400
	f := make([]float64, n)
	w := make([]float64, n)
	grp := make([]int, n)
	for i := range f {
		x := float64(i)
		f[i] = 1 + 1e-3*math.Sin(1.7*x) + 3e-4*math.Cos(0.31*x)
		w[i] = 1 / math.Pow(1e-3*(1+0.5*math.Sin(0.05*x)), 2)
		switch {
		case i%50 < 5:
			grp[i] = 0
			f[i] -= 2e-3
		case i%50 >= 25 && i%50 < 28:
			grp[i] = 1
			f[i] -= 5e-4
		default:
			grp[i] = -1
		}
	}
	r := Fit(f, w, 2, func(i int) int { return grp[i] })

	// Columns: level, −[group 0], −[group 1].
	X := mat.NewDense(n, 3, nil)
	y := mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		s := math.Sqrt(w[i])
		X.Set(i, 0, s)
		if grp[i] >= 0 {
			X.Set(i, 1+grp[i], -s)
		}
		y.SetVec(i, s*f[i])
	}
	var beta mat.VecDense
	if err := beta.SolveVec(X, y); err != nil {
		t.Fatal(err)
	}
	var xtx, cov mat.Dense
	xtx.Mul(X.T(), X)
	if err := cov.Inverse(&xtx); err != nil {
		t.Fatal(err)
	}
	var res mat.VecDense
	res.MulVec(X, &beta)
	res.SubVec(y, &res)
	chi2 := mat.Dot(&res, &res)

	near := func(name string, got, want, tol float64) {
		t.Helper()
		if math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
			t.Errorf("%s = %.12g, general least squares %.12g", name, got, want)
		}
	}
	near("level", r.Level, beta.AtVec(0), 1e-12)
	near("depth 0", r.Depth[0], beta.AtVec(1), 1e-9)
	near("depth 1", r.Depth[1], beta.AtVec(2), 1e-9)
	near("sigma 0", r.Sigma[0], math.Sqrt(cov.At(1, 1)), 1e-9)
	near("sigma 1", r.Sigma[1], math.Sqrt(cov.At(2, 2)), 1e-9)
	near("chi2", r.Chi2, chi2, 1e-9)
	if r.Points[0] != 40 || r.Points[1] != 24 || r.Outside != n-64 || r.N != n {
		t.Errorf("points %v, outside %d, n %d", r.Points, r.Outside, r.N)
	}
	if !(r.Chi2Flat > r.Chi2) {
		t.Errorf("boxes should improve on a constant: %g vs %g", r.Chi2, r.Chi2Flat)
	}
}

func TestFitSkipsBadPointsAndEmptyGroups(t *testing.T) {
	f := []float64{1, 1, math.NaN(), 0.99, 1, 1}
	w := []float64{1, 1, 1, 1, 0, 1}
	r := Fit(f, w, 2, func(i int) int {
		if i == 3 || i == 2 {
			return 0
		}
		return -1
	})
	if r.N != 4 || r.Points[0] != 1 || r.Outside != 3 {
		t.Fatalf("n %d, points %v, outside %d", r.N, r.Points, r.Outside)
	}
	if math.Abs(r.Depth[0]-0.01) > 1e-15 || !math.IsNaN(r.Depth[1]) || !math.IsNaN(r.Sigma[1]) {
		t.Errorf("depths %v, sigmas %v", r.Depth, r.Sigma)
	}
}

// Half-way between two boxes (t = 2.0) rounds away from zero, as math.Round does.
func TestEphemeris(t *testing.T) {
	e := Ephemeris{Period: 2, Epoch: 1, Duration: 0.2}
	for _, c := range []struct {
		t    float64
		n    int64
		in   bool
		dist float64
	}{{1.05, 0, true, 0.05}, {4.95, 2, true, 0.05}, {-1.2, -1, false, 0.2}, {2.0, 1, false, 1}} {
		n, in := e.Inside(c.t)
		_, d := e.Cycle(c.t)
		if n != c.n || in != c.in || math.Abs(d-c.dist) > 1e-12 {
			t.Errorf("t = %g: cycle %d in %v dist %g; want %d %v %g", c.t, n, in, d, c.n, c.in, c.dist)
		}
	}
	if s := e.Shifted(0.5); s.Epoch != 2 || s.Period != 2 {
		t.Errorf("shifted: %+v", s)
	}
	// BIC: χ² + k ln n (Schwarz 1978).
	if got, want := BIC(10, 3, 100), 10+3*math.Log(100); got != want {
		t.Errorf("BIC %g, want %g", got, want)
	}
}

func TestOffsetIsTheSignedDistanceOfCycle(t *testing.T) {
	// By construction: a box every 2 d from epoch 1; t = 4.5 is 0.5 d before the box of
	// cycle 2 (at 5), t = 5.25 a quarter day after it.
	e := Ephemeris{Period: 2, Epoch: 1, Duration: 0.2}
	for _, c := range []struct {
		t, off float64
		n      int64
	}{{4.5, -0.5, 2}, {5.25, 0.25, 2}, {1, 0, 0}, {-0.5, 0.5, -1}} {
		n, off := e.Offset(c.t)
		cn, dist := e.Cycle(c.t)
		if n != c.n || off != c.off || cn != n || dist != math.Abs(off) {
			t.Errorf("t = %v: Offset (%d, %v), Cycle (%d, %v); want (%d, %v)", c.t, n, off, cn, dist, c.n, c.off)
		}
	}
}
