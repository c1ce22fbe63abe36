#!/usr/bin/python3
"""Independent reference outputs for rng_test.go.

Written from the published algorithms, not from the Go code:
  SplitMix64: Steele, Lea & Flood (2014), OOPSLA '14 (gamma 0x9e3779b97f4a7c15,
              "mix13" finaliser as in Vigna's public-domain splitmix64.c).
  xoshiro256**: Blackman & Vigna (2021), ACM TOMS 47(4), 36 (xoshiro256starstar.c).
Run: /usr/bin/python3 testdata/goldens.py
"""
M = (1 << 64) - 1


def splitmix64(state):
    while True:
        state = (state + 0x9E3779B97F4A7C15) & M
        z = state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M
        yield z ^ (z >> 31)


def rotl(x, k):
    return ((x << k) | (x >> (64 - k))) & M


def xoshiro256ss(seed):
    sm = splitmix64(seed)
    s = [next(sm) for _ in range(4)]
    while True:
        result = (rotl((s[1] * 5) & M, 7) * 9) & M
        t = (s[1] << 17) & M
        s[2] ^= s[0]
        s[3] ^= s[1]
        s[1] ^= s[2]
        s[0] ^= s[3]
        s[2] ^= t
        s[3] = rotl(s[3], 45)
        yield result


for seed in (0, 1234567):
    g = splitmix64(seed)
    print("splitmix64 seed %d:" % seed, ", ".join("0x%016x" % next(g) for _ in range(5)))
for seed in (0, 1234567):
    g = xoshiro256ss(seed)
    print("xoshiro256** seed %d:" % seed, ", ".join("0x%016x" % next(g) for _ in range(5)))
