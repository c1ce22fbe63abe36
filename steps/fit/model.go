package fit

import (
	"math"
	"sync"

	"dipline/steps/internal/transit"
)

// gravity is the Newtonian constant of gravitation, CODATA 2018, m³ kg⁻¹ s⁻² (REFERENCES §1).
const gravity = 6.67430e-11

// secondsPerDay is the Julian day in seconds (REFERENCES §1).
const secondsPerDay = 86400.0

// ScaledAxis is a/R* of a circular orbit of period P (days) around a star of mean density
// rho (g/cm³) by Kepler's third law, a/R* = (G ρ P² / 3π)^{1/3}, neglecting the planet's
// mass (Seager & Mallén-Ornelas 2003, ApJ 585, 1038; REFERENCES §4).
func ScaledAxis(period, rho float64) float64 {
	p := period * secondsPerDay
	return math.Cbrt(gravity * rho * 1000 * p * p / (3 * math.Pi))
}

// DensityFromAxis inverts ScaledAxis: ρ = 3π (a/R*)³ / (G P²), in g/cm³.
func DensityFromAxis(period, aR float64) float64 {
	p := period * secondsPerDay
	return 3 * math.Pi * aR * aR * aR / (gravity * p * p) / 1000
}

// TotalDuration is the first-to-last-contact duration T14 of a circular orbit (Winn 2010,
// arXiv:1001.2010, eq. 14 with e = 0): (P/π) asin[√((1+k)² − b²) / (aR sin i)], with
// aR cos i = b. It is 0 for a non-transiting geometry and P/2 when the argument exceeds 1.
func TotalDuration(period, k, b, aR float64) float64 {
	h := (1+k)*(1+k) - b*b
	if !(h > 0) || !(aR > b) {
		return 0
	}
	sinI := math.Sqrt(1 - (b/aR)*(b/aR))
	arg := math.Sqrt(h) / (aR * sinI)
	if arg >= 1 {
		return period / 2
	}
	return period / math.Pi * math.Asin(arg)
}

// Parameter layout of the sampled vector: per planet j, four entries at 4j (period, mid-time
// at the reference epoch, k = Rp/R*, impact parameter b); then log10 of the stellar density
// (g/cm³), q1, q2; then, when jitter is on, one ln σ_jitter per segment.
const (
	perPlanet = 4
	iPeriod   = 0
	iT0       = 1
	iK        = 2
	iB        = 3
)

// segData is the part of one segment that enters the likelihood.
type segData struct {
	t, f, v []float64 // times, fluxes and error variances of the points kept
	nsub    int       // sub-exposures per point
	fine    []float64 // sub-exposure times, len(t)·nsub
}

// Model is the log-posterior of the transit model over the points near predicted transits.
// It is safe for concurrent use: scratch space comes from a sync.Pool.
type Model struct {
	planets int
	jitter  bool
	segs    []segData
	lo, hi  []float64 // uniform prior bounds per parameter (b is also bounded by 1+k)
	maxFine int
	scratch sync.Pool
}

// dim is the number of sampled parameters.
func (m *Model) dim() int {
	d := perPlanet*m.planets + 3
	if m.jitter {
		d += len(m.segs)
	}
	return d
}

type workspace struct{ z, fl, sum, avg []float64 }

func (m *Model) workspace() *workspace {
	if w, ok := m.scratch.Get().(*workspace); ok {
		return w
	}
	n := m.maxFine
	return &workspace{z: make([]float64, n), fl: make([]float64, n), sum: make([]float64, n), avg: make([]float64, n)}
}

// LogPost is the log posterior up to a constant: uniform priors within the bounds (uniform
// in log10 density and ln jitter, that is log-uniform in them), b < 1+k, a/R* > 1+k, and the
// Gaussian likelihood with each segment's multiplicative flux normalisation c marginalised
// analytically under a uniform prior: ∫ exp(−½(C − 2cB + c²A)) dc = √(2π/A) exp(−½(C − B²/A)),
// with A = Σ w m², B = Σ w f m, C = Σ w f², w = 1/(σ² + s²). Outside the prior it is −Inf.
func (m *Model) LogPost(x []float64) float64 {
	for i, v := range x {
		if !(v >= m.lo[i] && v <= m.hi[i]) {
			return math.Inf(-1)
		}
	}
	np := m.planets
	base := perPlanet * np
	rho := math.Pow(10, x[base])
	u1, u2 := transit.QuadraticFromKipping(x[base+1], x[base+2])
	var aR [maxPlanets]float64
	for j := 0; j < np; j++ {
		p := x[perPlanet*j:]
		k, b := p[iK], p[iB]
		if !(b < 1+k) {
			return math.Inf(-1)
		}
		aR[j] = ScaledAxis(p[iPeriod], rho)
		if !(aR[j] > 1+k) {
			return math.Inf(-1)
		}
	}
	ws := m.workspace()
	defer m.scratch.Put(ws)
	lp := 0.0
	for s := range m.segs {
		sd := &m.segs[s]
		n := len(sd.fine)
		sum := ws.sum[:n]
		for i := range sum {
			sum[i] = 1
		}
		for j := 0; j < np; j++ {
			p := x[perPlanet*j:]
			z := transit.SeparationCircular(ws.z[:n], sd.fine, p[iPeriod], p[iT0], aR[j], p[iB])
			fl := transit.Flux(ws.fl[:n], z, p[iK], u1, u2)
			for i, v := range fl {
				sum[i] += v - 1
			}
		}
		mod := transit.AverageBlocks(ws.avg[:len(sd.t)], sum, sd.nsub)
		s2 := 0.0
		if m.jitter {
			js := math.Exp(x[base+3+s])
			s2 = js * js
		}
		var A, B, C, logDet float64
		for i, mi := range mod {
			vi := sd.v[i] + s2
			w := 1 / vi
			fi := sd.f[i]
			A += w * mi * mi
			B += w * fi * mi
			C += w * fi * fi
			logDet += math.Log(vi)
		}
		if !(A > 0) {
			return math.Inf(-1)
		}
		lp += -0.5*(C-B*B/A) - 0.5*logDet + 0.5*math.Log(2*math.Pi/A) - 0.5*float64(len(mod))*math.Log(2*math.Pi)
	}
	return lp
}
