package workflow

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"math"
	"runtime"
	"sort"
	"strconv"
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
func (k *keyRecord) u64(v uint64)     { k.buf = binary.LittleEndian.AppendUint64(k.buf, v) }
func (k *keyRecord) f64(v float64)    { k.u64(steps.FloatBits(v)) }
func (k *keyRecord) raw(b [32]byte)   { k.buf = append(k.buf, b[:]...) }
func (k *keyRecord) tag(t steps.Type) { k.u64(uint64(t) + 1) }

// StepKey computes a step's key from its kind and version, its decoded configuration with
// defaults applied, the result keys of the steps it references, the digests of the files it
// reads, its seed when its kind draws random numbers, and the numerics tag. Attribute
// order, formatting, comments and writing a default out do not change it.
func (w *Workflow) StepKey(s *Step, upstream map[string]cache.ResultKey) (cache.StepKey, error) {
	k := &keyRecord{}
	k.str(keyFormat)
	k.str(s.Kind.Name())
	k.u64(uint64(s.Kind.Version()))
	k.str(numericsTag)
	params := append([]steps.Param(nil), s.Kind.Params()...)
	sort.Slice(params, func(i, j int) bool { return params[i].Name < params[j].Name })
	for _, p := range params {
		k.str(p.Name)
		v, ok := s.Values[p.Name]
		if !ok {
			k.u64(0) // absent, no default
			continue
		}
		k.tag(p.Type)
		switch p.Type {
		case steps.Number, steps.Quantity:
			k.f64(v.(float64))
		case steps.Integer:
			k.u64(uint64(v.(int64)))
		case steps.Bool:
			if v.(bool) {
				k.u64(1)
			} else {
				k.u64(0)
			}
		case steps.String:
			k.str(v.(string))
		case steps.CatalogueRow:
			k.row(s.Rows[p.Name])
		case steps.QuantityRange, steps.Measurement:
			r := v.([2]float64)
			k.f64(r[0])
			k.f64(r[1])
		case steps.StringList:
			list := v.([]string)
			k.u64(uint64(len(list)))
			for _, x := range list {
				k.str(x)
			}
		case steps.StringMap:
			m := v.(map[string]string)
			keys := make([]string, 0, len(m))
			for x := range m {
				keys = append(keys, x)
			}
			sort.Strings(keys)
			k.u64(uint64(len(keys)))
			for _, x := range keys {
				k.str(x)
				k.str(m[x])
			}
		case steps.FileList:
			files := s.Files[p.Name]
			k.u64(uint64(len(files)))
			for _, f := range files {
				k.raw(f.Digest)
			}
		case steps.Ref, steps.RefList:
			addrs := s.Refs[p.Name]
			k.u64(uint64(len(addrs)))
			for _, a := range addrs {
				rk, ok := upstream[a]
				if !ok {
					return cache.StepKey{}, fmt.Errorf("%s: no result key yet for %s", s.Addr, a)
				}
				k.raw(rk)
			}
		}
	}
	if s.Kind.Random() {
		k.str("seed")
		k.u64(w.StepSeed(s))
	}
	return cache.StepKey(sha256.Sum256(k.buf)), nil
}

// StepSeed derives a step's seed from the workflow seed and the step's address, so that
// adding or reordering steps never shifts another step's random stream.
func (w *Workflow) StepSeed(s *Step) uint64 {
	h := sha256.New()
	fmt.Fprintf(h, "dipline-seed/1\x00%d\x00%s", w.Seed, s.Addr)
	return binary.LittleEndian.Uint64(h.Sum(nil))
}

// Rendered returns each attribute's decoded value as text for people: quantities in
// their base unit, references as addresses, files as paths. Provenance records keep it so
// that a later run can say which attribute changed.
func (s *Step) Rendered() map[string]string {
	out := map[string]string{}
	for _, p := range s.Kind.Params() {
		v, ok := s.Values[p.Name]
		if !ok {
			continue
		}
		out[p.Name] = render(p, v)
	}
	return out
}

func render(p steps.Param, v any) string {
	g := func(f float64) string {
		if a := math.Abs(f); a == 0 || (a >= 1e-4 && a < 1e15) {
			return strconv.FormatFloat(f, 'f', -1, 64) // 2460000, not 2.46e+06
		}
		return strconv.FormatFloat(f, 'g', -1, 64)
	}
	switch x := v.(type) {
	case float64:
		if p.Dim != nil {
			return g(x) + " " + p.Dim.Base
		}
		return g(x)
	case int64:
		return strconv.FormatInt(x, 10)
	case bool:
		return strconv.FormatBool(x)
	case string:
		if p.Type == steps.Ref || p.Type == steps.CatalogueRow {
			return x
		}
		return strconv.Quote(x)
	case [2]float64:
		if p.Type == steps.Measurement {
			return g(x[0]) + " ± " + g(x[1]) + " " + p.Dim.Base
		}
		return "[" + g(x[0]) + " " + p.Dim.Base + ", " + g(x[1]) + " " + p.Dim.Base + "]"
	case []string:
		q := make([]string, len(x))
		for i, s := range x {
			q[i] = s
			if p.Type != steps.RefList {
				q[i] = strconv.Quote(s)
			}
		}
		return "[" + strings.Join(q, ", ") + "]"
	case map[string]string:
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = k + " = " + strconv.Quote(x[k])
		}
		return "{ " + strings.Join(parts, ", ") + " }"
	}
	return fmt.Sprint(v)
}
