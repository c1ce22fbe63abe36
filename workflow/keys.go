package workflow

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"runtime"
	"strings"

	"dipline/cache"
	"dipline/steps"
)

// keyFormat tags the canonical record a step key hashes; change it only together with a
// deliberate break of every stored key.
const keyFormat = "dipline-step-key/1"

// numericsTag is part of every step key: floating-point results may differ between
// architectures, so a store shared across them never mixes their results.
var numericsTag = runtime.GOARCH

// keyRecord is the canonical byte record behind a step key.
type keyRecord struct{ buf []byte }

func (k *keyRecord) str(s string) {
	k.buf = binary.LittleEndian.AppendUint64(k.buf, uint64(len(s)))
	k.buf = append(k.buf, s...)
}
func (k *keyRecord) u64(v uint64)   { k.buf = binary.LittleEndian.AppendUint64(k.buf, v) }
func (k *keyRecord) f64(v float64)  { k.u64(steps.FloatBits(v)) }
func (k *keyRecord) raw(b [32]byte) { k.buf = append(k.buf, b[:]...) }

// stepKeyWriter lends a step's key record to its configuration's parameter types
// (steps.KeyWriter), and encodes the engine's inputs they ask for.
type stepKeyWriter struct {
	*keyRecord
	s        *Step
	upstream map[string]cache.ResultKey
}

func (k stepKeyWriter) Str(s string)  { k.str(s) }
func (k stepKeyWriter) U64(v uint64)  { k.u64(v) }
func (k stepKeyWriter) F64(v float64) { k.f64(v) }

// Inputs encodes what a reference, file or row parameter stands for: the result keys of
// the referenced steps, the digests of the files, the values of the row's asked-for columns.
func (k stepKeyWriter) Inputs(param string) error {
	if in := k.s.Rows[param]; in != nil {
		k.row(in)
		return nil
	}
	if dep := k.s.Settings[param]; dep != nil {
		return settingsKey(k.keyRecord, dep)
	}
	if files, ok := k.s.Files[param]; ok {
		k.u64(uint64(len(files)))
		for _, f := range files {
			k.raw(f.Digest)
		}
		return nil
	}
	addrs := k.s.Refs[param]
	k.u64(uint64(len(addrs)))
	for _, a := range addrs {
		rk, ok := k.upstream[a]
		if !ok {
			return fmt.Errorf("%s: no result key yet for %s", k.s.Addr, a)
		}
		k.raw(rk)
	}
	return nil
}

// settingsKey encodes the settings another step lends: its kind and version and its
// configuration without its own inputs (what it reads is its business, not the borrower's).
func settingsKey(k *keyRecord, dep *Step) error {
	k.str("settings")
	k.str(dep.Kind.Name())
	k.u64(uint64(dep.Kind.Version()))
	return dep.Kind.Schema().Key(settingsWriter{stepKeyWriter{keyRecord: k}}, dep.Config)
}

// settingsWriter writes a lent configuration as the step key writes a configuration, but
// for its references, files and rows nothing but a mark.
type settingsWriter struct{ stepKeyWriter }

func (k settingsWriter) Inputs(string) error { k.str("input"); return nil }

// StepKey computes a step's key from its kind and version, its decoded configuration with
// defaults applied, the result keys of the steps it references, the settings of the steps
// it takes settings from, the digests of the files it reads, its seed when its kind draws random numbers, and the numerics tag. Attribute
// order, formatting, comments and writing a default out do not change it.
func (w *Workflow) StepKey(s *Step, upstream map[string]cache.ResultKey) (cache.StepKey, error) {
	b, err := w.keyOf(s, upstream, keyFormat, s.Kind.Schema().Key)
	return cache.StepKey(b), err
}

// partsFormat tags the record behind the key of a step's finished pieces (steps.Parts).
const partsFormat = "dipline-parts-key/1"

// partsBase is what every finished piece of s's work depends on: its step key's record
// without the attributes that only choose which pieces are made.
func (w *Workflow) partsBase(s *Step, upstream map[string]cache.ResultKey) ([32]byte, error) {
	return w.keyOf(s, upstream, partsFormat, s.Kind.Schema().PartsKey)
}

// keyOf hashes the record of s's kind, version, numerics tag, configuration (as config
// writes it) and seed under the format tag.
func (w *Workflow) keyOf(s *Step, upstream map[string]cache.ResultKey, format string,
	config func(steps.KeyWriter, any) error) ([32]byte, error) {
	k := &keyRecord{}
	k.str(format)
	k.str(s.Kind.Name())
	k.u64(uint64(s.Kind.Version()))
	k.str(numericsTag)
	if err := config(stepKeyWriter{k, s, upstream}, s.Config); err != nil {
		return [32]byte{}, err
	}
	if s.Kind.Random() {
		k.str("seed")
		k.u64(w.StepSeed(s))
	}
	return sha256.Sum256(k.buf), nil
}

// StepSeed derives a step's seed from the workflow seed and the step's address, so that
// adding or reordering steps never shifts another step's random stream.
func (w *Workflow) StepSeed(s *Step) uint64 {
	h := sha256.New()
	fmt.Fprintf(h, "dipline-seed/1\x00%d\x00%s", w.Seed, s.Addr)
	return binary.LittleEndian.Uint64(h.Sum(nil))
}

// SettingsParams lists the step's settings parameters (steps.SettingsRef) in name order.
func (s *Step) SettingsParams() []string { return sortedKeys(s.Settings) }

// Rendered returns each attribute's decoded value as text for people: quantities in
// their base unit, references as written, files as paths, and another step's settings as
// its address with those settings rendered after it ("detrend.spots {degree = 2; …}"), so
// that what a step borrowed is on its own record. Provenance records keep it so that a
// later run can say which attribute changed.
func (s *Step) Rendered() map[string]string {
	out := s.Kind.Schema().Render(s.Config)
	for name, dep := range s.Settings {
		lent := dep.Rendered()
		parts := make([]string, 0, len(lent))
		for _, k := range sortedKeys(lent) {
			parts = append(parts, k+" = "+lent[k])
		}
		out[name] = dep.Addr + " {" + strings.Join(parts, "; ") + "}"
	}
	return out
}
