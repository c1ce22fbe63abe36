package search

import (
	"fmt"
	"math"
	"sort"
	"strconv"

	"dipline/steps"
	"dipline/steps/internal/boxmodel"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/paper"
	"dipline/steps/search/bls"
)

// Present shows the search: a table of the signals found with their period checks, then
// per pass its periodogram on the scale of the detection threshold and, when the pass found
// a signal, the light curve it searched folded at that signal with the box model over it.
//
// Data: "periodogram_pass<k>" (period_d, frequency_per_d, power, sde, duration_d), one row
// per trial frequency; "fold_signal<k>" (phase_d, flux, flux_err, model), the points within
// foldWindow durations of mid-transit; "fold_signal<k>_binned" (phase_d, flux, flux_err,
// points) when the fold has more than binAbove points. The folds need the light curve the
// step searched (in.Refs["light_curve"]); without it they are left out and the table says so.
func (Kind) Present(c *Config, art steps.Artifact, in steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok || a == nil {
		return steps.Presentation{}, fmt.Errorf("search: cannot show a %T", art)
	}
	threshold, maskFactor := a.Threshold, defaultMaskFactor
	if c != nil {
		maskFactor = c.MaskFactor
	}
	var lc *lightcurve.LightCurve
	if src, ok := in.Ref("light_curve").(lightcurve.Source); ok {
		lc = src.LightCurve()
	}
	var pr steps.Presentation
	pr.Panels = append(pr.Panels, signalsPanel(a, lc != nil))
	var found []bls.Detection
	for k, p := range a.Passes {
		panel, data := periodogramPanel(a, k, threshold)
		pr.Panels = append(pr.Panels, panel)
		pr.Data = append(pr.Data, data)
		if p.Found == nil {
			continue
		}
		if lc != nil {
			panel, fold := foldPanel(a.Frame, lc, len(found)+1, *p.Found, found, maskFactor)
			pr.Panels = append(pr.Panels, panel)
			pr.Data = append(pr.Data, fold...)
		}
		found = append(found, *p.Found)
	}
	return pr, nil
}

// Presentation constants, each with its reason.
const (
	// foldWindow is the half-width of a fold, in transit durations: three show the box and
	// two durations of flux on either side, enough to judge the level the depth is
	// measured from. A period shorter than six durations is shown whole.
	foldWindow = 3.0
	// binAbove is the number of folded points above which binned points are drawn over
	// them: beyond a few thousand, single points hide a shallow dip in their own scatter.
	binAbove = 5000
	// binsPerDuration sets the bin width of a fold to a fifth of the transit duration: five
	// bins across the box show its bottom and edges, and a bin of a 2-hour transit still
	// holds about a dozen 2-minute points per transit.
	binsPerDuration = 5
)

// periodogramPanel shows pass k (from 0) and returns its data.
func periodogramPanel(a *Artifact, k int, threshold float64) (steps.Panel, steps.Data) {
	g, p := a.Grid, a.Passes[k]
	n := len(p.Power)
	period, freq := make([]float64, n), make([]float64, n)
	for j := range n {
		freq[j] = g.Freq(j)
		period[j] = 1 / freq[j]
	}
	sde := bls.SDESpectrum(p.Power)
	name := fmt.Sprintf("periodogram_pass%d", k+1)
	plot := &steps.Plot{
		Title:  fmt.Sprintf("Pass %d", k+1),
		XLabel: "trial period (d)", YLabel: "SDE", LogX: true,
		Layers: []steps.Layer{{Label: "SDE", Style: steps.Line, X: period, Y: sde}},
		HLines: []steps.Mark{{Value: threshold, Label: fmt.Sprintf("threshold, SDE %g", threshold)}},
		Data:   name,
	}
	words := fmt.Sprintf("Box search over %d trial periods from %.4g to %.4g d (a grid uniform in f^(1/3), Ofir 2014)", n, 1/g.FMax, 1/g.FMin)
	if k > 0 {
		words += fmt.Sprintf(", with the transits of the %d signal(s) found before masked", k)
	}
	words += ". Drawn is each trial period's SDE: the best box's power (the square root of its χ² improvement over a flat light curve, best over box lengths and phases), less the spectrum's slow trend, " +
		"measured from the median in robust standard deviations (1.4826 times the median absolute deviation) over the grid. " +
		"The result keeps the power (to seven digits); the SDE is recomputed from it by the search's own formula, so the peak may differ from the recorded SDE in the last digits."
	if p.Peak >= 0 && p.Peak < n {
		plot.Layers = append(plot.Layers, steps.Layer{Label: "highest peak", Style: steps.Emphasised,
			X: []float64{period[p.Peak]}, Y: []float64{sde[p.Peak]}})
		switch {
		case p.Found != nil:
			P := p.Found.Timing.Period
			words += fmt.Sprintf(" The highest peak, at %.5g d, reaches SDE %.2f (threshold %g): refined to %.6g d.", period[p.Peak], p.SDE, threshold, P)
			for _, m := range []struct {
				v    float64
				name string
			}{{P / 2, "P/2"}, {2 * P, "2P"}} {
				if m.v >= 1/g.FMax && m.v <= 1/g.FMin {
					plot.VLines = append(plot.VLines, steps.Mark{Value: m.v, Label: fmt.Sprintf("%s = %.4g d", m.name, m.v)})
				}
			}
			if len(plot.VLines) > 0 {
				words += " Half and twice that period are marked where they fall in the grid."
			}
		case p.SDE < threshold:
			words += fmt.Sprintf(" The highest peak, at %.5g d, has SDE %.2f, below the threshold %g: the search stopped here.", period[p.Peak], p.SDE, threshold)
		case p.Refused != "":
			words += fmt.Sprintf(" The highest peak, at %.5g d (SDE %.2f, threshold %g), %s: the search stopped here.", period[p.Peak], p.SDE, threshold, p.Refused)
		default:
			words += fmt.Sprintf(" The highest peak, at %.5g d (SDE %.2f), gave no dip when refined: the search stopped here.", period[p.Peak], p.SDE)
		}
	}
	panel := steps.Panel{Title: fmt.Sprintf("Periodogram, pass %d", k+1), Caption: words, Plots: []*steps.Plot{plot}, Columns: 1}
	data := steps.Data{Name: name, Series: []steps.Series{
		{Name: "period_d", Values: period}, {Name: "frequency_per_d", Values: freq},
		{Name: "power", Values: append([]float64(nil), p.Power...)}, {Name: "sde", Values: sde},
		{Name: "duration_d", Values: append([]float64(nil), p.Duration...)},
	}}
	return panel, data
}

// folded is a light curve folded at one signal: per point within the window, its time from
// mid-transit, flux, error and the box model's value, in order of phase.
type folded struct {
	phase, flux, err, model []float64
	level                   float64
	halfWidth               float64
}

// fold folds lc at d, leaving out, as the search did, the points within maskFactor
// durations of a transit of an earlier signal, and keeping those within the window.
func fold(lc *lightcurve.LightCurve, d bls.Detection, earlier []bls.Detection, maskFactor float64) folded {
	t, f, e, _ := lc.Flat()
	eph := boxmodel.Ephemeris{Period: d.Timing.Period, Epoch: d.Timing.Epoch, Duration: d.Shape.Duration}
	fo := folded{halfWidth: math.Min(eph.Period/2, foldWindow*eph.Duration)}
	type pt struct{ ph, f, e float64 }
	var pts []pt
	for i, ti := range t {
		masked := false
		for _, o := range earlier {
			_, off := boxmodel.Ephemeris{Period: o.Timing.Period, Epoch: o.Timing.Epoch}.Offset(ti)
			if math.Abs(off) <= maskFactor*o.Shape.Duration/2 {
				masked = true
				break
			}
		}
		if _, off := eph.Offset(ti); !masked && math.Abs(off) <= fo.halfWidth {
			pts = append(pts, pt{off, f[i], e[i]})
		}
	}
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].ph < pts[j].ph })
	inBox := func(ph float64) bool { return math.Abs(ph) < eph.Duration/2 } // as boxmodel.Ephemeris.Inside
	w := make([]float64, len(pts))
	for i, p := range pts {
		fo.phase = append(fo.phase, p.ph)
		fo.flux = append(fo.flux, p.f)
		fo.err = append(fo.err, p.e)
		w[i] = 1 / (p.e * p.e)
	}
	// The level is the weighted mean flux out of the box (boxmodel.Fit); the depth is the
	// signal's own, so the model shows what the search found, not a new fit.
	fo.level = boxmodel.Fit(fo.flux, w, 1, func(i int) int {
		if inBox(fo.phase[i]) {
			return 0
		}
		return -1
	}).Level
	for _, ph := range fo.phase {
		m := fo.level
		if inBox(ph) {
			m -= d.Shape.Depth
		}
		fo.model = append(fo.model, m)
	}
	return fo
}

// boxLine is the box model as a line: flat at the level, down by depth across the box,
// with vertical edges (two vertices at each edge, in the order drawn).
func (fo folded) boxLine(duration, depth float64) (x, y []float64) {
	h, w, lo := duration/2, fo.halfWidth, fo.level-depth
	if h >= w {
		return []float64{-w, w}, []float64{lo, lo}
	}
	return []float64{-w, -h, -h, h, h, w}, []float64{fo.level, fo.level, lo, lo, fo.level, fo.level}
}

// binned averages the folded points in bins of width a fifth of the duration, centred on
// mid-transit (bin n holds the points with round(phase/width) = n): the weighted mean flux,
// its error √(1/Σσ⁻²) and the count. Bins are fixed by the duration alone, so the same
// points give the same bins.
func (fo folded) binned(duration float64) (phase, flux, err, count []float64) {
	width := duration / binsPerDuration
	// The points are in phase order, so each bin's points are consecutive.
	for i := 0; i < len(fo.phase); {
		k := math.Round(fo.phase[i] / width)
		var w, wf float64
		n := 0
		for ; i < len(fo.phase) && math.Round(fo.phase[i]/width) == k; i++ {
			wi := 1 / (fo.err[i] * fo.err[i])
			w += wi
			wf += wi * fo.flux[i]
			n++
		}
		if w > 0 && !math.IsInf(w, 0) {
			phase = append(phase, k*width)
			flux = append(flux, wf/w)
			err = append(err, math.Sqrt(1/w))
			count = append(count, float64(n))
		}
	}
	return phase, flux, err, count
}

// foldPanel shows signal k (from 1) folded, with its data.
func foldPanel(frame lightcurve.Frame, lc *lightcurve.LightCurve, k int, d bls.Detection, earlier []bls.Detection, maskFactor float64) (steps.Panel, []steps.Data) {
	fo := fold(lc, d, earlier, maskFactor)
	name := fmt.Sprintf("fold_signal%d", k)
	bx, by := fo.boxLine(d.Shape.Duration, d.Shape.Depth)
	plot := &steps.Plot{
		Title:  fmt.Sprintf("Signal %d at %.6g d", k, d.Timing.Period),
		XLabel: "time from mid-transit (d)", YLabel: "relative flux",
		Layers: []steps.Layer{{Label: "flux", Style: steps.Points, X: fo.phase, Y: fo.flux}},
		Data:   name,
	}
	data := []steps.Data{{Name: name, Series: []steps.Series{
		{Name: "phase_d", Values: fo.phase}, {Name: "flux", Values: fo.flux},
		{Name: "flux_err", Values: fo.err}, {Name: "model", Values: fo.model},
	}}}
	words := fmt.Sprintf("The light curve the search read, folded at P = %.6g d on the mid-transit at %.5f %s, within %.3g d of mid-transit (%d points)",
		d.Timing.Period, d.Timing.Epoch, frame.Since(), fo.halfWidth, len(fo.phase))
	if len(earlier) > 0 {
		words += fmt.Sprintf("; the points in a stretch of %g durations around each transit of an earlier signal are left out, as the search left them out", maskFactor)
	}
	words += fmt.Sprintf(". The line is the box the search found: %.3g h long, %.0f ppm deep below the weighted mean flux outside it.",
		d.Shape.Duration*24, d.Shape.Depth*1e6)
	if len(fo.phase) > binAbove {
		bp, bf, be, bn := fo.binned(d.Shape.Duration)
		plot.Layers = append(plot.Layers, steps.Layer{Label: "binned", Style: steps.Emphasised, X: bp, Y: bf})
		data = append(data, steps.Data{Name: name + "_binned", Series: []steps.Series{
			{Name: "phase_d", Values: bp}, {Name: "flux", Values: bf}, {Name: "flux_err", Values: be}, {Name: "points", Values: bn},
		}})
		words += fmt.Sprintf(" The larger points are weighted means in bins of %.3g min (a fifth of the box), centred on mid-transit.", d.Shape.Duration/binsPerDuration*1440)
	}
	plot.Layers = append(plot.Layers, steps.Layer{Label: "box model", Style: steps.Line, X: bx, Y: by})
	return steps.Panel{Title: fmt.Sprintf("Signal %d folded", k), Caption: words, Plots: []*steps.Plot{plot}, Columns: 1}, data
}

// signalsPanel is the table of the signals found.
func signalsPanel(a *Artifact, haveCurve bool) steps.Panel {
	tb := &steps.Table{Header: []string{"signal", "period (d)", "epoch (d)", "depth (ppm)", "duration (h)", "SDE", "SNR",
		"transits with data", "against P/2", "against 2P", "strongest transit's share"}}
	for k, d := range a.Detections() {
		r, sp := d.Rivals, d.Spread
		half := fmt.Sprintf("depth ratio %s, ΔBIC %s", withSigma(r.Half.Ratio, r.Half.RatioSigma), signedNum(r.HalfDeltaBIC))
		double := fmt.Sprintf("odd %s and even %s of the depth, ΔBIC %s", withSigma(r.Odd.Ratio, r.Odd.RatioSigma),
			withSigma(r.Even.Ratio, r.Even.RatioSigma), signedNum(r.DoubleDeltaBIC))
		switch r.Preferred {
		case bls.PreferHalf:
			half, double = "P/2 preferred: "+half, "P kept: "+double
		case bls.PreferDouble:
			half, double = "P kept: "+half, "2P preferred: "+double
		default:
			half, double = "P kept: "+half, "P kept: "+double
		}
		share := "–"
		if !math.IsNaN(sp.Strongest) {
			share = fmt.Sprintf("%.0f %% of %d transits", 100*sp.Strongest, sp.Counted)
			switch {
			case sp.Strongest >= bls.SingleShare:
				share += ": possibly one event"
			case sp.Counted >= bls.PairMinTransits && sp.TwoStrongest >= bls.PairShare:
				share += fmt.Sprintf(": two carry %.0f %%, possibly two events", 100*sp.TwoStrongest)
			}
		}
		tb.Rows = append(tb.Rows, []string{
			strconv.Itoa(k + 1),
			withSigma(d.Timing.Period, d.Timing.PeriodSigma),
			withSigma(d.Timing.Epoch, d.Timing.EpochSigma),
			withSigma(d.Shape.Depth*1e6, d.Shape.DepthSigma*1e6),
			withSigma(d.Shape.Duration*24, d.Shape.DurationSigma*24),
			fmt.Sprintf("%.1f", d.Strength.SDE),
			fmt.Sprintf("%.1f", d.Strength.SNR),
			strconv.Itoa(d.Strength.Transits),
			half, double, share,
		})
	}
	tb.Notes = []string{
		"Epochs are mid-transit times in " + a.Frame.Since() + ". Values are rounded by their one-sigma errors.",
		fmt.Sprintf("Against P/2 and 2P: the box's depth at P/2 and, at 2P, of the odd and the even transits, over the depth at P (about 0.5, and 1 and 1, for a transit at P), and the BIC of each model less that at P; P/2 or 2P is preferred when its BIC is at least %d lower (very strong on Kass & Raftery's 1995 scale), else P is kept.", bls.PreferBIC),
		fmt.Sprintf("Strongest transit's share: the part of the signal's SNR² one transit carries, among the transits whose box holds data; at least %.0f %% reads as possibly one event, two transits carrying %.0f %% of three or more as possibly two.", 100*bls.SingleShare, 100*bls.PairShare),
		"A signal is a periodic dip in the light curve, not a planet: vetting, a fit and the scientist's judgement decide what it is.",
	}
	if len(a.Detections()) == 0 {
		tb.Notes = append([]string{"No peak reached the detection threshold."}, tb.Notes...)
	}
	tb.Notes = append(tb.Notes, a.Cautions()...)
	if !haveCurve {
		tb.Notes = append(tb.Notes, "The searched light curve was not at hand, so no signal is shown folded.")
	}
	return steps.Panel{Title: "Signals found", Caption: "The signals in the order found, each the strongest left after masking the ones before.", Table: tb}
}

// withSigma writes v ± s rounded by s (paper's rule, common practice); "–" for an
// undefined value.
func withSigma(v, s float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return paper.Symmetric(v, s).Text()
}

// signedNum writes x to a whole number with its sign, a true minus for negatives.
func signedNum(x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	if x >= 0 {
		return "+" + fmt.Sprintf("%.0f", x)
	}
	return signed(x)
}
