package vet

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/boxmodel"
)

// oddEven compares the box depths of the even- and odd-numbered transits (transit 0 at the
// signal's epoch): one fit with a common level and one depth per parity
// (steps/internal/boxmodel). The level is shared, so the difference's error is
// √(1/W_even + 1/W_odd) times the noise scale (W the sum of the weights in each group),
// and times the excess scatter of single transits' depths within each parity when there is
// one (transitScatter): a depth that jitters from transit to transit (a coarse cadence
// sampling the ingress differently each time, spots crossed, residual trends) must not
// pass for an alternation.
// When the data disagree (the dips alternate and the period is likely twice the signal's;
// a few σ suggests a binary at twice the period, common practice), it returns the parity of
// the deeper transits (0 even, 1 odd), else −1.
func (v *vetter) oddEven(tg *target, w []float64, scale float64, each transitDepths) (Test, int64) {
	const name = "odd_even"
	if tg.single != "" {
		return notRun(name, "cannot be tested: "+tg.single+"; there is no second dip to compare"), -1
	}
	eph := tg.eph
	transits := [2]map[int64]bool{{}, {}}
	group := func(i int) int {
		n, in := eph.Inside(v.t[i])
		if !in {
			return -1
		}
		g := int(n & 1)
		if w[i] > 0 {
			transits[g][n] = true
		}
		return g
	}
	r := boxmodel.Fit(v.f, w, 2, group)
	if r.Points[0] == 0 || r.Points[1] == 0 || math.IsNaN(r.Level) {
		return notRun(name, fmt.Sprintf("cannot be tested: the light curve has %d even- and %d odd-numbered transits with data; both parities are needed", len(transits[0]), len(transits[1]))), -1
	}
	jitter, dof := transitScatter(each, scale)
	diff := r.Depth[1] - r.Depth[0]
	sd := scale * jitter * math.Sqrt(1/r.Weight[0]+1/r.Weight[1])
	z := math.Abs(diff) / sd
	p := tg.name + "." + name + "."
	t := Test{Name: name,
		Threshold: fmt.Sprintf("%.3g σ; common practice (no published value)", v.o.OddEvenSigma),
		Figures: []steps.Figure{
			{Name: p + "sigma", Value: z, Doc: "|odd − even| box depth over its error, the errors scaled by the noise scale and the transit scatter"},
			{Name: p + "transit_scatter", Value: jitter,
				Doc: fmt.Sprintf("factor applied for the scatter of single transits' box depths about their parity's mean: √(χ²/ν) with ν = %d, at least 1 (1 when ν < %d)", dof, minScatterDOF)},
			{Name: p + "even_depth", Value: r.Depth[0] * 1e6, Sigma: scale * jitter * r.Sigma[0] * 1e6, Unit: "ppm",
				Doc: fmt.Sprintf("box depth of the even-numbered transits (%d with data; transit 0 at the signal's epoch)", len(transits[0]))},
			{Name: p + "odd_depth", Value: r.Depth[1] * 1e6, Sigma: scale * jitter * r.Sigma[1] * 1e6, Unit: "ppm",
				Doc: fmt.Sprintf("box depth of the odd-numbered transits (%d with data)", len(transits[1]))},
		}}
	if z >= v.o.OddEvenSigma {
		t.Verdict = steps.VerdictDisagree
		t.Reason = fmt.Sprintf("odd and even transits differ by %s (%.1f σ; even %s, odd %s): the dips alternate, as a binary's two eclipses at twice the period do",
			ppm(math.Abs(diff)), z, ppm(r.Depth[0]), ppm(r.Depth[1]))
		if r.Depth[1] > r.Depth[0] {
			return t, 1
		}
		return t, 0
	}
	t.Verdict = steps.VerdictAgree
	t.Reason = fmt.Sprintf("odd and even depths agree within %.1f σ (even %s, odd %s)", z, ppm(r.Depth[0]), ppm(r.Depth[1]))
	return t, -1
}

// minScatterDOF is the fewest degrees of freedom from which the transits' scatter is
// trusted: with ν = 4 a χ²/ν is uncertain by √(2/ν) = 71 %, enough to see a scatter twice
// the expected (common practice for a variance from few points).
const minScatterDOF = 4

// transitDepths is one box depth per transit with data, the level shared (perTransit):
// the transits' cycle numbers in the order first met and the fit, group g being cycles[g].
// The odd/even and single-transit tests both read it, from one fit.
type transitDepths struct {
	cycles []int64
	fit    boxmodel.Result
}

// perTransit fits one box depth per transit with data (the level shared).
func (v *vetter) perTransit(eph boxmodel.Ephemeris, w []float64) transitDepths {
	index := map[int64]int{}
	var cycles []int64
	for i := range v.t {
		if n, in := eph.Inside(v.t[i]); in && w[i] > 0 {
			if _, seen := index[n]; !seen {
				index[n] = len(cycles)
				cycles = append(cycles, n)
			}
		}
	}
	r := boxmodel.Fit(v.f, w, len(cycles), func(i int) int {
		if n, in := eph.Inside(v.t[i]); in {
			if g, ok := index[n]; ok {
				return g
			}
		}
		return -1
	})
	return transitDepths{cycles, r}
}

// transitScatter returns √(χ²/ν), at least 1, of the single transits' box depths about the
// mean depth of their parity (each with its own error, scaled), ν the number of transits
// with data less two; 1 when ν < minScatterDOF. The depths come from one boxmodel fit with
// a depth per transit and the level shared.
func transitScatter(each transitDepths, scale float64) (factor float64, dof int) {
	cycles, r := each.cycles, each.fit
	var sw, swd [2]float64
	for g, n := range cycles {
		if r.Points[g] > 0 && !math.IsNaN(r.Depth[g]) {
			wg := r.Weight[g] / (scale * scale)
			sw[n&1] += wg
			swd[n&1] += wg * r.Depth[g]
		}
	}
	chi2, used := 0.0, 0
	for g, n := range cycles {
		if r.Points[g] == 0 || math.IsNaN(r.Depth[g]) || sw[n&1] == 0 {
			continue
		}
		d := r.Depth[g] - swd[n&1]/sw[n&1]
		chi2 += d * d * r.Weight[g] / (scale * scale)
		used++
	}
	dof = used - 2
	if dof < minScatterDOF {
		return 1, dof
	}
	return math.Max(1, math.Sqrt(chi2/float64(dof))), dof
}

// noDipSigma is the significance below which the other transits together are said to show
// no dip: 2 σ, the usual bound for "not detected" (common practice).
const noDipSigma = 2.0

// singleTransit says, when the dip rests on one transit, where that transit is and that
// the period is not measured; "" otherwise. It does so when the light curve holds one
// transit with data and it shows a dip, or when one transit shows a dip at odd_even_sigma,
// the other transits together show none (their mean depth below noDipSigma of its error)
// and they are shallower than it by odd_even_sigma: a second dip is then not in the data,
// not merely lost in the noise, so the signal is one event and its period is the search's
// guess. Errors are scaled by the noise scale.
func (v *vetter) singleTransit(tg *target, each transitDepths, scale float64) string {
	eph := tg.eph
	cycles, r := each.cycles, each.fit
	best := -1
	for g := range cycles {
		if r.Points[g] == 0 || math.IsNaN(r.Depth[g]) || !(r.Sigma[g] > 0) {
			continue
		}
		if best < 0 || r.Depth[g]/r.Sigma[g] > r.Depth[best]/r.Sigma[best] {
			best = g
		}
	}
	if best < 0 {
		return ""
	}
	d1, s1 := r.Depth[best], scale*r.Sigma[best]
	if d1/s1 < v.o.OddEvenSigma {
		return ""
	}
	at := fmt.Sprintf("%.2f %s", eph.Epoch+float64(cycles[best])*eph.Period, v.d.Light.Frame().Since())
	var sw, swd float64
	others := 0
	for g := range cycles {
		if g == best || r.Points[g] == 0 || math.IsNaN(r.Depth[g]) || !(r.Sigma[g] > 0) {
			continue
		}
		wg := 1 / (scale * scale * r.Sigma[g] * r.Sigma[g])
		sw += wg
		swd += wg * r.Depth[g]
		others++
	}
	if others == 0 {
		return fmt.Sprintf("the dip rests on one transit, at %s, the only one with data: the period is not measured", at)
	}
	dr, sr := swd/sw, 1/math.Sqrt(sw)
	if dr/sr >= noDipSigma || (d1-dr)/math.Hypot(s1, sr) < v.o.OddEvenSigma {
		return ""
	}
	rest := fmt.Sprintf("the other %d transits with data show none together", others)
	if others == 1 {
		rest = "the other transit with data shows none"
	}
	return fmt.Sprintf("the dip rests on one transit, at %s (%s deep); %s (%s ± %s): the period is not measured",
		at, ppm(d1), rest, ppm(dr), ppm(sr))
}
