package bls

import (
	"math"
	"runtime"
	"sync"

	"dipline/steps/internal/astro"
)

// normals is a seeded stream of standard normal draws: splitmix64 (Steele, Lea & Flood
// 2014) for uniforms and the Box–Muller transform for normals, written here so the fixtures
// never change with a Go or library upgrade.
type normals struct {
	state uint64
	spare float64
	has   bool
}

func (n *normals) uint64() uint64 {
	n.state += 0x9e3779b97f4a7c15
	z := n.state
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// uniform returns a draw in (0, 1).
func (n *normals) uniform() float64 { return (float64(n.uint64()>>11) + 0.5) / (1 << 53) }

func (n *normals) norm() float64 {
	if n.has {
		n.has = false
		return n.spare
	}
	r := math.Sqrt(-2 * math.Log(n.uniform()))
	th := 2 * math.Pi * n.uniform()
	n.spare, n.has = r*math.Sin(th), true
	return r * math.Cos(th)
}

// dip is an injected periodic transit: a box, or a trapezoid when ingress > 0.
type dip struct {
	period, epoch, duration, depth, ingress float64
}

// drop returns the fractional flux drop at time t.
func (d dip) drop(t float64) float64 {
	x := (t - d.epoch) / d.period
	u := math.Abs(x-math.Round(x)) * d.period
	half := d.duration / 2
	switch {
	case u >= half:
		return 0
	case d.ingress <= 0 || u <= half-d.ingress:
		return d.depth
	default:
		return d.depth * (half - u) / d.ingress
	}
}

// synth builds a light curve of the given span and cadence (days) with white noise sigma,
// a gap of gap days in the middle (none if 0), and the dips injected.
func synth(seed uint64, span, cadence, sigma, gap float64, dips ...dip) Series {
	g := normals{state: seed}
	var s Series
	n := int(span/cadence) + 1
	for i := 0; i < n; i++ {
		t := float64(i) * cadence
		if gap > 0 && math.Abs(t-span/2) < gap/2 {
			continue
		}
		f := 1 + sigma*g.norm()
		for _, d := range dips {
			f -= d.drop(t)
		}
		s.Time = append(s.Time, t)
		s.Flux = append(s.Flux, f)
		s.Err = append(s.Err, sigma)
	}
	return s
}

// solarDensity is the mean density of the nominal Sun in g/cm³ (IAU 2015 Resolution B3
// R☉ and (GM)☉, CODATA 2018 G), ≈ 1.40978 (computed independently), from astro's table.
var solarDensity = astro.SolarDensity / astro.GramPerCm3

// defaultOptions is a search of the given range around a Sun-like star.
func defaultOptions(pmin, pmax float64) Options {
	return Options{Density: solarDensity, PeriodMin: pmin, PeriodMax: pmax, Oversampling: 3,
		MaxSignals: 3, MaskFactor: 2}
}

// forEach runs fn(0) … fn(n−1) spread over the machine's cores; fn writes its own index's
// result, so the outcome does not depend on the scheduling.
func forEach(n int, fn func(i int)) {
	var wg sync.WaitGroup
	next := make(chan int)
	for w := 0; w < runtime.GOMAXPROCS(0); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				fn(i)
			}
		}()
	}
	for i := 0; i < n; i++ {
		next <- i
	}
	close(next)
	wg.Wait()
}
