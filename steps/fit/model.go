package fit

import (
	"math"
	"slices"
	"sync"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/transit"
)

// ScaledAxis is a/R* of an orbit of period P (days) around a star of mean density rho
// (g/cm³) by Kepler's third law, neglecting the planet's mass (astro.ScaledAxisFromGRho;
// Seager & Mallén-Ornelas 2003, ApJ 585, 1038); NaN outside the law's domain. G·ρ is taken
// in s⁻² and P in s, the order of operations the fit's recorded results were made with.
func ScaledAxis(period, rho float64) float64 {
	a, err := astro.ScaledAxisFromGRho(astro.G*rho*astro.GramPerCm3, period*astro.Day)
	if err != nil {
		return math.NaN()
	}
	return a
}

// DensityFromAxis inverts ScaledAxis: ρ = 3π (a/R*)³ / (G P²) in g/cm³
// (astro.DensityFromScaledAxis); NaN outside its domain.
func DensityFromAxis(period, aR float64) float64 {
	rho, err := astro.DensityFromScaledAxis(aR, period*astro.Day)
	if err != nil {
		return math.NaN()
	}
	return rho / astro.GramPerCm3
}

// param is one entry of the full parameter vector.
type param struct {
	name   string
	lo, hi float64 // support in the stored coordinate; outside it the posterior is 0
	prior  Prior   // in the documented unit (the density in g/cm³, not its log10)
	log10  bool    // the stored coordinate is log10 of the documented value
	logit  bool    // the stored coordinate is ln(v/(1 − v)) of the documented value v in (0, 1)
	fixed  bool    // held at value and not sampled
	value  float64 // the fixed value, stored coordinate
}

// logPrior is the log prior density of the stored coordinate v, up to a constant: the
// prior in the documented unit times the Jacobian ρ ln 10 of ρ = 10^v for log10 entries.
// For logit entries it is the prior of q = logistic(v) alone (flat: uniform in q); their
// Jacobian q(1 − q) is added with the others in Model.physical.
func (p *param) logPrior(v float64) float64 {
	if p.logit {
		if p.prior.Shape == Flat {
			return 0
		}
		return p.prior.LogPDF(logistic(v))
	}
	if p.prior.Shape == Flat {
		return 0
	}
	if p.log10 {
		u := math.Pow(10, v)
		return p.prior.LogPDF(u) + math.Log(u)
	}
	return p.prior.LogPDF(v)
}

// logistic is 1/(1 + e^−v), the inverse of logit.
func logistic(v float64) float64 { return 1 / (1 + math.Exp(-v)) }

// logit is ln(q/(1 − q)).
func logit(q float64) float64 { return math.Log(q / (1 - q)) }

// segData is the part of one segment that enters the likelihood; all of it is fixed before
// sampling.
type segData struct {
	t, f, v []float64 // times, fluxes and error variances of the points kept
	nsub    int       // sub-exposures per point
	half    float64   // half the exposure (days; 0 when the points are instants)
	fine    []float64 // sub-exposure times, len(t)·nsub, point by point
	band    int       // index of the segment's band in Model.bands
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
	ecc       [maxPlanets]bool
	jitter    bool
	dilution  bool        // a dilution prior was given (D sampled or fixed by it)
	bands     []string    // distinct segment bands ("" for segments without one)
	ld        []LimbPrior // per band; zero U1Sigma means the flat prior on q1, q2
	segs      []segData
	params    []param // the full vector (see layout)
	free      []int   // indices of the sampled entries in params
	maxFine   int
	maxPoints int
	// direct turns off the tabulated transit shape (tabulate), for the tests that compare
	// the pruned computation with the plain one bit for bit.
	direct bool
	// depthParam[j] says planet j's k entry holds δ = k²/c(b, u) instead of k (see
	// radius); its prior stays uniform in k through the Jacobian.
	depthParam [maxPlanets]bool
	// chordParam[j] says planet j's b entry holds the chord coordinate w instead of b (see
	// impact); bPrior[j] is then the prior on b, applied with the Jacobian.
	chordParam [maxPlanets]bool
	bPrior     [maxPlanets]Prior
	scratch    sync.Pool
}

// dim is the number of sampled parameters.
func (m *Model) dim() int { return len(m.free) }

// expand writes the full vector for the sampled vector x into dst.
func (m *Model) expand(dst, x []float64) []float64 {
	for i := range m.params {
		dst[i] = m.params[i].value
	}
	for i, idx := range m.free {
		dst[idx] = x[i]
	}
	return dst
}

// orbit is one planet's geometry at a point of the parameter space.
type orbit struct {
	aR, e, omega float64
	reach        float64 // half-width, in phase, of the stretch around mid-transit with z < 1+k
	ingress      float64 // first-to-second contact (days); half of T14 when grazing
}

// workspace is the scratch space of one LogPost call.
type workspace struct {
	full        []float64 // the full parameter vector
	tsub, z, fl []float64 // sub-exposure times, separations, fluxes of one planet's transits
	sum         []float64 // 1 + Σ_planets (flux − 1) per sub-exposure of the points modelled
	mod         []float64 // exposure-averaged model per point
	slot        []int32   // per point: its block in sum, or −1 when no planet is near
	near        [maxPlanets][]int32
	add         []float64 // per point: Σ over tabulated planets of (flux − 1), exposure-averaged
	table       transit.Table
	nodes       []float64 // the times of the tabulation grid
	nodeZ       []float64
	nodeFlux    []float64
}

func (m *Model) workspace() *workspace {
	if w, ok := m.scratch.Get().(*workspace); ok {
		return w
	}
	n, p := m.maxFine, m.maxPoints
	w := &workspace{full: make([]float64, len(m.params)), tsub: make([]float64, n), z: make([]float64, n), fl: make([]float64, n),
		sum: make([]float64, n), mod: make([]float64, p), slot: make([]int32, p), add: make([]float64, p)}
	for j := 0; j < m.planets; j++ {
		w.near[j] = make([]int32, 0, p)
	}
	return w
}

// meanAnomaly is the mean anomaly at true anomaly f for eccentricity e, continuous and
// increasing in f: the eccentric anomaly from tan(E/2) = √((1−e)/(1+e)) tan(f/2), taken on
// the branch within π of f (E and f lie in the same half-plane), then Kepler's equation.
func meanAnomaly(f, e float64) float64 {
	s, c := math.Sincos(f / 2)
	e0 := 2 * math.Atan2(math.Sqrt(1-e)*s, math.Sqrt(1+e)*c)
	ea := f + math.Remainder(e0-f, 2*math.Pi)
	return ea - e*math.Sin(ea)
}

// geometry checks planet j's parameters in the full vector x and returns its orbit, or
// false when the prior excludes them: b < 1 + k, e < 1 and a periastron distance
// a/R*·(1 − e) beyond 1 + k (the planet does not touch the star).
func (m *Model) geometry(x []float64, j int, rho float64) (orbit, bool) {
	lay := m.layout()
	period, k, b := x[lay.Period(j)], x[lay.K(j)], x[lay.B(j)]
	if !(b < 1+k) {
		return orbit{}, false
	}
	o := orbit{aR: ScaledAxis(period, rho)}
	if m.ecc[j] {
		o.e, o.omega = lay.eccentricOrbit(x, j)
	}
	if !(o.e < 1) || !(o.aR*(1-o.e) > 1+k) {
		return orbit{}, false
	}
	o.ingress = ingressTime(period, o, k, b)
	if !m.ecc[j] {
		// z ≥ 1+k ⇔ sin²φ ≥ ((1+k)² − b²)/(aR² − b²) on the near half of a circular orbit
		// (z² = b² + (aR² − b²) sin²φ, Winn 2010 with e = 0); b < 1+k < aR.
		r := ((1+k)*(1+k) - b*b) / (o.aR*o.aR - b*b)
		phiC := math.Pi / 2
		if r < 1 {
			phiC = math.Asin(math.Sqrt(r))
		}
		o.reach = phiC / (2 * math.Pi)
		return o, true
	}
	// Eccentric: z ≥ r |sin(f − fc)| with r ≥ a(1 − e) and fc = π/2 − ω the true anomaly at
	// conjunction (z² = r²[cos²(ω+f) + sin²(ω+f) cos² i], cos(ω+f) = −sin(f − fc)), so the
	// planet overlaps the star only within Δf = asin((1+k)/(a/R*·(1−e))) of fc; the reach
	// is the larger mean-anomaly step to fc ± Δf, over 2π.
	df := math.Asin((1 + k) / (o.aR * (1 - o.e)))
	fc := math.Pi/2 - o.omega
	mc := meanAnomaly(fc, o.e)
	o.reach = math.Max(meanAnomaly(fc+df, o.e)-mc, mc-meanAnomaly(fc-df, o.e)) / (2 * math.Pi)
	if !(o.reach < 0.5) {
		o.reach = 0.5
	}
	return o, true
}

// density returns the star's mean density (g/cm³) from the full vector's log10 entry.
func (m *Model) density(full []float64) float64 {
	return math.Pow(10, full[m.layout().Density()])
}

// ingressTime is the first-to-second contact time in days (Winn 2010 durations, through
// astro), or half of T14 for a grazing transit.
func ingressTime(period float64, o orbit, k, b float64) float64 {
	t14, err14 := astro.TotalDuration(period, o.aR, k, b, o.e, o.omega)
	t23, err23 := astro.FullDuration(period, o.aR, k, b, o.e, o.omega)
	if err14 != nil || err23 != nil || !(t14 > 0) {
		return 0
	}
	return (t14 - t23) / 2
}

// maxTableNodes bounds a tabulated transit; a finer one is not cheaper than direct
// evaluation of any realistic data set.
const maxTableNodes = 1 << 15

// tabulate adds planet j's exposure-averaged flux − 1 to ws.add at the points near, from
// the transit shape tabulated once on a grid of times from mid-transit (transit.Table):
// every transit of a planet on a fixed Keplerian orbit is the same function of the time
// from its own mid-transit.
//
// The grid's spacing g divides half the sub-exposure spacing (exposure/2n) an integer r
// times and is no coarser than transit.TableStep, so each node's n sub-exposure times fall
// on grid points too: the instantaneous flux is computed once per grid point and each
// node's exposure average is the mean of n of them — the same midpoint sum (Kipping 2010)
// that direct evaluation forms, for about one flux evaluation per node instead of n.
//
// It returns false, doing nothing, when the table would cost as much as evaluating the
// points directly, or for instantaneous points (whose curve has corners at the contacts
// that the interpolation would round).
func (m *Model) tabulate(ws *workspace, sd *segData, near []int32, x []float64, j int, o orbit, u1, u2 float64) bool {
	n := sd.nsub
	if m.direct || n < 2 || !(o.ingress > 0) {
		return false
	}
	lay := m.layout()
	period, t0 := x[lay.Period(j)], x[lay.T0(j)]
	half := o.reach*period + sd.half // beyond ±half every sub-exposure is past contact
	g0 := sd.half / float64(n)       // half the sub-exposure spacing
	r := max(1, int(math.Ceil(g0/transit.TableStep(o.ingress, 2*sd.half))))
	g := g0 / float64(r)
	nodes := int(math.Ceil(2*half/g)) + 1
	ext := (n - 1) * r // grid points beyond each end that the end nodes' sub-exposures reach
	if nodes+2*ext > maxTableNodes || 2*(nodes+2*ext) >= len(near)*n {
		return false
	}
	// The instantaneous flux on the grid t0 − half + (i − ext)·g, i = 0 … nodes + 2·ext − 1.
	ws.table.Start, ws.table.Step = -half, g
	ws.nodes = ws.table.Nodes(ws.nodes, nodes+2*ext)
	for i := range ws.nodes {
		ws.nodes[i] += t0 - float64(ext)*g
	}
	// Full-capacity slices: the transit helpers reallocate only when dst is too short.
	ws.nodeZ = m.separation(ws.nodeZ[:cap(ws.nodeZ)], ws.nodes, x, j, o)
	ws.nodeFlux = transit.Flux(ws.nodeFlux[:cap(ws.nodeFlux)], ws.nodeZ, x[lay.K(j)], u1, u2)
	if cap(ws.table.Y) < nodes {
		ws.table.Y = make([]float64, nodes)
	}
	ws.table.Y = ws.table.Y[:nodes]
	inv := 1 / float64(n)
	for i := range ws.table.Y {
		s := 0.0
		for q := 0; q < n; q++ {
			s += ws.nodeFlux[i+ext+(2*q+1-n)*r]
		}
		ws.table.Y[i] = s * inv
	}
	for _, i := range near {
		d := sd.t[i] - t0
		d -= math.Round(d/period) * period
		ws.add[i] += ws.table.At(d) - 1
	}
	return true
}

// separation writes the separations at times t of planet j in the full vector x.
func (m *Model) separation(dst, t, x []float64, j int, o orbit) []float64 {
	lay := m.layout()
	period, t0, b := x[lay.Period(j)], x[lay.T0(j)], x[lay.B(j)]
	if m.ecc[j] {
		return transit.SeparationEccentric(dst, t, period, t0, o.aR, b, o.e, o.omega)
	}
	return transit.SeparationCircular(dst, t, period, t0, o.aR, b)
}

// model writes into ws.mod the model of segment sd: per point the mean over its
// sub-exposures of 1 + Σ_planets (flux − 1), diluted as (F + D)/(1 + D). Only points whose
// exposure may overlap a transit (phase within the contact reach plus half the exposure
// plus contactMargin) are integrated, and each planet's flux is computed only for the
// points near its own transits; the rest are exactly 1, as the full computation gives (Flux
// returns 1 beyond contact and adding 1 − 1 = 0 changes no sum), so the result is the same
// to the bit.
func (m *Model) model(ws *workspace, sd *segData, x []float64, orb []orbit, u1, u2, dil float64) []float64 {
	np, n := m.planets, sd.nsub
	lay := m.layout()
	slot := ws.slot[:len(sd.t)]
	for i := range slot {
		slot[i] = -1
	}
	used := int32(0)
	for j := 0; j < np; j++ {
		period, t0 := x[lay.Period(j)], x[lay.T0(j)]
		reach := orb[j].reach + sd.half/period + contactMargin
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
	add := ws.add[:len(sd.t)]
	clear(add)
	for j := 0; j < np; j++ {
		near := ws.near[j]
		if len(near) == 0 || m.tabulate(ws, sd, near, x, j, orb[j], u1, u2) {
			continue
		}
		tsub := ws.tsub[:len(near)*n]
		for q, i := range near {
			copy(tsub[q*n:(q+1)*n], sd.fine[int(i)*n:(int(i)+1)*n])
		}
		z := m.separation(ws.z[:len(tsub)], tsub, x, j, orb[j])
		fl := transit.Flux(ws.fl[:len(tsub)], z, x[lay.K(j)], u1, u2)
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
		mod[i] = s/float64(n) + add[i]
	}
	if dil != 0 {
		for i, v := range mod {
			mod[i] = (v + dil) / (1 + dil)
		}
	}
	return mod
}

// LogPost is the log posterior of the sampled vector x up to a constant: each entry's
// prior within its support (see param), the limb-darkening priors per band, b < 1+k and a
// periastron beyond 1+k per planet, and the Gaussian likelihood with each segment's
// multiplicative flux normalisation c marginalised analytically under a uniform prior:
// ∫ exp(−½(C − 2cB + c²A)) dc = √(2π/A) exp(−½(C − B²/A)), with A = Σ w m², B = Σ w f m,
// C = Σ w f², w = 1/(σ² + s²). Outside the prior it is −Inf.
func (m *Model) LogPost(x []float64) float64 {
	lp := 0.0
	for i, idx := range m.free {
		p := &m.params[idx]
		v := x[i]
		if !(v >= p.lo && v <= p.hi) {
			return math.Inf(-1)
		}
		lp += p.logPrior(v)
	}
	if math.IsInf(lp, -1) || math.IsNaN(lp) {
		return math.Inf(-1)
	}
	ws := m.workspace()
	defer m.scratch.Put(ws)
	full := m.expand(ws.full, x)
	return m.logPostFull(ws, full, lp)
}

// darkening is c(b, u) = ⟨I⟩/I(μ) with μ = √(1 − b²) (0 for a grazing b ≥ 1) for quadratic
// limb darkening, ⟨I⟩ = 1 − u1/3 − u2/6 the disc's mean intensity over I(1): the small-planet
// depth is about k²/c (Mandel & Agol 2002 §4). It returns false when I(μ) is not positive.
func darkening(b, u1, u2 float64) (float64, bool) {
	mu := 0.0
	if b < 1 {
		mu = math.Sqrt(1 - b*b)
	}
	i := 1 - u1*(1-mu) - u2*(1-mu)*(1-mu)
	if !(i > 1e-9) {
		return 0, false
	}
	return (1 - u1/3 - u2/6) / i, true
}

// radius turns planet j's stored δ into k = √(δ·c(|b|, u)) in place, u = (u1, u2) being the
// first band's limb darkening (see physical), and returns the log-Jacobian
// ln|∂k/∂δ| = ln(k/2δ), or false when k leaves (0, 1].
func radius(full []float64, j int, u1, u2 float64) (float64, bool) {
	var lay layout // a planet's entries do not depend on how many planets and bands follow
	d := full[lay.K(j)]
	c, okc := darkening(math.Abs(full[lay.B(j)]), u1, u2)
	if !okc || !(d > 0) {
		return 0, false
	}
	k := math.Sqrt(d * c)
	if !(k <= 1) {
		return 0, false
	}
	full[lay.K(j)] = k
	return math.Log(k / (2 * d)), true
}

// impact turns planet j's stored chord coordinate w into its impact parameter in place,
// given the star's density ρ: with a = a/R* (ScaledAxis), w = (1 − b²)/(a² − b²) is
// sin²(πT₁/P) for the time T₁ a circular orbit spends with the planet's centre inside the
// stellar disc (z < 1; Winn 2010 eq. 14 with k = 0), extended smoothly to grazing orbits
// (w < 0 for b > 1). So b² = (1 − w a²)/(1 − w). It returns ln|db/dw| =
// ln((a² − 1)/(2b(1 − w)²)), and false where no b > 0 gives w at this density.
func (m *Model) impact(full []float64, j int, rho float64) (float64, bool) {
	lay := m.layout()
	w := full[lay.B(j)]
	a := ScaledAxis(full[lay.Period(j)], rho)
	b2 := (1 - w*a*a) / (1 - w)
	if !(w < 1) || !(b2 > 0) {
		return 0, false
	}
	b := math.Sqrt(b2)
	full[lay.B(j)] = b
	return math.Log((a*a - 1) / (2 * b * (1 - w) * (1 - w))), true
}

// chord is impact's inverse: w for impact parameter b at a/R* = a.
func chord(b, a float64) float64 { return (1 - b*b) / (a*a - b*b) }

// physical turns the full vector's sampled coordinates into the model's in place and
// returns the star's density. Any smooth invertible map is a valid reparametrisation; these
// straighten the ridges the data leave or soften the edges of the prior:
//   - q1, q2 of every band are stored as logits:
//     the unit square's edges, where a weakly measured limb darkening piles up, become
//     tails that the ensemble's moves cross without rejection;
//   - for each planet with depthParam, the stored δ = k²/c(b, u) becomes k (radius): at
//     fixed δ the k–b ridge of a shallow transit is nearly straight;
//   - for each planet with chordParam, the stored chord coordinate becomes b at that density
//     (impact): at fixed chord, a denser star only shortens the ingress, where at fixed b it
//     shortens the whole transit, so b of every planet would follow ρ along a curved ridge.
//
// It returns the priors on b that the chords carry (lp) and, separately, the sum of the maps'
// log-Jacobians (jac): LogPost adds both, so the priors hold in the documented parameters;
// the best fit leaves jac out (Model.logJacobian). It returns false outside the support.
func (m *Model) physical(full []float64) (rho, lp, jac float64, ok bool) {
	lay := m.layout()
	for i := range m.bands {
		for _, idx := range []int{lay.Q1(i), lay.Q2(i)} {
			q := logistic(full[idx])
			full[idx] = q
			jac += math.Log(q * (1 - q))
		}
	}
	u1, u2 := transit.QuadraticFromKipping(full[lay.Q1(0)], full[lay.Q2(0)])
	for j := 0; j < m.planets; j++ {
		if m.depthParam[j] && !m.chordParam[j] {
			l, ok := radius(full, j, u1, u2)
			if !ok {
				return 0, 0, 0, false
			}
			jac += l
		}
	}
	rho = m.density(full)
	for j := 0; j < m.planets; j++ {
		if !m.chordParam[j] {
			continue
		}
		l, ok := m.impact(full, j, rho)
		if !ok {
			return 0, 0, 0, false
		}
		jac += l
		if pr := m.bPrior[j]; pr.Shape != Flat {
			lp += pr.LogPDF(full[lay.B(j)])
		}
		if m.depthParam[j] {
			if l, ok = radius(full, j, u1, u2); !ok {
				return 0, 0, 0, false
			}
			jac += l
		}
	}
	return rho, lp, jac, true
}

// logJacobian is the sum of the log-Jacobians that LogPost carries at the sampled vector x
// for its coordinates (logits of q, δ for k, chords for b; log10 ρ keeps its own, the scale
// its default prior is stated in): LogPost − logJacobian is the posterior density in the
// documented parameters. The best fit maximises that, since a mode moves under a change of
// coordinates, and the chord's Jacobian, infinite at b = 0, would pull a weakly measured b to
// 0. It is 0 outside the support.
func (m *Model) logJacobian(x []float64) float64 {
	_, _, jac, ok := m.physical(m.expand(make([]float64, len(m.params)), x))
	if !ok {
		return 0
	}
	return jac
}

// bestLogPost is LogPost − logJacobian, the log posterior density in the documented
// parameters, which the best fit maximises.
func (m *Model) bestLogPost(x []float64) float64 {
	return m.LogPost(x) - m.logJacobian(x)
}

// sampledFrom returns the sampled vector of an artifact row's first Sampled columns, which
// hold documented values: q1, q2 become logits, for a planet with depthParam the k column
// is turned back into δ, and for one with chordParam the b column into the chord coordinate.
func (m *Model) sampledFrom(row []float64) []float64 {
	x := append([]float64(nil), row[:m.dim()]...)
	full := m.expand(make([]float64, len(m.params)), x)
	lay := m.layout()
	u1, u2 := transit.QuadraticFromKipping(full[lay.Q1(0)], full[lay.Q2(0)])
	for i := range m.bands {
		for _, idx := range []int{lay.Q1(i), lay.Q2(i)} {
			if f := slices.Index(m.free, idx); f >= 0 {
				x[f] = logit(full[idx])
			}
		}
	}
	rho := m.density(full)
	for j := 0; j < m.planets; j++ {
		k, b := full[lay.K(j)], full[lay.B(j)]
		if i := slices.Index(m.free, lay.K(j)); i >= 0 && m.depthParam[j] {
			if c, ok := darkening(math.Abs(b), u1, u2); ok {
				x[i] = k * k / c
			}
		}
		if i := slices.Index(m.free, lay.B(j)); i >= 0 && m.chordParam[j] {
			x[i] = chord(b, ScaledAxis(full[lay.Period(j)], rho))
		}
	}
	return x
}

// point is the model's state at one full parameter vector, apart from the data: the log
// posterior's prior terms so far, the orbits, the limb darkening per band and the dilution.
type point struct {
	lp  float64
	orb [maxPlanets]orbit
	u   [maxBands][2]float64
	dil float64
}

// at turns the full vector (sampled coordinates, converted in place by physical) into the
// model's state, adding to lp the Jacobians and priors of physical and the limb-darkening
// priors. It returns false outside the prior (no transit, a planet hitting the star, k
// beyond 1, ρ out of bounds).
func (m *Model) at(full []float64, lp float64) (point, bool) {
	var p point
	rho, lpPhys, jac, ok := m.physical(full)
	if !ok {
		return p, false
	}
	lp += lpPhys + jac
	for j := 0; j < m.planets; j++ {
		if p.orb[j], ok = m.geometry(full, j, rho); !ok {
			return p, false
		}
	}
	lay := m.layout()
	for i := range m.bands {
		q1, q2 := full[lay.Q1(i)], full[lay.Q2(i)]
		if m.ld[i].U1Sigma > 0 {
			lp += m.ld[i].LogPDF(q1, q2)
		}
		p.u[i][0], p.u[i][1] = transit.QuadraticFromKipping(q1, q2)
	}
	p.lp, p.dil = lp, full[lay.Dilution()]
	return p, true
}

// logPostFull continues LogPost from the full vector and the log prior of its entries.
func (m *Model) logPostFull(ws *workspace, full []float64, lp float64) float64 {
	pt, ok := m.at(full, lp)
	if !ok {
		return math.Inf(-1)
	}
	lp = pt.lp
	lay := m.layout()
	for s := range m.segs {
		sd := &m.segs[s]
		mod := m.model(ws, sd, full, pt.orb[:m.planets], pt.u[sd.band][0], pt.u[sd.band][1], pt.dil)
		s2 := 0.0
		if m.jitter {
			js := math.Exp(full[lay.Jitter(s)])
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
//
// Σ ln σ² takes one logarithm per logBlock points: the log of a product of σ²/vRef (vRef
// being the first variance, so the factors stay near 1) plus n ln vRef — the same sum to
// rounding, for a sixteenth of the logarithms, which otherwise cost a third of the time.
func segmentLogLike(mod, f, v []float64, s2 float64) float64 {
	if len(mod) == 0 {
		return 0
	}
	vRef := v[0] + s2
	inv := 1 / vRef
	var A, B, C, logDet float64
	prod := 1.0
	for i, mi := range mod {
		vi := v[i] + s2
		w := 1 / vi
		fi := f[i]
		A += w * mi * mi
		B += w * fi * mi
		C += w * fi * fi
		prod *= vi * inv
		if i%logBlock == logBlock-1 {
			logDet += math.Log(prod)
			prod = 1
		}
	}
	logDet += math.Log(prod) + float64(len(mod))*math.Log(vRef)
	if !(A > 0) {
		return math.Inf(-1)
	}
	return -0.5*(C-B*B/A) - 0.5*logDet + 0.5*math.Log(2*math.Pi/A) - 0.5*float64(len(mod))*math.Log(2*math.Pi)
}

// logBlock is how many variance ratios segmentLogLike multiplies before taking a log:
// each ratio is at most (10 %)²/(1 ppm)² = 1e10 apart from 1 given the jitter's bounds
// and sane errors, so sixteen stay within float64's range.
const logBlock = 16
