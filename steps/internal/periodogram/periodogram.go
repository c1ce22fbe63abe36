// Package periodogram measures periodic signals in sampled series: the generalised
// Lomb–Scargle periodogram with a floating mean and weights (Zechmeister & Kürster 2009,
// A&A 496, 577), or the classic one about zero, with power normalised to 0–1 as in that
// paper, on a frequency grid the caller gives or on a uniform grid built here; and, on top
// of it, the strongest distinct periods of a smooth series cut into gap-free pieces, each
// with the semi-amplitude of its best-fitting sinusoid and a false-alarm probability, as a
// detrend step measures the star's own variability in the trend it removed.
//
// It is plain Go over slices: no HCL, no light-curve type beyond the Variability it returns,
// no randomness, no parallelism (the same inputs give the same bits). Main entry points:
// Power and PowerOnGrid (one periodogram), Strongest (the distinct periods of a pieced
// series) and Variability (Strongest in the shape a detrend step reports).
package periodogram

import (
	"errors"
	"fmt"
	"math"
)

// Mean says which constant the sinusoid is fitted about.
type Mean int

const (
	// Floating fits an offset with the sinusoid: the generalised periodogram of
	// Zechmeister & Kürster (2009).
	Floating Mean = iota
	// Zero fits the sinusoid about zero, to the values as given: the classic periodogram of
	// Lomb (1976) and Scargle (1982). Centre the values first for the textbook form.
	Zero
)

// Series is a sampled series: times (days, any order), values, and optional weights.
type Series struct {
	Time, Value []float64
	// Weight is 1/σ² per point; nil gives every point the same weight.
	Weight []float64
}

// Grid is a uniform grid in frequency: Start, Start+Step, … (N values), in cycles per day.
type Grid struct {
	Start, Step float64
	N           int
}

// Freq is the i-th frequency.
func (g Grid) Freq(i int) float64 { return g.Start + float64(i)*g.Step }

// NewGrid builds the grid from the longest to the shortest period (days), with a step of
// 1/(oversample·span): span is the stretch of time the series covers (for a pieced series,
// its longest piece), over which two frequencies 1/span apart are told apart, and
// oversample the number of grid points per such resolution element.
func NewGrid(shortest, longest, span, oversample float64) (Grid, error) {
	switch {
	case !(shortest > 0) || math.IsInf(shortest, 0):
		return Grid{}, fmt.Errorf("periodogram: shortest period %v d; it must be positive and finite", shortest)
	case !(longest > shortest) || math.IsInf(longest, 0):
		return Grid{}, fmt.Errorf("periodogram: longest period %v d must be finite and longer than the shortest, %v d", longest, shortest)
	case !(span > 0) || math.IsInf(span, 0):
		return Grid{}, fmt.Errorf("periodogram: span %v d; it must be positive and finite", span)
	case !(oversample >= 1) || math.IsInf(oversample, 0):
		return Grid{}, fmt.Errorf("periodogram: oversampling factor %v; it must be at least 1", oversample)
	}
	step := 1 / (oversample * span)
	lo, hi := 1/longest, 1/shortest
	n := int(math.Floor((hi-lo)/step)) + 1
	if n > maxGrid {
		return Grid{}, fmt.Errorf("periodogram: a grid from %v d to %v d at %v per 1/(%v d) has %d frequencies, more than %d", shortest, longest, oversample, span, n, maxGrid)
	}
	return Grid{Start: lo, Step: step, N: n}, nil
}

// maxGrid bounds a grid's size (80 MB of float64 powers) so that a bad span cannot exhaust
// memory.
const maxGrid = 10_000_000

// Power writes the periodogram of s at each frequency of freqs (cycles per day) into dst
// (grown when too short) and returns it. Power is 1 − χ²(constant + sinusoid)/χ²(constant),
// the share of the weighted scatter a sinusoid at that frequency explains, 0 to 1
// (Zechmeister & Kürster 2009's normalisation); with Zero the constant is 0 and the
// scatter is taken about zero.
func Power(dst []float64, s Series, freqs []float64, m Mean) ([]float64, error) {
	p, err := prepare(s, m)
	if err != nil {
		return nil, err
	}
	dst = grow(dst, len(freqs))
	cs, sn := make([]float64, len(p.t)), make([]float64, len(p.t))
	for k, f := range freqs {
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return nil, fmt.Errorf("periodogram: frequency %d is %v", k+1, f)
		}
		for i, t := range p.t {
			sn[i], cs[i] = math.Sincos(2 * math.Pi * f * t)
		}
		dst[k] = p.reduction(sumsOf(p.w, p.wy, cs, sn)) / p.total
	}
	return dst, nil
}

// PowerOnGrid is Power on a uniform grid, computed by rotating each point's phase from one
// frequency to the next (exact sines and cosines again every reseed steps), which makes it
// several times faster than Power.
func PowerOnGrid(dst []float64, s Series, g Grid, m Mean) ([]float64, error) {
	if err := g.check(); err != nil {
		return nil, err
	}
	p, err := prepare(s, m)
	if err != nil {
		return nil, err
	}
	dst = grow(dst, g.N)
	ex := make([]float64, g.N)
	p.explained(ex, g, 0, newScratch(len(p.t)))
	for k := range ex {
		dst[k] = ex[k] / p.total
	}
	return dst, nil
}

func (g Grid) check() error {
	if !(g.Step > 0) || math.IsInf(g.Step, 0) || math.IsNaN(g.Start) || math.IsInf(g.Start, 0) || g.N < 0 || g.N > maxGrid {
		return fmt.Errorf("periodogram: grid from %v by %v (%d frequencies) is not a usable grid", g.Start, g.Step, g.N)
	}
	return nil
}

func grow(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}

// prepared is a series ready for the sums: times relative to their middle (the power does
// not depend on the time origin, and small phases keep the rotation accurate), weights,
// weight × value with the weighted mean removed for Floating (which changes nothing but
// rounding), and the total weighted scatter.
type prepared struct {
	t, w, wy []float64
	wsum     float64
	total    float64 // χ² of the constant (Floating) or of zero (Zero)
	floating bool
}

func prepare(s Series, m Mean) (*prepared, error) {
	n := len(s.Time)
	if len(s.Value) != n || (s.Weight != nil && len(s.Weight) != n) {
		return nil, fmt.Errorf("periodogram: %d times, %d values and %d weights; they must match", n, len(s.Value), len(s.Weight))
	}
	if m != Floating && m != Zero {
		return nil, fmt.Errorf("periodogram: unknown mean %d", m)
	}
	if n < 3 {
		return nil, fmt.Errorf("periodogram: %d points; a sinusoid and a constant need at least 3", n)
	}
	p := &prepared{t: make([]float64, n), w: make([]float64, n), wy: make([]float64, n), floating: m == Floating}
	lo, hi := math.Inf(1), math.Inf(-1)
	var ysum float64
	for i := 0; i < n; i++ {
		t, y, w := s.Time[i], s.Value[i], 1.0
		if s.Weight != nil {
			w = s.Weight[i]
		}
		if math.IsNaN(t) || math.IsInf(t, 0) || math.IsNaN(y) || math.IsInf(y, 0) {
			return nil, fmt.Errorf("periodogram: point %d has time %v and value %v; both must be finite", i+1, t, y)
		}
		if !(w > 0) || math.IsInf(w, 0) {
			return nil, fmt.Errorf("periodogram: point %d has weight %v; weights must be positive and finite", i+1, w)
		}
		lo, hi = math.Min(lo, t), math.Max(hi, t)
		p.w[i] = w
		p.wsum += w
		ysum += w * y
	}
	mid, mean := (lo+hi)/2, 0.0
	if p.floating {
		mean = ysum / p.wsum
	}
	for i := 0; i < n; i++ {
		y := s.Value[i] - mean
		p.t[i] = s.Time[i] - mid
		p.wy[i] = p.w[i] * y
		p.total += p.wy[i] * y
	}
	if !(p.total > 0) {
		return nil, errors.New("periodogram: the values do not vary; there is nothing to explain")
	}
	return p, nil
}

// sums are the weighted sums at one frequency (raw weights): Σw, Σwy, Σw cos, Σw sin,
// Σwy cos, Σwy sin, Σw cos², Σw cos sin. Σw sin² is Σw − Σw cos².
type sums struct {
	c, s, yc, ys, cc, cs float64
}

// sumsOf adds up the sums over points with weights w, weighted values wy, and cosines c
// and sines s of their phases; the locals stay in registers in this hot loop.
func sumsOf(w, wy, c, s []float64) sums {
	var sc, ss, syc, sys, scc, scs float64
	w, wy, s = w[:len(c)], wy[:len(c)], s[:len(c)]
	for i, ci := range c {
		si := s[i]
		wc := w[i] * ci
		sc += wc
		ss += w[i] * si
		syc += wy[i] * ci
		sys += wy[i] * si
		scc += wc * ci
		scs += wc * si
	}
	return sums{c: sc, s: ss, yc: syc, ys: sys, cc: scc, cs: scs}
}

// reduction is χ²(constant) − χ²(constant + sinusoid) from the sums: Zechmeister & Kürster
// (2009)'s p·YY = (SS·YC² + CC·YS² − 2·CS·YC·YS)/D, D = CC·SS − CS², with their weighted
// sums YC, YS, CC, SS, CS each less the product of the means (from memory; checked in the
// tests against a least-squares fit), times the total weight; for Zero the products of the
// means are left out. This is the package's one formula for the power.
func (p *prepared) reduction(a sums) float64 {
	W := p.wsum
	C, S := a.c/W, a.s/W
	// The values are centred for Floating, so Y = Σwy/W is 0 and YC, YS need no correction.
	YC, YS := a.yc/W, a.ys/W
	CC, CS := a.cc/W, a.cs/W
	SS := 1 - CC
	if p.floating {
		CC -= C * C
		SS -= S * S
		CS -= C * S
	}
	D := CC*SS - CS*CS
	var r float64
	switch {
	case D > 1e-12*CC*SS && CC > 0 && SS > 0:
		r = (SS*YC*YC + CC*YS*YS - 2*CS*YC*YS) / D
	case CC >= SS && CC > 1e-300:
		// Sine and cosine are (nearly) one column here (zero frequency, or half the rate of
		// an even sampling): fit the one that is left.
		r = YC * YC / CC
	case SS > 1e-300:
		r = YS * YS / SS
	}
	return math.Max(0, math.Min(W*r, p.total))
}

// reseed is how many frequency steps the rotated phases are carried before they are
// recomputed exactly; rounding grows by about one unit in the last place per step.
const reseed = 128

// scratch holds one piece's per-point phase state.
type scratch struct{ c, s, dc, ds []float64 }

func newScratch(n int) *scratch {
	return &scratch{c: make([]float64, n), s: make([]float64, n), dc: make([]float64, n), ds: make([]float64, n)}
}

// explained adds χ²(constant) − χ²(constant + sinusoid) at grid frequencies from, from+1, …
// to ex[from:], ex covering the whole grid. The hot loop: per frequency and point, a
// rotation of the point's phase by 2π·Step·t and six products.
func (p *prepared) explained(ex []float64, g Grid, from int, sc *scratch) {
	n := len(p.t)
	for i, t := range p.t {
		sc.ds[i], sc.dc[i] = math.Sincos(2 * math.Pi * g.Step * t)
	}
	for k := from; k < g.N; k++ {
		c, s, dc, ds := sc.c[:n], sc.s[:n], sc.dc[:n], sc.ds[:n]
		if (k-from)%reseed == 0 {
			f := g.Freq(k)
			for i, t := range p.t {
				s[i], c[i] = math.Sincos(2 * math.Pi * f * t)
			}
		}
		ex[k] += p.reduction(sumsOf(p.w, p.wy, c, s))
		for i := range c {
			c[i], s[i] = c[i]*dc[i]-s[i]*ds[i], s[i]*dc[i]+c[i]*ds[i]
		}
	}
}
