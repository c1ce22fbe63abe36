package fit

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"unicode"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/paper"
	"dipline/steps/internal/sampler"
	"dipline/steps/internal/signals"
)

// What the fit shows (steps.Presenter): per planet its transits folded on the posterior
// median ephemeris with the posterior's model band and the residuals; the key sampled
// parameters two by two; per planet the transit times against a straight-line ephemeris;
// and a table of the sampling diagnostics. The model is the fit's own (view.go).

// Choices of the presentation, each with its reason.
const (
	// bandDraws is the number of posterior draws, evenly spaced rows of Samples, over which
	// the model band is taken: its 16th and 84th percentiles are then each a few tens of
	// draws from the ends, steady enough to draw (our choice).
	bandDraws = 150
	// gridHalf is the number of model points on each side of mid-transit in the band: 301
	// across the window, about 60 per search duration at the default window, several per
	// ingress of any transit the search finds at the usual cadences (our choice).
	gridHalf = 150
	// maxDrawnPoints is the most unbinned points drawn; beyond it they blur into a cloud
	// that hides the binned ones, and only the bins are drawn (the data keep every point).
	maxDrawnPoints = 5000
	// binsPerDuration sets the bin width of the folded points: a tenth of the posterior
	// median total duration T14, so an ingress spans a bin or more (our choice).
	binsPerDuration = 10
	// minBinPoints is the fewest points a bin needs to be shown: its standard error comes
	// from the points' own scatter, which two points hardly measure.
	minBinPoints = 3
	// maxPairs caps the parameters shown two by two: beyond eight the grid's cells are too
	// small to read (our choice); the rest are in the posterior data.
	maxPairs = 8
	// maxScatter is the most draws in each two-parameter scatter, evenly spaced rows, and
	// maxScatterTotal the most over the whole grid: each drawn point costs the page about
	// 100 bytes, and eight parameters' 28 scatters of 2,000 would make it 6 MB.
	maxScatter, maxScatterTotal = 2000, 20000
	// maxPosteriorRows is the most rows of the posterior written out (evenly spaced); the
	// histograms count the same rows.
	maxPosteriorRows = 5000
	// histBins is the number of bars in each parameter's histogram.
	histBins = 30
	// hoursPerDay and minutesPerDay convert the fit's days for the axes.
	hoursPerDay, minutesPerDay = 24.0, 1440.0
)

// Present shows the fit's result; in.Refs["light_curve"] and in.Refs["signals"] must be
// the light curve and the search the fit read.
func (Kind) Present(c *Config, art steps.Artifact, in steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok || a == nil || len(a.Names) == 0 {
		return steps.Presentation{}, fmt.Errorf("fit: cannot show a %T", art)
	}
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok || src.LightCurve() == nil {
		return steps.Presentation{}, errors.New("fit: light_curve does not refer to a step with a light curve")
	}
	ss, ok := in.Ref("signals").(signals.Source)
	if !ok {
		return steps.Presentation{}, errors.New("fit: signals does not refer to a step with signals")
	}
	m, err := viewModel(src.LightCurve(), ss.Signals(), c, a)
	if err != nil {
		return steps.Presentation{}, err
	}
	rr, err := newRowReader(m, a)
	if err != nil {
		return steps.Presentation{}, err
	}
	best, ok := m.stateOf(rr.full(a.Best))
	if !ok {
		return steps.Presentation{}, errors.New("fit: the best fit gives no transit")
	}
	draws := m.bandStates(a, rr)
	if len(draws) == 0 {
		draws = []state{best}
	}
	scales := make([]float64, len(m.segs))
	sc := &curveScratch{}
	for s := range m.segs {
		sd := &m.segs[s]
		scales[s] = scaleOf(sd, m.curveOf(nil, sd.t, sd, best, sc))
	}
	var p steps.Presentation
	sigs := ss.Signals()
	for j := 0; j < m.planets; j++ {
		f := m.fold(a, best, draws, scales, sigs[j], j)
		p.Panels = append(p.Panels, f.panel())
		p.Data = append(p.Data, f.data()...)
	}
	panel, data := pairs(a)
	p.Panels = append(p.Panels, panel)
	p.Data = append(p.Data, data)
	for j := range a.Times {
		panel, data, ok := transitTimes(a, j)
		p.Panels = append(p.Panels, panel)
		if ok {
			p.Data = append(p.Data, data)
		}
	}
	p.Panels = append(p.Panels, diagnostics(a))
	return p, nil
}

// evenRows returns at most most indices spread evenly over n rows, in order.
func evenRows(n, most int) []int {
	k := min(n, most)
	out := make([]int, k)
	for i := range out {
		out[i] = i * n / k
	}
	return out
}

// bandStates is the model's state at bandDraws evenly spaced rows of the posterior (rows
// where no planet can transit, which the sampler never keeps, are left out).
func (m *Model) bandStates(a *Artifact, rr rowReader) []state {
	c := len(a.Names)
	var out []state
	for _, r := range evenRows(len(a.Samples)/c, bandDraws) {
		if s, ok := m.stateOf(rr.full(a.Samples[r*c : (r+1)*c])); ok {
			out = append(out, s)
		}
	}
	return out
}

// folded is one planet's folded transit: per point, per bin, and the model band.
type folded struct {
	planet                 string
	period                 float64 // posterior median, d
	window                 float64 // search durations
	time, phase, flux, err []float64
	med, lo, hi, resid     []float64
	// The band of the segments holding most of the points, on a grid of hours.
	grid, gMed, gLo, gHi []float64
	exposure             float64 // the band's exposure, min (0: instantaneous)
	exposures            int     // distinct integrations among the planet's segments
	draws                int
	others               bool    // other planets were divided out
	binWidth             float64 // hours
	bins                 bins
}

// bins are the folded points' means in bins of phase.
type bins struct{ phase, flux, err, resid, points []float64 }

// fold folds the points near planet j's transits on its posterior median period and
// mid-time. Each point is divided by its segment's best-fit normalisation (scales) and by
// the best-fit model of the other planets, so that what is left is planet j's transit
// alone; the model band is planet j's model alone over the draws, evaluated around the
// reference transit and integrated over each segment's exposure as in the fit.
func (m *Model) fold(a *Artifact, best state, draws []state, scales []float64, sig signals.Signal, j int) folded {
	name := planetNames[j]
	_, period, _ := quantiles(a.Column(name + ".period"))
	_, t0, _ := quantiles(a.Column(name + ".t0"))
	f := folded{planet: name, period: period, window: a.Window, draws: len(draws), others: m.planets > 1}
	groups, pointGroup, reach := m.foldPoints(&f, a, best, scales, sig, j, t0)
	// The band: planet j's model alone for every draw on a grid of times from the reference
	// mid-time, per group of segments.
	step := reach / gridHalf
	times := make([]float64, 2*gridHalf+1)
	f.grid = make([]float64, len(times))
	for i := range times {
		times[i] = t0 + float64(i-gridHalf)*step
		f.grid[i] = float64(i-gridHalf) * step * hoursPerDay
	}
	dominant := m.foldBands(groups, times, draws, j)
	f.exposures = len(groups)
	if len(groups) == 0 {
		f.grid = nil
	} else {
		gr := groups[dominant]
		f.gMed, f.gLo, f.gHi = gr.med, gr.lo, gr.hi
		f.exposure = 2 * gr.sd.half * minutesPerDay
	}
	// Per point, the band of its own group at its phase.
	for q, ph := range f.phase {
		gr := groups[pointGroup[q]]
		x := ph / hoursPerDay / step
		f.med = append(f.med, interpolate(gr.med, x+gridHalf))
		f.lo = append(f.lo, interpolate(gr.lo, x+gridHalf))
		f.hi = append(f.hi, interpolate(gr.hi, x+gridHalf))
		f.resid = append(f.resid, f.flux[q]-f.med[q])
	}
	_, t14, _ := quantiles(a.Column(name + ".t14"))
	if !(t14 > 0) {
		t14 = sig.Duration
	}
	f.binWidth = binWidth(t14*hoursPerDay, 2*reach*hoursPerDay, len(f.phase))
	f.bins = binPhases(f.phase, f.flux, f.resid, f.binWidth)
	return f
}

// foldGroup is the segments that integrate alike (the same sub-exposures and exposure), and
// the model band drawn for them.
type foldGroup struct {
	sd          *segData
	points      int
	med, lo, hi []float64
}

// foldPoints folds planet j's points into f (time, phase, flux and error divided by the
// segment's level and the other planets' best model) and returns the groups of segments,
// each point's group, and the reach of the fold in days from mid-transit.
func (m *Model) foldPoints(f *folded, a *Artifact, best state, scales []float64, sig signals.Signal, j int, t0 float64) ([]foldGroup, []int, float64) {
	var groups []foldGroup
	var pointGroup []int
	bestOthers := m.withPlanets(best, func(i int) bool { return i != j })
	sc := &curveScratch{}
	reach := a.Window * sig.Duration
	inflate := 1.0
	if a.Inflated {
		inflate = a.Beta
	}
	for s := range m.segs {
		sd := &m.segs[s]
		var idx []int
		var t []float64
		for i, ti := range sd.t {
			if sig.InTransit(ti, 2*a.Window) {
				idx = append(idx, i)
				t = append(t, ti)
			}
		}
		if len(idx) == 0 {
			continue
		}
		g := slices.IndexFunc(groups, func(gr foldGroup) bool { return gr.sd.nsub == sd.nsub && gr.sd.half == sd.half })
		if g < 0 {
			g = len(groups)
			groups = append(groups, foldGroup{sd: sd})
		}
		groups[g].points += len(idx)
		div := m.curveOf(nil, t, sd, bestOthers, sc)
		js := m.jitterOf(a, s)
		for q, i := range idx {
			d := scales[s] * div[q]
			ph := t[q] - t0
			ph -= math.Round(ph/f.period) * f.period
			reach = math.Max(reach, math.Abs(ph))
			f.time = append(f.time, t[q])
			f.phase = append(f.phase, ph*hoursPerDay)
			f.flux = append(f.flux, sd.f[i]/d)
			f.err = append(f.err, math.Sqrt(sd.v[i]*inflate*inflate+js*js)/d)
			pointGroup = append(pointGroup, g)
		}
	}
	return groups, pointGroup, reach
}

// foldBands computes per group the 16th, 50th and 84th percentiles of planet j's model alone
// over the draws at times, and returns the group with the most points.
func (m *Model) foldBands(groups []foldGroup, times []float64, draws []state, j int) int {
	sc := &curveScratch{}
	curves := make([][]float64, len(draws))
	column := make([]float64, len(draws))
	dominant := 0
	for g := range groups {
		gr := &groups[g]
		for d, st := range draws {
			curves[d] = m.curveOf(curves[d], times, gr.sd, m.withPlanets(st, func(i int) bool { return i == j }), sc)
		}
		gr.med, gr.lo, gr.hi = make([]float64, len(times)), make([]float64, len(times)), make([]float64, len(times))
		for i := range times {
			for d := range draws {
				column[d] = curves[d][i]
			}
			slices.Sort(column)
			gr.lo[i], gr.med[i], gr.hi[i] = sampler.Quantile(column, 0.16), sampler.Quantile(column, 0.5), sampler.Quantile(column, 0.84)
		}
		if gr.points > groups[dominant].points {
			dominant = g
		}
	}
	return dominant
}

// binWidth is the width (hours) of the bins of n folded points spread over span hours, for
// a transit of total duration t14 hours: a tenth of t14, or, where the points are sparse
// (few transits, long exposures), the width that holds twice minBinPoints points on
// average, so that most bins can be shown.
func binWidth(t14, span float64, n int) float64 {
	w := t14 / binsPerDuration
	if n > 0 {
		w = math.Max(w, 2*minBinPoints*span/float64(n))
	}
	return w
}

// interpolate is y linearly interpolated at the fractional index x, held at the ends.
func interpolate(y []float64, x float64) float64 {
	if len(y) == 0 {
		return math.NaN()
	}
	if !(x > 0) {
		return y[0]
	}
	if x >= float64(len(y)-1) {
		return y[len(y)-1]
	}
	i := int(x)
	w := x - float64(i)
	return y[i] + w*(y[i+1]-y[i])
}

// binPhases averages the fluxes and residuals in bins of width (hours) centred on whole
// multiples of the width, mid-transit at a bin's centre, keeping bins of at least
// minBinPoints points; a bin's error is the standard error of its mean, the sample standard
// deviation over √n.
func binPhases(phase, flux, resid []float64, width float64) bins {
	var b bins
	if len(phase) == 0 || !(width > 0) {
		return b
	}
	lo, hi := math.MaxInt, math.MinInt
	idx := make([]int, len(phase))
	for i, p := range phase {
		idx[i] = int(math.Round(p / width))
		lo, hi = min(lo, idx[i]), max(hi, idx[i])
	}
	n := make([]int, hi-lo+1)
	sum, sum2, sumR := make([]float64, len(n)), make([]float64, len(n)), make([]float64, len(n))
	for i, k := range idx {
		k -= lo
		n[k]++
		sum[k] += flux[i]
		sumR[k] += resid[i]
	}
	for i, k := range idx {
		k -= lo
		d := flux[i] - sum[k]/float64(n[k])
		sum2[k] += d * d
	}
	for k, c := range n {
		if c < minBinPoints {
			continue
		}
		fc := float64(c)
		b.phase = append(b.phase, float64(k+lo)*width)
		b.flux = append(b.flux, sum[k]/fc)
		b.err = append(b.err, math.Sqrt(sum2[k]/(fc-1)/fc))
		b.resid = append(b.resid, sumR[k]/fc)
		b.points = append(b.points, fc)
	}
	return b
}

// dataName is the name of planet j's Data of the given part ("fold", "fold_b"; with
// suffix "binned", "fold_b_binned").
func dataName(part, planet, suffix string) string {
	n := part + "_" + planet
	if suffix != "" {
		n += "_" + suffix
	}
	return n
}

// data is the folded transit's three tables: every point, the bins and the model band.
func (f folded) data() []steps.Data {
	return []steps.Data{
		{Name: dataName("fold", f.planet, ""), Series: []steps.Series{
			{Name: "time_d", Values: f.time}, {Name: "phase_h", Values: f.phase},
			{Name: "flux", Values: f.flux}, {Name: "flux_err", Values: f.err},
			{Name: "model_median", Values: f.med}, {Name: "model_lo", Values: f.lo}, {Name: "model_hi", Values: f.hi},
			{Name: "residual", Values: f.resid}}},
		{Name: dataName("fold", f.planet, "binned"), Series: []steps.Series{
			{Name: "phase_h", Values: f.bins.phase}, {Name: "flux", Values: f.bins.flux},
			{Name: "flux_err", Values: f.bins.err}, {Name: "residual", Values: f.bins.resid},
			{Name: "points", Values: f.bins.points}}},
		{Name: dataName("fold", f.planet, "model"), Series: []steps.Series{
			{Name: "phase_h", Values: f.grid}, {Name: "model_median", Values: f.gMed},
			{Name: "model_lo", Values: f.gLo}, {Name: "model_hi", Values: f.gHi}}},
	}
}

// plusMinus is a layer's error-bar ends y ∓ e.
func plusMinus(y, e []float64) (lo, hi []float64) {
	lo, hi = make([]float64, len(y)), make([]float64, len(y))
	for i := range y {
		lo[i], hi[i] = y[i]-e[i], y[i]+e[i]
	}
	return lo, hi
}

// panel is the folded transit above its residuals.
func (f folded) panel() steps.Panel {
	name := dataName("fold", f.planet, "")
	drawn := len(f.phase) <= maxDrawnPoints
	top := &steps.Plot{XLabel: "hours from mid-transit", YLabel: "relative flux", Data: name,
		VLines: []steps.Mark{{Value: 0, Label: "mid-transit"}}}
	bottom := &steps.Plot{XLabel: "hours from mid-transit", YLabel: "data − model", Data: name,
		HLines: []steps.Mark{{Value: 0, Label: "model"}}}
	if drawn {
		top.Layers = append(top.Layers, steps.Layer{Label: "each point", Style: steps.Points, X: f.phase, Y: f.flux})
		bottom.Layers = append(bottom.Layers, steps.Layer{Label: "each point", Style: steps.Points, X: f.phase, Y: f.resid})
	}
	top.Layers = append(top.Layers, steps.Layer{Label: "model: median and middle 68 % of the draws", Style: steps.Band,
		X: f.grid, Y: f.gMed, YLo: f.gLo, YHi: f.gHi})
	lo, hi := plusMinus(f.bins.flux, f.bins.err)
	rlo, rhi := plusMinus(f.bins.resid, f.bins.err)
	binLabel := fmt.Sprintf("mean of %.3g min", f.binWidth*60)
	top.Layers = append(top.Layers,
		steps.Layer{Label: binLabel, Style: steps.ErrorBars, X: f.bins.phase, Y: f.bins.flux, YLo: lo, YHi: hi},
		steps.Layer{Label: binLabel, Style: steps.Emphasised, X: f.bins.phase, Y: f.bins.flux})
	bottom.Layers = append(bottom.Layers,
		steps.Layer{Label: binLabel, Style: steps.ErrorBars, X: f.bins.phase, Y: f.bins.resid, YLo: rlo, YHi: rhi},
		steps.Layer{Label: binLabel, Style: steps.Emphasised, X: f.bins.phase, Y: f.bins.resid})

	var c strings.Builder
	fmt.Fprintf(&c, "The %d points within %g search durations of planet %s's predicted transits (the points the fit used), folded on the posterior median period, %.7g d, and mid-transit time. ",
		len(f.phase), f.window, f.planet, f.period)
	c.WriteString("Each segment's flux is divided by its best-fit level")
	if f.others {
		c.WriteString(", and by the best-fit model of the other planets, so that only this planet's transits remain")
	}
	c.WriteString(". ")
	fmt.Fprintf(&c, "The band holds the middle 68 %% (16th to 84th percentile) of this planet's model over %d evenly spaced posterior draws, its line their median, at the reference transit", f.draws)
	if f.exposure > 0 {
		fmt.Fprintf(&c, ", averaged over the %.3g-min exposure as in the fit", f.exposure)
	}
	if f.exposures > 1 {
		c.WriteString(" (the band is that of the segments holding most points; each point's model columns in the data use its own segment's exposure)")
	}
	fmt.Fprintf(&c, ". Large markers are means in bins of %.3g min with their standard errors (a tenth of the median total duration, wider where the points are too sparse for that); bins of fewer than %d points are left out. ", f.binWidth*60, minBinPoints)
	if !drawn {
		fmt.Fprintf(&c, "The %d single points are too many to draw and are left to the data file. ", len(f.phase))
	}
	c.WriteString("Below: each point minus the median model.")
	return steps.Panel{Title: fmt.Sprintf("Planet %s: its transits folded, with the model", f.planet),
		Caption: c.String(), Plots: []*steps.Plot{top, bottom}, Columns: 1}
}

// pairColumns picks the columns shown two by two, at most maxPairs, in the artifact's
// order: of the sampled columns, each planet's k and b first, then the star's density and
// the dilution, then the periods and mid-times. It also returns the sampled key columns
// left out.
func pairColumns(a *Artifact) (shown []int, left []string) {
	var first, second []int
	sampled := func(name string) int {
		i := a.column(name)
		if i >= a.Sampled {
			return -1
		}
		return i
	}
	for j := 0; j < a.Planets(); j++ {
		p := planetNames[j] + "."
		for _, n := range []string{"k", "b"} {
			if i := sampled(p + n); i >= 0 {
				first = append(first, i)
			}
		}
	}
	for _, n := range []string{"log10_star_density", "dilution"} {
		if i := sampled(n); i >= 0 {
			first = append(first, i)
		}
	}
	for j := 0; j < a.Planets(); j++ {
		p := planetNames[j] + "."
		for _, n := range []string{"period", "t0"} {
			if i := sampled(p + n); i >= 0 {
				second = append(second, i)
			}
		}
	}
	all := append(first, second...)
	for _, i := range all[min(len(all), maxPairs):] {
		left = append(left, a.Names[i])
	}
	shown = all[:min(len(all), maxPairs)]
	slices.Sort(shown)
	return shown, left
}

// label names a column for an axis, with its unit.
func label(name string) string {
	planet, par, ok := strings.Cut(name, ".")
	if !ok {
		switch name {
		case "log10_star_density":
			return "log10 star density (g/cm3)"
		case "star_density":
			return "star density (g/cm3)"
		case "dilution":
			return "dilution D"
		}
		return name
	}
	words := map[string]string{
		"period": "period (d)", "t0": "mid-transit time (d)", "k": "radius ratio k",
		"b": "impact parameter b", "secosw": "√e cos ω", "sesinw": "√e sin ω", "t14": "total duration (d)",
		"depth": "depth", "a_over_rstar": "a/R*", "e": "eccentricity", "omega": "ω (deg)",
	}
	if w, ok := words[par]; ok {
		return planet + ": " + w
	}
	return name
}

// columnUnits gives the unit suffix of the artifact's columns that have one.
var columnUnits = map[string]string{
	"period": "d", "t0": "d", "t14": "d", "omega": "deg",
	"star_density": "g_cm3", "log10_star_density": "g_cm3",
}

// columnName turns a column of the artifact into a data column: snake case, the unit after
// an underscore ("b.period" → "b_period_d", "q1[red]" → "q1_red").
func columnName(name string) string {
	_, par, ok := strings.Cut(name, ".")
	if !ok {
		par = name
	}
	var b strings.Builder
	under := false
	for _, r := range strings.ToLower(name) {
		if r < unicode.MaxASCII && (unicode.IsLetter(r) || unicode.IsDigit(r)) {
			if under && b.Len() > 0 {
				b.WriteByte('_')
			}
			b.WriteRune(r)
			under = false
			continue
		}
		under = true
	}
	if u, ok := columnUnits[par]; ok {
		b.WriteString("_" + u)
	}
	return b.String()
}

// pairs shows the key sampled parameters two by two: a histogram of each on the diagonal,
// a scatter of each pair below it, nothing above; and the posterior as data.
func pairs(a *Artifact) (steps.Panel, steps.Data) {
	c := len(a.Names)
	n := len(a.Samples) / c
	rows := evenRows(n, maxPosteriorRows)
	data := steps.Data{Name: "posterior"}
	seen := map[string]int{}
	for k, name := range a.Names {
		col := columnName(name)
		if seen[col]++; seen[col] > 1 {
			col = fmt.Sprintf("%s_%d", col, seen[col])
		}
		v := make([]float64, len(rows))
		for i, r := range rows {
			v[i] = a.Samples[r*c+k]
		}
		data.Series = append(data.Series, steps.Series{Name: col, Values: v})
	}
	shown, left := pairColumns(a)
	N := len(shown)
	scatter := evenRows(n, min(maxScatter, maxScatterTotal/max(1, N*(N-1)/2)))
	plots := make([]*steps.Plot, N*N)
	for i, ci := range shown {
		x, y := histogram(data.Series[ci].Values, histBins)
		plots[i*N+i] = &steps.Plot{XLabel: label(a.Names[ci]), YLabel: "draws", Data: data.Name,
			Layers: []steps.Layer{{Style: steps.Histogram, X: x, Y: y}}}
		for j, cj := range shown[:i] {
			xs, ys := make([]float64, len(scatter)), make([]float64, len(scatter))
			for q, r := range scatter {
				xs[q], ys[q] = a.Samples[r*c+cj], a.Samples[r*c+ci]
			}
			plots[i*N+j] = &steps.Plot{XLabel: label(a.Names[cj]), YLabel: label(a.Names[ci]), Data: data.Name,
				Layers: []steps.Layer{{Style: steps.Points, X: xs, Y: ys}}}
		}
	}
	caption := fmt.Sprintf("On the diagonal, how the %d written posterior draws spread over each sampled parameter (%d bars); below it, each pair of parameters over %d evenly spaced draws, where a slanted or curved cloud shows two parameters the data cannot tell apart. The data file holds every column for the same %d draws.",
		len(rows), histBins, len(scatter), len(rows))
	if len(left) > 0 {
		caption += fmt.Sprintf(" Not drawn, to keep the grid readable: %s.", strings.Join(left, ", "))
	}
	return steps.Panel{Title: "The posterior, two parameters at a time", Caption: caption, Plots: plots, Columns: N}, data
}

// histogram counts v in bins equal bins between its least and greatest values (the last
// bin holding the greatest), returning the bins' centres and counts; one bin when all
// values are equal.
func histogram(v []float64, bins int) (centres, counts []float64) {
	if len(v) == 0 {
		return nil, nil
	}
	lo, hi := slices.Min(v), slices.Max(v)
	if !(hi > lo) {
		return []float64{lo}, []float64{float64(len(v))}
	}
	w := (hi - lo) / float64(bins)
	centres, counts = make([]float64, bins), make([]float64, bins)
	for i := range centres {
		centres[i] = lo + (float64(i)+0.5)*w
	}
	for _, x := range v {
		k := min(bins-1, max(0, int((x-lo)/w)))
		counts[k]++
	}
	return centres, counts
}

// transitTimes shows planet j's transit times against its straight-line ephemeris: the
// O−C of every timed transit, in minutes, with its error. ok is false when there is no
// ephemeris (the panel then says why, and there is no data).
func transitTimes(a *Artifact, j int) (steps.Panel, steps.Data, bool) {
	pt := a.Times[j]
	name := planetNames[j]
	title := fmt.Sprintf("Planet %s: transit times against a constant period", name)
	if pt.Err != "" || len(pt.Ephemeris.Rows) == 0 {
		why := pt.Err
		if why == "" {
			why = "no transit could be timed"
		}
		return steps.Panel{Title: title, Table: &steps.Table{Header: []string{"planet", "why there are no transit times to show"},
			Rows: [][]string{{name, why}}}}, steps.Data{}, false
	}
	e := pt.Ephemeris
	rows := e.Rows
	epoch, tm, er, oc, ocErr := make([]float64, len(rows)), make([]float64, len(rows)), make([]float64, len(rows)), make([]float64, len(rows)), make([]float64, len(rows))
	for i, r := range rows {
		epoch[i], tm[i], er[i], oc[i], ocErr[i] = float64(r.Epoch), r.Time, r.Sigma, r.OC, r.SigmaOC
	}
	data := steps.Data{Name: dataName("transit_times", name, ""), Series: []steps.Series{
		{Name: "epoch", Values: epoch}, {Name: "time_d", Values: tm}, {Name: "err_d", Values: er},
		{Name: "o_minus_c_min", Values: oc}, {Name: "o_minus_c_err_min", Values: ocErr}}}
	lo, hi := plusMinus(oc, ocErr)
	plot := &steps.Plot{XLabel: "transit number from the reference transit", YLabel: "observed − calculated (min)", Data: data.Name,
		Layers: []steps.Layer{{Label: "transit times", Style: steps.ErrorBars, X: epoch, Y: oc, YLo: lo, YHi: hi}},
		HLines: []steps.Mark{{Value: 0, Label: "constant period"}}}
	skipped := len(pt.Times) - len(rows)
	var c strings.Builder
	fmt.Fprintf(&c, "Each transit's mid-time, measured with the transit's shape held at the best fit, minus the straight line through them all (period %.7g ± %.2g d), in minutes. ",
		e.Period, e.SigmaPeriod)
	if skipped > 0 {
		fmt.Fprintf(&c, "%d of %d transits with points could not be timed and are not shown. ", skipped, len(pt.Times))
	}
	c.WriteString(scatterWords(e.Chi2, e.Dof, e.PValue))
	return steps.Panel{Title: title, Caption: c.String(), Plots: []*steps.Plot{plot}}, data, true
}

// scatterWords says in plain words whether the transit times scatter about the line more
// than their errors allow, from χ², its degrees of freedom and the chance p of so large a
// χ² (the fit's caution level, p < 0.01).
func scatterWords(chi2 float64, dof int, p float64) string {
	if dof <= 0 {
		return "Two timed transits fix the line exactly, so their scatter cannot be judged."
	}
	r := chi2 / float64(dof)
	degrees := "degrees"
	if dof == 1 {
		degrees = "degree"
	}
	if p < 0.01 {
		return fmt.Sprintf("The times scatter about the line more than their errors allow: χ² per degree of freedom is %.3g over %d %s of freedom, which errors alone would give by chance with probability %.2g. Timing variations, underestimated errors or spots crossed during transit could each cause it.", r, dof, degrees, p)
	}
	return fmt.Sprintf("The times scatter about the line no more than their errors lead one to expect: χ² per degree of freedom is %.3g over %d %s of freedom (chance %.2g of at least this much).", r, dof, degrees, p)
}

// diagnostics is the table of the sampled parameters: median and the distances to the 16th
// and 84th percentiles, R-hat, effective samples and autocorrelation time.
func diagnostics(a *Artifact) steps.Panel {
	t := &steps.Table{Header: []string{"parameter", "median", "−", "+", "R-hat", "effective samples", "autocorrelation time (steps)"}}
	for i, d := range a.Diag {
		name := a.Names[i]
		lo, mid, hi := quantiles(a.Column(name))
		dec := decimals(math.Min(mid-lo, hi-mid))
		t.Rows = append(t.Rows, []string{label(name),
			fmt.Sprintf("%.*f", dec, mid), fmt.Sprintf("%.*f", dec, mid-lo), fmt.Sprintf("%.*f", dec, hi-mid),
			fmt.Sprintf("%.3f", d.Rhat), fmt.Sprintf("%.0f", d.ESS), fmt.Sprintf("%.0f", d.Tau)})
	}
	t.Notes = []string{
		"− and + are the distances from the median to the 16th and 84th percentiles of the draws; numbers are rounded to two figures of the smaller.",
		fmt.Sprintf("R-hat compares the %d independently started ensembles (rank-normalised split R-hat, Vehtari et al. 2021): near 1 they agree, above %g they may not have explored the same posterior.", a.Ensembles, rhatCaution),
		"Effective samples are the draws' worth as independent ones: the kept steps of all walkers over the autocorrelation time.",
		fmt.Sprintf("Sampling: %d ensembles of %d walkers, %d steps each, the first %d discarded, thinned by %d; %.0f %% of the stretch moves accepted.",
			a.Ensembles, a.Walkers, a.Steps, a.Burn, a.Thin, 100*a.Acceptance),
	}
	return steps.Panel{Title: "How well the posterior was sampled", Caption: "One row per sampled parameter.", Table: t}
}

// decimals is the number of decimals that shows err to two significant figures by the
// tables' one rule (paper.Decimals; 0 for errors of 10 or more), 6 when err is 0 or not a
// number.
func decimals(err float64) int {
	if !(err > 0) || math.IsInf(err, 0) {
		return 6
	}
	return min(15, max(0, paper.Decimals(err)))
}
