package steps

import (
	"fmt"
	"math"
	"sort"

	"dipline/steps/units"
)

// Type is the type of a parameter as written in a workflow file.
type Type int

// The parameter types. Quantities are strings with a unit ("18 h"), so every physical
// number in a workflow carries its unit in the same way.
const (
	Number        Type = iota // a plain number
	Integer                   // a whole number
	String                    // a string, optionally one of Choices
	Bool                      // true or false
	Quantity                  // a string "value unit" of the parameter's Dimension
	QuantityRange             // a list of two quantities, low then high
	StringList                // a list of strings
	StringMap                 // an object of string values, e.g. column names
	FileList                  // a list of paths (or one path) read by the engine
	Ref                       // a reference to another step, kind.label
	RefList                   // a list of references
	Measurement               // a string "value ± sigma unit" of the parameter's Dimension
	CatalogueRow              // a row of a catalogue block, catalogue.label["id"]
)

func (t Type) String() string {
	return [...]string{"number", "whole number", "string", "bool", "quantity", "quantity range",
		"list of strings", "object of strings", "list of files", "step reference", "list of step references", "measurement", "catalogue row"}[t]
}

// Param describes one attribute of a step block.
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
	// Default is applied when the attribute is absent; nil means required, unless Optional.
	// Its Go type is that of the decoded value (see Values).
	Default any
	// Optional attributes may be absent with no default.
	Optional bool
}

// Values are the decoded attributes of one block, defaults applied, by name. The Go types:
// Number, Quantity → float64 (quantities in the dimension's base unit); Integer → int64;
// String → string; Bool → bool; QuantityRange → [2]float64; StringList → []string;
// StringMap → map[string]string; FileList → []string (paths as written); Ref → string
// (the address); RefList → []string; Measurement → [2]float64 (value, sigma in the base
// unit); CatalogueRow → string (the row's address as written, catalogue.label["id"]; the
// engine hands the row itself to Run in Inputs.Rows).
type Values map[string]any

// Has reports whether the attribute was given or has a default.
func (v Values) Has(name string) bool { _, ok := v[name]; return ok }

// Float returns a Number or Quantity.
func (v Values) Float(name string) float64 { f, _ := v[name].(float64); return f }

// Int returns an Integer.
func (v Values) Int(name string) int64 { i, _ := v[name].(int64); return i }

// Str returns a String or Ref.
func (v Values) Str(name string) string { s, _ := v[name].(string); return s }

// Bool returns a Bool.
func (v Values) Bool(name string) bool { b, _ := v[name].(bool); return b }

// Range returns a QuantityRange.
func (v Values) Range(name string) [2]float64 { r, _ := v[name].([2]float64); return r }

// Measurement returns a Measurement's value and sigma.
func (v Values) Measurement(name string) (value, sigma float64) {
	m, _ := v[name].([2]float64)
	return m[0], m[1]
}

// Strs returns a StringList, FileList or RefList.
func (v Values) Strs(name string) []string { s, _ := v[name].([]string); return s }

// Map returns a StringMap.
func (v Values) Map(name string) map[string]string { m, _ := v[name].(map[string]string); return m }

// CheckDefault verifies that a parameter's default has the Go type its Type decodes to;
// the registry calls it so that a mistyped default fails at start-up in tests, not at a user.
func (p Param) CheckDefault() error {
	if p.Default == nil {
		return nil
	}
	ok := false
	switch p.Type {
	case Number, Quantity:
		_, ok = p.Default.(float64)
	case Integer:
		_, ok = p.Default.(int64)
	case String, Ref, CatalogueRow:
		_, ok = p.Default.(string)
	case Bool:
		_, ok = p.Default.(bool)
	case QuantityRange, Measurement:
		_, ok = p.Default.([2]float64)
	case StringList, FileList, RefList:
		_, ok = p.Default.([]string)
	case StringMap:
		_, ok = p.Default.(map[string]string)
	}
	if !ok {
		return fmt.Errorf("parameter %q: default %T does not match type %s", p.Name, p.Default, p.Type)
	}
	return nil
}

// Registry maps block types to kinds.
type Registry map[string]Kind

// NewRegistry checks the kinds' schemas and indexes them by name.
func NewRegistry(kinds ...Kind) (Registry, error) {
	r := Registry{}
	for _, k := range kinds {
		if _, dup := r[k.Name()]; dup {
			return nil, fmt.Errorf("step kind %q registered twice", k.Name())
		}
		seen := map[string]bool{}
		for _, p := range k.Params() {
			if seen[p.Name] {
				return nil, fmt.Errorf("step kind %q: parameter %q declared twice", k.Name(), p.Name)
			}
			seen[p.Name] = true
			if err := p.CheckDefault(); err != nil {
				return nil, fmt.Errorf("step kind %q: %w", k.Name(), err)
			}
			if (p.Type == Quantity || p.Type == QuantityRange || p.Type == Measurement) && p.Dim == nil {
				return nil, fmt.Errorf("step kind %q: quantity %q has no dimension", k.Name(), p.Name)
			}
		}
		r[k.Name()] = k
	}
	return r, nil
}

// Names returns the registered block types in order.
func (r Registry) Names() []string {
	n := make([]string, 0, len(r))
	for k := range r {
		n = append(n, k)
	}
	sort.Strings(n)
	return n
}

// canonicalNaN is the one NaN bit pattern hashed and encoded.
const canonicalNaN = 0x7ff8000000000001

// FloatBits returns the canonical bits of v for keys and encodings: every NaN as one
// pattern and −0 as +0, so that equal values hash and encode equally.
func FloatBits(v float64) uint64 {
	switch {
	case math.IsNaN(v):
		return canonicalNaN
	case v == 0:
		return 0
	}
	return math.Float64bits(v)
}
