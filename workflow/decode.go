package workflow

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/hashicorp/hcl/v2"
	"github.com/zclconf/go-cty/cty"

	"dipline/steps"
)

// Override replaces one attribute of one step for a what-if run, without editing files:
// `--set search.periodic.oversampling=5`. Overrides are recorded in the run record.
type Override struct {
	Addr  string // kind.label
	Attr  string
	Value string // an HCL expression, e.g. 5, "12 h" or ["1 d", "20 d"]
}

func (o Override) String() string { return o.Addr + "." + o.Attr + "=" + o.Value }

// ParseOverride reads "kind.label.attribute=expression", or, for one value of a catalogue
// row, `catalogue.label["id"].column=number`.
func ParseOverride(s string) (Override, error) {
	lhs, rhs, ok := strings.Cut(s, "=")
	if ok && strings.HasPrefix(strings.TrimSpace(lhs), catalogueBlock+".") {
		addr, col, err := parseRowOverride(strings.TrimSpace(lhs))
		if err != nil {
			return Override{}, fmt.Errorf("--set %q: %v", s, err)
		}
		return Override{Addr: addr, Attr: strings.ToLower(col), Value: strings.TrimSpace(rhs)}, nil
	}
	parts := strings.Split(strings.TrimSpace(lhs), ".")
	if !ok || len(parts) != 3 || parts[0] == "" || parts[1] == "" || parts[2] == "" {
		return Override{}, fmt.Errorf("--set %q: write kind.label.attribute=value, e.g. search.periodic.oversampling=5", s)
	}
	return Override{Addr: parts[0] + "." + parts[1], Attr: parts[2], Value: strings.TrimSpace(rhs)}, nil
}

type override struct {
	Override
	expr hcl.Expression
	used bool
}

func (w *Workflow) parseOverrides(list []Override) hcl.Diagnostics {
	var diags hcl.Diagnostics
	w.overrides = map[string]*override{}
	w.Overrides = list
	for _, o := range list {
		if strings.HasPrefix(o.Addr, catalogueBlock+".") {
			w.overrides[o.Addr+"."+o.Attr] = &override{Override: o}
			continue
		}
		name := "--set " + o.Addr + "." + o.Attr
		expr, d := parseValue([]byte(o.Value), name)
		if d.HasErrors() {
			diags = append(diags, d...)
			continue
		}
		w.overrides[o.Addr+"."+o.Attr] = &override{Override: o, expr: expr}
	}
	return diags
}

func (w *Workflow) checkOverridesUsed() hcl.Diagnostics {
	var diags hcl.Diagnostics
	keys := make([]string, 0, len(w.overrides))
	for k := range w.overrides {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		o := w.overrides[k]
		if o.used {
			continue
		}
		detail := fmt.Sprintf("There is no step %s.", o.Addr)
		if strings.HasPrefix(o.Addr, catalogueBlock+".") {
			detail = fmt.Sprintf("No step reads column %q of %s.", o.Attr, o.Addr)
		} else if s := w.byAddr[o.Addr]; s != nil {
			detail = fmt.Sprintf("A %s step has no attribute %q.%s", s.Kind.Name(), o.Attr, suggest(o.Attr, paramNames(s.Kind)))
		} else {
			detail += suggest(o.Addr, w.addresses())
		}
		diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "Override matches nothing", Detail: detail})
	}
	return diags
}

func paramNames(k steps.Kind) []string {
	var n []string
	for _, p := range k.Params() {
		n = append(n, p.Name)
	}
	return n
}

// decodeStep decodes a step block's attributes against its kind's schema, applying
// defaults and overrides, then lets the kind check and prepare its configuration.
func (w *Workflow) decodeStep(s *Step, body hcl.Body) hcl.Diagnostics {
	params := s.Kind.Params()
	schema := &hcl.BodySchema{}
	for _, p := range params {
		required := p.Default == nil && !p.Optional
		if w.overrides[s.Addr+"."+p.Name] != nil {
			required = false
		}
		schema.Attributes = append(schema.Attributes, hcl.AttributeSchema{Name: p.Name, Required: required})
	}
	content, diags := body.Content(schema)
	if diags.HasErrors() {
		return diags
	}
	s.Values = steps.Values{}
	for _, p := range params {
		var expr hcl.Expression
		if a := content.Attributes[p.Name]; a != nil {
			expr = a.Expr
			s.attrRanges[p.Name] = a.Range
		}
		if o := w.overrides[s.Addr+"."+p.Name]; o != nil {
			o.used = true
			expr = o.expr
			s.attrRanges[p.Name] = o.expr.Range()
		}
		if expr == nil {
			if p.Default != nil {
				s.Values[p.Name] = p.Default
			}
			continue
		}
		v, d := w.decodeParam(s, p, expr)
		diags = append(diags, d...)
		if !d.HasErrors() && v != nil {
			s.Values[p.Name] = v
		}
	}
	if diags.HasErrors() {
		return diags
	}
	cfg, err := s.Kind.Prepare(s.Values)
	if err != nil {
		diags = append(diags, w.stepDiag(s, err))
		return diags
	}
	s.Config = cfg
	return append(diags, w.resolveRows(s)...)
}

// stepDiag turns an error from a kind into a diagnostic at the attribute it names.
func (w *Workflow) stepDiag(s *Step, err error) *hcl.Diagnostic {
	d := &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "Invalid " + s.Kind.Name() + " settings",
		Detail: err.Error(), Subject: s.block.Ptr()}
	if ae, ok := err.(*steps.AttrError); ok {
		d.Detail = fmt.Sprintf("%s: %s", ae.Attr, ae.Msg)
		if r, ok := s.attrRanges[ae.Attr]; ok {
			d.Subject = r.Ptr()
		}
	}
	return d
}

func (w *Workflow) decodeParam(s *Step, p steps.Param, expr hcl.Expression) (any, hcl.Diagnostics) {
	r := expr.Range()
	switch p.Type {
	case steps.Ref:
		addr, d := refAddr(expr)
		if d != nil {
			return nil, hcl.Diagnostics{d}
		}
		s.Refs[p.Name] = []string{addr}
		return addr, nil
	case steps.RefList:
		exprs, diags := hcl.ExprList(expr)
		if diags.HasErrors() {
			return nil, diags
		}
		var addrs []string
		for _, e := range exprs {
			addr, d := refAddr(e)
			if d != nil {
				diags = append(diags, d)
				continue
			}
			addrs = append(addrs, addr)
		}
		s.Refs[p.Name] = addrs
		return addrs, diags
	case steps.CatalogueRow:
		return w.decodeRow(s, p, expr)
	}

	v, diags := expr.Value(nil)
	if diags.HasErrors() {
		for _, d := range diags {
			if d.Summary == "Variables not allowed" {
				d.Detail = "Only step references (kind.label) may name other things, and only in attributes that take a step."
			}
		}
		return nil, diags
	}
	bad := func(want string) (any, hcl.Diagnostics) {
		return nil, hcl.Diagnostics{attrDiag(r, "Wrong type for "+p.Name,
			fmt.Sprintf("%s takes %s; this is %s.", p.Name, want, describe(v)))}
	}
	switch p.Type {
	case steps.Number:
		f, ok := number(v)
		if !ok {
			return bad("a number")
		}
		return f, nil
	case steps.Integer:
		f, ok := number(v)
		if !ok || f != math.Trunc(f) || math.Abs(f) > 1<<62 {
			return bad("a whole number")
		}
		return int64(f), nil
	case steps.Bool:
		if v.IsNull() || v.Type() != cty.Bool {
			return bad("true or false")
		}
		return v.True(), nil
	case steps.String:
		sv, ok := str(v)
		if !ok {
			return bad("a string")
		}
		if len(p.Choices) > 0 && !contains(p.Choices, sv) {
			return nil, hcl.Diagnostics{attrDiag(r, "Unknown choice for "+p.Name,
				fmt.Sprintf("%s is not one of %s.%s", quote(sv), strings.Join(quoteAll(p.Choices), ", "), suggest(sv, p.Choices)))}
		}
		return sv, nil
	case steps.Quantity:
		sv, ok := str(v)
		if !ok {
			if _, isNum := number(v); isNum {
				return nil, hcl.Diagnostics{attrDiag(r, "Missing unit",
					fmt.Sprintf("%s is a %s: write it as a string with its unit, e.g. \"%s %s\" (units: %s).",
						p.Name, p.Dim.Name, v.AsBigFloat().Text('g', -1), p.Dim.Base, strings.Join(p.Dim.Names(), ", ")))}
			}
			return bad("a " + p.Dim.Name + " with its unit, e.g. \"1 " + p.Dim.Base + "\"")
		}
		f, err := p.Dim.Parse(sv)
		if err != nil {
			return nil, hcl.Diagnostics{attrDiag(r, "Wrong unit for "+p.Name, err.Error())}
		}
		return f, nil
	case steps.QuantityRange:
		list, ok := stringList(v)
		if !ok || len(list) != 2 {
			return bad("a list of two " + p.Dim.Name + "s, low then high, e.g. [\"0.5 d\", \"20 d\"]")
		}
		var out [2]float64
		for i, sv := range list {
			f, err := p.Dim.Parse(sv)
			if err != nil {
				return nil, hcl.Diagnostics{attrDiag(r, "Wrong unit for "+p.Name, err.Error())}
			}
			out[i] = f
		}
		if !(out[0] < out[1]) {
			return nil, hcl.Diagnostics{attrDiag(r, "Empty range", fmt.Sprintf("%s: the low end must be below the high end.", p.Name))}
		}
		return out, nil
	case steps.Measurement:
		sv, ok := str(v)
		if !ok {
			return bad("a " + p.Dim.Name + " with its uncertainty and unit, e.g. \"1.0 ± 0.1 " + p.Dim.Base + "\"")
		}
		val, sigma, err := p.Dim.ParseMeasurement(sv)
		if err != nil {
			return nil, hcl.Diagnostics{attrDiag(r, "Wrong measurement for "+p.Name, err.Error())}
		}
		return [2]float64{val, sigma}, nil
	case steps.StringList:
		list, ok := stringList(v)
		if !ok {
			return bad("a list of strings")
		}
		return list, nil
	case steps.FileList:
		list, ok := stringList(v)
		if !ok {
			sv, isStr := str(v)
			if !isStr {
				return bad("a file path or a list of them")
			}
			list = []string{sv}
		}
		if len(list) == 0 {
			return nil, hcl.Diagnostics{attrDiag(r, "No files", p.Name+" names no file.")}
		}
		var files []*FileInput
		for _, path := range list {
			fi, d := w.readFile(path, r)
			if d != nil {
				diags = append(diags, d)
				continue
			}
			files = append(files, fi)
		}
		s.Files[p.Name] = files
		return list, diags
	case steps.StringMap:
		if v.IsNull() || !(v.Type().IsObjectType() || v.Type().IsMapType()) {
			return bad("an object of strings, e.g. { time = \"BJD\" }")
		}
		m := map[string]string{}
		for it := v.ElementIterator(); it.Next(); {
			k, e := it.Element()
			sv, ok := str(e)
			if !ok {
				return bad("an object whose values are strings")
			}
			m[k.AsString()] = sv
		}
		return m, nil
	}
	return nil, hcl.Diagnostics{attrDiag(r, "Unsupported parameter type", p.Type.String())}
}

// refAddr reads a step reference written as kind.label.
func refAddr(expr hcl.Expression) (string, *hcl.Diagnostic) {
	if v, d := expr.Value(nil); !d.HasErrors() {
		if s, ok := str(v); ok && strings.Count(s, ".") == 1 {
			return "", attrDiag(expr.Range(), "Quoted step reference",
				fmt.Sprintf("Write the reference without quotes: %s", clip(s)))
		}
	}
	tr, diags := hcl.AbsTraversalForExpr(expr)
	if diags.HasErrors() || len(tr) != 2 {
		return "", attrDiag(expr.Range(), "Invalid step reference", "A reference names a whole step as kind.label, e.g. detrend.quiet.")
	}
	at, ok := tr[1].(hcl.TraverseAttr)
	if !ok {
		return "", attrDiag(expr.Range(), "Invalid step reference", "A reference names a whole step as kind.label, e.g. detrend.quiet.")
	}
	return tr.RootName() + "." + at.Name, nil
}

func stringList(v cty.Value) ([]string, bool) {
	if v.IsNull() || !(v.Type().IsTupleType() || v.Type().IsListType()) {
		return nil, false
	}
	out := []string{}
	for it := v.ElementIterator(); it.Next(); {
		_, e := it.Element()
		s, ok := str(e)
		if !ok {
			return nil, false
		}
		out = append(out, s)
	}
	return out, true
}

func describe(v cty.Value) string {
	switch {
	case v.IsNull():
		return "null"
	case v.Type() == cty.String:
		return "the string " + quote(v.AsString())
	case v.Type() == cty.Number:
		return "the number " + v.AsBigFloat().Text('g', -1)
	case v.Type() == cty.Bool:
		return "a bool"
	case v.Type().IsTupleType() || v.Type().IsListType():
		return "a list"
	case v.Type().IsObjectType() || v.Type().IsMapType():
		return "an object"
	}
	return v.Type().FriendlyName()
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func quoteAll(list []string) []string {
	out := make([]string, len(list))
	for i, s := range list {
		out[i] = fmt.Sprintf("%q", s)
	}
	return out
}
