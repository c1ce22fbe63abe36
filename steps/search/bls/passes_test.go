package bls

import (
	"testing"
)

// TestTheMethodFollowsTheCost: a space light curve (continuous, 30-minute cadence, 1 year)
// is folded fast; a ground-based one (an invented season of 15 nights of 4 hours at
// 5 minutes over a year) has few points for its span, and fold-and-scan is cheaper.
func TestTheMethodFollowsTheCost(t *testing.T) {
	space := synth(1, 365, 30.0/1440, 1e-3, 0)
	var ground Series
	g := normals{state: 2}
	for night := 0; night < 15; night++ {
		t0 := float64(night) * 24.3
		for k := 0; k < 48; k++ {
			ground.Time = append(ground.Time, t0+float64(k)*5.0/1440)
			ground.Flux = append(ground.Flux, 1+1e-3*g.norm())
			ground.Err = append(ground.Err, 1e-3)
		}
	}
	for _, c := range []struct {
		name string
		s    Series
		want Method
	}{{"space", space, MethodFast}, {"ground", ground, MethodDirect}} {
		p := prepare(c.s, nil, c.s.Cadence())
		gr, err := NewGrid(solarDensity, p.span(), 0.5, 100, 3)
		if err != nil {
			t.Fatal(err)
		}
		m, why := choose(MethodAuto, p, gr)
		if m != c.want {
			t.Errorf("%s: %v (%s), want %v", c.name, m, why, c.want)
		}
		if m, _ := choose(MethodDirect, p, gr); m != MethodDirect {
			t.Errorf("%s: a method asked for was not taken", c.name)
		}
	}
}
