package search

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/codec"
	"dipline/steps/search/bls"
)

// This file keeps, shows and words each signal's checks (bls.Rivals, bls.Spread): how the
// period found fares against half and twice it, and whether one or two transits carry it.

// writeChecks appends the detection's checks to w, in the order readChecks reads them.
func writeChecks(w *codec.Writer, d *bls.Detection) {
	r := d.Rivals
	for _, c := range []bls.Compared{r.Half, r.Odd, r.Even} {
		w.Float(c.Depth)
		w.Float(c.DepthSigma)
		w.Float(c.Ratio)
		w.Float(c.RatioSigma)
	}
	w.Float(r.HalfDeltaBIC)
	w.Float(r.DoubleDeltaBIC)
	w.Float(r.PointScatter)
	w.Float(r.TransitScatter)
	w.Int(int64(r.Preferred))
	sp := d.Spread
	w.Float(sp.Strongest)
	w.Float(sp.TwoStrongest)
	w.Float(sp.StrongestTime)
	w.Int(int64(sp.Counted))
}

// readChecks reads what writeChecks wrote; a preferred period that names no model or a
// negative count is an error.
func readChecks(rd *codec.Reader, d *bls.Detection) error {
	r := &d.Rivals
	for _, c := range []*bls.Compared{&r.Half, &r.Odd, &r.Even} {
		c.Depth, c.DepthSigma, c.Ratio, c.RatioSigma = rd.Float(), rd.Float(), rd.Float(), rd.Float()
	}
	r.HalfDeltaBIC, r.DoubleDeltaBIC = rd.Float(), rd.Float()
	r.PointScatter, r.TransitScatter = rd.Float(), rd.Float()
	pref := rd.Int()
	sp := &d.Spread
	sp.Strongest, sp.TwoStrongest, sp.StrongestTime = rd.Float(), rd.Float(), rd.Float()
	n := rd.Int()
	if pref < int64(bls.PreferFound) || pref > int64(bls.PreferDouble) || n < 0 || n > math.MaxInt32 {
		return fmt.Errorf("preferred period %d or %d transits counted out of range", pref, n)
	}
	r.Preferred, sp.Counted = bls.Choice(pref), int(n)
	return nil
}

// checkFigures lists a signal's checks under the prefix p ("signal1.").
func checkFigures(p string, d bls.Detection) []steps.Figure {
	r, sp := d.Rivals, d.Spread
	f := r.Preferred.Factor()
	return []steps.Figure{
		{Name: p + "half_period.depth_ratio", Value: r.Half.Ratio, Sigma: r.Half.RatioSigma,
			Doc: "depth of a box of the same duration folded at half the period, over the depth at the period: about 0.5 for a transit, about 1 if the true period is half"},
		{Name: p + "half_period.delta_bic", Value: r.HalfDeltaBIC,
			Doc: "BIC of one box depth at half the period minus BIC of one depth at the period (2 parameters each: level, depth), the flux errors scaled up by the larger of the point-to-point and the transit-to-transit scatter; negative favours half the period"},
		{Name: p + "double_period.odd_ratio", Value: r.Odd.Ratio, Sigma: r.Odd.RatioSigma,
			Doc: "depth of the transits an odd number of periods from the epoch, fitted as one box group at twice the period, over the depth at the period"},
		{Name: p + "double_period.even_ratio", Value: r.Even.Ratio, Sigma: r.Even.RatioSigma,
			Doc: "depth of the transits an even number of periods from the epoch (its own included), fitted as one box group at twice the period, over the depth at the period"},
		{Name: p + "double_period.delta_bic", Value: r.DoubleDeltaBIC,
			Doc: "BIC of two box depths (odd, even) at twice the period, 3 parameters, minus BIC of one depth at the period, 2 parameters, errors scaled as for half_period.delta_bic; negative favours twice the period"},
		{Name: p + "preferred_period", Value: f * d.Timing.Period, Sigma: f * d.Timing.PeriodSigma, Unit: "d",
			Doc: fmt.Sprintf("the period among P, P/2 and 2P whose box model has the lowest BIC, when at least %d below that at P (very strong on the scale of Kass & Raftery 1995); otherwise P", bls.PreferBIC)},
		{Name: p + "strongest_transit_share", Value: sp.Strongest,
			Doc: "largest SNR² of one transit over the sum of the positive ones, SNR = depth/σ of a box fitted to each transit alone: 1/N for N equal transits, near 1 for a single event"},
		{Name: p + "two_strongest_share", Value: sp.TwoStrongest,
			Doc: "the same share for the two strongest transits together"},
	}
}

// Cautions says first whether a star_density that makes the star a giant's kept much of
// the period range from being searched, or one is denser than any main-sequence star's
// (densityCaution), then, per signal, what makes its
// period doubtful: one or two transits carrying it, a better fit at twice or half the
// period, or too few transits. Nothing when nothing is doubtful.
func (a *Artifact) Cautions() []string {
	var out []string
	if c := a.densityCaution(); c != "" {
		out = append(out, c)
	}
	for k, d := range a.Detections() {
		out = append(out, signalCautions(fmt.Sprintf("signal %d (%s d)", k+1, num(d.Timing.Period)), d, a.Frame.Since())...)
	}
	return out
}

func signalCautions(who string, d bls.Detection, since string) []string {
	var out []string
	r, sp := d.Rivals, d.Spread
	switch {
	case sp.Strongest >= bls.SingleShare:
		out = append(out, fmt.Sprintf("%s: one transit, at %.2f %s, carries %.0f %% of the signal: possibly a single event or a systematic, not a periodic transit",
			who, sp.StrongestTime, since, 100*sp.Strongest))
	case sp.Counted >= bls.PairMinTransits && sp.TwoStrongest >= bls.PairShare:
		out = append(out, fmt.Sprintf("%s: two transits carry %.0f %% of the signal: possibly two events or systematics, not a periodic transit",
			who, 100*sp.TwoStrongest))
	case r.Preferred == bls.PreferDouble:
		out = append(out, fmt.Sprintf("%s: the data prefer twice this period (ΔBIC = %s): the odd and even dips differ (%s vs %s ppm) — possibly an eclipsing binary at %s d",
			who, signed(r.DoubleDeltaBIC), ppm(r.Odd), ppm(r.Even), num(2*d.Timing.Period)))
	case r.Preferred == bls.PreferHalf:
		out = append(out, fmt.Sprintf("%s: the data prefer half this period (ΔBIC = %s): half-way between the transits lies a dip %.2f ± %.2f times as deep — the period is probably %s d",
			who, signed(r.HalfDeltaBIC), r.Half.Ratio, r.Half.RatioSigma, num(d.Timing.Period/2)))
	}
	switch n := d.Strength.Transits; {
	case n == 2:
		out = append(out, fmt.Sprintf("%s: only 2 transits with data: the period could be an integer fraction of this", who))
	case n == 1:
		out = append(out, fmt.Sprintf("%s: only 1 transit with data: the period is not established", who))
	case n < 1:
		out = append(out, fmt.Sprintf("%s: no transit has half the points its duration spans: the period is not established", who))
	}
	return out
}

// num writes a period with four significant digits.
func num(x float64) string { return fmt.Sprintf("%.4g", x) }

// signed writes x rounded to a whole number with a true minus sign.
func signed(x float64) string { return strings.Replace(fmt.Sprintf("%.0f", x), "-", "−", 1) }

// ppm writes a depth and its error in ppm.
func ppm(c bls.Compared) string { return fmt.Sprintf("%.0f ± %.0f", c.Depth*1e6, c.DepthSigma*1e6) }
