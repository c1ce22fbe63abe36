package report

import (
	"bytes"
	"fmt"
	"html"
	"html/template"
	"image/color"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"dipline/steps"
)

// maxDrawn is the most points a layer draws: beyond it every k-th point is drawn (k the
// smallest that keeps the layer under this), so a page with a long light curve stays a few
// megabytes and opens quickly. The data file keeps every point.
const maxDrawn = 20000

// The page's palette: the eight colours of Okabe & Ito (2008, "Color Universal Design"),
// in an order of our own, which stay apart for the common colour-vision deficiencies. As
// colour alone does not survive greyscale printing, each layer also has its own marker
// shape and line dash, chosen by the same index.
var palette = []color.NRGBA{
	{0x00, 0x72, 0xB2, 0xff}, // blue
	{0xD5, 0x5E, 0x00, 0xff}, // vermilion
	{0x00, 0x9E, 0x73, 0xff}, // bluish green
	{0xCC, 0x79, 0xA7, 0xff}, // reddish purple
	{0xE6, 0x9F, 0x00, 0xff}, // orange
	{0x56, 0xB4, 0xE9, 0xff}, // sky blue
	{0x33, 0x33, 0x33, 0xff}, // near black
	{0xF0, 0xE4, 0x42, 0xff}, // yellow (last: faint on white)
}

// markColour draws the values marked across a plot.
var markColour = color.NRGBA{0x55, 0x55, 0x55, 0xff}

// shapes draws each layer's markers; every shape is one SVG path per point, so a page's
// marks can be counted.
var shapes = []draw.GlyphDrawer{draw.CircleGlyph{}, draw.TriangleGlyph{}, draw.BoxGlyph{},
	draw.RingGlyph{}, draw.PyramidGlyph{}, draw.SquareGlyph{}}

// dashes draws each layer's lines.
var dashes = [][]vg.Length{nil, {vg.Points(5), vg.Points(3)}, {vg.Points(1.5), vg.Points(2)},
	{vg.Points(6), vg.Points(2), vg.Points(1.5), vg.Points(2)}}

// styleNames name the layer styles in the page's markup (data-style).
var styleNames = map[steps.LayerStyle]string{steps.Points: "points", steps.Emphasised: "emphasised",
	steps.ErrorBars: "error-bars", steps.Line: "line", steps.Band: "band", steps.Histogram: "histogram", steps.Spans: "spans"}

// marked reports whether a style draws one mark per row (a marker or a bar).
func marked(s steps.LayerStyle) bool {
	return s == steps.Points || s == steps.Emphasised || s == steps.ErrorBars || s == steps.Histogram || s == steps.Spans
}

// drawOrder puts bands, bars and spans behind lines, lines behind markers, emphasised
// markers on top; spans are drawn in layer order, so a later span sits on an earlier one.
var drawOrder = []steps.LayerStyle{steps.Band, steps.Histogram, steps.Spans, steps.Line, steps.Points, steps.ErrorBars, steps.Emphasised}

// The markers of a layer's group. The backend writes every string as text; we write these
// two private-use characters (clean removes them from anything else) around a layer's index
// and turn the text into a group element after drawing.
const (
	groupOpen  = '\uE000'
	groupClose = '\uE001'
)

var groupText = regexp.MustCompile("<text [^>]*>\uE000([be])([0-9]+)\uE001</text>\n?")

// plotSizes gives a plot's width and height for a grid of n columns.
func plotSize(columns int) (vg.Length, vg.Length) {
	const full = 7 * vg.Inch
	if columns <= 1 {
		return full, 3 * vg.Inch
	}
	w := full / vg.Length(columns)
	return w, w * 0.85
}

// layerLook is how one layer is drawn.
type layerLook struct {
	colour color.NRGBA
	shape  draw.GlyphDrawer
	dash   []vg.Length
	// step is the decimation stride (1: every point).
	step  int
	drawn int
	// ground marks the plot's first spans, drawn pale beneath the others (see spans).
	ground bool
}

func lookOf(i int) layerLook {
	return layerLook{colour: palette[i%len(palette)], shape: shapes[i%len(shapes)], dash: dashes[i%len(dashes)], step: 1}
}

// Key is one legend entry beside a plot, with a small drawing of the layer's look.
type Key struct {
	Swatch template.HTML
	Label  string
}

// drawnPlot is a plot drawn as SVG, with what its caption must add.
type drawnPlot struct {
	SVG   template.HTML
	Keys  []Key
	Notes []string
}

// drawPlot draws one plot. A plot the library cannot draw becomes a note, never a panic.
func drawPlot(p *steps.Plot, columns int) (dp drawnPlot, err error) {
	defer func() {
		if r := recover(); r != nil {
			dp, err = drawnPlot{}, fmt.Errorf("the plot %q could not be drawn (%v)", p.Title, r)
		}
	}()
	looks := make([]layerLook, len(p.Layers))
	for i, l := range p.Layers {
		looks[i] = lookOf(i)
		looks[i].ground = l.Style == steps.Spans && i == firstOf(p, steps.Spans)
		if n := len(l.X); n > maxDrawn {
			looks[i].step = (n + maxDrawn - 1) / maxDrawn
		}
	}
	if err := checkLayers(p); err != nil {
		return drawnPlot{}, err
	}

	pl := newAxes(p)
	pl.Add(&layers{p: p, looks: looks})

	w, h := plotSize(columns)
	cv := vgsvg.New(w, h)
	pl.Draw(draw.New(cv))
	var buf bytes.Buffer
	if _, err := cv.WriteTo(&buf); err != nil {
		return drawnPlot{}, err
	}
	svg := buf.String()
	if i := strings.Index(svg, "<svg"); i >= 0 {
		svg = svg[i:] // an inline SVG has no XML declaration
	}
	svg = groupText.ReplaceAllStringFunc(svg, func(m string) string {
		sub := groupText.FindStringSubmatch(m)
		if sub[1] == "e" {
			return "</g>\n"
		}
		i, _ := strconv.Atoi(sub[2])
		l := p.Layers[i]
		return fmt.Sprintf(`<g class="marks" data-layer="%d" data-style="%s" data-rows="%d" data-drawn="%d">`+"\n",
			i, styleNames[l.Style], len(l.X), looks[i].drawn)
	})
	label := p.Title
	if label == "" {
		label = p.YLabel + " against " + p.XLabel
	}
	svg = compactMarks(svg)
	svg = strings.Replace(svg, "<svg ", fmt.Sprintf(`<svg class="plot" role="img" aria-label="%s" data-csv="%s" `,
		html.EscapeString(clean(label)), html.EscapeString(clean(p.Data))), 1)
	dp.SVG = template.HTML(svg) // every string in it was escaped by the backend or above

	if len(p.Layers) > 1 {
		for i, l := range p.Layers {
			// Two layers of one label (error bars and their markers) are one thing to a
			// reader: the legend names it once, with the first layer's look.
			if i > 0 && l.Label != "" && l.Label == p.Layers[i-1].Label {
				continue
			}
			dp.Keys = append(dp.Keys, Key{Swatch: swatch(l.Style, looks[i]), Label: l.Label})
		}
	}
	for i, l := range p.Layers {
		if l.Style == steps.Line && len(l.X) > 2*lineColumns {
			dp.Notes = append(dp.Notes, fmt.Sprintf("%s: drawn through the lowest and highest of its %s points in each of %s columns; the data file holds them all.",
				layerName(l, i), thousands(len(l.X)), thousands(lineColumns)))
		} else if looks[i].step > 1 {
			dp.Notes = append(dp.Notes, fmt.Sprintf("%s: every %s point of %s is drawn; the data file holds them all.",
				layerName(l, i), ordinal(looks[i].step), thousands(len(l.X))))
		}
		if marked(l.Style) && looks[i].step == 1 && looks[i].drawn < len(l.X) {
			dp.Notes = append(dp.Notes, fmt.Sprintf("%s: %s of %s points have no value that can be placed on these axes and are left out.",
				layerName(l, i), thousands(len(l.X)-looks[i].drawn), thousands(len(l.X))))
		}
	}
	return dp, nil
}

// newAxes returns the plot's axes: fonts, title and labels, the extents of every drawable
// value, the scales and the ticks (dated rows, when the plot names them).
func newAxes(p *steps.Plot) *plot.Plot {
	pl := plot.New()
	sans := font.Font{Typeface: "Liberation", Variant: "Sans"}
	for _, ts := range []*draw.TextStyle{&pl.Title.TextStyle, &pl.X.Label.TextStyle, &pl.Y.Label.TextStyle,
		&pl.X.Tick.Label, &pl.Y.Tick.Label, &pl.Legend.TextStyle} {
		ts.Font.Typeface, ts.Font.Variant = sans.Typeface, sans.Variant
	}
	pl.Title.TextStyle.Font.Size = vg.Points(11)
	pl.Title.Text = clean(p.Title)
	pl.X.Label.Text = clean(p.XLabel)
	pl.Y.Label.Text = clean(p.YLabel)
	xr, yr := ranges(p)
	pl.X.Min, pl.X.Max = xr[0], xr[1]
	pl.Y.Min, pl.Y.Max = yr[0], yr[1]
	pl.X.Tick.Marker, pl.Y.Tick.Marker = plainTicks{}, plainTicks{}
	if p.LogX {
		pl.X.Scale, pl.X.Tick.Marker = plot.LogScale{}, logTicks{}
	}
	if p.LogY {
		pl.Y.Scale, pl.Y.Tick.Marker = plot.LogScale{}, logTicks{}
	}
	if p.XReversed {
		pl.X.Scale = plot.InvertedScale{Normalizer: pl.X.Scale}
	}
	if len(p.YTicks) > 0 {
		ticks := make(plot.ConstantTicks, len(p.YTicks))
		for i, m := range p.YTicks {
			ticks[i] = plot.Tick{Value: m.Value, Label: clean(m.Label)}
		}
		pl.Y.Tick.Marker = ticks
	}
	return pl
}

func layerName(l steps.Layer, i int) string {
	if l.Label != "" {
		return l.Label
	}
	return fmt.Sprintf("Layer %d", i+1)
}

// checkLayers refuses a layer whose columns differ in length.
func checkLayers(p *steps.Plot) error {
	for i, l := range p.Layers {
		n := len(l.X)
		bad := len(l.Y) != n
		if l.Style == steps.ErrorBars || l.Style == steps.Band {
			bad = bad || len(l.YLo) != n || len(l.YHi) != n
		}
		if l.Style == steps.Spans {
			bad = bad || len(l.XLo) != n || len(l.XHi) != n
		}
		if bad {
			return fmt.Errorf("the plot %q was not drawn: %s has columns of unequal lengths", p.Title, layerName(l, i))
		}
	}
	return nil
}

// usable reports whether a value can be placed on an axis.
func usable(v float64, log bool) bool {
	return !math.IsNaN(v) && !math.IsInf(v, 0) && (!log || v > 0)
}

// ranges finds the axes' extents over every drawable value and mark, with a margin.
func ranges(p *steps.Plot) ([2]float64, [2]float64) {
	x := extent{log: p.LogX}
	y := extent{log: p.LogY}
	for _, l := range p.Layers {
		for j := range l.X {
			if l.Style == steps.Spans {
				if usable(l.XLo[j], p.LogX) && usable(l.XHi[j], p.LogX) && usable(l.Y[j], p.LogY) {
					x.add(l.XLo[j])
					x.add(l.XHi[j])
					y.add(l.Y[j])
				}
				continue
			}
			if !usable(l.X[j], p.LogX) {
				continue
			}
			x.add(l.X[j])
			y.add(l.Y[j])
			if l.Style == steps.ErrorBars || l.Style == steps.Band {
				y.add(l.YLo[j])
				y.add(l.YHi[j])
			}
		}
		if l.Style == steps.Histogram && len(l.X) > 0 {
			y.add(0)
			wd := binWidth(l.X)
			x.add(minOf(l.X) - wd/2)
			x.add(maxOf(l.X) + wd/2)
		}
	}
	for _, m := range p.HLines {
		y.add(m.Value)
	}
	for _, m := range p.VLines {
		x.add(m.Value)
	}
	return x.padded(), y.padded()
}

type extent struct {
	log      bool
	lo, hi   float64
	anything bool
}

func (e *extent) add(v float64) {
	if !usable(v, e.log) {
		return
	}
	if !e.anything {
		e.lo, e.hi, e.anything = v, v, true
		return
	}
	e.lo, e.hi = math.Min(e.lo, v), math.Max(e.hi, v)
}

func (e *extent) padded() [2]float64 {
	switch {
	case !e.anything && e.log:
		return [2]float64{1, 10}
	case !e.anything:
		return [2]float64{0, 1}
	case e.log:
		lo, hi := math.Log10(e.lo), math.Log10(e.hi)
		if hi-lo < 1e-9 {
			lo, hi = lo-0.5, hi+0.5
		}
		pad := 0.03 * (hi - lo)
		return [2]float64{math.Pow(10, lo-pad), math.Pow(10, hi+pad)}
	}
	lo, hi := e.lo, e.hi
	if hi-lo <= 1e-12*math.Max(1, math.Abs(hi)) {
		d := math.Max(math.Abs(hi)*0.05, 0.5)
		lo, hi = lo-d, hi+d
	}
	pad := 0.03 * (hi - lo)
	return [2]float64{lo - pad, hi + pad}
}

// binWidth is the narrowest spacing of a histogram's bin centres (1 for a single bin).
func binWidth(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	w := math.Inf(1)
	for i := 1; i < len(s); i++ {
		if d := s[i] - s[i-1]; d > 0 && d < w {
			w = d
		}
	}
	if math.IsInf(w, 1) {
		return 1
	}
	return w
}

func minOf(x []float64) float64 {
	m := math.Inf(1)
	for _, v := range x {
		if !math.IsNaN(v) {
			m = math.Min(m, v)
		}
	}
	return m
}

func maxOf(x []float64) float64 {
	m := math.Inf(-1)
	for _, v := range x {
		if !math.IsNaN(v) {
			m = math.Max(m, v)
		}
	}
	return m
}

// layers draws all of a plot's layers and marks, in drawOrder.
type layers struct {
	p     *steps.Plot
	looks []layerLook
}

func (ls *layers) Plot(c draw.Canvas, pl *plot.Plot) {
	tx, ty := pl.Transforms(&c)
	logX, logY := ls.p.LogX, ls.p.LogY
	face := font.DefaultCache.Lookup(font.Font{Typeface: "Liberation", Variant: "Sans"}, vg.Points(1))
	pt := painter{c: c, pl: pl, tx: tx, ty: ty, logX: logX, logY: logY,
		ok: func(x, y float64) bool { return usable(x, logX) && usable(y, logY) },
		group: func(kind byte, i int) {
			c.Canvas.FillString(face, vg.Point{}, fmt.Sprintf("%c%c%d%c", groupOpen, kind, i, groupClose))
		}}
	for _, style := range drawOrder {
		for i, l := range ls.p.Layers {
			if l.Style != style {
				continue
			}
			lk := &ls.looks[i]
			switch style {
			case steps.Band:
				pt.band(l, lk)
			case steps.Histogram:
				pt.histogram(l, lk, i)
			case steps.Spans:
				pt.spans(l, lk, i)
			case steps.Line:
				pt.line(l, lk)
			case steps.Points, steps.ErrorBars, steps.Emphasised:
				pt.points(l, lk, i)
			}
		}
	}
	ls.marks(c, pl, tx, ty)
}

// painter draws layers on one plot's canvas.
type painter struct {
	c          draw.Canvas
	pl         *plot.Plot
	tx, ty     func(float64) vg.Length
	logX, logY bool
	// ok tells whether a point can be placed on the axes (finite; positive on a log axis).
	ok func(x, y float64) bool
	// group opens ('b') or closes ('e') layer i's group of marks (see groupText).
	group func(kind byte, i int)
}

// band fills between YLo and YHi and draws Y as its middle line.
func (pt painter) band(l steps.Layer, lk *layerLook) {
	var top, bottom, run []vg.Point
	for j := 0; j < len(l.X); j += lk.step {
		if !pt.ok(l.X[j], l.YLo[j]) || !pt.ok(l.X[j], l.YHi[j]) {
			continue
		}
		top = append(top, vg.Point{X: pt.tx(l.X[j]), Y: pt.ty(l.YHi[j])})
		bottom = append(bottom, vg.Point{X: pt.tx(l.X[j]), Y: pt.ty(l.YLo[j])})
		if pt.ok(l.X[j], l.Y[j]) {
			run = append(run, vg.Point{X: pt.tx(l.X[j]), Y: pt.ty(l.Y[j])})
		}
	}
	if len(top) > 1 {
		poly := append([]vg.Point(nil), top...)
		for k := len(bottom) - 1; k >= 0; k-- {
			poly = append(poly, bottom[k])
		}
		fill := lk.colour
		fill.A = 0x50
		pt.c.FillPolygon(fill, pt.c.ClipPolygonXY(poly))
	}
	pt.c.StrokeLines(draw.LineStyle{Color: lk.colour, Width: vg.Points(1), Dashes: lk.dash}, pt.c.ClipLinesXY(run)...)
}

// histogram draws one bar per bin, each a counted mark.
func (pt painter) histogram(l steps.Layer, lk *layerLook, i int) {
	wd := binWidth(l.X)
	fill := lk.colour
	fill.A = 0xa0
	base := 0.0
	if pt.logY {
		base = pt.pl.Y.Min
	}
	pt.group('b', i)
	for j := 0; j < len(l.X); j += lk.step {
		if !pt.ok(l.X[j]-wd/2, l.Y[j]) || !usable(l.X[j]+wd/2, pt.logX) {
			continue
		}
		x0, x1 := pt.tx(l.X[j]-wd/2), pt.tx(l.X[j]+wd/2)
		y0, y1 := pt.ty(base), pt.ty(l.Y[j])
		pt.c.FillPolygon(fill, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
		lk.drawn++
	}
	pt.group('e', i)
}

// spanHalfHeight is half the thickness of a span's bar.
const spanHalfHeight = vg.Length(2.5)

// firstOf returns the index of the plot's first layer of a style, or −1.
func firstOf(p *steps.Plot, s steps.LayerStyle) int {
	for i, l := range p.Layers {
		if l.Style == s {
			return i
		}
	}
	return -1
}

// spans draws one bar per row from XLo to XHi at height Y, with a short upright tick at X
// when X lies on the bar; each bar is a counted mark. The plot's first spans are its
// ground (the time a target is up, say): drawn pale and a little taller, so the later
// spans read as lying on it.
func (pt painter) spans(l steps.Layer, lk *layerLook, i int) {
	fill := lk.colour
	fill.A = 0xb0
	if lk.ground {
		fill.A = 0x48
	}
	var ticks [][]vg.Point
	pt.group('b', i)
	for j := 0; j < len(l.X); j += lk.step {
		if !pt.ok(l.XLo[j], l.Y[j]) || !pt.ok(l.XHi[j], l.Y[j]) {
			continue
		}
		x0, x1, y := pt.tx(l.XLo[j]), pt.tx(l.XHi[j]), pt.ty(l.Y[j])
		pt.c.FillPolygon(fill, pt.c.ClipPolygonXY([]vg.Point{{X: x0, Y: y - spanHalfHeight}, {X: x1, Y: y - spanHalfHeight},
			{X: x1, Y: y + spanHalfHeight}, {X: x0, Y: y + spanHalfHeight}}))
		lk.drawn++
		if pt.ok(l.X[j], l.Y[j]) && l.X[j] >= l.XLo[j] && l.X[j] <= l.XHi[j] {
			x := pt.tx(l.X[j])
			ticks = append(ticks, []vg.Point{{X: x, Y: y - 2*spanHalfHeight}, {X: x, Y: y + 2*spanHalfHeight}})
		}
	}
	pt.group('e', i)
	if len(ticks) > 0 {
		pt.c.StrokeLines(draw.LineStyle{Color: lk.colour, Width: vg.Points(1)}, pt.c.ClipLinesXY(ticks...)...)
	}
}

// line draws a line in x order, broken where a value cannot be placed; a long line is
// drawn through its envelope per column (envelope).
func (pt painter) line(l steps.Layer, lk *layerLook) {
	var runs [][]vg.Point
	var run []vg.Point
	idx := sortedIndex(l.X)
	if len(idx) > 2*lineColumns {
		idx = envelope(l.X, l.Y, idx, pt.logX, pt.logY)
	}
	for _, j := range idx {
		if !pt.ok(l.X[j], l.Y[j]) { // a gap breaks the line
			if len(run) > 1 {
				runs = append(runs, run)
			}
			run = nil
			continue
		}
		run = append(run, vg.Point{X: pt.tx(l.X[j]), Y: pt.ty(l.Y[j])})
	}
	if len(run) > 1 {
		runs = append(runs, run)
	}
	pt.c.StrokeLines(draw.LineStyle{Color: lk.colour, Width: vg.Points(1.3), Dashes: lk.dash}, pt.c.ClipLinesXY(runs...)...)
}

// points draws one marker per point (larger when emphasised, with its bar for error bars),
// each a counted mark.
func (pt painter) points(l steps.Layer, lk *layerLook, i int) {
	radius := vg.Points(1.4)
	switch l.Style {
	case steps.Emphasised:
		radius = vg.Points(3)
	case steps.ErrorBars:
		radius = vg.Points(2)
		var bars [][]vg.Point
		for j := 0; j < len(l.X); j += lk.step {
			if pt.ok(l.X[j], l.YLo[j]) && pt.ok(l.X[j], l.YHi[j]) && pt.ok(l.X[j], l.Y[j]) {
				bars = append(bars, []vg.Point{{X: pt.tx(l.X[j]), Y: pt.ty(l.YLo[j])}, {X: pt.tx(l.X[j]), Y: pt.ty(l.YHi[j])}})
			}
		}
		if len(bars) > 0 {
			pt.c.StrokeLines(draw.LineStyle{Color: lk.colour, Width: vg.Points(0.7)}, bars...)
		}
	}
	gs := draw.GlyphStyle{Color: lk.colour, Radius: radius, Shape: lk.shape}
	pt.group('b', i)
	for j := 0; j < len(l.X); j += lk.step {
		if !pt.ok(l.X[j], l.Y[j]) {
			continue
		}
		pt.c.DrawGlyphNoClip(gs, vg.Point{X: pt.tx(l.X[j]), Y: pt.ty(l.Y[j])})
		lk.drawn++
	}
	pt.group('e', i)
}

// marks draws the values marked across the plot, each with its label at the edge.
func (ls *layers) marks(c draw.Canvas, pl *plot.Plot, tx, ty func(float64) vg.Length) {
	sty := draw.LineStyle{Color: markColour, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(4), vg.Points(2)}}
	ts := pl.X.Tick.Label
	ts.Color = markColour
	ts.Font.Size = vg.Points(8)
	for _, m := range ls.p.HLines {
		if !usable(m.Value, ls.p.LogY) {
			continue
		}
		y := ty(m.Value)
		c.StrokeLines(sty, []vg.Point{{X: c.Min.X, Y: y}, {X: c.Max.X, Y: y}})
		if m.Label != "" {
			t := ts
			t.XAlign, t.YAlign = draw.XRight, draw.YBottom
			c.FillText(t, vg.Point{X: c.Max.X - vg.Points(2), Y: y + vg.Points(1)}, clean(m.Label))
		}
	}
	for _, m := range ls.p.VLines {
		if !usable(m.Value, ls.p.LogX) {
			continue
		}
		x := tx(m.Value)
		c.StrokeLines(sty, []vg.Point{{X: x, Y: c.Min.Y}, {X: x, Y: c.Max.Y}})
		if m.Label != "" {
			t := ts
			t.XAlign, t.YAlign = draw.XLeft, draw.YTop
			c.FillText(t, vg.Point{X: x + vg.Points(2), Y: c.Max.Y - vg.Points(1)}, clean(m.Label))
		}
	}
}

// lineColumns is how many columns a long line is drawn in: within each, only the lowest and
// highest points are kept, in x order, so every peak and dip of a periodogram survives while
// the page stays small.
const lineColumns = 1000

// envelope keeps, of the x-ordered indices idx, the lowest and highest drawable point in each
// of lineColumns equal columns of x (gaps are not kept: a long line is drawn unbroken).
func envelope(x, y []float64, idx []int, logX, logY bool) []int {
	var keep []int
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, j := range idx {
		if usable(x[j], logX) && usable(y[j], logY) {
			lo, hi = math.Min(lo, x[j]), math.Max(hi, x[j])
		}
	}
	if !(hi > lo) {
		return idx
	}
	col := func(v float64) int { return min(int((v-lo)/(hi-lo)*lineColumns), lineColumns-1) }
	cur, jmin, jmax := -1, -1, -1
	flush := func() {
		if cur < 0 {
			return
		}
		a, b := min(jmin, jmax), max(jmin, jmax)
		keep = append(keep, idx[a])
		if b != a {
			keep = append(keep, idx[b])
		}
	}
	for n, j := range idx {
		if !usable(x[j], logX) || !usable(y[j], logY) {
			continue
		}
		if c := col(x[j]); c != cur {
			flush()
			cur, jmin, jmax = c, n, n
			continue
		}
		if y[j] < y[idx[jmin]] {
			jmin = n
		}
		if y[j] > y[idx[jmax]] {
			jmax = n
		}
	}
	flush()
	return keep
}

// sortedIndex gives the indices of x in increasing x (stable, NaN last), for lines.
func sortedIndex(x []float64) []int {
	idx := make([]int, len(x))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool {
		xa, xb := x[idx[a]], x[idx[b]]
		if math.IsNaN(xb) {
			return !math.IsNaN(xa)
		}
		return xa < xb
	})
	return idx
}

// swatch draws a layer's look in a small inline SVG for the legend.
func swatch(s steps.LayerStyle, lk layerLook) template.HTML {
	col := fmt.Sprintf("#%02x%02x%02x", lk.colour.R, lk.colour.G, lk.colour.B)
	dash := ""
	if len(lk.dash) > 0 {
		var parts []string
		for _, d := range lk.dash {
			parts = append(parts, strconv.FormatFloat(float64(d.Points()), 'g', -1, 64))
		}
		dash = ` stroke-dasharray="` + strings.Join(parts, " ") + `"`
	}
	var body string
	switch s {
	case steps.Line:
		body = fmt.Sprintf(`<line x1="1" y1="6" x2="23" y2="6" stroke="%s" stroke-width="1.6"%s/>`, col, dash)
	case steps.Band:
		body = fmt.Sprintf(`<rect x="1" y="2" width="22" height="8" fill="%s" fill-opacity="0.31"/><line x1="1" y1="6" x2="23" y2="6" stroke="%s"%s/>`, col, col, dash)
	case steps.Histogram:
		body = fmt.Sprintf(`<rect x="4" y="3" width="6" height="9" fill="%s" fill-opacity="0.63"/><rect x="12" y="6" width="6" height="6" fill="%s" fill-opacity="0.63"/>`, col, col)
	case steps.Spans:
		opacity := "0.69"
		if lk.ground {
			opacity = "0.28"
		}
		body = fmt.Sprintf(`<rect x="1" y="3.5" width="22" height="5" fill="%s" fill-opacity="%s"/><line x1="12" y1="1" x2="12" y2="11" stroke="%s"/>`, col, opacity, col)
	default:
		r := 2.5
		if s == steps.Emphasised {
			r = 4
		}
		body = glyphSVG(lk.shape, 12, 6, r, col)
		if s == steps.ErrorBars {
			body = fmt.Sprintf(`<line x1="12" y1="0.5" x2="12" y2="11.5" stroke="%s"/>`, col) + body
		}
	}
	return template.HTML(`<svg class="swatch" width="24" height="12" viewBox="0 0 24 12" aria-hidden="true">` + body + `</svg>`)
}

// glyphSVG draws one marker shape as plain SVG.
func glyphSVG(g draw.GlyphDrawer, x, y, r float64, col string) string {
	tri := func() string {
		return fmt.Sprintf("%g,%g %g,%g %g,%g", x, y-r, x+r*0.87, y+r*0.5, x-r*0.87, y+r*0.5)
	}
	switch g.(type) {
	case draw.TriangleGlyph:
		return fmt.Sprintf(`<polygon points="%s" fill="%s"/>`, tri(), col)
	case draw.BoxGlyph:
		return fmt.Sprintf(`<rect x="%g" y="%g" width="%g" height="%g" fill="%s"/>`, x-r, y-r, 2*r, 2*r, col)
	case draw.RingGlyph:
		return fmt.Sprintf(`<circle cx="%g" cy="%g" r="%g" fill="none" stroke="%s"/>`, x, y, r, col)
	case draw.PyramidGlyph:
		return fmt.Sprintf(`<polygon points="%s" fill="none" stroke="%s"/>`, tri(), col)
	case draw.SquareGlyph:
		return fmt.Sprintf(`<rect x="%g" y="%g" width="%g" height="%g" fill="none" stroke="%s"/>`, x-r, y-r, 2*r, 2*r, col)
	}
	return fmt.Sprintf(`<circle cx="%g" cy="%g" r="%g" fill="%s"/>`, x, y, r, col)
}

// thousands writes an integer with thin groups of three ("24,000").
func thousands(n int) string {
	s := strconv.Itoa(n)
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	return s
}

func ordinal(n int) string {
	suffix := "th"
	switch {
	case n%100 >= 11 && n%100 <= 13:
	case n%10 == 1:
		suffix = "st"
	case n%10 == 2:
		suffix = "nd"
	case n%10 == 3:
		suffix = "rd"
	}
	return strconv.Itoa(n) + suffix
}
