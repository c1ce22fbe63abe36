package steps

import (
	"fmt"
	"reflect"
	"strconv"
	"strings"

	"dipline/steps/units"
)

// A kind's configuration is a struct whose tagged fields are the block's attributes:
//
//	type Config struct {
//		LightCurve steps.Ref `step:"light_curve,required" accepts:"photometry,detrend" doc:"the light curve"`
//		Span       *float64  `step:"span" dim:"time" doc:"full width of the sliding window"`
//		Degree     int       `step:"degree" default:"2" doc:"local polynomial degree"`
//	}
//
// The tags:
//   - step: the attribute's name, then ",required" when the block must write it.
//   - default: the value a block that does not write the attribute gets, as a user writes it
//     ("0.5 d", "2", "true", "0.5 d, 20 d" for a range, "a, b" for a list).
//   - dim: the physical dimension of a quantity, a range or a measurement (units.Named).
//   - accepts: the step kinds a reference may point at, comma-separated (absent: any kind).
//   - choices: the strings a string attribute may take, separated by "|".
//   - doc: what the attribute means, in a sentence.
//
// The Go type of a field gives the attribute's type (see typeOfField): float64 is a number,
// or a quantity held in the dimension's base unit when it has a dim tag; int a whole
// number; string, bool; [2]float64 with a dim tag a range; Measurement; []string; a
// map[string]string object; Files; Ref and []Ref; Row. An attribute that is neither required
// nor defaulted is a pointer (or a list or object, nil when absent), so that "not written"
// stays apart from any value.

// Ref is a reference to another step, written kind.label; the field holds its address.
type Ref string

// Files are the paths of the files an attribute names, as written; the engine reads them
// and hands their bytes to Run in Inputs.Files.
type Files []string

// SettingsRef names another step whose settings this one uses, written kind.label: the
// engine hands that step's checked configuration to Run in Inputs.Settings and puts its
// kind, version and configuration (without that step's own inputs) in this step's key. It
// does not wait for that step or read its result: a step that reruns another's detrend on
// data of its own, say, takes the detrend's settings, not a copy of them.
type SettingsRef string

// Row is a reference to a catalogue row, written catalogue.label["id"]; the field holds it
// as written, and the engine hands the row's values to Run in Inputs.Rows.
type RowRef string

// Measurement is a value with its one-sigma uncertainty, both in the dimension's base unit,
// written "value ± sigma unit".
type Measurement struct{ Value, Sigma float64 }

// Param describes one attribute of a step block, read from one field of its kind's
// configuration struct.
type Param struct {
	Name string
	Type Type
	Doc  string
	// Dim is the physical dimension of a Quantity, QuantityRange or Measurement.
	Dim *units.Dimension
	// Kinds lists the step kinds a Ref or RefList may point at.
	Kinds []string
	// Choices restricts a String.
	Choices []string
	// Default is the value of an attribute not written, as a user writes it; "" for none.
	Default string
	// Required attributes must be written.
	Required bool
	// ChoosesParts marks an attribute that only chooses which pieces of the step's work are
	// made (tag reuse:"parts"): it is in the step key but not in the pieces' keys (Parts).
	ChoosesParts bool

	field []int // the field's index path in the configuration struct
}

// Schema is a configuration struct's parameters, in field order.
type Schema struct {
	typ    reflect.Type
	params []Param
	// err is a malformed tag, reported when the kind is registered.
	err error
}

// Params returns the parameters in field order.
func (s *Schema) Params() []Param { return s.params }

// SchemaOf reads the parameters of the configuration struct C from its field tags, and
// checks that every default reads as its parameter's type. A malformed tag is an error at
// registration, so it fails the first test that registers the kind, never a user.
func SchemaOf[C any]() (*Schema, error) {
	t := reflect.TypeFor[C]()
	if t.Kind() != reflect.Struct {
		return nil, fmt.Errorf("configuration %s is not a struct", t)
	}
	s := &Schema{typ: t}
	seen := map[string]bool{}
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		tag, ok := f.Tag.Lookup("step")
		if !ok {
			continue
		}
		p, err := paramOf(f, tag)
		if err != nil {
			return nil, fmt.Errorf("configuration %s, field %s: %w", t, f.Name, err)
		}
		if seen[p.Name] {
			return nil, fmt.Errorf("configuration %s: parameter %q declared twice", t, p.Name)
		}
		seen[p.Name] = true
		s.params = append(s.params, p)
	}
	return s, nil
}

// paramOf reads one field's tags.
func paramOf(f reflect.StructField, tag string) (Param, error) {
	name, opts, _ := strings.Cut(tag, ",")
	p := Param{Name: name, Doc: f.Tag.Get("doc"), Default: f.Tag.Get("default"), field: f.Index}
	if name == "" || strings.ToLower(name) != name || strings.ContainsAny(name, " .-") {
		return p, fmt.Errorf("parameter name %q: write it in lower-case snake case", name)
	}
	switch opts {
	case "":
	case "required":
		p.Required = true
	default:
		return p, fmt.Errorf("parameter %q: unknown option %q (the only one is required)", name, opts)
	}
	typ, pointer, err := typeOfField(f)
	if err != nil {
		return p, fmt.Errorf("parameter %q: %w", name, err)
	}
	p.Type = typ
	if d := f.Tag.Get("dim"); d != "" {
		if p.Dim = units.Named(d); p.Dim == nil {
			return p, fmt.Errorf("parameter %q: unknown dimension %q (known: %s)", name, d, strings.Join(units.Tags(), ", "))
		}
	}
	if a := f.Tag.Get("accepts"); a != "" {
		p.Kinds = strings.Split(a, ",")
	}
	switch r := f.Tag.Get("reuse"); r {
	case "":
	case "parts":
		p.ChoosesParts = true
	default:
		return p, fmt.Errorf("parameter %q: unknown reuse %q (the only one is parts)", name, r)
	}
	if c := f.Tag.Get("choices"); c != "" {
		p.Choices = strings.Split(c, "|")
	}
	return p, p.check(pointer, f.Type)
}

// check holds a parameter's tags to its type: a dimension exactly where one is needed,
// references that say what they accept, a default that reads, and a pointer (or a list or
// object) for an attribute that may be left out without a default.
func (p Param) check(pointer bool, t reflect.Type) error {
	needsDim := p.Type == Quantity || p.Type == QuantityRange || p.Type == Measured
	switch {
	case needsDim && p.Dim == nil:
		return fmt.Errorf("parameter %q: a %s needs a dim tag", p.Name, p.Type)
	case !needsDim && p.Dim != nil && p.Type != Number:
		return fmt.Errorf("parameter %q: a %s takes no dim tag", p.Name, p.Type)
	case p.Type != StepRef && p.Type != StepRefList && p.Type != StepSettings && len(p.Kinds) > 0:
		return fmt.Errorf("parameter %q: only a reference says what it accepts", p.Name)
	case len(p.Choices) > 0 && p.Type != String:
		return fmt.Errorf("parameter %q: only a string has choices", p.Name)
	case p.Required && p.Default != "":
		return fmt.Errorf("parameter %q: required and defaulted", p.Name)
	case p.Required && pointer:
		return fmt.Errorf("parameter %q: a required attribute is always there; drop the pointer", p.Name)
	case p.Default != "" && pointer:
		return fmt.Errorf("parameter %q: a defaulted attribute is always there; drop the pointer", p.Name)
	}
	nilable := t.Kind() == reflect.Slice || t.Kind() == reflect.Map
	if !p.Required && p.Default == "" && !pointer && !nilable {
		return fmt.Errorf("parameter %q: neither required nor defaulted, so it may be absent: make it a pointer", p.Name)
	}
	if p.Default != "" {
		w, err := p.Type.impl().fromTag(p.Default)
		if err == nil {
			_, err = p.Type.impl().read(&p, w)
		}
		if err != nil {
			return fmt.Errorf("parameter %q: default %q: %w", p.Name, p.Default, err)
		}
	}
	return nil
}

// typeOfField gives the parameter type of a field's Go type, and whether it is a pointer.
func typeOfField(f reflect.StructField) (Type, bool, error) {
	t, pointer := f.Type, false
	if t.Kind() == reflect.Pointer {
		t, pointer = t.Elem(), true
	}
	hasDim := f.Tag.Get("dim") != ""
	switch t {
	case reflect.TypeFor[float64]():
		if hasDim {
			return Quantity, pointer, nil
		}
		return Number, pointer, nil
	case reflect.TypeFor[[2]float64]():
		return QuantityRange, pointer, nil
	case reflect.TypeFor[int]():
		return Integer, pointer, nil
	case reflect.TypeFor[string]():
		return String, pointer, nil
	case reflect.TypeFor[bool]():
		return Bool, pointer, nil
	case reflect.TypeFor[Measurement]():
		return Measured, pointer, nil
	case reflect.TypeFor[Ref]():
		return StepRef, pointer, nil
	case reflect.TypeFor[SettingsRef]():
		return StepSettings, pointer, nil
	case reflect.TypeFor[RowRef]():
		return CatalogueRow, pointer, nil
	}
	if pointer {
		return 0, false, fmt.Errorf("a %s may be absent without a pointer (nil)", t)
	}
	switch t {
	case reflect.TypeFor[[]string]():
		return StringList, false, nil
	case reflect.TypeFor[map[string]string]():
		return StringMap, false, nil
	case reflect.TypeFor[Files]():
		return FileList, false, nil
	case reflect.TypeFor[[]Ref]():
		return StepRefList, false, nil
	}
	return 0, false, fmt.Errorf("type %s is not a parameter type", t)
}

// New returns a pointer to a configuration with every default applied, and every other
// attribute absent.
func (s *Schema) New() (any, error) {
	cfg := reflect.New(s.typ).Interface()
	for i := range s.params {
		p := &s.params[i]
		if p.Default == "" {
			continue
		}
		w, err := p.Type.impl().fromTag(p.Default)
		if err != nil {
			return nil, err
		}
		if err := s.Set(cfg, p, w); err != nil {
			return nil, err
		}
	}
	return cfg, nil
}

// Set reads a written value into the parameter's field of the configuration cfg points at.
// The error says, in a sentence, what the attribute takes.
func (s *Schema) Set(cfg any, p *Param, w Written) error {
	x, err := p.Type.impl().read(p, w)
	if err != nil {
		return err
	}
	f := reflect.ValueOf(cfg).Elem().FieldByIndex(p.field)
	if f.Kind() == reflect.Pointer {
		ptr := reflect.New(f.Type().Elem())
		ptr.Elem().Set(reflect.ValueOf(x).Convert(f.Type().Elem()))
		f.Set(ptr)
		return nil
	}
	f.Set(reflect.ValueOf(x).Convert(f.Type()))
	return nil
}

// Value returns the parameter's value in cfg (a pointer to the configuration struct) in
// the Go type its parameter type reads to, and false when the attribute is absent.
func (p *Param) Value(cfg any) (any, bool) {
	f := reflect.ValueOf(cfg).Elem().FieldByIndex(p.field)
	switch f.Kind() {
	case reflect.Pointer, reflect.Slice, reflect.Map:
		if f.IsNil() {
			return nil, false
		}
	}
	if f.Kind() == reflect.Pointer {
		f = f.Elem()
	}
	return f.Convert(p.Type.impl().goType()).Interface(), true
}

// Key appends the configuration's canonical encoding to a step key: every parameter in
// name order, absent ones marked as such, each present one tagged with its type and encoded
// by it. Attribute order, formatting, comments and writing a default out do not change it.
func (s *Schema) Key(k KeyWriter, cfg any) error { return s.key(k, cfg, false) }

// PartsKey is Key without the attributes that only choose which pieces are made
// (Param.ChoosesParts): what every piece of the step's work depends on.
func (s *Schema) PartsKey(k KeyWriter, cfg any) error { return s.key(k, cfg, true) }

func (s *Schema) key(k KeyWriter, cfg any, parts bool) error {
	for _, p := range s.sorted() {
		if parts && p.ChoosesParts {
			continue
		}
		k.Str(p.Name)
		v, ok := p.Value(cfg)
		if !ok {
			k.U64(0)
			continue
		}
		k.U64(uint64(p.Type) + 1)
		if err := p.Type.impl().key(k, p, v); err != nil {
			return err
		}
	}
	return nil
}

// Render returns each present attribute's value as text for people: quantities in their
// base unit, references as written, files as paths.
func (s *Schema) Render(cfg any) map[string]string {
	out := map[string]string{}
	for i := range s.params {
		p := &s.params[i]
		if v, ok := p.Value(cfg); ok {
			out[p.Name] = p.Type.impl().render(p, v)
		}
	}
	return out
}

// sorted returns the parameters in name order, the order of the key encoding.
func (s *Schema) sorted() []*Param {
	out := make([]*Param, len(s.params))
	for i := range s.params {
		out[i] = &s.params[i]
	}
	for i := 1; i < len(out); i++ {
		for j := i; j > 0 && out[j].Name < out[j-1].Name; j-- {
			out[j], out[j-1] = out[j-1], out[j]
		}
	}
	return out
}

// Has reports whether the named attribute is present in cfg: written, or defaulted.
func (s *Schema) Has(cfg any, name string) bool {
	p := s.Param(name)
	if p == nil {
		return false
	}
	_, ok := p.Value(cfg)
	return ok
}

// Param returns the named parameter, or nil.
func (s *Schema) Param(name string) *Param {
	for i := range s.params {
		if s.params[i].Name == name {
			return &s.params[i]
		}
	}
	return nil
}

// formatNumber writes a number for people: 2460000, not 2.46e+06.
func formatNumber(f float64) string {
	if a := abs(f); a == 0 || (a >= 1e-4 && a < 1e15) {
		return strconv.FormatFloat(f, 'f', -1, 64)
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

func abs(f float64) float64 {
	if f < 0 {
		return -f
	}
	return f
}
