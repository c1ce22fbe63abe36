package star

import (
	"testing"

	"dipline/steps/internal/stellar"
)

// BenchmarkCoolDwarf times the default 20000 joint draws of the cool-dwarf method with
// [Fe/H], a companion in Ks and a V−J temperature.
func BenchmarkCoolDwarf(b *testing.B) {
	in := Input{
		Parallax: &Measured{Value: 35.21, Sigma: 0.04}, Ks: &Measured{Value: 8.62, Sigma: 0.02},
		V: &Measured{Value: 13.1, Sigma: 0.03}, J: &Measured{Value: 9.45, Sigma: 0.02},
		FeH:        &Measured{Value: -0.1, Sigma: 0.08},
		Companions: []stellar.Companion{{Name: "B", Band: "Ks", DMag: 3.1, DMagErr: 0.1}},
	}
	opt := Options{Method: MethodCoolDwarf, Draws: defaultDraws, Seed: 1, Scatter: true}
	for b.Loop() {
		if _, err := Draw(in, opt); err != nil {
			b.Fatal(err)
		}
	}
}
