package sampler

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"dipline/steps/internal/rng"
)

// Guide is a multivariate Student-t density, fixed before a run, that the independence move
// proposes from (Options.GuideShare): a walker at x proposes y drawn from the guide whatever
// x is, and accepts with probability min(1, π(y) g(x) / (π(x) g(y))) — the independence
// Metropolis–Hastings sampler (Tierney 1994, Annals of Statistics 22, 1701, §2.3.3), valid for
// any guide that is positive wherever π is. Fitted to an earlier stretch of the chain
// (FitGuide), it proposes near-independent draws where the posterior is close to elliptical,
// which the stretch and differential-evolution moves reach only after many steps in a dozen
// or more dimensions. A guide that fits badly only lowers the move's acceptance.
type Guide struct {
	Mean []float64
	// Chol is the lower-triangular Cholesky factor L of the guide's scale matrix Σ = L Lᵀ,
	// row-major N×N.
	Chol []float64
	// Nu is the degrees of freedom, ≥ 1: heavier tails than a Gaussian's keep the ratio
	// π/g bounded a little further out, so a walker in the posterior's tail is not stranded.
	Nu int
}

// GuideNu is the degrees of freedom FitGuide gives a guide: 4, tails heavy enough to cover a
// posterior somewhat wider than its fitted covariance, light enough that most draws land in
// the bulk (our choice).
const GuideNu = 4

// NewGuide returns the Student-t guide of location mean, scale matrix cov (N×N, symmetric
// positive definite) and nu degrees of freedom.
func NewGuide(mean []float64, cov *mat.SymDense, nu int) (*Guide, error) {
	n := len(mean)
	if cov.SymmetricDim() != n {
		return nil, fmt.Errorf("%w: guide mean has %d entries, scale matrix is %d×%d", ErrConfig, n, cov.SymmetricDim(), cov.SymmetricDim())
	}
	if nu < 1 {
		return nil, fmt.Errorf("%w: guide degrees of freedom %d, must be ≥ 1", ErrConfig, nu)
	}
	var ch mat.Cholesky
	if !ch.Factorize(cov) {
		return nil, fmt.Errorf("%w: guide scale matrix is not positive definite", ErrConfig)
	}
	var l mat.TriDense
	ch.LTo(&l)
	g := &Guide{Mean: append([]float64(nil), mean...), Chol: make([]float64, n*n), Nu: nu}
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			g.Chol[i*n+j] = l.At(i, j)
		}
	}
	return g, nil
}

// FitGuide fits a guide to the stored steps from..Stored−1 of the chains, all walkers
// pooled: the sample mean, and the sample covariance times inflate² as the scale matrix, with
// GuideNu degrees of freedom. It fails when the samples do not span every dimension.
func FitGuide(chains []*Chain, from int, inflate float64) (*Guide, error) {
	if len(chains) == 0 {
		return nil, fmt.Errorf("%w: no chains to fit a guide to", ErrConfig)
	}
	n := chains[0].Dim
	mean := make([]float64, n)
	count := 0
	for _, c := range chains {
		for s := max(from, 0); s < c.Stored; s++ {
			for w := 0; w < c.Walkers; w++ {
				for i, v := range c.At(s, w) {
					mean[i] += v
				}
				count++
			}
		}
	}
	if count <= n {
		return nil, fmt.Errorf("%w: %d samples cannot fit a guide in %d dimensions", ErrConfig, count, n)
	}
	for i := range mean {
		mean[i] /= float64(count)
	}
	cov := mat.NewSymDense(n, nil)
	d := make([]float64, n)
	for _, c := range chains {
		for s := max(from, 0); s < c.Stored; s++ {
			for w := 0; w < c.Walkers; w++ {
				for i, v := range c.At(s, w) {
					d[i] = v - mean[i]
				}
				for i := 0; i < n; i++ {
					for j := i; j < n; j++ {
						cov.SetSym(i, j, cov.At(i, j)+d[i]*d[j])
					}
				}
			}
		}
	}
	f := inflate * inflate / float64(count-1)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			cov.SetSym(i, j, cov.At(i, j)*f)
		}
	}
	return NewGuide(mean, cov, GuideNu)
}

// draw writes into y a draw from the guide, using exactly N + Nu normal deviates of r:
// y = μ + L z √(ν/w), z standard normal, w a χ² variate with ν degrees of freedom (the sum
// of ν squared normals), the usual construction of the multivariate t.
func (g *Guide) draw(y []float64, r *rng.Stream) {
	n := len(g.Mean)
	for i := range y {
		y[i] = r.Normal()
	}
	w := 0.0
	for range g.Nu {
		v := r.Normal()
		w += v * v
	}
	s := math.Sqrt(float64(g.Nu) / w)
	// y ← μ + s·L y, from the last row up so each z_i is read before it is overwritten.
	for i := n - 1; i >= 0; i-- {
		row := g.Chol[i*n : i*n+i+1]
		v := 0.0
		for j, l := range row {
			v += l * y[j]
		}
		y[i] = g.Mean[i] + s*v
	}
}

// logDensity is the log of the guide's density at x up to a constant:
// −(ν + N)/2 · ln(1 + m/ν), m = |L⁻¹(x − μ)|² by forward substitution into d (len N).
func (g *Guide) logDensity(x, d []float64) float64 {
	n := len(g.Mean)
	m := 0.0
	for i := 0; i < n; i++ {
		v := x[i] - g.Mean[i]
		row := g.Chol[i*n : i*n+i]
		for j, l := range row {
			v -= l * d[j]
		}
		v /= g.Chol[i*n+i]
		d[i] = v
		m += v * v
	}
	nu := float64(g.Nu)
	return -0.5 * (nu + float64(n)) * math.Log1p(m/nu)
}
