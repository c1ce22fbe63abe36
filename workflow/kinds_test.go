package workflow

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"sync"

	"dipline/steps"
	"dipline/steps/units"
)

// Toy step kinds that exercise the engine without any astronomy.

// number is the artifact of every toy kind: one float.
type toyNum float64

func (n toyNum) Encode() []byte {
	return binary.LittleEndian.AppendUint64([]byte("num1"), steps.FloatBits(float64(n)))
}
func (n toyNum) Figures() []steps.Figure {
	return []steps.Figure{{Name: "value", Value: float64(n), Unit: "", Doc: "the toy number"}}
}

func decodeNumber(b []byte) (steps.Artifact, error) {
	if len(b) != 12 || string(b[:4]) != "num1" {
		return nil, errors.New("not a number artifact")
	}
	return toyNum(math.Float64frombits(binary.LittleEndian.Uint64(b[4:]))), nil
}

// calls counts Run calls per address, so tests can tell computed from reused.
type callCounter struct {
	mu sync.Mutex
	n  map[string]int
}

var calls = &callCounter{n: map[string]int{}}

func (c *callCounter) add(kind string) {
	c.mu.Lock()
	c.n[kind]++
	c.mu.Unlock()
}

func (c *callCounter) reset() map[string]int {
	c.mu.Lock()
	defer c.mu.Unlock()
	old := c.n
	c.n = map[string]int{}
	return old
}

type toyBase struct{}

func (toyBase) Version() int { return 1 }
func (toyBase) Random() bool { return false }
func (toyBase) Decode(b []byte) (steps.Artifact, error) {
	return decodeNumber(b)
}

// source sums the numbers in its files (one per line) and multiplies by scale.
type source struct{ toyBase }

func (source) Name() string { return "source" }
func (source) Doc() string  { return "sums numbers from files" }
func (source) Params() []steps.Param {
	return []steps.Param{
		{Name: "files", Type: steps.FileList},
		{Name: "scale", Type: steps.Number, Default: 1.0},
		{Name: "label", Type: steps.String, Optional: true, Choices: []string{"alpha", "beta"}},
	}
}
func (source) Prepare(v steps.Values) (any, error) {
	if v.Float("scale") == 0 {
		return nil, steps.Attrf("scale", "must not be zero")
	}
	return v, nil
}
func (source) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("source")
	sum := 0.0
	for _, f := range in.Files["files"] {
		for i, line := range strings.Split(strings.TrimSpace(string(f.Data)), "\n") {
			x, err := strconv.ParseFloat(strings.TrimSpace(line), 64)
			if err != nil {
				return nil, steps.BadInputf("%s:%d: %q is not a number", f.Name, i+1, line)
			}
			sum += x
		}
	}
	return toyNum(sum * cfg.(steps.Values).Float("scale")), nil
}

// combine adds its inputs and an offset given as a time.
type combine struct{ toyBase }

func (combine) Name() string { return "combine" }
func (combine) Doc() string  { return "adds inputs" }
func (combine) Params() []steps.Param {
	return []steps.Param{
		{Name: "inputs", Type: steps.RefList, Kinds: []string{"source", "combine", "floor", "noisy"}},
		{Name: "offset", Type: steps.Quantity, Dim: units.Time, Default: 0.0},
		{Name: "window", Type: steps.QuantityRange, Dim: units.Time, Optional: true},
	}
}
func (combine) Prepare(v steps.Values) (any, error) { return v, nil }
func (combine) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("combine")
	sum := cfg.(steps.Values).Float("offset")
	for _, a := range in.Refs["inputs"] {
		sum += float64(a.(toyNum))
	}
	return toyNum(sum), nil
}

// floor rounds its input down, so different inputs can give an equal result.
type floor struct{ toyBase }

func (floor) Name() string { return "floor" }
func (floor) Doc() string  { return "rounds down" }
func (floor) Params() []steps.Param {
	return []steps.Param{{Name: "input", Type: steps.Ref, Kinds: []string{"source", "combine"}}}
}
func (floor) Prepare(v steps.Values) (any, error) { return v, nil }
func (floor) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("floor")
	return toyNum(math.Floor(float64(in.Ref("input").(toyNum)))), nil
}

// noisy adds a number drawn from its seed.
type noisy struct{ toyBase }

func (noisy) Name() string { return "noisy" }
func (noisy) Doc() string  { return "adds seeded noise" }
func (noisy) Random() bool { return true }
func (noisy) Params() []steps.Param {
	return []steps.Param{{Name: "input", Type: steps.Ref}}
}
func (noisy) Prepare(v steps.Values) (any, error) { return v, nil }
func (noisy) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("noisy")
	return toyNum(float64(in.Ref("input").(toyNum)) + float64(env.Seed%1000)/1000), nil
}

// trouble fails (as a program fault, on bad input or on its own attribute), panics, waits
// for cancellation, or calls troubleHook and gives a number, as told.
type trouble struct{ toyBase }

// troubleHook is what a trouble step in mode "hook" calls before giving its number.
var troubleHook func()

func (trouble) Name() string { return "trouble" }
func (trouble) Doc() string  { return "misbehaves" }
func (trouble) Params() []steps.Param {
	return []steps.Param{
		{Name: "mode", Type: steps.String, Choices: []string{"fail", "bad_input", "attr", "panic", "block", "hook"}},
		{Name: "after", Type: steps.RefList, Optional: true},
	}
}
func (trouble) Prepare(v steps.Values) (any, error) { return v, nil }
func (trouble) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("trouble")
	switch cfg.(steps.Values).Str("mode") {
	case "fail":
		return nil, fmt.Errorf("told to fail")
	case "bad_input":
		return nil, steps.BadInputf("data.txt:3: told the data are bad")
	case "attr":
		return nil, steps.Attrf("mode", "told the setting does not suit the data")
	case "panic":
		var m map[string]int
		m["x"] = 1 // a deliberate nil-map panic
	case "hook":
		troubleHook()
		return toyNum(1), nil
	}
	<-ctx.Done()
	return nil, ctx.Err()
}

// lookup reads a catalogue row: parallax (required) plus teff when with_teff is set, and
// adds a measured offset.
type lookup struct{ toyBase }

type lookupConfig struct {
	withTeff bool
	offset   [2]float64
}

func (c lookupConfig) Columns(param string) (required, optional []string) {
	if c.withTeff {
		return []string{"Parallax"}, []string{"teff"}
	}
	return []string{"Parallax"}, nil
}

// toyEstimate is lookup's artifact: a number with an uncertainty and a Monte Carlo error.
type toyEstimate struct{ value, sigma, mc float64 }

func (e toyEstimate) Encode() []byte {
	b := []byte("est1")
	for _, f := range []float64{e.value, e.sigma, e.mc} {
		b = binary.LittleEndian.AppendUint64(b, steps.FloatBits(f))
	}
	return b
}
func (e toyEstimate) Figures() []steps.Figure {
	return []steps.Figure{{Name: "value", Value: e.value, Sigma: e.sigma, MCError: e.mc, Doc: "the toy estimate"}}
}

func (lookup) Decode(b []byte) (steps.Artifact, error) {
	if len(b) != 28 || string(b[:4]) != "est1" {
		return nil, errors.New("not an estimate artifact")
	}
	f := func(i int) float64 { return math.Float64frombits(binary.LittleEndian.Uint64(b[4+8*i:])) }
	return toyEstimate{f(0), f(1), f(2)}, nil
}

func (lookup) Name() string { return "lookup" }
func (lookup) Doc() string  { return "reads a catalogue row" }
func (lookup) Params() []steps.Param {
	return []steps.Param{
		{Name: "row", Type: steps.CatalogueRow},
		{Name: "with_teff", Type: steps.Bool, Default: false},
		{Name: "offset", Type: steps.Measurement, Dim: units.Time, Default: [2]float64{0, 0}},
	}
}
func (lookup) Prepare(v steps.Values) (any, error) {
	return lookupConfig{withTeff: v.Bool("with_teff"), offset: [2]float64(v["offset"].([2]float64))}, nil
}
func (lookup) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("lookup")
	c := cfg.(lookupConfig)
	row := in.Rows["row"]
	plx, ok := row.Get("parallax")
	if !ok {
		return nil, steps.BadInputf("%s: blank", row.Where("parallax"))
	}
	teff, _ := row.Get("teff")
	return toyEstimate{value: plx + teff + c.offset[0] + c.offset[1], sigma: 0.5, mc: 0.03}, nil
}

// judged is the artifact of the judge kind: a number with a caution when it is odd and a
// verdict on its parity.
type judged float64

func (j judged) Encode() []byte {
	return binary.LittleEndian.AppendUint64([]byte("jdg1"), steps.FloatBits(float64(j)))
}
func (j judged) Figures() []steps.Figure {
	return []steps.Figure{{Name: "value", Value: float64(j), Doc: "the judged number"}}
}
func (j judged) odd() bool { return math.Mod(float64(j), 2) == 1 }
func (j judged) Cautions() []string {
	if j.odd() {
		return []string{"the number is odd"}
	}
	return nil
}
func (j judged) Verdicts() []steps.Verdict {
	v := steps.Verdict{Subject: "value", Test: "parity", Verdict: steps.VerdictAgree, Threshold: "even; a toy rule", Reason: "the number is even"}
	if j.odd() {
		v.Verdict, v.Reason = steps.VerdictCaution, "the number is odd"
	}
	return []steps.Verdict{v}
}

// judge passes its input on as a judged number.
type judge struct{ toyBase }

func (judge) Name() string { return "judge" }
func (judge) Doc() string  { return "judges a number" }
func (judge) Params() []steps.Param {
	return []steps.Param{{Name: "input", Type: steps.Ref}}
}
func (judge) Prepare(v steps.Values) (any, error) { return v, nil }
func (judge) Decode(b []byte) (steps.Artifact, error) {
	if len(b) != 12 || string(b[:4]) != "jdg1" {
		return nil, errors.New("not a judged artifact")
	}
	return judged(math.Float64frombits(binary.LittleEndian.Uint64(b[4:]))), nil
}
func (judge) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("judge")
	return judged(in.Ref("input").Figures()[0].Value), nil
}

func toyRegistry() steps.Registry {
	r, err := steps.NewRegistry(source{}, combine{}, floor{}, noisy{}, trouble{}, lookup{}, judge{})
	if err != nil {
		panic(err)
	}
	return r
}
