package fit

import (
	"math"
	"sync"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/transit"
)

// The constants come from the project's one table of them (CODATA 2018 G, the Julian day).
const (
	gravity       = astro.G
	secondsPerDay = astro.Day
)

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

// segData is the part of one segment that enters the likelihood; all of it is fixed before
// sampling.
type segData struct {
	t, f, v []float64 // times, fluxes and error variances of the points kept
	nsub    int       // sub-exposures per point
	half    float64   // half the exposure (days; 0 when the points are instants)
	fine    []float64 // sub-exposure times, len(t)·nsub, point by point
}

// contactMargin widens, in periods, the phase window within which a point is modelled
// (about 0.03 s for a 3-day period): a point further from every mid-transit has each of its
// sub-exposures at a separation beyond 1 + k by far more than rounding, so its flux is
// exactly 1 and is not computed (our choice; LogPost is unchanged, see model_test.go).
const contactMargin = 1e-7

// Model is the log-posterior of the transit model over the points near predicted transits.
// It is safe for concurrent use: scratch space comes from a sync.Pool.
type Model struct {
	planets   int
	jitter    bool
	segs      []segData
	lo, hi    []float64 // uniform prior bounds per parameter (b is also bounded by 1+k)
	maxFine   int
	maxPoints int
	scratch   sync.Pool
}

// dim is the number of sampled parameters.
func (m *Model) dim() int {
	d := perPlanet*m.planets + 3
	if m.jitter {
		d += len(m.segs)
	}
	return d
}

// workspace is the scratch space of one LogPost call.
type workspace struct {
	tsub, z, fl []float64 // sub-exposure times, separations, fluxes of one planet's transits
	sum         []float64 // 1 + Σ_planets (flux − 1) per sub-exposure of the points modelled
	mod         []float64 // exposure-averaged model per point
	slot        []int32   // per point: its block in sum, or −1 when no planet is near
	near        [maxPlanets][]int32
}

func (m *Model) workspace() *workspace {
	if w, ok := m.scratch.Get().(*workspace); ok {
		return w
	}
	n, p := m.maxFine, m.maxPoints
	w := &workspace{tsub: make([]float64, n), z: make([]float64, n), fl: make([]float64, n), sum: make([]float64, n),
		mod: make([]float64, p), slot: make([]int32, p)}
	for j := 0; j < m.planets; j++ {
		w.near[j] = make([]int32, 0, p)
	}
	return w
}

// model writes into ws.mod the model of segment sd: per point the mean over its
// sub-exposures of 1 + Σ_planets (flux − 1). Only points whose exposure may overlap a
// transit (phase within the contact half-angle plus half the exposure plus contactMargin)
// are integrated, and each planet's flux is computed only for the points near its own
// transits; the rest are exactly 1, as the full computation gives (Flux returns 1 beyond
// contact and adding 1 − 1 = 0 changes no sum), so the result is the same to the bit.
func (m *Model) model(ws *workspace, sd *segData, x []float64, aR []float64, u1, u2 float64) []float64 {
	np, n := m.planets, sd.nsub
	slot := ws.slot[:len(sd.t)]
	for i := range slot {
		slot[i] = -1
	}
	used := int32(0)
	for j := 0; j < np; j++ {
		p := x[perPlanet*j:]
		period, t0, k, b := p[iPeriod], p[iT0], p[iK], p[iB]
		// z ≥ 1+k ⇔ sin²φ ≥ ((1+k)² − b²)/(aR² − b²) on the near half of a circular orbit
		// (z² = b² + (aR² − b²) sin²φ, Winn 2010 with e = 0); the prior keeps b < 1+k < aR.
		r := ((1+k)*(1+k) - b*b) / (aR[j]*aR[j] - b*b)
		phiC := math.Pi / 2
		if r < 1 {
			phiC = math.Asin(math.Sqrt(r))
		}
		reach := phiC/(2*math.Pi) + sd.half/period + contactMargin
		near := ws.near[j][:0]
		for i, t := range sd.t {
			d := (t - t0) / period
			d -= math.Round(d)
			if !(math.Abs(d) > reach) {
				near = append(near, int32(i))
				if slot[i] < 0 {
					slot[i] = used
					used++
				}
			}
		}
		ws.near[j] = near
	}
	sum := ws.sum[:int(used)*n]
	for i := range sum {
		sum[i] = 1
	}
	for j := 0; j < np; j++ {
		near := ws.near[j]
		if len(near) == 0 {
			continue
		}
		p := x[perPlanet*j:]
		tsub := ws.tsub[:len(near)*n]
		for q, i := range near {
			copy(tsub[q*n:(q+1)*n], sd.fine[int(i)*n:(int(i)+1)*n])
		}
		z := transit.SeparationCircular(ws.z[:len(tsub)], tsub, p[iPeriod], p[iT0], aR[j], p[iB])
		fl := transit.Flux(ws.fl[:len(tsub)], z, p[iK], u1, u2)
		for q, i := range near {
			blk := sum[int(slot[i])*n : int(slot[i]+1)*n]
			for s, v := range fl[q*n : (q+1)*n] {
				blk[s] += v - 1
			}
		}
	}
	mod := ws.mod[:len(sd.t)]
	for i, sl := range slot {
		if sl < 0 {
			mod[i] = 1
			continue
		}
		s := 0.0
		for _, v := range sum[int(sl)*n : int(sl+1)*n] {
			s += v
		}
		mod[i] = s / float64(n)
	}
	return mod
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
		mod := m.model(ws, sd, x, aR[:np], u1, u2)
		s2 := 0.0
		if m.jitter {
			js := math.Exp(x[base+3+s])
			s2 = js * js
		}
		lp += segmentLogLike(mod, sd.f, sd.v, s2)
	}
	return lp
}

// segmentLogLike is the log-likelihood of one segment's fluxes f with variances v + s2
// under the model mod times a flux scale, the scale marginalised analytically under a flat
// prior: with A = Σ m²/σ², B = Σ f m/σ², C = Σ f²/σ², it is
// −½(C − B²/A) − ½ Σ ln σ² + ½ ln(2π/A) − (n/2) ln 2π. It is −Inf when A is not positive.
func segmentLogLike(mod, f, v []float64, s2 float64) float64 {
	var A, B, C, logDet float64
	for i, mi := range mod {
		vi := v[i] + s2
		w := 1 / vi
		fi := f[i]
		A += w * mi * mi
		B += w * fi * mi
		C += w * fi * fi
		logDet += math.Log(vi)
	}
	if !(A > 0) {
		return math.Inf(-1)
	}
	return -0.5*(C-B*B/A) - 0.5*logDet + 0.5*math.Log(2*math.Pi/A) - 0.5*float64(len(mod))*math.Log(2*math.Pi)
}
