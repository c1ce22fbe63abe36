package steps

import (
	"fmt"
	"math"
	"sort"
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
	StepRef                   // a reference to another step, kind.label
	StepRefList               // a list of references
	Measured                  // a string "value ± sigma unit" of the parameter's Dimension
	CatalogueRow              // a row of a catalogue block, catalogue.label["id"]
	StepSettings              // another step's settings, kind.label: its configuration, not its result
)

func (t Type) String() string {
	return [...]string{"number", "whole number", "string", "bool", "quantity", "quantity range",
		"list of strings", "object of strings", "list of files", "step reference", "list of step references", "measurement", "catalogue row", "step's settings"}[t]
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
		if err := k.Schema().err; err != nil {
			return nil, fmt.Errorf("step kind %q: %w", k.Name(), err)
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
