package sampler

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/dsp/fourier"
)

// DefaultWindowFactor is Sokal's c in the automatic window M ≥ c·τ(M) (Sokal 1997, NATO ASI
// B 361, 131; c ≈ 5 as in common practice).
const DefaultWindowFactor = 5.0

// minLengthPerTau is the chain length, in units of τ, below which an estimate of τ is not
// trusted (50τ, common practice in public autocorrelation code).
const minLengthPerTau = 50

// AutoCorr is the integrated autocorrelation time of one parameter.
type AutoCorr struct {
	Tau    float64 // τ_int = 1 + 2 Σ_{t=1}^{Window} ρ̂(t), in steps
	Window int     // Sokal's window M: the smallest M with M ≥ c·τ(M)
	// Trusted is true when a window was found and every series is longer than 50 τ.
	Trusted bool
}

// AutoCorrTime estimates the integrated autocorrelation time of one parameter from series,
// one per walker (all of the same length n ≥ 2), as in Goodman & Weare (2010) and
// Foreman-Mackey et al. (2013): the normalised autocorrelation ρ̂(t) of each series is
// computed by FFT (zero-padded to a power of two ≥ 2n, so there is no wrap-around) with the
// biased estimator Ĉ(t) = (1/n) Σ (x_i − x̄)(x_{i+t} − x̄), averaged over walkers, and summed
// with Sokal's automatic window, factor c (0 means DefaultWindowFactor). Walkers whose series
// is constant carry no information and are left out; if all are, it is an error.
func AutoCorrTime(series [][]float64, c float64) (AutoCorr, error) {
	if c == 0 {
		c = DefaultWindowFactor
	}
	if !(c > 0) || math.IsInf(c, 1) {
		return AutoCorr{}, fmt.Errorf("sampler: window factor %v, must be finite and positive", c)
	}
	if len(series) == 0 {
		return AutoCorr{}, fmt.Errorf("sampler: no series for the autocorrelation time")
	}
	n := len(series[0])
	if n < 2 {
		return AutoCorr{}, fmt.Errorf("sampler: series of length %d; the autocorrelation time needs at least 2 steps", n)
	}
	m := 1
	for m < 2*n {
		m <<= 1
	}
	fft := fourier.NewFFT(m)
	buf := make([]float64, m)
	coef := make([]complex128, m/2+1)
	acov := make([]float64, m)
	rho := make([]float64, n)
	used := 0
	for w, s := range series {
		if len(s) != n {
			return AutoCorr{}, fmt.Errorf("sampler: series %d has %d steps, series 0 has %d", w, len(s), n)
		}
		var mean float64
		for _, v := range s {
			mean += v
		}
		mean /= float64(n)
		for i, v := range s {
			buf[i] = v - mean
		}
		clear(buf[n:])
		fft.Coefficients(coef, buf)
		for i, z := range coef {
			coef[i] = complex(real(z)*real(z)+imag(z)*imag(z), 0)
		}
		fft.Sequence(acov, coef)
		if !(acov[0] > 0) {
			continue // constant series
		}
		used++
		for t := range rho {
			rho[t] += acov[t] / acov[0]
		}
	}
	if used == 0 {
		return AutoCorr{}, fmt.Errorf("sampler: every series is constant; the autocorrelation time is undefined")
	}
	tau := 1.0
	for M := 1; M < n; M++ {
		tau += 2 * rho[M] / float64(used)
		if float64(M) >= c*tau {
			return AutoCorr{Tau: tau, Window: M, Trusted: float64(n) > minLengthPerTau*tau}, nil
		}
	}
	return AutoCorr{Tau: tau, Window: n - 1}, nil
}

// EffectiveSamples is the effective number of independent draws in walkers × steps draws of
// a parameter with autocorrelation time tau (Sokal 1997): walkers·steps/τ.
func EffectiveSamples(walkers, steps int, tau float64) float64 {
	return float64(walkers) * float64(steps) / tau
}

// SplitRhat is the classic split potential scale reduction factor (Gelman & Rubin 1992, with
// each chain split in halves, Gelman et al. 2013, BDA3 §11.4): with m half-chains of n draws
// (a chain of odd length drops its middle draw), W the mean within-half variance, B/n the
// variance of the half means, R̂ = sqrt(((n−1)/n·W + B/n)/W). All chains must have the same
// length ≥ 4. NaN when every draw is equal; +Inf when the halves are constant but differ.
func SplitRhat(chains [][]float64) (float64, error) {
	if len(chains) == 0 {
		return 0, fmt.Errorf("sampler: no chains for R-hat")
	}
	L := len(chains[0])
	if L < 4 {
		return 0, fmt.Errorf("sampler: chains of %d draws; split R-hat needs at least 4", L)
	}
	n := L / 2
	m := 2 * len(chains)
	means := make([]float64, 0, m)
	var W float64
	for i, ch := range chains {
		if len(ch) != L {
			return 0, fmt.Errorf("sampler: chain %d has %d draws, chain 0 has %d", i, len(ch), L)
		}
		for _, half := range [2][]float64{ch[:n], ch[L-n:]} {
			var mu float64
			for _, v := range half {
				mu += v
			}
			mu /= float64(n)
			var ss float64
			for _, v := range half {
				ss += (v - mu) * (v - mu)
			}
			W += ss / float64(n-1)
			means = append(means, mu)
		}
	}
	W /= float64(m)
	var mbar float64
	for _, mu := range means {
		mbar += mu
	}
	mbar /= float64(m)
	var bOverN float64
	for _, mu := range means {
		bOverN += (mu - mbar) * (mu - mbar)
	}
	bOverN /= float64(m - 1)
	if W == 0 {
		if bOverN == 0 {
			return math.NaN(), nil
		}
		return math.Inf(1), nil
	}
	return math.Sqrt((float64(n-1)/float64(n)*W + bOverN) / W), nil
}

// RankRhat is the rank-normalised split R̂ of Vehtari, Gelman, Simpson, Carpenter & Bürkner
// (2021, Bayesian Analysis 16, 667): the larger of SplitRhat on the rank-normalised draws
// z = Φ⁻¹((r − 3/8)/(S + 1/4)) (r the rank among all S draws, ties averaged) and on the
// rank-normalised folded draws |θ − median|. It is robust to heavy tails and detects chains
// that differ in scale as well as in location.
func RankRhat(chains [][]float64) (float64, error) {
	bulk, err := SplitRhat(rankNormal(chains, false))
	if err != nil {
		return 0, err
	}
	tail, err := SplitRhat(rankNormal(chains, true))
	if err != nil {
		return 0, err
	}
	if math.IsNaN(bulk) || math.IsNaN(tail) {
		return math.NaN(), nil
	}
	return math.Max(bulk, tail), nil
}

// rankNormal returns the rank-normalised copy of chains (of |θ − median| when fold is set).
// Ragged chains are passed through for SplitRhat to report.
func rankNormal(chains [][]float64, fold bool) [][]float64 {
	type draw struct {
		v    float64
		c, i int
	}
	var all []draw
	for c, ch := range chains {
		for i, v := range ch {
			all = append(all, draw{v, c, i})
		}
	}
	if fold {
		vs := make([]float64, len(all))
		for i, d := range all {
			vs[i] = d.v
		}
		sort.Float64s(vs)
		var med float64
		if k := len(vs); k > 0 {
			med = (vs[(k-1)/2] + vs[k/2]) / 2
		}
		for i := range all {
			all[i].v = math.Abs(all[i].v - med)
		}
	}
	// Tied draws share their average rank, so their order among themselves does not matter:
	// an unstable sort will do (the reflection-based stable sort took most of a long fit's
	// final seconds).
	slices.SortFunc(all, func(a, b draw) int { return cmp.Compare(a.v, b.v) })
	out := make([][]float64, len(chains))
	for c, ch := range chains {
		out[c] = make([]float64, len(ch))
	}
	S := float64(len(all))
	for lo := 0; lo < len(all); {
		hi := lo + 1
		for hi < len(all) && all[hi].v == all[lo].v {
			hi++
		}
		r := float64(lo+1+hi) / 2 // average of ranks lo+1 … hi
		z := math.Sqrt2 * math.Erfinv(2*(r-0.375)/(S+0.25)-1)
		for _, d := range all[lo:hi] {
			out[d.c][d.i] = z
		}
		lo = hi
	}
	return out
}

// EnsembleRhat is RankRhat of parameter p across independently seeded ensembles, using
// stored steps from..end: each ensemble counts as one chain whose draws are its walkers'
// positions step after step, so a half-chain is the first or last half of its steps.
// The ensembles must have the same shape.
func EnsembleRhat(ensembles []*Chain, p, from int) (float64, error) {
	if len(ensembles) < 2 {
		return 0, fmt.Errorf("sampler: R-hat needs at least 2 ensembles, got %d", len(ensembles))
	}
	chains := make([][]float64, len(ensembles))
	for e, ch := range ensembles {
		if p < 0 || p >= ch.Dim {
			return 0, fmt.Errorf("sampler: parameter %d outside ensemble %d's %d parameters", p, e, ch.Dim)
		}
		var flat []float64
		for s := max(from, 0); s < ch.Stored; s++ {
			for w := 0; w < ch.Walkers; w++ {
				flat = append(flat, ch.Samples[(s*ch.Walkers+w)*ch.Dim+p])
			}
		}
		chains[e] = flat
	}
	return RankRhat(chains)
}

// Quantile returns the p-quantile (0 ≤ p ≤ 1) of the sorted draws s by linear interpolation
// between order statistics (Hyndman & Fan 1996, type 7, the common default), NaN when s is
// empty. The fit and derive steps summarise posteriors with it.
func Quantile(s []float64, p float64) float64 {
	if len(s) == 0 {
		return math.NaN()
	}
	h := p * float64(len(s)-1)
	i := int(h)
	if i+1 >= len(s) {
		return s[len(s)-1]
	}
	return s[i] + (h-float64(i))*(s[i+1]-s[i])
}
