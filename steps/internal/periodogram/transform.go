package periodogram

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// maxTransform bounds the fast transforms' length (8.4 million bins, about 400 MB of
// working arrays): a gap-free piece of 23 years at the default shortest period and
// oversampling. Real photometry has gaps long before that; a longer piece is refused.
const maxTransform = 1 << 23

// transformSize is the smallest length of at least n whose only prime factors are 2, 3
// and 5, which the transform takes fastest.
func transformSize(n int) int {
	for m := max(n, 1); ; m++ {
		r := m
		for _, p := range []int{2, 3, 5} {
			for r%p == 0 {
				r /= p
			}
		}
		if r == 1 {
			return m
		}
	}
}

// transforms holds the buffers of one length of transform and the sums it yields.
type transforms struct {
	fft      *fourier.CmplxFFT
	seq, out []complex128
	c, s     []float64 // Σw·cos, Σw·sin at each grid frequency
	yc, ys   []float64 // Σwy·cos, Σwy·sin
}

func newTransforms(size, n int) *transforms {
	return &transforms{
		fft: fourier.NewCmplxFFT(size), seq: make([]complex128, size), out: make([]complex128, size),
		c: make([]float64, n), s: make([]float64, n), yc: make([]float64, n), ys: make([]float64, n),
	}
}

// spectrum puts v[i]·e^{−2πi·f0·tᵢ} on the piece's even grid of bins (tᵢ = index·width,
// zero where no bin is) and transforms it: element k is Σᵢ v[i]·e^{−2πi(f0 + k/(size·width))tᵢ},
// whose real part is the sum of v·cos and whose imaginary part minus the sum of v·sin at
// that frequency. The origin of t does not change the power.
func (tr *transforms) spectrum(b *binned, v []float64, f0 float64) []complex128 {
	clear(tr.seq)
	for i, j := range b.index {
		s, c := math.Sincos(-2 * math.Pi * f0 * float64(j) * b.width)
		tr.seq[j] = complex(v[i]*c, v[i]*s)
	}
	return tr.fft.Coefficients(tr.out, tr.seq)
}

// transformed adds χ²(constant) − χ²(constant + sinusoid) at grid frequencies from,
// from+1, … to ex[from:], ex covering the whole grid, as explained does, with every sum
// at every frequency from three fast Fourier transforms of the binned piece (the idea of
// Press & Rybicki 1989, ApJ 338, 277, exact here because the bins lie on an even grid): of
// the weights and of the weighted values at the grid's frequencies, and of the weights
// at twice them for Σw·cos² = (W + Σw·cos 2θ)/2 and Σw·cos·sin = Σw·sin 2θ/2. The grid's
// step must be 1/(size·width). It costs three transforms instead of points × frequencies
// rotations.
func (b *binned) transformed(ex []float64, g Grid, from int, tr *transforms) {
	size := len(tr.seq)
	f := tr.spectrum(b, b.w, g.Start)
	for k := from; k < g.N; k++ {
		tr.c[k], tr.s[k] = real(f[k]), -imag(f[k])
	}
	f = tr.spectrum(b, b.wy, g.Start)
	for k := from; k < g.N; k++ {
		tr.yc[k], tr.ys[k] = real(f[k]), -imag(f[k])
	}
	f = tr.spectrum(b, b.w, 2*g.Start)
	for k := from; k < g.N; k++ {
		d := f[(2*k)%size] // twice the frequency: e^{−2πi·2k·j/size} repeats every size
		ex[k] += b.reduction(sums{c: tr.c[k], s: tr.s[k], yc: tr.yc[k], ys: tr.ys[k],
			cc: (b.wsum + real(d)) / 2, cs: -imag(d) / 2})
	}
}
