package robust

import "math"

// noise is a small deterministic generator for synthetic test data: SplitMix64 (Steele,
// Lea & Flood 2014) for uniforms and the Box–Muller transform for normals. It is our own
// code, so the test data cannot change with a Go release.
type noise struct{ s uint64 }

func (n *noise) uint64() uint64 {
	n.s += 0x9e3779b97f4a7c15
	z := n.s
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// uniform is in (0, 1).
func (n *noise) uniform() float64 { return (float64(n.uint64()>>11) + 0.5) / (1 << 53) }

func (n *noise) normal() float64 {
	return math.Sqrt(-2*math.Log(n.uniform())) * math.Cos(2*math.Pi*n.uniform())
}

// cadence294 is the 29.4-min long cadence of a space survey, in days (REFERENCES §15).
const cadence294 = 29.4 / 1440
