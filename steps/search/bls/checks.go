package bls

import (
	"math"

	"dipline/steps/internal/boxmodel"
)

// The checks below ask two questions of every detection, on the points its pass searched and
// with the box it was refined to (same epoch, same duration):
//
//   - which of P, P/2 and 2P the data prefer (Rivals): an eclipsing binary with unequal
//     eclipses is found at half its period, with the mean of its two depths; a transit
//     found at twice its period leaves a dip of the same depth half-way between its boxes;
//   - whether the signal is periodic at all or carried by one or two events (Spread).
//
// Every depth comes from boxmodel.Fit, the weighted least-squares box model shared with the
// vet step; no other folding code is involved.

// Choice names the period the data prefer among the one found (P), half of it and twice it.
type Choice int8

const (
	// PreferFound: the data do not prefer P/2 or 2P over P by the decision threshold.
	PreferFound Choice = iota
	// PreferHalf: one depth at P/2 fits better than one depth at P.
	PreferHalf
	// PreferDouble: two depths (odd, even) at 2P fit better than one depth at P.
	PreferDouble
)

// Factor is the preferred period over the period found: 1, ½ or 2.
func (c Choice) Factor() float64 {
	switch c {
	case PreferHalf:
		return 0.5
	case PreferDouble:
		return 2
	}
	return 1
}

// Compared is the depth of a box of the detection's duration under another ephemeris, with
// its ratio to the depth at P. Errors are one sigma, scaled by Rivals.ErrorScale; the
// ratio's error carries the covariance of the two depths, which share points.
type Compared struct {
	Depth, DepthSigma float64 // fractional, positive for a dip
	Ratio, RatioSigma float64 // Depth / depth at P
}

// Rivals sets the period found, P, against P/2 and 2P.
//
// Three box models with the detection's epoch and duration are fitted to the same points:
// one depth at P (level and depth: 2 parameters), one depth at P/2 (boxes at the transits
// and half-way between them; 2 parameters), and two depths at 2P (the transits an even
// number of periods from the epoch, and the odd ones; 3 parameters). The period, epoch and
// duration are the detection's in all three and add the same count to each, so they are not
// counted. BIC = χ²/s² + k ln n (boxmodel.BIC), s = ErrorScale, n the points searched.
type Rivals struct {
	// Half is the depth at P/2 against the depth at P: about ½ for a transit at P, about 1
	// when the transits really repeat every P/2.
	Half Compared
	// Odd and Even are the depths at 2P of the transits an odd and an even number of periods
	// from the epoch: both about 1 for a transit at P, unequal for an eclipsing binary.
	Odd, Even Compared
	// HalfDeltaBIC and DoubleDeltaBIC are BIC(P/2) − BIC(P) and BIC(2P) − BIC(P): negative
	// when the alternative fits better.
	HalfDeltaBIC, DoubleDeltaBIC float64
	// Preferred is the model with the lowest BIC among those at least PreferBIC below P's.
	Preferred Choice
	// PointScatter is √(χ²/ν) of the points outside every box of the three models about
	// their weighted mean: above 1 when the flux errors understate the point-to-point scatter
	// (as the search scales σ_depth, see measureDip).
	PointScatter float64
	// TransitScatter is √(χ²/ν) of the per-transit depths (one box group per transit) about
	// the mean of their parity, the richest of the three models: above 1 when the depths
	// vary from transit to transit more than the errors allow (a detrend that removes more
	// of some transits than of others, spots, systematics), which white-noise errors would
	// mistake for an odd/even difference. 0 when that leaves no degree of freedom.
	TransitScatter float64
}

// ErrorScale is the factor applied to the flux errors: the larger of PointScatter and
// TransitScatter, at least 1.
func (r Rivals) ErrorScale() float64 { return max(1, r.PointScatter, r.TransitScatter) }

// Spread says how the signal is shared among its transits: per transit (one box group per
// transit in the box model at P), SNR_j = depth_j/σ_j; the share of a transit is
// SNR_j² / Σ SNR_i² over the transits with a positive depth (SNR² is each transit's own
// χ² improvement, its part of the evidence).
type Spread struct {
	// Strongest is the share of the strongest transit, TwoStrongest that of the two
	// strongest together (NaN when no transit has a positive depth).
	Strongest, TwoStrongest float64
	// StrongestTime is the mid-time of the strongest transit, in the series' time.
	StrongestTime float64
	// Counted is the number of transits whose box holds at least one point.
	Counted int
}

// PreferBIC is the BIC difference at which the data are said to prefer P/2 or 2P over P.
// ΔBIC approximates −2 ln B, B the Bayes factor of the alternative (Schwarz 1978; Kass &
// Raftery 1995, JASA 90, 773, §4.1.3). On Kass & Raftery's scale of 2 ln B (0–2 not worth
// more than a bare mention, 2–6 positive, 6–10 strong, above 10 very strong; from memory),
// ΔBIC ≤ −10 is "very strong" evidence. The top band is chosen because for a transit at P
// the 2P model gains a χ²₁-distributed Δχ² from noise alone; it then wins only when that
// exceeds 10 + ln n (≈ 16.9 for 1,000 points: p = 3.9·10⁻⁵, R's pchisq).
const PreferBIC = 10

// Thresholds of the caution that one or two transits carry a signal, measured by
// TestMeasureTransitShare (DIPLINE_LONG=1) on injected planets and single events; see there
// and BENCHMARKS.md for the rates.
const (
	// SingleShare: the strongest transit carries at least this share.
	SingleShare = 0.7
	// PairShare: the two strongest carry at least this share, with at least PairMinTransits
	// transits counted (with two, they carry everything by construction).
	PairShare       = 0.95
	PairMinTransits = 3
)

// checkDetection fits the box models of the detection (frequency f, mid-transit tc since t0,
// duration dur) to the pass's points and returns its rivals and spread.
func checkDetection(p *prepared, f, tc, dur float64) (Rivals, Spread) {
	eph := boxmodel.Ephemeris{Period: 1 / f, Epoch: tc, Duration: dur}
	b := newBoxes(p, eph)
	each, first := b.perTransit()
	return b.rivals(each, first), b.spread(each, first, p.t0)
}

// boxes holds, per point, its transit number at P and whether it lies in a box at P or in
// one half-way between.
type boxes struct {
	p      *prepared
	eph    boxmodel.Ephemeris
	cycle  []int64
	inP    []bool
	inHalf []bool
}

func newBoxes(p *prepared, eph boxmodel.Ephemeris) *boxes {
	b := &boxes{p: p, eph: eph, cycle: make([]int64, len(p.t)), inP: make([]bool, len(p.t)), inHalf: make([]bool, len(p.t))}
	half := eph.Shifted(0.5)
	for i, t := range p.t {
		b.cycle[i], b.inP[i] = eph.Inside(t)
		_, b.inHalf[i] = half.Inside(t)
	}
	return b
}

// fitted is one box model's fit with its grouping, for covariances.
type fitted struct {
	boxmodel.Result
	group func(i int) int
	wOut  float64 // Σ w of the points outside every box
}

func (b *boxes) fit(groups int, group func(i int) int) fitted {
	r := boxmodel.Fit(b.p.flux, b.p.invVar, groups, group)
	var wOut float64
	for i, w := range b.p.invVar {
		if g := group(i); g < 0 || g >= groups {
			wOut += w
		}
	}
	return fitted{Result: r, group: group, wOut: wOut}
}

// coef is point i's coefficient in depth g of the fit, over its weight: the depth is
// Σ w_i·coef_i·f_i, with coef = 1/W_out outside every box and −1/W_g in group g.
func (m fitted) coef(i, g int) float64 {
	switch gi := m.group(i); {
	case gi == g:
		return -1 / m.Weight[g]
	case gi < 0 || gi >= len(m.Weight):
		return 1 / m.wOut
	}
	return 0
}

// depthCov is the covariance of depth ga of a and depth gb of c for unit-scaled errors
// (σ_i² = 1/w_i): both are linear in the fluxes, so cov = Σ w_i coef_a(i) coef_c(i).
func (b *boxes) depthCov(a fitted, ga int, c fitted, gc int) float64 {
	var s float64
	for i, w := range b.p.invVar {
		s += w * a.coef(i, ga) * c.coef(i, gc)
	}
	return s
}

// pointScatter is √(χ²/ν) of the points in no box of any of the three models (outside the
// boxes at P/2, which hold those at P and 2P) about their weighted mean: as the search scales
// σ_depth (measureDip), but with no tested dip inside the scatter. 0 with fewer than two.
func (b *boxes) pointScatter() float64 {
	var w, s float64
	n := 0
	for i, in := range b.inP {
		if in || b.inHalf[i] {
			continue
		}
		w += b.p.invVar[i]
		s += b.p.invVar[i] * b.p.flux[i]
		n++
	}
	if n < 2 {
		return 0
	}
	mean := s / w
	var chi2 float64
	for i, in := range b.inP {
		if in || b.inHalf[i] {
			continue
		}
		d := b.p.flux[i] - mean
		chi2 += b.p.invVar[i] * d * d
	}
	return math.Sqrt(chi2 / float64(n-1))
}

// perTransit fits one depth per transit at P; group g is transit first + g.
func (b *boxes) perTransit() (fitted, int64) {
	lo, hi := int64(math.MaxInt64), int64(math.MinInt64)
	for i, in := range b.inP {
		if in {
			lo, hi = min(lo, b.cycle[i]), max(hi, b.cycle[i])
		}
	}
	if lo > hi {
		return fitted{}, 0
	}
	return b.fit(int(hi-lo+1), func(i int) int {
		if b.inP[i] {
			return int(b.cycle[i] - lo)
		}
		return -1
	}), lo
}

// transitScatter is √(χ²/ν) of the per-transit depths about the weighted mean of their
// parity (odd or even transit number), ν = transits − parities present; 0 when ν < 1.
func transitScatter(each fitted, first int64) float64 {
	var w, s [2]float64
	n := 0
	for g, d := range each.Depth {
		if each.Points[g] == 0 {
			continue
		}
		k := (first + int64(g)) & 1
		iv := 1 / (each.Sigma[g] * each.Sigma[g])
		w[k] += iv
		s[k] += iv * d
		n++
	}
	nu := n
	for k := range w {
		if w[k] > 0 {
			nu--
		}
	}
	if nu < 1 {
		return 0
	}
	var chi2 float64
	for g, d := range each.Depth {
		if each.Points[g] == 0 {
			continue
		}
		k := (first + int64(g)) & 1
		r := (d - s[k]/w[k]) / each.Sigma[g]
		chi2 += r * r
	}
	return math.Sqrt(chi2 / float64(nu))
}

// The box groups of the three rival models (boxmodel.Fit's group functions): one depth at
// P, one at P/2 (the transits and half-way between them), and at 2P the even (0) and odd
// (1) transits.
func (b *boxes) atPeriod(i int) int {
	if b.inP[i] {
		return 0
	}
	return -1
}

func (b *boxes) atHalf(i int) int {
	if b.inP[i] || b.inHalf[i] {
		return 0
	}
	return -1
}

func (b *boxes) byParity(i int) int {
	if b.inP[i] {
		return int(b.cycle[i] & 1) // 0: even, 1: odd (two's complement keeps the parity of negatives)
	}
	return -1
}

func (b *boxes) rivals(each fitted, first int64) Rivals {
	one := b.fit(1, b.atPeriod)
	half := b.fit(1, b.atHalf)
	double := b.fit(2, b.byParity)
	r := Rivals{PointScatter: b.pointScatter(), TransitScatter: transitScatter(each, first)}
	s := r.ErrorScale()
	r.Half = b.compare(half, 0, one, s)
	r.Even = b.compare(double, 0, one, s)
	r.Odd = b.compare(double, 1, one, s)
	bic := func(m fitted, k int) float64 { return boxmodel.BIC(m.Chi2/(s*s), k, m.N) }
	base := bic(one, 2)
	r.HalfDeltaBIC = bic(half, 2) - base
	r.DoubleDeltaBIC = bic(double, 3) - base
	r.Preferred = prefer(r.HalfDeltaBIC, r.DoubleDeltaBIC)
	return r
}

// prefer picks the model with the lowest BIC among those PreferBIC or more below P's
// (NaN differences never win).
func prefer(half, double float64) Choice {
	c, best := PreferFound, -float64(PreferBIC)
	if half <= best {
		c, best = PreferHalf, half
	}
	if double <= best {
		c = PreferDouble
	}
	return c
}

// compare returns depth g of m against the single depth of ref, errors scaled by s. With
// R = d_g/d_P, σ_R² = (σ_g² − 2R·cov + R²σ_P²)/d_P² (first-order propagation).
func (b *boxes) compare(m fitted, g int, ref fitted, s float64) Compared {
	d, dp := m.Depth[g], ref.Depth[0]
	c := Compared{Depth: d, DepthSigma: s * m.Sigma[g], Ratio: d / dp}
	vg, vp := m.Sigma[g]*m.Sigma[g], ref.Sigma[0]*ref.Sigma[0]
	cov := b.depthCov(m, g, ref, 0)
	R := c.Ratio
	c.RatioSigma = s * math.Sqrt(math.Max(0, vg-2*R*cov+R*R*vp)) / math.Abs(dp)
	if math.IsNaN(d) || math.IsNaN(dp) || dp == 0 {
		c.Ratio, c.RatioSigma = math.NaN(), math.NaN()
	}
	return c
}

// spread shares the evidence among the transits of the per-transit fit. t0 turns the
// strongest transit's mid-time into the series' time.
func (b *boxes) spread(each fitted, first int64, t0 float64) Spread {
	sp := Spread{Strongest: math.NaN(), TwoStrongest: math.NaN(), StrongestTime: math.NaN()}
	var total, top1, top2 float64
	top := -1
	for g, d := range each.Depth {
		if each.Points[g] == 0 {
			continue
		}
		sp.Counted++
		if !(d > 0) {
			continue
		}
		z := d / each.Sigma[g]
		z2 := z * z
		total += z2
		switch {
		case z2 > top1:
			top2, top1, top = top1, z2, g
		case z2 > top2:
			top2 = z2
		}
	}
	if top < 0 {
		return sp
	}
	sp.Strongest, sp.TwoStrongest = top1/total, (top1+top2)/total
	sp.StrongestTime = t0 + b.eph.Epoch + float64(first+int64(top))*b.eph.Period
	return sp
}
