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

type sourceConfig struct {
	Files steps.Files `step:"files,required"`
	Scale float64     `step:"scale" default:"1"`
	Label *string     `step:"label" choices:"alpha|beta"`
}

func (source) Check(c *sourceConfig) error {
	if c.Scale == 0 {
		return steps.Attrf("scale", "must not be zero")
	}
	return nil
}
func (source) Run(ctx context.Context, cfg *sourceConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
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
	return toyNum(sum * cfg.Scale), nil
}

// combine adds its inputs and an offset given as a time.
type combine struct{ toyBase }

func (combine) Name() string { return "combine" }
func (combine) Doc() string  { return "adds inputs" }

type combineConfig struct {
	Inputs []steps.Ref `step:"inputs,required" accepts:"source,combine,floor,noisy"`
	Offset float64     `step:"offset" dim:"time" default:"0 d"`
	Window *[2]float64 `step:"window" dim:"time"`
}

func (combine) Check(*combineConfig) error { return nil }
func (combine) Run(ctx context.Context, cfg *combineConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("combine")
	sum := cfg.Offset
	for _, a := range in.Refs["inputs"] {
		sum += float64(a.(toyNum))
	}
	return toyNum(sum), nil
}

// floor rounds its input down, so different inputs can give an equal result.
type floor struct{ toyBase }

func (floor) Name() string { return "floor" }
func (floor) Doc() string  { return "rounds down" }

// oneInput is the configuration of a toy kind that reads one step of the toy kinds that
// give a number.
type oneInput struct {
	Input steps.Ref `step:"input,required"`
}

type floorConfig struct {
	Input steps.Ref `step:"input,required" accepts:"source,combine"`
}

func (floor) Check(*floorConfig) error { return nil }
func (floor) Run(ctx context.Context, cfg *floorConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("floor")
	return toyNum(math.Floor(float64(in.Ref("input").(toyNum)))), nil
}

// mimic scales its input as a source step's settings say, without that step's result.
type mimic struct{ toyBase }

func (mimic) Name() string { return "mimic" }
func (mimic) Doc() string  { return "scales like a source" }

type mimicConfig struct {
	Input steps.Ref         `step:"input,required"`
	Like  steps.SettingsRef `step:"like,required" accepts:"source"`
}

func (mimic) Check(*mimicConfig) error { return nil }
func (mimic) Run(ctx context.Context, cfg *mimicConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("mimic")
	like := in.Settings["like"].(*sourceConfig)
	return toyNum(float64(in.Ref("input").(toyNum)) * like.Scale), nil
}

// tally adds count pieces, piece i being i × scale, each kept in the step's parts; calls
// counts the pieces it computes as "tally-piece".
type tally struct{ toyBase }

func (tally) Name() string { return "tally" }
func (tally) Doc() string  { return "adds pieces" }

type tallyConfig struct {
	Count int     `step:"count,required" reuse:"parts"`
	Scale float64 `step:"scale" default:"1"`
}

func (tally) Check(*tallyConfig) error { return nil }
func (tally) Run(ctx context.Context, cfg *tallyConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	sum := 0.0
	for i := 0; i < cfg.Count; i++ {
		key := binary.LittleEndian.AppendUint64(nil, uint64(i))
		var piece float64
		if b, ok := env.Parts.Get(key); ok && len(b) == 8 {
			piece = math.Float64frombits(binary.LittleEndian.Uint64(b))
		} else {
			calls.add("tally-piece")
			piece = float64(i) * cfg.Scale
			env.Parts.Put(key, binary.LittleEndian.AppendUint64(nil, math.Float64bits(piece)))
		}
		sum += piece
	}
	return toyNum(sum), nil
}

// noisy adds a number drawn from its seed.
type noisy struct{ toyBase }

func (noisy) Name() string          { return "noisy" }
func (noisy) Doc() string           { return "adds seeded noise" }
func (noisy) Random() bool          { return true }
func (noisy) Check(*oneInput) error { return nil }
func (noisy) Run(ctx context.Context, cfg *oneInput, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("noisy")
	return toyNum(float64(in.Ref("input").(toyNum)) + float64(env.Seed%1000)/1000), nil
}

// trouble fails (as a program fault, on bad input or on its own attribute), finds nothing
// to do, panics, waits for cancellation, or calls troubleHook and gives a number, as told.
type trouble struct{ toyBase }

// troubleHook is what a trouble step in mode "hook" calls before giving its number.
var troubleHook func()

func (trouble) Name() string { return "trouble" }
func (trouble) Doc() string  { return "misbehaves" }

type troubleConfig struct {
	Mode  string      `step:"mode,required" choices:"fail|bad_input|attr|panic|block|hook|nothing"`
	After []steps.Ref `step:"after"`
}

func (trouble) Check(*troubleConfig) error { return nil }
func (trouble) Run(ctx context.Context, cfg *troubleConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("trouble")
	switch cfg.Mode {
	case "fail":
		return nil, fmt.Errorf("told to fail")
	case "bad_input":
		return nil, steps.BadInputf("data.txt:3: told the data are bad")
	case "attr":
		return nil, steps.Attrf("mode", "told the setting does not suit the data")
	case "nothing":
		return nil, steps.Nothing("told there is nothing to work on")
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
	Row      steps.RowRef      `step:"row,required"`
	WithTeff bool              `step:"with_teff" default:"false"`
	Offset   steps.Measurement `step:"offset" dim:"time" default:"0 ± 0 d"`
}

func (c *lookupConfig) Columns(param string) (required, optional []string) {
	if c.WithTeff {
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

func (lookup) Name() string              { return "lookup" }
func (lookup) Doc() string               { return "reads a catalogue row" }
func (lookup) Check(*lookupConfig) error { return nil }
func (lookup) Run(ctx context.Context, c *lookupConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("lookup")
	row := in.Rows["row"]
	plx, ok := row.Get("parallax")
	if !ok {
		return nil, steps.BadInputf("%s: blank", row.Where("parallax"))
	}
	teff, _ := row.Get("teff")
	return toyEstimate{value: plx + teff + c.Offset.Value + c.Offset.Sigma, sigma: 0.5, mc: 0.03}, nil
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

func (judge) Name() string          { return "judge" }
func (judge) Doc() string           { return "judges a number" }
func (judge) Check(*oneInput) error { return nil }
func (judge) Decode(b []byte) (steps.Artifact, error) {
	if len(b) != 12 || string(b[:4]) != "jdg1" {
		return nil, errors.New("not a judged artifact")
	}
	return judged(math.Float64frombits(binary.LittleEndian.Uint64(b[4:]))), nil
}
func (judge) Run(ctx context.Context, cfg *oneInput, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	calls.add("judge")
	return judged(in.Ref("input").Figures()[0].Value), nil
}

func toyRegistry() steps.Registry {
	r, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[combineConfig](combine{}),
		steps.Define[floorConfig](floor{}), steps.Define[oneInput](noisy{}), steps.Define[troubleConfig](trouble{}),
		steps.Define[lookupConfig](lookup{}), steps.Define[oneInput](judge{}), steps.Define[mimicConfig](mimic{}), steps.Define[tallyConfig](tally{}))
	if err != nil {
		panic(err)
	}
	return r
}
