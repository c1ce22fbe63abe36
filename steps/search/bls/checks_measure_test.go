package bls

import (
	"fmt"
	"math"
	"os"
	"sort"
	"strings"
	"testing"

	"dipline/steps/internal/rng"
	syn "dipline/steps/internal/synth"
)

// shareCase is one measured search: what was injected and what the checks said.
type shareCase struct {
	transits       int
	snr            float64
	found, right   bool // a signal was found; at the injected period (within 1 %)
	single, pair   float64
	counted        int
	preferred      Choice
	onEvent        bool // the strongest transit is the injected event
	detectedAtSDE7 bool
}

// measuredCadence and measuredNoise are those of the measurement's light curves: 30-minute
// points with 1000 ppm white noise.
const measuredCadence, measuredNoise = 30.0 / 1440, 1e-3

// planetCase injects a limb-darkened planet (Mandel & Agol 2002 through synth.Transit) on a
// circular orbit around a Sun-like star with n transits in the data at white-noise SNR snr,
// SNR = √(Σ δ_i²)/σ over the noise-free drops δ_i of the points (the matched-filter SNR).
func planetCase(g *rng.Stream) (syn.Series, int, float64, float64) {
	n := 3 + g.Intn(13)
	snr := 8 + 22*g.Float64()
	per := 1 + 9*g.Float64()
	tr := syn.Transit{Period: per, Epoch: per * (0.2 + 0.6*g.Float64()), B: 0.7 * g.Float64(),
		AR: ScaledAxis(per, solarDensity), U1: 0.4, U2: 0.25, Exposure: measuredCadence, Sub: 3, K: 0.03}
	c := syn.Curve{Span: float64(n) * per, Cadence: measuredCadence, Noise: measuredNoise, Seed: g.Uint64()}
	for range 2 { // δ ∝ k² to first order; two rounds settle k
		c.Dips = []syn.Signal{tr}
		m := c.Make()
		var ss float64
		for i := range m.Model {
			d := m.Model[i] - m.Trend[i]
			ss += d * d
		}
		tr.K *= math.Sqrt(snr / (math.Sqrt(ss) / measuredNoise))
	}
	c.Dips = []syn.Signal{tr}
	return c.Make(), n, snr, per
}

// eventCase injects events boxes of 2–6 h, each at white-noise SNR 10–40
// (depth·√(points in it)/σ), at random times in 20–60 days of white noise.
func eventCase(g *rng.Stream, events int) (syn.Series, []float64) {
	span := 20 + 40*g.Float64()
	c := syn.Curve{Span: span, Cadence: measuredCadence, Noise: measuredNoise, Seed: g.Uint64()}
	var times []float64
	for range events {
		dur := (2 + 4*g.Float64()) / 24
		snr := 10 + 30*g.Float64()
		tm := span * (0.1 + 0.8*g.Float64())
		c.Dips = append(c.Dips, syn.Event{Time: tm, Duration: dur, Depth: snr * measuredNoise / math.Sqrt(dur/measuredCadence)})
		times = append(times, tm)
	}
	return c.Make(), times
}

func measureOne(t *testing.T, s syn.Series, pmin, pmax, sde float64) (*Detection, bool) {
	o := defaultOptions(pmin, pmax)
	o.MaxSignals, o.SDEThreshold = 1, sde
	res, err := Search(Series{Time: s.Time, Flux: s.Flux, Err: s.Err}, o, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	return res.Passes[0].Found, res.Passes[0].SDE >= res.Threshold
}

// TestMeasureTransitShare measures the shares of the strongest transit and of the two
// strongest, and the period the rival models prefer, on (a) 300 injected planets at
// white-noise SNR 8–30 with 3–15 transits, searched with the default threshold; (b) 80
// single events and (c) 60 pairs of events in white noise, searched with the SDE threshold
// lowered to 3 (the default threshold finds almost none of them: the detrended SDE absorbs
// the power a single event gives every period). It prints the rates at which the cautions
// would fire for several thresholds; SingleShare, PairShare and PairMinTransits are taken
// from it.
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run MeasureTransitShare -v -timeout 30m
func TestMeasureTransitShare(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("a measurement of several minutes; set DIPLINE_LONG=1")
	}
	var planets, singles, pairs []shareCase
	for k := range 300 {
		g := rng.Derive(2026, "planet", uint64(k))
		s, n, snr, per := planetCase(g)
		d, _ := measureOne(t, s, 0.5, float64(n)*per/2, 0)
		c := shareCase{transits: n, snr: snr, found: d != nil}
		if d != nil {
			c.right = math.Abs(d.Timing.Period/per-1) < 0.01
			c.single, c.pair, c.counted, c.preferred = d.Spread.Strongest, d.Spread.TwoStrongest, d.Spread.Counted, d.Rivals.Preferred
		}
		planets = append(planets, c)
	}
	for k := range 140 {
		events := 1
		if k >= 80 {
			events = 2
		}
		g := rng.Derive(2026, "events", uint64(k))
		s, times := eventCase(g, events)
		span := s.Time[len(s.Time)-1] - s.Time[0]
		d, at7 := measureOne(t, s, 0.5, span/2, 3)
		c := shareCase{found: d != nil, detectedAtSDE7: at7}
		if d != nil {
			c.single, c.pair, c.counted, c.preferred = d.Spread.Strongest, d.Spread.TwoStrongest, d.Spread.Counted, d.Rivals.Preferred
			for _, tm := range times {
				c.onEvent = c.onEvent || math.Abs(d.Spread.StrongestTime-tm) < d.Shape.Duration
			}
		}
		if events == 1 {
			singles = append(singles, c)
		} else {
			pairs = append(pairs, c)
		}
	}
	t.Log("\n" + shareReport(planets, singles, pairs) + idealShares() + binaryReport(t))
	// The thresholds in force must hold the planets' rate at or below 2 % and catch at
	// least 90 % of the single events found.
	if r := rate(planets, func(c shareCase) bool { return c.found && c.right }, func(c shareCase) bool { return c.single >= SingleShare }); r > 0.02 {
		t.Errorf("the single-transit caution fires on %.1f %% of the planets found", 100*r)
	}
	if r := rate(singles, func(c shareCase) bool { return c.found }, func(c shareCase) bool { return c.single >= SingleShare }); r < 0.9 {
		t.Errorf("the single-transit caution fires on only %.1f %% of the single events found", 100*r)
	}
	pairFires := func(c shareCase) bool { return c.counted >= PairMinTransits && c.pair >= PairShare }
	if r := rate(planets, func(c shareCase) bool { return c.found && c.right }, pairFires); r > 0.02 {
		t.Errorf("the two-transit caution fires on %.1f %% of the planets found", 100*r)
	}
	if r := rate(pairs, func(c shareCase) bool { return c.found }, func(c shareCase) bool { return c.single >= SingleShare || pairFires(c) }); r < 0.9 {
		t.Errorf("the one- or two-transit cautions fire on only %.1f %% of the pairs of events found", 100*r)
	}
}

// rate is the fraction of the cases passing sel for which fire holds.
func rate(cs []shareCase, sel, fire func(shareCase) bool) float64 {
	n, k := 0, 0
	for _, c := range cs {
		if sel(c) {
			n++
			if fire(c) {
				k++
			}
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return float64(k) / float64(n)
}

func shareReport(planets, singles, pairs []shareCase) string {
	var b strings.Builder
	found := func(c shareCase) bool { return c.found }
	right := func(c shareCase) bool { return c.found && c.right }
	count := func(cs []shareCase, sel func(shareCase) bool) int {
		n := 0
		for _, c := range cs {
			if sel(c) {
				n++
			}
		}
		return n
	}
	fmt.Fprintf(&b, "planets: %d injected, %d found, %d at the injected period\n", len(planets), count(planets, found), count(planets, right))
	fmt.Fprintf(&b, "single events: %d injected, %d found at SDE ≥ 3 (%d would pass the grid's default threshold), strongest transit on the event in %d\n",
		len(singles), count(singles, found), count(singles, func(c shareCase) bool { return c.detectedAtSDE7 }), count(singles, func(c shareCase) bool { return c.onEvent }))
	fmt.Fprintf(&b, "pairs of events: %d injected, %d found at SDE ≥ 3 (%d at the default)\n", len(pairs), count(pairs, found), count(pairs, func(c shareCase) bool { return c.detectedAtSDE7 }))
	quant := func(cs []shareCase, sel func(shareCase) bool, v func(shareCase) float64) string {
		var x []float64
		for _, c := range cs {
			if sel(c) {
				x = append(x, v(c))
			}
		}
		if len(x) == 0 {
			return "—"
		}
		sort.Float64s(x)
		q := func(f float64) float64 { return x[min(len(x)-1, int(f*float64(len(x))))] }
		return fmt.Sprintf("min %.3f  5%% %.3f  median %.3f  95%% %.3f  max %.3f", x[0], q(0.05), q(0.5), q(0.95), x[len(x)-1])
	}
	single := func(c shareCase) float64 { return c.single }
	pair := func(c shareCase) float64 { return c.pair }
	fmt.Fprintf(&b, "strongest share, planets at their period: %s\n", quant(planets, right, single))
	fmt.Fprintf(&b, "strongest share, single events found:     %s\n", quant(singles, found, single))
	fmt.Fprintf(&b, "two strongest, planets with ≥ %d transits: %s\n", PairMinTransits, quant(planets, func(c shareCase) bool { return right(c) && c.counted >= PairMinTransits }, pair))
	fmt.Fprintf(&b, "two strongest, pairs found with ≥ %d:      %s\n", PairMinTransits, quant(pairs, func(c shareCase) bool { return c.found && c.counted >= PairMinTransits }, pair))
	b.WriteString("\nthreshold | planets flagged (strongest) | single events flagged\n")
	for _, th := range []float64{0.4, 0.5, 0.6, 0.7, 0.8} {
		fire := func(c shareCase) bool { return c.single >= th }
		fmt.Fprintf(&b, "%.2f | %.1f %% | %.1f %%\n", th, 100*rate(planets, right, fire), 100*rate(singles, found, fire))
	}
	for _, nmin := range []int{3, 4, 5} {
		b.WriteString(fmt.Sprintf("\nthreshold | planets with ≥ %d transits flagged (two strongest, strongest below SingleShare) | pairs flagged (either caution)\n", nmin))
		for _, th := range []float64{0.85, 0.9, 0.95, 0.97} {
			pfire := func(c shareCase) bool { return c.counted >= nmin && c.pair >= th && c.single < SingleShare }
			efire := func(c shareCase) bool { return c.single >= SingleShare || c.counted >= nmin && c.pair >= th }
			fmt.Fprintf(&b, "%.2f | %.1f %% | %.1f %%\n", th, 100*rate(planets, right, pfire), 100*rate(pairs, found, efire))
		}
	}
	b.WriteString("\nby transits (planets at their period): n | cases | strongest share median / max | flagged at SingleShare\n")
	for n := 3; n <= 15; n++ {
		sel := func(c shareCase) bool { return right(c) && c.transits == n }
		fmt.Fprintf(&b, "%d | %d | %s | %.1f %%\n", n, count(planets, sel), quant(planets, sel, single), 100*rate(planets, sel, func(c shareCase) bool { return c.single >= SingleShare }))
	}
	pref := func(cs []shareCase, sel func(shareCase) bool, want Choice) float64 {
		return rate(cs, sel, func(c shareCase) bool { return c.preferred == want })
	}
	fmt.Fprintf(&b, "\nrival periods, planets at their period: P/2 preferred %.1f %%, 2P preferred %.1f %%\n", 100*pref(planets, right, PreferHalf), 100*pref(planets, right, PreferDouble))
	fmt.Fprintf(&b, "rival periods, single events found: 2P preferred %.1f %%\n", 100*pref(singles, found, PreferDouble))
	return b.String()
}

// idealShares is the same rate for an idealised planet, few of which the search finds at the
// hardest corner (3–4 transits at SNR 8–10): each transit's SNR drawn from N(SNR/√n, 1),
// 100,000 draws per row (this test's own Monte Carlo).
func idealShares() string {
	var b strings.Builder
	b.WriteString("\nidealised planets (SNR_j ~ N(SNR/√n, 1)): n | SNR | strongest ≥ SingleShare | two strongest ≥ PairShare\n")
	for _, n := range []int{3, 4, 5} {
		for _, snr := range []float64{8, 10} {
			g := rng.Derive(2026, "ideal", uint64(100*n)+uint64(snr))
			one, two := 0, 0
			z2 := make([]float64, n)
			const draws = 100000
			for range draws {
				var total float64
				for j := range z2 {
					z := snr/math.Sqrt(float64(n)) + g.Normal()
					z2[j] = 0
					if z > 0 {
						z2[j] = z * z
					}
					total += z2[j]
				}
				sort.Float64s(z2)
				if z2[n-1] >= SingleShare*total {
					one++
				}
				if z2[n-1]+z2[n-2] >= PairShare*total {
					two++
				}
			}
			fmt.Fprintf(&b, "%d | %.0f | %.2f %% | %.2f %%\n", n, snr, 100*float64(one)/draws, 100*float64(two)/draws)
		}
	}
	return b.String()
}

// binaryReport searches 60 eclipsing binaries (synth.Binary: V-shaped eclipses, primary
// 0.3–1 % deep, secondary 0.45–0.9 of it, true period 2–8 d, 60 days of data) and counts,
// by the ratio of the eclipse depths, those found at half their period and, among them,
// those whose rivals prefer twice it.
func binaryReport(t *testing.T) string {
	var found, half, double [2]int
	const n = 60
	for k := range n {
		g := rng.Derive(2026, "binary", uint64(k))
		per := 2 + 6*g.Float64()
		pri := 3e-3 + 7e-3*g.Float64()
		bin := syn.Binary{Period: per, Epoch: per * g.Float64(), Duration: 0.04 * per * (1 + g.Float64()),
			Primary: pri, Secondary: pri * (0.45 + 0.45*g.Float64())}
		c := syn.Curve{Span: 60, Cadence: measuredCadence, Noise: measuredNoise, Seed: g.Uint64(), Dips: []syn.Signal{bin}}
		d, _ := measureOne(t, c.Make(), 0.5, 30, 0)
		if d == nil {
			continue
		}
		j := 0
		if bin.Secondary >= 0.75*bin.Primary {
			j = 1
		}
		found[j]++
		if math.Abs(2*d.Timing.Period/per-1) < 0.01 {
			half[j]++
			if d.Rivals.Preferred == PreferDouble {
				double[j]++
			}
		}
	}
	var b strings.Builder
	b.WriteString("\nbinaries (60 injected): secondary/primary | found | at half the true period | of which prefer twice it\n")
	for j, name := range []string{"0.45–0.75", "0.75–0.90"} {
		fmt.Fprintf(&b, "%s | %d | %d | %d\n", name, found[j], half[j], double[j])
	}
	return b.String()
}
