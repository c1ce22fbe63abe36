package rotation

import "math"

// band is a symmetric positive definite matrix of order n stored by its lower band of half
// width w: a[i·(w+1)+d] = A(i, i−d) for 0 ≤ d ≤ w. The model's normal equations are banded
// because a point touches only the four B-splines of its knot interval.
type band struct {
	n, w int
	a    []float64
}

func newBand(n, w int) *band {
	return &band{n: n, w: w, a: make([]float64, n*(w+1))}
}

// at is A(i, k), zero outside the band.
func (b *band) at(i, k int) float64 {
	if i < k {
		i, k = k, i
	}
	if i-k > b.w {
		return 0
	}
	return b.a[i*(b.w+1)+i-k]
}

// sub is the principal submatrix of the rows and columns idx (ascending), as a band of half
// width w, which must cover every non-zero entry of the submatrix.
func (b *band) sub(idx []int, w int) *band {
	s := newBand(len(idx), w)
	for i := range idx {
		for d := 0; d <= w && d <= i; d++ {
			s.a[i*(w+1)+d] = b.at(idx[i], idx[i-d])
		}
	}
	return s
}

// cholesky factors the band in place into its lower Cholesky factor L (A = L·Lᵀ), after
// adding ridge to every diagonal element; false when A + ridge·I is not positive definite
// to working precision.
func (b *band) cholesky(ridge float64) bool {
	w, a := b.w, b.a
	for j := 0; j < b.n; j++ {
		a[j*(w+1)] += ridge
	}
	for j := 0; j < b.n; j++ {
		s := a[j*(w+1)]
		for k := max(0, j-w); k < j; k++ {
			l := a[j*(w+1)+j-k]
			s -= l * l
		}
		if !(s > 0) {
			return false
		}
		d := math.Sqrt(s)
		a[j*(w+1)] = d
		for i := j + 1; i <= min(b.n-1, j+w); i++ {
			s := a[i*(w+1)+i-j]
			for k := max(0, i-w); k < j; k++ {
				s -= a[i*(w+1)+i-k] * a[j*(w+1)+j-k]
			}
			a[i*(w+1)+i-j] = s / d
		}
	}
	return true
}

// solve returns x with L·Lᵀ·x = r for a factored band.
func (b *band) solve(r []float64) []float64 {
	w, a := b.w, b.a
	x := append([]float64(nil), r...)
	for i := 0; i < b.n; i++ {
		s := x[i]
		for k := max(0, i-w); k < i; k++ {
			s -= a[i*(w+1)+i-k] * x[k]
		}
		x[i] = s / a[i*(w+1)]
	}
	for i := b.n - 1; i >= 0; i-- {
		s := x[i]
		for k := i + 1; k <= min(b.n-1, i+w); k++ {
			s -= a[k*(w+1)+k-i] * x[k]
		}
		x[i] = s / a[i*(w+1)]
	}
	return x
}

// maxDiag is the largest diagonal element.
func (b *band) maxDiag() float64 {
	m := 0.0
	for i := 0; i < b.n; i++ {
		m = max(m, b.a[i*(b.w+1)])
	}
	return m
}
