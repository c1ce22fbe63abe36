package steps

import (
	"fmt"
	"math"
	"reflect"
	"sort"
	"strconv"
	"strings"
)

// Written is an attribute's value as the workflow writes it, before its parameter type
// reads it. The engine builds it from the file (it knows the syntax; this package does
// not), and a default's tag is read into one, so that a default and a written value go
// through the same code.
type Written struct {
	Kind WrittenKind
	// Num is a number's value and Text the number as written, for messages.
	Num  float64
	Text string
	// Str is a string, or a reference's target as written (detrend.quiet,
	// catalogue.nearby["FW-3318"]).
	Str  string
	Bool bool
	// List holds a list's elements; Object an object's members.
	List   []Written
	Object map[string]Written
}

// WrittenKind says what was written.
type WrittenKind int

// What a workflow can write.
const (
	WrittenNull WrittenKind = iota
	WrittenNumber
	WrittenString
	WrittenBool
	WrittenList
	WrittenObject
	WrittenRef // a step reference, kind.label
	WrittenRow // a catalogue row, catalogue.label["id"]
)

// describe names a written value for messages: "the number 12", "a list".
func (w Written) describe() string {
	switch w.Kind {
	case WrittenNumber:
		return "the number " + w.Text
	case WrittenString:
		return "the string " + strconv.Quote(w.Str)
	case WrittenBool:
		return "the value " + strconv.FormatBool(w.Bool)
	case WrittenList:
		return "a list"
	case WrittenObject:
		return "an object"
	case WrittenRef:
		return "the step reference " + w.Str
	case WrittenRow:
		return "the catalogue row " + w.Str
	}
	return "null"
}

// KeyWriter receives a configuration's canonical encoding; the engine implements it.
// Ref, file and row parameters are the engine's inputs: their encoding is what the engine
// knows of them (the referenced results' keys, the files' digests, the row's values), asked
// for by parameter name.
type KeyWriter interface {
	Str(s string)
	U64(v uint64)
	F64(v float64)
	// Inputs appends what the engine knows of a reference, file or row parameter.
	Inputs(param string) error
}

// paramType is the one implementation of a parameter type: how a written value (or a
// default's tag) is read, how the value enters a step key, and how it is shown.
type paramType interface {
	// goType is the Go type read returns; a field holds it or a type convertible to it.
	goType() reflect.Type
	// fromTag reads a default as written in a `default` tag.
	fromTag(text string) (Written, error)
	// read turns a written value into the field's value, or says in a sentence what the
	// attribute takes.
	read(p *Param, w Written) (any, error)
	// key encodes a present value into a step key.
	key(k KeyWriter, p *Param, v any) error
	// render writes a present value for people.
	render(p *Param, v any) string
	// takes says in words what the attribute takes, for the kinds listing.
	takes(p *Param) string
}

// Takes says in words what the attribute takes: "a time with its unit (s, min, h, d, yr)".
func (p Param) Takes() string { return p.Type.impl().takes(&p) }

// DefaultAsWritten is the default as it would stand in a workflow: numbers and true or
// false bare, strings quoted, ranges and lists in brackets; "" when there is none.
func (p Param) DefaultAsWritten() string {
	if p.Default == "" {
		return ""
	}
	w, err := p.Type.impl().fromTag(p.Default)
	if err != nil {
		return p.Default
	}
	return w.hcl()
}

// hcl writes a written value as a workflow writes it.
func (w Written) hcl() string {
	switch w.Kind {
	case WrittenNumber:
		return w.Text
	case WrittenBool:
		return strconv.FormatBool(w.Bool)
	case WrittenString:
		return strconv.Quote(w.Str)
	case WrittenList:
		parts := make([]string, len(w.List))
		for i, e := range w.List {
			parts[i] = e.hcl()
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case WrittenRef, WrittenRow:
		return w.Str
	}
	return ""
}

// unitsOf lists a dimension's units for messages: " (s, min, h, d, yr)".
func unitsOf(p *Param) string { return " (" + strings.Join(p.Dim.Names(), ", ") + ")" }

// stepsAccepted names the steps a reference may point at.
func stepsAccepted(p *Param) string {
	if len(p.Kinds) == 0 {
		return "any step"
	}
	return "a " + strings.Join(p.Kinds, " or ") + " step"
}

// impl returns the implementation of a parameter type.
func (t Type) impl() paramType { return paramTypes[t] }

// paramTypes holds one implementation per parameter type, by its Type (whose number is
// part of every step key: never renumber).
var paramTypes = [...]paramType{
	Number:        numberType{},
	Integer:       integerType{},
	String:        stringType{},
	Bool:          boolType{},
	Quantity:      quantityType{},
	QuantityRange: rangeType{},
	StringList:    listType{},
	StringMap:     objectType{},
	FileList:      filesType{},
	StepRef:       refType{},
	StepRefList:   refListType{},
	Measured:      measurementType{},
	CatalogueRow:  rowType{},
	StepSettings:  settingsType{},
}

// wrong says what an attribute takes and what was written instead.
func wrong(p *Param, takes string, w Written) error {
	return fmt.Errorf("%s takes %s; this is %s", p.Name, takes, w.describe())
}

// plainTag reads a default written as a string (a quantity, a measurement, a choice).
func plainTag(text string) (Written, error) {
	return Written{Kind: WrittenString, Str: text}, nil
}

// noTag refuses a default for a type that cannot have one.
func noTag(string) (Written, error) {
	return Written{}, fmt.Errorf("this type of parameter takes no default")
}

// listTag reads a default list written "a, b".
func listTag(text string) (Written, error) {
	w := Written{Kind: WrittenList}
	for _, s := range strings.Split(text, ",") {
		w.List = append(w.List, Written{Kind: WrittenString, Str: strings.TrimSpace(s)})
	}
	return w, nil
}

// numberTag reads a default number.
func numberTag(text string) (Written, error) {
	f, err := strconv.ParseFloat(text, 64)
	if err != nil {
		return Written{}, fmt.Errorf("not a number")
	}
	return Written{Kind: WrittenNumber, Num: f, Text: text}, nil
}

type numberType struct{}

func (numberType) takes(*Param) string { return "a number" }

func (numberType) goType() reflect.Type                   { return reflect.TypeFor[float64]() }
func (numberType) fromTag(t string) (Written, error)      { return numberTag(t) }
func (numberType) render(_ *Param, v any) string          { return formatNumber(v.(float64)) }
func (numberType) key(k KeyWriter, _ *Param, v any) error { k.F64(v.(float64)); return nil }
func (numberType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenNumber {
		return nil, wrong(p, "a number", w)
	}
	return w.Num, nil
}

type integerType struct{}

func (integerType) takes(*Param) string { return "a whole number" }

func (integerType) goType() reflect.Type              { return reflect.TypeFor[int]() }
func (integerType) fromTag(t string) (Written, error) { return numberTag(t) }
func (integerType) render(_ *Param, v any) string     { return strconv.Itoa(v.(int)) }
func (integerType) key(k KeyWriter, _ *Param, v any) error {
	k.U64(uint64(int64(v.(int))))
	return nil
}
func (integerType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenNumber || w.Num != math.Trunc(w.Num) || math.Abs(w.Num) > 1<<62 {
		return nil, wrong(p, "a whole number", w)
	}
	return int(w.Num), nil
}

type stringType struct{}

func (stringType) takes(p *Param) string {
	if len(p.Choices) > 0 {
		return "one of " + quoteList(p.Choices)
	}
	return "a string"
}

func (stringType) goType() reflect.Type              { return reflect.TypeFor[string]() }
func (stringType) fromTag(t string) (Written, error) { return plainTag(t) }
func (stringType) render(_ *Param, v any) string     { return strconv.Quote(v.(string)) }
func (stringType) key(k KeyWriter, _ *Param, v any) error {
	k.Str(v.(string))
	return nil
}
func (stringType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenString {
		return nil, wrong(p, "a string", w)
	}
	if len(p.Choices) > 0 && !contains(p.Choices, w.Str) {
		return nil, fmt.Errorf("%s is %q, which is not one of %s", p.Name, w.Str, quoteList(p.Choices))
	}
	return w.Str, nil
}

type boolType struct{}

func (boolType) takes(*Param) string { return "true or false" }

func (boolType) goType() reflect.Type          { return reflect.TypeFor[bool]() }
func (boolType) render(_ *Param, v any) string { return strconv.FormatBool(v.(bool)) }
func (boolType) fromTag(t string) (Written, error) {
	b, err := strconv.ParseBool(t)
	return Written{Kind: WrittenBool, Bool: b}, err
}
func (boolType) key(k KeyWriter, _ *Param, v any) error {
	if v.(bool) {
		k.U64(1)
	} else {
		k.U64(0)
	}
	return nil
}
func (boolType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenBool {
		return nil, wrong(p, "true or false", w)
	}
	return w.Bool, nil
}

type quantityType struct{}

func (quantityType) takes(p *Param) string { return "a " + p.Dim.Name + " with its unit" + unitsOf(p) }

func (quantityType) goType() reflect.Type              { return reflect.TypeFor[float64]() }
func (quantityType) fromTag(t string) (Written, error) { return plainTag(t) }
func (quantityType) render(p *Param, v any) string {
	return formatNumber(v.(float64)) + " " + p.Dim.Base
}
func (quantityType) key(k KeyWriter, _ *Param, v any) error {
	k.F64(v.(float64))
	return nil
}
func (quantityType) read(p *Param, w Written) (any, error) {
	if w.Kind == WrittenNumber {
		return nil, fmt.Errorf("%s is a %s: write it as a string with its unit, e.g. \"%s %s\" (units: %s)",
			p.Name, p.Dim.Name, w.Text, p.Dim.Base, strings.Join(p.Dim.Names(), ", "))
	}
	if w.Kind != WrittenString {
		return nil, wrong(p, "a "+p.Dim.Name+" with its unit, e.g. \"1 "+p.Dim.Base+"\"", w)
	}
	f, err := p.Dim.Parse(w.Str)
	if err != nil {
		return nil, fmt.Errorf("in %s, %w", p.Name, err)
	}
	return f, nil
}

type rangeType struct{}

func (rangeType) takes(p *Param) string { return "two " + p.Dim.Name + "s, low then high" + unitsOf(p) }

func (rangeType) goType() reflect.Type              { return reflect.TypeFor[[2]float64]() }
func (rangeType) fromTag(t string) (Written, error) { return listTag(t) }
func (rangeType) render(p *Param, v any) string {
	r := v.([2]float64)
	return "[" + formatNumber(r[0]) + " " + p.Dim.Base + ", " + formatNumber(r[1]) + " " + p.Dim.Base + "]"
}
func (rangeType) key(k KeyWriter, _ *Param, v any) error {
	r := v.([2]float64)
	k.F64(r[0])
	k.F64(r[1])
	return nil
}
func (rangeType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenList || len(w.List) != 2 {
		return nil, wrong(p, "a list of two "+p.Dim.Name+"s, low then high, e.g. [\"0.5 d\", \"20 d\"]", w)
	}
	var out [2]float64
	for i, e := range w.List {
		if e.Kind != WrittenString {
			return nil, wrong(p, "a list of two "+p.Dim.Name+"s, low then high, e.g. [\"0.5 d\", \"20 d\"]", w)
		}
		f, err := p.Dim.Parse(e.Str)
		if err != nil {
			return nil, fmt.Errorf("in %s, %w", p.Name, err)
		}
		out[i] = f
	}
	if !(out[0] < out[1]) {
		return nil, fmt.Errorf("%s: the low end must be below the high end", p.Name)
	}
	return out, nil
}

type measurementType struct{}

func (measurementType) takes(p *Param) string {
	return "a " + p.Dim.Name + " ± its uncertainty, with its unit" + unitsOf(p)
}

func (measurementType) goType() reflect.Type              { return reflect.TypeFor[Measurement]() }
func (measurementType) fromTag(t string) (Written, error) { return plainTag(t) }
func (measurementType) render(p *Param, v any) string {
	m := v.(Measurement)
	return formatNumber(m.Value) + " ± " + formatNumber(m.Sigma) + " " + p.Dim.Base
}
func (measurementType) key(k KeyWriter, _ *Param, v any) error {
	m := v.(Measurement)
	k.F64(m.Value)
	k.F64(m.Sigma)
	return nil
}
func (measurementType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenString {
		return nil, wrong(p, "a "+p.Dim.Name+" with its uncertainty and unit, e.g. \"1.0 ± 0.1 "+p.Dim.Base+"\"", w)
	}
	val, sigma, err := p.Dim.ParseMeasurement(w.Str)
	if err != nil {
		return nil, fmt.Errorf("in %s, %w", p.Name, err)
	}
	return Measurement{Value: val, Sigma: sigma}, nil
}

// strings reads a list of strings.
func stringsOf(w Written) ([]string, bool) {
	if w.Kind != WrittenList {
		return nil, false
	}
	out := []string{}
	for _, e := range w.List {
		if e.Kind != WrittenString {
			return nil, false
		}
		out = append(out, e.Str)
	}
	return out, true
}

// keyStrings encodes a list of strings.
func keyStrings(k KeyWriter, list []string) {
	k.U64(uint64(len(list)))
	for _, x := range list {
		k.Str(x)
	}
}

// renderList writes a list, each element quoted or not.
func renderList(list []string, quote bool) string {
	q := make([]string, len(list))
	for i, s := range list {
		q[i] = s
		if quote {
			q[i] = strconv.Quote(s)
		}
	}
	return "[" + strings.Join(q, ", ") + "]"
}

type listType struct{}

func (listType) takes(*Param) string { return "a list of strings" }

func (listType) goType() reflect.Type                   { return reflect.TypeFor[[]string]() }
func (listType) fromTag(t string) (Written, error)      { return listTag(t) }
func (listType) render(_ *Param, v any) string          { return renderList(v.([]string), true) }
func (listType) key(k KeyWriter, _ *Param, v any) error { keyStrings(k, v.([]string)); return nil }
func (listType) read(p *Param, w Written) (any, error) {
	list, ok := stringsOf(w)
	if !ok {
		return nil, wrong(p, "a list of strings", w)
	}
	return list, nil
}

type objectType struct{}

func (objectType) takes(*Param) string { return "an object of strings" }

func (objectType) goType() reflect.Type              { return reflect.TypeFor[map[string]string]() }
func (objectType) fromTag(t string) (Written, error) { return noTag(t) }
func (objectType) render(_ *Param, v any) string {
	m := v.(map[string]string)
	keys := sortedKeys(m)
	parts := make([]string, len(keys))
	for i, k := range keys {
		parts[i] = k + " = " + strconv.Quote(m[k])
	}
	return "{ " + strings.Join(parts, ", ") + " }"
}
func (objectType) key(k KeyWriter, _ *Param, v any) error {
	m := v.(map[string]string)
	keys := sortedKeys(m)
	k.U64(uint64(len(keys)))
	for _, x := range keys {
		k.Str(x)
		k.Str(m[x])
	}
	return nil
}
func (objectType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenObject {
		return nil, wrong(p, "an object of strings, e.g. { time = \"BJD\" }", w)
	}
	m := map[string]string{}
	for k, e := range w.Object {
		if e.Kind != WrittenString {
			return nil, wrong(p, "an object whose values are strings", w)
		}
		m[k] = e.Str
	}
	return m, nil
}

type filesType struct{}

func (filesType) takes(*Param) string { return "a file, or a list of files" }

func (filesType) goType() reflect.Type                   { return reflect.TypeFor[Files]() }
func (filesType) fromTag(t string) (Written, error)      { return noTag(t) }
func (filesType) render(_ *Param, v any) string          { return renderList(v.(Files), true) }
func (filesType) key(k KeyWriter, p *Param, _ any) error { return k.Inputs(p.Name) }
func (filesType) read(p *Param, w Written) (any, error) {
	list, ok := stringsOf(w)
	if !ok {
		if w.Kind != WrittenString {
			return nil, wrong(p, "a file path or a list of them", w)
		}
		list = []string{w.Str}
	}
	if len(list) == 0 {
		return nil, fmt.Errorf("%s names no file", p.Name)
	}
	return Files(list), nil
}

type refType struct{}

func (refType) takes(p *Param) string { return stepsAccepted(p) + " (kind.label)" }

func (refType) goType() reflect.Type                   { return reflect.TypeFor[Ref]() }
func (refType) fromTag(t string) (Written, error)      { return noTag(t) }
func (refType) render(_ *Param, v any) string          { return string(v.(Ref)) }
func (refType) key(k KeyWriter, p *Param, _ any) error { return k.Inputs(p.Name) }
func (refType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenRef {
		return nil, wrong(p, "a step, written kind.label without quotes", w)
	}
	return Ref(w.Str), nil
}

type refListType struct{}

func (refListType) takes(p *Param) string {
	return "a list, each " + stepsAccepted(p) + " (kind.label)"
}

func (refListType) goType() reflect.Type                   { return reflect.TypeFor[[]Ref]() }
func (refListType) fromTag(t string) (Written, error)      { return noTag(t) }
func (refListType) key(k KeyWriter, p *Param, _ any) error { return k.Inputs(p.Name) }
func (refListType) render(_ *Param, v any) string {
	refs := v.([]Ref)
	s := make([]string, len(refs))
	for i, r := range refs {
		s[i] = string(r)
	}
	return renderList(s, false)
}
func (refListType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenList {
		return nil, wrong(p, "a list of steps, each kind.label", w)
	}
	out := []Ref{}
	for _, e := range w.List {
		if e.Kind != WrittenRef {
			return nil, wrong(p, "a list of steps, each kind.label", w)
		}
		out = append(out, Ref(e.Str))
	}
	return out, nil
}

type settingsType struct{}

func (settingsType) takes(p *Param) string {
	return "the settings of " + stepsAccepted(p) + " (kind.label)"
}

func (settingsType) goType() reflect.Type                   { return reflect.TypeFor[SettingsRef]() }
func (settingsType) fromTag(t string) (Written, error)      { return noTag(t) }
func (settingsType) render(_ *Param, v any) string          { return string(v.(SettingsRef)) }
func (settingsType) key(k KeyWriter, p *Param, _ any) error { return k.Inputs(p.Name) }
func (settingsType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenRef {
		return nil, wrong(p, "a step whose settings it uses, written kind.label without quotes", w)
	}
	return SettingsRef(w.Str), nil
}

type rowType struct{}

func (rowType) takes(*Param) string { return "a catalogue row, catalogue.label[\"id\"]" }

func (rowType) goType() reflect.Type                   { return reflect.TypeFor[RowRef]() }
func (rowType) fromTag(t string) (Written, error)      { return noTag(t) }
func (rowType) render(_ *Param, v any) string          { return string(v.(RowRef)) }
func (rowType) key(k KeyWriter, p *Param, _ any) error { return k.Inputs(p.Name) }
func (rowType) read(p *Param, w Written) (any, error) {
	if w.Kind != WrittenRow {
		return nil, wrong(p, "a catalogue row, written catalogue.label[\"id\"]", w)
	}
	return RowRef(w.Str), nil
}

func sortedKeys(m map[string]string) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func quoteList(list []string) string {
	q := make([]string, len(list))
	for i, s := range list {
		q[i] = strconv.Quote(s)
	}
	return strings.Join(q, ", ")
}
