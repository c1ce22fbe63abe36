package main

import (
	"hash/fnv"
	"math"
)

// splitmix64 is the pseudorandom generator of Steele, Lea & Flood (2014), "Fast splittable
// pseudorandom number generators", OOPSLA '14: a 64-bit counter advanced by a fixed odd
// constant (the golden ratio times 2^64) and passed through a bijective mixing function.
// It is a few lines long, and because it is our own code its stream cannot change with a
// Go release, which is what lets the generator promise the same bytes on every run.
type splitmix64 struct{ state uint64 }

// goldenGamma is ⌊2^64/φ⌋ rounded to odd, the increment Steele, Lea & Flood use.
const goldenGamma = 0x9e3779b97f4a7c15

// next returns the next 64 random bits.
func (r *splitmix64) next() uint64 {
	r.state += goldenGamma
	return mix64(r.state)
}

// mix64 is splitmix64's finaliser (the "variant 13" constants of Stafford's mixers, as
// used by Steele, Lea & Flood): every input bit affects every output bit.
func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// newStream returns the random stream for one purpose, e.g. "main/noise". Each purpose
// has its own stream, derived from the seed and the label (FNV-1a hash), so that drawing
// one more flare does not shift the noise of every later point.
func newStream(seed uint64, label string) *splitmix64 {
	h := fnv.New64a()
	h.Write([]byte(label))
	return &splitmix64{state: mix64(seed ^ h.Sum64())}
}

// uniform returns a number in [0, 1) with 53 random bits (the top bits of next).
func (r *splitmix64) uniform() float64 {
	return float64(r.next()>>11) * 0x1p-53
}

// between returns a uniform number in [lo, hi).
func (r *splitmix64) between(lo, hi float64) float64 {
	return lo + (hi-lo)*r.uniform()
}

// logUniform returns a number in [lo, hi) whose logarithm is uniform: as many flares
// between 1 % and 2 % as between 2 % and 4 %.
func (r *splitmix64) logUniform(lo, hi float64) float64 {
	return lo * math.Exp(math.Log(hi/lo)*r.uniform())
}

// index returns a uniform integer in [0, n).
func (r *splitmix64) index(n int) int {
	return int(r.uniform() * float64(n))
}

// normal returns a standard normal deviate by the Box–Muller transform (Box & Muller 1958,
// Ann. Math. Stat. 29, 610). One deviate per call keeps the code obvious; speed is no
// concern here.
func (r *splitmix64) normal() float64 {
	u1 := 1 - r.uniform() // in (0, 1], so the logarithm is finite
	u2 := r.uniform()
	return math.Sqrt(-2*math.Log(u1)) * math.Cos(2*math.Pi*u2)
}
