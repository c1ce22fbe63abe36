package cache

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
)

// StepKey identifies one repeatable computation: the step kind and version, its decoded
// configuration, the result keys of its inputs, the digests of the bytes it read and its
// seed. The engine computes it; the store only maps it to a ResultKey.
type StepKey [32]byte

// ResultKey is the SHA-256 of an artifact's encoded bytes. Equal science gives equal bytes
// and so the same key, which is why a result is stored once however many steps produce it.
type ResultKey [32]byte

// shortLen is the number of hex digits Short shows: 48 bits, enough to tell apart the keys
// of any one store at a glance (a collision needs about 2^24 keys).
const shortLen = 12

// ResultKeyOf returns the result key of data, its SHA-256.
func ResultKeyOf(data []byte) ResultKey { return sha256.Sum256(data) }

// String returns the key as 64 lowercase hex digits.
func (k StepKey) String() string { return hex.EncodeToString(k[:]) }

// Short returns the first 12 hex digits of the key, for display.
func (k StepKey) Short() string { return k.String()[:shortLen] }

// IsZero reports whether k is the zero key (never a real step key).
func (k StepKey) IsZero() bool { return k == StepKey{} }

// MarshalText encodes the key as lowercase hex, so JSON holds it as a string.
func (k StepKey) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText decodes a key written by MarshalText.
func (k *StepKey) UnmarshalText(b []byte) error {
	p, err := ParseStepKey(string(b))
	if err != nil {
		return err
	}
	*k = p
	return nil
}

// String returns the key as 64 lowercase hex digits.
func (k ResultKey) String() string { return hex.EncodeToString(k[:]) }

// Short returns the first 12 hex digits of the key, for display.
func (k ResultKey) Short() string { return k.String()[:shortLen] }

// IsZero reports whether k is the zero key, used for a step that gave no result.
func (k ResultKey) IsZero() bool { return k == ResultKey{} }

// MarshalText encodes the key as lowercase hex, so JSON holds it as a string.
func (k ResultKey) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// UnmarshalText decodes a key written by MarshalText.
func (k *ResultKey) UnmarshalText(b []byte) error {
	p, err := ParseResultKey(string(b))
	if err != nil {
		return err
	}
	*k = p
	return nil
}

// ParseStepKey parses 64 hex digits (either case) into a StepKey.
func ParseStepKey(s string) (StepKey, error) {
	var k StepKey
	err := parseKey(k[:], s, "step key")
	return k, err
}

// ParseResultKey parses 64 hex digits (either case) into a ResultKey.
func ParseResultKey(s string) (ResultKey, error) {
	var k ResultKey
	err := parseKey(k[:], s, "result key")
	return k, err
}

func parseKey(dst []byte, s, what string) error {
	if len(s) != 2*len(dst) {
		return fmt.Errorf("%s %q: want %d hex digits, got %d characters", what, clip(s), 2*len(dst), len(s))
	}
	if _, err := hex.Decode(dst, []byte(s)); err != nil {
		return fmt.Errorf("%s %q: not hex: %w", what, clip(s), err)
	}
	return nil
}

// clip shortens s for an error message so a pasted file does not flood the terminal.
func clip(s string) string {
	const max = 80
	if len(s) <= max {
		return s
	}
	return s[:max] + "…"
}
