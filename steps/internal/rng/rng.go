// Package rng is dipline's own seedable random-number generator: SplitMix64 (Steele, Lea &
// Flood 2014) to expand seeds and derive sub-streams, xoshiro256** (Blackman & Vigna 2021)
// for the stream itself, and our own uniform and normal transforms, so that a Go or gonum
// upgrade can never change a stream. It does not provide cryptographic randomness and is not
// safe for concurrent use: give each goroutine, walker or block its own Stream. Main entry
// points: New (a stream from a seed) and Derive (an independent sub-stream from a seed, a
// label and an index).
package rng

import (
	"math"
	"math/bits"
)

// splitMixGamma is the odd increment of SplitMix64, the golden-ratio constant 2^64/φ
// (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators", OOPSLA '14).
const splitMixGamma = 0x9e3779b97f4a7c15

// SplitMix64 is the 64-bit SplitMix generator of Steele, Lea & Flood (2014) with the
// "variant 13" finaliser; its only use here is to turn seeds into well-mixed state.
type SplitMix64 struct{ State uint64 }

// Next advances the state and returns the next output.
func (s *SplitMix64) Next() uint64 {
	s.State += splitMixGamma
	return mix64(s.State)
}

// mix64 is the SplitMix64 output function (a bijection of uint64).
func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// Stream is a xoshiro256** generator (Blackman & Vigna 2021, "Scrambled linear pseudorandom
// number generators", ACM TOMS 47(4), 36) with our own uniform and normal transforms.
// The zero value is not a valid stream; use New or Derive.
type Stream struct {
	s        [4]uint64
	spare    float64 // second normal deviate of the last polar pair
	hasSpare bool
}

// New returns the stream whose state is the first four SplitMix64 outputs from seed, as
// Blackman & Vigna recommend for seeding xoshiro generators.
func New(seed uint64) *Stream {
	var st Stream
	st.Seed(seed)
	return &st
}

// Seed resets the stream in place to the state New(seed) would have.
func (r *Stream) Seed(seed uint64) {
	sm := SplitMix64{State: seed}
	for i := range r.s {
		r.s[i] = sm.Next()
	}
	// Four consecutive SplitMix64 outputs are never all zero (mix64 is a bijection and
	// the four inputs differ), so the all-zero xoshiro state cannot occur.
	r.hasSpare = false
	r.spare = 0
}

// Derive returns the sub-stream of seed for a label and an index (for example "walker", 17).
// The key is built by chaining the SplitMix64 finaliser over the seed, a 64-bit FNV-1a hash
// of the label and the index, so streams for different labels or indices are unrelated and
// the same (seed, label, index) always gives the same stream.
func Derive(seed uint64, label string, index uint64) *Stream {
	return New(DeriveSeed(seed, label, index))
}

// DeriveSeed returns the seed Derive would use; steps record it for provenance.
func DeriveSeed(seed uint64, label string, index uint64) uint64 {
	k := mix64(seed + splitMixGamma)
	k = mix64((k ^ fnv1a(label)) + splitMixGamma)
	return mix64((k ^ index) + splitMixGamma + splitMixGamma)
}

// fnv1a is the 64-bit FNV-1a hash (Fowler, Noll & Vo; offset basis and prime from the
// published FNV parameters). Written out so the label mixing is fixed in this file.
func fnv1a(s string) uint64 {
	h := uint64(0xcbf29ce484222325)
	for i := 0; i < len(s); i++ {
		h ^= uint64(s[i])
		h *= 0x100000001b3
	}
	return h
}

// Uint64 returns the next 64 output bits of xoshiro256**.
func (r *Stream) Uint64() uint64 {
	s := &r.s
	result := bits.RotateLeft64(s[1]*5, 7) * 9
	t := s[1] << 17
	s[2] ^= s[0]
	s[3] ^= s[1]
	s[1] ^= s[2]
	s[0] ^= s[3]
	s[2] ^= t
	s[3] = bits.RotateLeft64(s[3], 45)
	return result
}

// twoTo53 scales a 53-bit integer to [0, 1).
const twoTo53 = 1 << 53

// Float64 returns a uniform double in the open interval (0, 1): k·2⁻⁵³ with k the top 53
// bits of the next output, drawing again in the rare case k = 0 (probability 2⁻⁵³). Every
// value is exact; the largest is 1 − 2⁻⁵³, so log(u) and log(1 − u) are always finite.
// (Offsetting by half a step instead would round the top value up to exactly 1.)
func (r *Stream) Float64() float64 {
	for {
		if k := r.Uint64() >> 11; k != 0 {
			return float64(k) / twoTo53
		}
	}
}

// Uint64n returns a uniform integer in [0, n) by Lemire's multiply-and-reject method
// (Lemire 2019, "Fast random integer generation in an interval", ACM TOMACS 29(1), 3), free
// of the modulo bias and of the rounding trap of floor(u·n). It panics if n is 0 (a
// programming error, never a data error).
func (r *Stream) Uint64n(n uint64) uint64 {
	if n == 0 {
		panic("rng: Uint64n(0)")
	}
	hi, lo := bits.Mul64(r.Uint64(), n)
	if lo < n {
		thresh := -n % n
		for lo < thresh {
			hi, lo = bits.Mul64(r.Uint64(), n)
		}
	}
	return hi
}

// Intn returns a uniform int in [0, n); n must be positive.
func (r *Stream) Intn(n int) int {
	if n <= 0 {
		panic("rng: Intn of a non-positive bound")
	}
	return int(r.Uint64n(uint64(n)))
}

// Normal returns a standard normal deviate by Marsaglia's polar method (Marsaglia & Bray
// 1964, SIAM Review 6, 260): draw (v1, v2) uniform in the square (−1, 1)² until
// 0 < s = v1² + v2² < 1, then v1·m and v2·m with m = sqrt(−2 ln s / s) are independent
// standard normals. The second one is kept for the next call. Only math.Log and math.Sqrt
// (correctly rounded) are borrowed from the library.
func (r *Stream) Normal() float64 {
	if r.hasSpare {
		r.hasSpare = false
		return r.spare
	}
	for {
		v1 := 2*r.Float64() - 1
		v2 := 2*r.Float64() - 1
		s := v1*v1 + v2*v2
		if s >= 1 || s == 0 {
			continue
		}
		m := math.Sqrt(-2 * math.Log(s) / s)
		r.spare = v2 * m
		r.hasSpare = true
		return v1 * m
	}
}
