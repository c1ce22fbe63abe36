package timing

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// cautionP is the p-value of χ² below which the times are said to scatter more than their
// errors allow: 1 % (common practice for a single test).
const cautionP = 0.01

// minutesPerDay converts O−C to minutes.
const minutesPerDay = 1440

// Ephemeris is the weighted least-squares linear ephemeris T(n) = T0 + n·P of a set of
// transit times, with its O−C table and the χ² test of strict periodicity.
type Ephemeris struct {
	T0, Period           float64 // mid-time at epoch 0 and period, days
	SigmaT0, SigmaPeriod float64 // one-sigma errors, days
	Cov                  float64 // covariance of T0 and Period, days²
	// RefEpoch is the epoch nearest the weighted mean epoch; at it the mid-time TRef is
	// nearly uncorrelated with the period (common practice, from memory), so TRef ±
	// SigmaTRef is the epoch to quote.
	RefEpoch        int64
	TRef, SigmaTRef float64
	Rows            []OC
	Chi2            float64
	Dof             int     // timed transits − 2
	PValue          float64 // P(χ²_dof ≥ Chi2); NaN when Dof = 0
	// Caution, when not empty, says that the times scatter about the line more than their
	// errors allow (PValue < 1 %) and what that may mean.
	Caution string
}

// OC is one row of the O−C table.
type OC struct {
	Epoch       int64
	Time, Sigma float64 // measured mid-time and its symmetric error, days
	OC, SigmaOC float64 // observed minus calculated and its error, minutes
}

// FitEphemeris fits T(n) = T0 + n·P to the timed transits (skipped ones are left out) by
// weighted least squares with weights 1/σ², σ = TransitTime.Sigma. It solves the 2×2 normal
// equations in centred form (epochs and times about their weighted means, which keeps the
// sums well conditioned for times near 2.46 million days): P = Σw(n−n̄)(T−T̄)/Σw(n−n̄)²,
// Var P = 1/Σw(n−n̄)², and at the weighted mean epoch n̄ the time T̄ has variance 1/Σw and no
// covariance with P; T0 and its errors follow by moving from n̄ to 0. At least two timed
// transits at different epochs are needed; bad input is an error wrapping ErrInput.
func FitEphemeris(times []TransitTime) (Ephemeris, error) {
	var e Ephemeris
	var used int
	var ref float64 // the first timed transit's time, subtracted from every time
	seen := make(map[int64]bool, len(times))
	for _, t := range times {
		if t.Skipped != "" {
			continue
		}
		s := t.Sigma()
		if math.IsNaN(t.Time) || math.IsInf(t.Time, 0) || !(s > 0) || math.IsInf(s, 0) {
			return e, fmt.Errorf("%w: transit %d: time %v ± %v days; need a finite time and a positive error", ErrInput, t.Epoch, t.Time, s)
		}
		if seen[t.Epoch] {
			return e, fmt.Errorf("%w: transit %d is timed twice", ErrInput, t.Epoch)
		}
		seen[t.Epoch] = true
		if used == 0 {
			ref = t.Time
		}
		used++
	}
	if used < 2 {
		return e, fmt.Errorf("%w: %d timed transit(s); a linear ephemeris needs at least 2", ErrInput, used)
	}
	// Weighted means of epoch and time (relative to ref).
	var W, Wn, Wt float64
	for _, t := range times {
		if t.Skipped != "" {
			continue
		}
		w := 1 / (t.Sigma() * t.Sigma())
		W += w
		Wn += w * float64(t.Epoch)
		Wt += w * (t.Time - ref)
	}
	nbar, tbar := Wn/W, Wt/W
	var Snn, Snt float64
	for _, t := range times {
		if t.Skipped != "" {
			continue
		}
		w := 1 / (t.Sigma() * t.Sigma())
		dn := float64(t.Epoch) - nbar
		Snn += w * dn * dn
		Snt += w * dn * (t.Time - ref - tbar)
	}
	e.Period = Snt / Snn
	e.SigmaPeriod = math.Sqrt(1 / Snn)
	e.T0 = ref + tbar - e.Period*nbar
	e.SigmaT0 = math.Sqrt(1/W + nbar*nbar/Snn)
	e.Cov = -nbar / Snn
	e.RefEpoch = int64(math.Round(nbar))
	dRef := float64(e.RefEpoch) - nbar
	e.TRef = ref + tbar + e.Period*dRef
	e.SigmaTRef = math.Sqrt(1/W + dRef*dRef/Snn)

	for _, t := range times {
		if t.Skipped != "" {
			continue
		}
		s := t.Sigma()
		// Calculated time relative to ref, for precision.
		calc := tbar + e.Period*(float64(t.Epoch)-nbar)
		oc := t.Time - ref - calc
		e.Chi2 += oc * oc / (s * s)
		e.Rows = append(e.Rows, OC{Epoch: t.Epoch, Time: t.Time, Sigma: s, OC: oc * minutesPerDay, SigmaOC: s * minutesPerDay})
	}
	e.Dof = used - 2
	e.PValue = math.NaN()
	if e.Dof > 0 {
		e.PValue = distuv.ChiSquared{K: float64(e.Dof)}.Survival(e.Chi2)
		if e.PValue < cautionP {
			e.Caution = fmt.Sprintf("the transit times scatter about the linear ephemeris more than their errors allow "+
				"(χ² = %.4g for %d degrees of freedom, p = %.2g): there may be transit-timing variations, or the "+
				"errors are underestimated (correlated noise; consider inflating them by the red-noise factor β), "+
				"or spot crossings or flares distort some transits (look at the transits with the largest O−C). This alone does not establish timing variations.",
				e.Chi2, e.Dof, e.PValue)
		}
	}
	return e, nil
}
