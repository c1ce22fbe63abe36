package derive

import (
	"math"
	"sort"

	"dipline/steps/internal/parallel"
	"dipline/steps/internal/rng"
)

// Kernel choices, each with its reason.
const (
	// kernelReach truncates the Gaussian kernel at 8 bandwidths: exp(−32) ≈ 1e-14 of the
	// peak, below double-precision significance in any sum it would join.
	kernelReach = 8.0
	// minBandwidth floors the bandwidth in ln ρ (0.01 % in density) so that a star given
	// without spread still yields a usable, very narrow kernel rather than a division by
	// zero; the effective sample size then says how little of the fit survives.
	minBandwidth = 1e-4
	// maxRejections bounds the rejection sampler of Pairing.Pick before it falls back to an
	// exact categorical draw over the window; acceptance is ≳ 1/8 in the body of the
	// distribution, so the fallback only runs for draws deep in a tail.
	maxRejections = 64
)

// SilvermanBandwidth returns the rule-of-thumb bandwidth of a Gaussian kernel density
// estimate, h = 0.9 min(σ̂, IQR/1.34) n^{−1/5} (Silverman 1986, Density Estimation for
// Statistics and Data Analysis, eq. 3.31), for sorted draws s; σ̂ alone when the IQR is
// zero. It is near-optimal for a near-Gaussian density and robust to a few outliers; the
// smoothing widens the estimate's variance by h² (about 2 % of σ² for 10⁴ draws).
func SilvermanBandwidth(s []float64) float64 {
	n := float64(len(s))
	if n < 2 {
		return minBandwidth
	}
	var mean, m2 float64
	for i, x := range s { // Welford's running mean and variance
		d := x - mean
		mean += d / float64(i+1)
		m2 += d * (x - mean)
	}
	sd := math.Sqrt(m2 / (n - 1))
	a := sd
	if iqr := (quantile(s, 0.75) - quantile(s, 0.25)) / 1.34; iqr > 0 && iqr < sd {
		a = iqr
	}
	return math.Max(minBandwidth, 0.9*a*math.Pow(n, -0.2))
}

// Pairing is a Gaussian kernel density estimate over draws x_j (here ln ρ of the star's
// draws) that both weights other samples by the estimated density and, for a sample at x,
// picks a draw j with probability ∝ K((x − x_j)/h). Together they sample the joint density
// ∝ L(θ) K((x(θ) − x_j)/h) over a fit sample θ and a star draw j: its θ-marginal is the
// reweighted posterior and its conditional in j keeps each pair consistent in x, so the
// star's other properties (radius, mass) drawn with x_j stay correlated with the fit's
// density up to the bandwidth. What it neglects: the star's ln ρ is smoothed by h (its
// variance widened by h²), and a pair's two densities differ by about h.
//
// A kernel estimate rather than a fitted log-normal: a star's density draws need not be
// log-normal (a star between main sequence and subgiant gives a skewed or two-humped
// density), and a kernel estimate follows whatever shape the star step produced; for a
// log-normal star the two agree up to the h² widening.
type Pairing struct {
	X     []float64 // sorted draws
	Index []int     // Index[i] is the original position of X[i]
	H     float64   // bandwidth
}

// NewPairing sorts the finite draws x (keeping their positions) and sets the Silverman
// bandwidth; non-finite draws are left out.
func NewPairing(x []float64) *Pairing {
	p := &Pairing{}
	for j, v := range x {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			p.Index = append(p.Index, j)
		}
	}
	sort.SliceStable(p.Index, func(a, b int) bool { return x[p.Index[a]] < x[p.Index[b]] })
	p.X = make([]float64, len(p.Index))
	for i, j := range p.Index {
		p.X[i] = x[j]
	}
	p.H = SilvermanBandwidth(p.X)
	return p
}

// window returns the range [lo, hi) of sorted draws within kernelReach bandwidths of x.
func (p *Pairing) window(x float64) (lo, hi int) {
	r := kernelReach * p.H
	lo = sort.SearchFloat64s(p.X, x-r)
	hi = sort.SearchFloat64s(p.X, x+r)
	for hi < len(p.X) && p.X[hi] <= x+r {
		hi++
	}
	return lo, hi
}

// Density returns Σ_j exp(−½((x − x_j)/h)²), the kernel density estimate at x up to the
// constant factor 1/(n h √(2π)), which cancels in weights and effective sample sizes.
func (p *Pairing) Density(x float64) float64 {
	lo, hi := p.window(x)
	s := 0.0
	for _, xj := range p.X[lo:hi] {
		u := (x - xj) / p.H
		s += math.Exp(-0.5 * u * u)
	}
	return s
}

// gridStep is the spacing, in bandwidths, of the table of ln density that Weights
// interpolates: with cubic interpolation the error scales as step⁴, and a log-quadratic
// single kernel is interpolated exactly.
const gridStep = 1.0 / 20

// Weights writes Density(x_i) for every x_i into dst (reallocated when short). Where a
// table pays off (more samples than table nodes), ln Density is tabulated every h/20 over
// the samples' range and interpolated by a cubic Lagrange polynomial through the four
// nearest nodes; a sample whose stencil touches a zero of the density, or outside the
// table, is evaluated exactly. The relative error against exact evaluation is below 1e-6
// (TestWeightsMatchExactDensity). run runs fixed-size blocks; nil runs serially.
func (p *Pairing) Weights(dst, x []float64, run parallel.Func) []float64 {
	if len(dst) < len(x) {
		dst = make([]float64, len(x))
	}
	dst = dst[:len(x)]
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range x {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if len(p.X) > 0 {
		lo = math.Max(lo, p.X[0]-kernelReach*p.H)
		hi = math.Min(hi, p.X[len(p.X)-1]+kernelReach*p.H)
	}
	step := gridStep * p.H
	var table []float64
	var g0 float64
	if hi > lo {
		nodes := int(math.Ceil((hi-lo)/step)) + 4
		if nodes < len(x) {
			g0 = lo - step
			table = make([]float64, nodes)
			par(run, nodes, func(a, b int) {
				for m := a; m < b; m++ {
					table[m] = math.Log(p.Density(g0 + float64(m)*step))
				}
			})
		}
	}
	par(run, len(x), func(a, b int) {
		for i := a; i < b; i++ {
			dst[i] = p.interpolate(x[i], table, g0, step)
		}
	})
	return dst
}

// interpolate returns the density at x from the ln-density table (nodes g0 + m·step), or
// exactly when the table cannot serve.
func (p *Pairing) interpolate(x float64, table []float64, g0, step float64) float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0
	}
	if table == nil {
		return p.Density(x)
	}
	u := (x - g0) / step
	m := int(math.Floor(u)) - 1 // stencil m … m+3 around x in [m+1, m+2)
	if u < 1 || m+3 >= len(table) {
		return p.Density(x)
	}
	f := table[m : m+4]
	for _, v := range f {
		if math.IsInf(v, 0) || math.IsNaN(v) {
			return p.Density(x)
		}
	}
	t := u - float64(m) // in [1, 2)
	// Lagrange weights for nodes at 0, 1, 2, 3.
	l0 := -(t - 1) * (t - 2) * (t - 3) / 6
	l1 := t * (t - 2) * (t - 3) / 2
	l2 := -t * (t - 1) * (t - 3) / 2
	l3 := t * (t - 1) * (t - 2) / 6
	return math.Exp(l0*f[0] + l1*f[1] + l2*f[2] + l3*f[3])
}

// Pick returns the original position of a draw chosen with probability ∝ K((x − x_j)/h),
// by rejection from a uniform proposal over the kernel's window (exact, as the acceptance
// K/K(0) ≤ 1), falling back to an exact categorical draw after maxRejections. With no draw
// in the window it returns the nearest draw.
func (p *Pairing) Pick(x float64, r *rng.Stream) int {
	lo, hi := p.window(x)
	if hi <= lo {
		i := sort.SearchFloat64s(p.X, x)
		if i == len(p.X) || (i > 0 && x-p.X[i-1] <= p.X[i]-x) {
			i--
		}
		return p.Index[i]
	}
	n := hi - lo
	for try := 0; try < maxRejections; try++ {
		i := lo + r.Intn(n)
		u := (x - p.X[i]) / p.H
		if r.Float64() < math.Exp(-0.5*u*u) {
			return p.Index[i]
		}
	}
	total := p.Density(x)
	t := r.Float64() * total
	for i := lo; i < hi; i++ {
		u := (x - p.X[i]) / p.H
		t -= math.Exp(-0.5 * u * u)
		if t < 0 {
			return p.Index[i]
		}
	}
	return p.Index[hi-1]
}

// KishESS returns the effective sample size of weights w, (Σw)²/Σw² (Kish 1965, Survey
// Sampling): n for equal weights, 1 when one weight holds everything, 0 when all are zero.
func KishESS(w []float64) float64 {
	var s, s2 float64
	for _, x := range w {
		s += x
		s2 += x * x
	}
	if s2 == 0 {
		return 0
	}
	return s * s / s2
}

// cumulative returns the running sums of w (serially, so the result does not depend on
// how the weights were computed in parallel).
func cumulative(w []float64) []float64 {
	c := make([]float64, len(w))
	s := 0.0
	for i, x := range w {
		s += x
		c[i] = s
	}
	return c
}

// pickWeighted returns i with probability w_i/Σw given the running sums c of w.
func pickWeighted(c []float64, r *rng.Stream) int {
	t := r.Float64() * c[len(c)-1]
	i := sort.Search(len(c), func(i int) bool { return c[i] > t })
	if i == len(c) {
		i = len(c) - 1
	}
	return i
}
