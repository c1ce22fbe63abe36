package steps

import (
	"context"
	"math"
	"strings"
	"testing"

	"dipline/steps/units"
)

// sample is a configuration with one parameter of each kind a kind may declare.
type sample struct {
	Source  Ref               `step:"source,required" accepts:"photometry" doc:"what to read"`
	Span    float64           `step:"span" dim:"time" default:"12 h" doc:"a window"`
	Periods [2]float64        `step:"periods" dim:"time" default:"0.5 d, 20 d" doc:"a range"`
	Density float64           `step:"density" dim:"density" default:"1 rho_sun" doc:"a density"`
	Count   int               `step:"count" default:"3" doc:"a count"`
	Mode    string            `step:"mode" default:"fast" choices:"fast|slow" doc:"a choice"`
	On      bool              `step:"on" default:"true" doc:"a switch"`
	Teff    *Measurement      `step:"teff" dim:"temperature" doc:"a measurement"`
	Zero    *float64          `step:"zero" doc:"a number that may be absent"`
	Names   []string          `step:"names" doc:"a list"`
	Columns map[string]string `step:"columns" doc:"an object"`
	Files   Files             `step:"files" doc:"files"`
	Row     *RowRef           `step:"row" doc:"a catalogue row"`
	derived float64
}

type sampleKind struct{}

func (sampleKind) Name() string                    { return "sample" }
func (sampleKind) Version() int                    { return 1 }
func (sampleKind) Doc() string                     { return "a kind for tests" }
func (sampleKind) Random() bool                    { return false }
func (sampleKind) Decode([]byte) (Artifact, error) { return nil, nil }
func (sampleKind) Check(c *sample) error {
	c.derived = c.Span * 2
	return nil
}
func (sampleKind) Run(context.Context, *sample, Inputs, Env) (Artifact, error) { return nil, nil }

func TestDefaultsAreReadAsAUserWritesThem(t *testing.T) {
	k := Define[sample](sampleKind{})
	if _, err := NewRegistry(k); err != nil {
		t.Fatal(err)
	}
	cfg, err := k.Schema().New()
	if err != nil {
		t.Fatal(err)
	}
	c := cfg.(*sample)
	// 12 h is half a day; 1 rho_sun is the unit's own size (steps/units).
	if c.Span != 0.5 || c.Periods != [2]float64{0.5, 20} || c.Density != units.Density.Units["rho_sun"] ||
		c.Count != 3 || c.Mode != "fast" || !c.On {
		t.Fatalf("defaults read as %+v", c)
	}
	if c.Teff != nil || c.Zero != nil || c.Names != nil || c.Columns != nil || c.Row != nil {
		t.Fatalf("attributes without a default are not absent: %+v", c)
	}
	t.Run("Check completes the configuration", func(t *testing.T) {
		if err := k.Check(cfg); err != nil || c.derived != 1 {
			t.Fatalf("Check gave %v, derived %v", err, c.derived)
		}
	})
	t.Run("absent and present are told apart, zero or not", func(t *testing.T) {
		if k.Schema().Has(cfg, "zero") {
			t.Fatal("zero is present before it is written")
		}
		p := k.Schema().Param("zero")
		if err := k.Schema().Set(cfg, p, Written{Kind: WrittenNumber, Num: 0, Text: "0"}); err != nil {
			t.Fatal(err)
		}
		if !k.Schema().Has(cfg, "zero") || *c.Zero != 0 {
			t.Fatal("a written 0 is not present")
		}
	})
}

// Malformed configurations: each must be refused when the kind is registered, so the first
// test that registers it fails, never a user.
type (
	noDim struct {
		Span float64 `step:"span" dim:"tme" default:"1 d"`
	}
	badDefault struct {
		Span float64 `step:"span" dim:"time" default:"1 parsec"`
	}
	badChoiceDefault struct {
		Mode string `step:"mode" default:"quick" choices:"fast|slow"`
	}
	optionalNotPointer struct {
		Zero float64 `step:"zero"`
	}
	acceptsOnANumber struct {
		Count int `step:"count" default:"1" accepts:"photometry"`
	}
	twice struct {
		A int `step:"a" default:"1"`
		B int `step:"a" default:"2"`
	}
	badName struct {
		A int `step:"Light-Curve" default:"1"`
	}
	unknownType struct {
		A float32 `step:"a" default:"1"`
	}
	requiredPointer struct {
		A *int `step:"a,required"`
	}
	unknownReuse struct {
		A int `step:"a" default:"1" reuse:"all"`
	}
)

type typedKind[C any] struct{}

func (typedKind[C]) Name() string                                           { return "bad" }
func (typedKind[C]) Version() int                                           { return 1 }
func (typedKind[C]) Doc() string                                            { return "" }
func (typedKind[C]) Random() bool                                           { return false }
func (typedKind[C]) Decode([]byte) (Artifact, error)                        { return nil, nil }
func (typedKind[C]) Check(*C) error                                         { return nil }
func (typedKind[C]) Run(context.Context, *C, Inputs, Env) (Artifact, error) { return nil, nil }

func TestRegistrationRefusesMalformedConfigurations(t *testing.T) {
	for _, tc := range []struct {
		name string
		kind Kind
		want string
	}{
		{"an unknown dimension (a misspelt dim tag)", Define[noDim](typedKind[noDim]{}), "unknown dimension"},
		{"a default in a unit of another dimension", Define[badDefault](typedKind[badDefault]{}), "default"},
		{"a default outside the choices", Define[badChoiceDefault](typedKind[badChoiceDefault]{}), "not one of"},
		{"an optional number that could not be absent", Define[optionalNotPointer](typedKind[optionalNotPointer]{}), "pointer"},
		{"a number that says what step it accepts", Define[acceptsOnANumber](typedKind[acceptsOnANumber]{}), "accepts"},
		{"one name on two fields", Define[twice](typedKind[twice]{}), "declared twice"},
		{"a name that is not snake case", Define[badName](typedKind[badName]{}), "snake case"},
		{"a field of no parameter type", Define[unknownType](typedKind[unknownType]{}), "not a parameter type"},
		{"a required pointer", Define[requiredPointer](typedKind[requiredPointer]{}), "required"},
		{"a reuse tag of no meaning", Define[unknownReuse](typedKind[unknownReuse]{}), "unknown reuse"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := NewRegistry(tc.kind)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("got %v, want an error mentioning %q", err, tc.want)
			}
		})
	}
}

// keyLog records what a configuration writes into a step key.
type keyLog struct{ parts []string }

func (k *keyLog) Str(s string)  { k.parts = append(k.parts, "s:"+s) }
func (k *keyLog) U64(v uint64)  { k.parts = append(k.parts, "u:"+formatNumber(float64(v))) }
func (k *keyLog) F64(v float64) { k.parts = append(k.parts, "f:"+formatNumber(v)) }
func (k *keyLog) Inputs(p string) error {
	k.parts = append(k.parts, "in:"+p)
	return nil
}

func TestTheKeyEncodingIsInNameOrderWithAbsentMarked(t *testing.T) {
	k := Define[sample](sampleKind{})
	cfg, _ := k.Schema().New()
	cfg.(*sample).Source = "photometry.a"
	var log keyLog
	if err := k.Schema().Key(&log, cfg); err != nil {
		t.Fatal(err)
	}
	got := strings.Join(log.parts, " ")
	// Names in byte order; each present value behind its type's tag (Type + 1), each absent
	// one a 0. These tags are part of every stored step key (see Type).
	want := "s:columns u:0 s:count u:2 u:3 s:density u:5 f:" + formatNumber(units.Density.Units["rho_sun"]) +
		" s:files u:0 s:mode u:3 s:fast s:names u:0 s:on u:4 u:1 s:periods u:6 f:0.5 f:20 s:row u:0 s:source u:10 in:source" +
		" s:span u:5 f:0.5 s:teff u:0 s:zero u:0"
	if got != want {
		t.Fatalf("key encoding\n got %s\nwant %s", got, want)
	}
}

func TestRenderingShowsBaseUnitsAndReferencesAsWritten(t *testing.T) {
	k := Define[sample](sampleKind{})
	cfg, _ := k.Schema().New()
	c := cfg.(*sample)
	c.Source = "photometry.a"
	c.Teff = &Measurement{Value: 3400, Sigma: 70}
	got := k.Schema().Render(cfg)
	for name, want := range map[string]string{"span": "0.5 d", "periods": "[0.5 d, 20 d]", "mode": `"fast"`,
		"source": "photometry.a", "teff": "3400 ± 70 K", "on": "true", "count": "3"} {
		if got[name] != want {
			t.Errorf("%s renders as %q, want %q", name, got[name], want)
		}
	}
	if _, ok := got["zero"]; ok {
		t.Error("an absent attribute is rendered")
	}
}

func TestWrittenValuesOfTheWrongTypeAreRefusedInWords(t *testing.T) {
	k := Define[sample](sampleKind{})
	s := k.Schema()
	cfg, _ := s.New()
	for _, tc := range []struct {
		param string
		w     Written
		want  string
	}{
		{"span", Written{Kind: WrittenNumber, Num: 12, Text: "12"}, `write it as a string with its unit, e.g. "12 d"`},
		{"count", Written{Kind: WrittenNumber, Num: 2.5, Text: "2.5"}, "takes a whole number; this is the number 2.5"},
		{"mode", Written{Kind: WrittenString, Str: "quick"}, `"quick", which is not one of "fast", "slow"`},
		{"periods", Written{Kind: WrittenList, List: []Written{{Kind: WrittenString, Str: "20 d"}, {Kind: WrittenString, Str: "1 d"}}}, "low end must be below"},
		{"teff", Written{Kind: WrittenString, Str: "3400 K"}, "no uncertainty"},
		{"source", Written{Kind: WrittenString, Str: "photometry.a"}, "written kind.label"},
		{"on", Written{Kind: WrittenNumber, Num: math.Pi, Text: "3.14"}, "takes true or false"},
	} {
		if err := s.Set(cfg, s.Param(tc.param), tc.w); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: got %v, want %q", tc.param, err, tc.want)
		}
	}
}
