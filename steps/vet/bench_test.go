package vet

import (
	"testing"

	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/synth"
)

// BenchmarkVet4yr vets two signals, one with a fit, on four years at a 29.4-minute cadence
// (71,560 points; invented data): the cost a survey pays per target.
//
//	go test ./steps/vet -run '^$' -bench Vet4yr -benchtime 5x
func BenchmarkVet4yr(b *testing.B) {
	const cad = 29.4 / 1440
	p := synth.Transit{Period: 9.7, Epoch: 2.3, K: 0.03, B: 0.4, AR: 20, U1: 0.4, U2: 0.25, Exposure: cad, Sub: 5}
	s := synth.Curve{Span: 4 * 365.25, Cadence: cad, Noise: 1000e-6, Seed: 3, Dips: []synth.Signal{p}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", Segments: []lightcurve.Segment{{ID: "1", Exposure: cad, Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	sigs := []signals.Signal{
		{Period: p.Period, Epoch: p.Epoch, Duration: 0.9 * p.T14(), Depth: 1e-3},
		{Period: 23.45, Epoch: 5.1, Duration: 0.2, Depth: 3e-4},
	}
	f := planetFit(p.Period, p.Epoch+75*p.Period, p.K, p.B, 3, 1)
	d := Data{Light: lc, Signals: sigs, Fit: f, Star: solarStar(3).Star}
	o := Options{OddEvenSigma: 3, SecondaryAlarm: defaultSecondaryAlarm, SecondaryRatio: defaultSecondaryRatio, MaxAlbedo: defaultMaxAlbedo,
		Wavelength: defaultWavelength, GrazingProbability: 0.5, VShapeFraction: 0.35, DensitySigma: 3, DepthAlarm: defaultDepthAlarm, MaxPlanetRadius: 2}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, _, err := Vet(d, o); err != nil {
			b.Fatal(err)
		}
	}
}
