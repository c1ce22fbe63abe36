package workflow

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
	"unicode"

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
	v := strings.TrimSpace(rhs)
	if unquotedQuantity(v) {
		return Override{}, fmt.Errorf("--set %q: %s is a quantity with its unit, which a workflow writes in quotes; write --set '%s.%s=\"%s\"'", s, v, parts[0]+"."+parts[1], parts[2], v)
	}
	return Override{Addr: parts[0] + "." + parts[1], Attr: parts[2], Value: v}, nil
}

// unquotedQuantity reports a value written as a number and a unit without the quotes a
// quantity needs ("-7 g/cm3", "0.5 d"): a number, blanks, then a word.
func unquotedQuantity(v string) bool {
	num, unit, ok := strings.Cut(v, " ")
	if !ok || strings.HasPrefix(v, `"`) {
		return false
	}
	if _, err := strconv.ParseFloat(num, 64); err != nil {
		return false
	}
	unit = strings.TrimSpace(unit)
	return unit != "" && (unicode.IsLetter([]rune(unit)[0]))
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
		set := "--set " + o.Addr + "." + o.Attr
		summary, detail := fmt.Sprintf("%s names no step: there is no step %s.", set, o.Addr), suggest(o.Addr, w.addresses())
		if strings.HasPrefix(o.Addr, catalogueBlock+".") {
			summary, detail = fmt.Sprintf("%s changes a value no step reads: no step reads column %q of %s", set, o.Attr, o.Addr), ""
		} else if s := w.byAddr[o.Addr]; s != nil {
			summary = fmt.Sprintf("%s names no setting: a %s step has no setting %q.", set, s.Kind.Name(), o.Attr)
			detail = suggest(o.Attr, paramNames(s.Kind))
		}
		diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: summary, Detail: strings.TrimSpace(detail)})
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

// decodeStep reads a step block's attributes into its kind's configuration struct
// (defaults first, then what the block writes, then overrides), and lets the kind check
// the whole.
func (w *Workflow) decodeStep(s *Step, body hcl.Body) hcl.Diagnostics {
	schema := s.Kind.Schema()
	params := schema.Params()
	content, diags := body.Content(w.bodySchema(s, params))
	if diags.HasErrors() {
		return diags
	}
	cfg, err := schema.New()
	if err != nil {
		return append(diags, &hcl.Diagnostic{Severity: hcl.DiagError, Subject: s.block.Ptr(),
			Summary: fmt.Sprintf("The %s kind's own defaults do not read: %v. This is a fault in dipline, not in the workflow; please report it.", s.Kind.Name(), err)})
	}
	for i := range params {
		p := &params[i]
		expr := w.attrExpr(s, p, content)
		if expr == nil {
			continue
		}
		written, d := w.written(s, p, expr)
		diags = append(diags, d...)
		if d.HasErrors() {
			continue
		}
		if err := schema.Set(cfg, p, written); err != nil {
			msg := err.Error() + "."
			if len(p.Choices) > 0 && written.Kind == steps.WrittenString {
				msg += suggest(written.Str, p.Choices)
			}
			diags = append(diags, ownDiag(expr.Range(), msg))
			continue
		}
		if p.Type == steps.FileList {
			diags = append(diags, w.readFiles(s, p, cfg, expr.Range())...)
		}
	}
	if diags.HasErrors() {
		return diags
	}
	if err := s.Kind.Check(cfg); err != nil {
		return append(diags, w.stepDiag(s, err))
	}
	s.Config = cfg
	return append(diags, w.resolveRows(s)...)
}

// bodySchema lists a step's attributes for the HCL decoder; an attribute an override
// gives need not be written.
func (w *Workflow) bodySchema(s *Step, params []steps.Param) *hcl.BodySchema {
	schema := &hcl.BodySchema{}
	for _, p := range params {
		required := p.Required && w.overrides[s.Addr+"."+p.Name] == nil
		schema.Attributes = append(schema.Attributes, hcl.AttributeSchema{Name: p.Name, Required: required})
	}
	return schema
}

// attrExpr returns the expression that sets a parameter: an override's, else the block's,
// else nil. It records where the value was written, for messages.
func (w *Workflow) attrExpr(s *Step, p *steps.Param, content *hcl.BodyContent) hcl.Expression {
	var expr hcl.Expression
	if a := content.Attributes[p.Name]; a != nil {
		expr = a.Expr
		s.attrRanges[p.Name] = a.Expr.Range()
	}
	if o := w.overrides[s.Addr+"."+p.Name]; o != nil {
		o.used = true
		expr = o.expr
		s.attrRanges[p.Name] = o.expr.Range()
	}
	return expr
}

// readFiles reads the files a FileList parameter names, once, for the step's key and Run.
func (w *Workflow) readFiles(s *Step, p *steps.Param, cfg any, r hcl.Range) hcl.Diagnostics {
	v, _ := p.Value(cfg)
	var diags hcl.Diagnostics
	var files []*FileInput
	for _, path := range v.(steps.Files) {
		fi, d := w.readFile(path, r)
		if d != nil {
			diags = append(diags, d)
			continue
		}
		files = append(files, fi)
	}
	s.Files[p.Name] = files
	return diags
}

// attrSentence makes an attribute's refusal a sentence: a message that is a predicate
// ("must be positive", "needs a star step") follows the attribute's name ("span must be
// positive"); one that is a sentence of its own ("the given method needs mass") stands alone.
func attrSentence(ae *steps.AttrError) string {
	first, _, _ := strings.Cut(ae.Msg, " ")
	switch first {
	case "must", "is", "are", "needs", "names", "lists", "takes", "has", "cannot", "may", "gives", "holds":
		return ae.Attr + " " + ae.Msg
	}
	return ae.Msg
}

// stepDiag turns an error from a kind's Check into a diagnostic at the attribute it names.
func (w *Workflow) stepDiag(s *Step, err error) *hcl.Diagnostic {
	d := &hcl.Diagnostic{Severity: hcl.DiagError, Subject: s.block.Ptr(),
		Summary: fmt.Sprintf("%s %q refuses its settings: %v.", s.Kind.Name(), s.Label, err)}
	if ae, ok := err.(*steps.AttrError); ok {
		d.Summary = fmt.Sprintf("%s %q refuses its setting %s: %s.", s.Kind.Name(), s.Label, ae.Attr, attrSentence(ae))
		if r, ok := s.attrRanges[ae.Attr]; ok {
			d.Subject = r.Ptr()
		}
	}
	return d
}

// ownDiag is an error at a range whose whole message is ours, in one sentence or two.
func ownDiag(r hcl.Range, msg string) *hcl.Diagnostic {
	return &hcl.Diagnostic{Severity: hcl.DiagError, Summary: msg, Subject: r.Ptr()}
}

// written reads what an attribute's expression writes, for its parameter type to read:
// references and catalogue rows are resolved here (only the engine knows the syntax),
// everything else is a plain value.
func (w *Workflow) written(s *Step, p *steps.Param, expr hcl.Expression) (steps.Written, hcl.Diagnostics) {
	switch p.Type {
	case steps.StepRef:
		addr, d := refAddr(p.Name, expr)
		if d != nil {
			return steps.Written{}, hcl.Diagnostics{d}
		}
		s.Refs[p.Name] = []string{addr}
		return steps.Written{Kind: steps.WrittenRef, Str: addr}, nil
	case steps.StepSettings:
		addr, d := refAddr(p.Name, expr)
		if d != nil {
			return steps.Written{}, hcl.Diagnostics{d}
		}
		s.settingsAddr[p.Name] = addr
		return steps.Written{Kind: steps.WrittenRef, Str: addr}, nil
	case steps.StepRefList:
		exprs, diags := hcl.ExprList(expr) // the library's words are made ours in words.go
		if diags.HasErrors() {
			return steps.Written{}, diags
		}
		list := steps.Written{Kind: steps.WrittenList}
		var addrs []string
		for _, e := range exprs {
			addr, d := refAddr(p.Name, e)
			if d != nil {
				diags = append(diags, d)
				continue
			}
			addrs = append(addrs, addr)
			list.List = append(list.List, steps.Written{Kind: steps.WrittenRef, Str: addr})
		}
		s.Refs[p.Name] = addrs
		return list, diags
	case steps.CatalogueRow:
		addr, diags := w.decodeRow(s, *p, expr)
		row, _ := addr.(string)
		return steps.Written{Kind: steps.WrittenRow, Str: row}, diags
	}
	v, diags := expr.Value(nil) // the library's words are made ours in words.go
	if diags.HasErrors() {
		return steps.Written{}, diags
	}
	return toWritten(v), nil
}

// toWritten turns a plain HCL value into what steps read.
func toWritten(v cty.Value) steps.Written {
	switch {
	case v.IsNull() || !v.IsKnown():
		return steps.Written{Kind: steps.WrittenNull}
	case v.Type() == cty.Number:
		f, _ := number(v)
		return steps.Written{Kind: steps.WrittenNumber, Num: f, Text: v.AsBigFloat().Text('g', -1)}
	case v.Type() == cty.String:
		return steps.Written{Kind: steps.WrittenString, Str: v.AsString()}
	case v.Type() == cty.Bool:
		return steps.Written{Kind: steps.WrittenBool, Bool: v.True()}
	case v.Type().IsTupleType() || v.Type().IsListType() || v.Type().IsSetType():
		out := steps.Written{Kind: steps.WrittenList, List: []steps.Written{}}
		for it := v.ElementIterator(); it.Next(); {
			_, e := it.Element()
			out.List = append(out.List, toWritten(e))
		}
		return out
	case v.Type().IsObjectType() || v.Type().IsMapType():
		out := steps.Written{Kind: steps.WrittenObject, Object: map[string]steps.Written{}}
		for it := v.ElementIterator(); it.Next(); {
			k, e := it.Element()
			out.Object[k.AsString()] = toWritten(e)
		}
		return out
	}
	return steps.Written{Kind: steps.WrittenNull}
}

// refAddr reads a step reference written as kind.label.
func refAddr(name string, expr hcl.Expression) (string, *hcl.Diagnostic) {
	if v, d := expr.Value(nil); !d.HasErrors() {
		if s, ok := str(v); ok && strings.Count(s, ".") == 1 {
			return "", ownDiag(expr.Range(), fmt.Sprintf(
				"A step reference is written without quotes. Write %s, not %q.", clip(s), clip(s)))
		}
	}
	tr, diags := hcl.AbsTraversalForExpr(expr)
	if !diags.HasErrors() && len(tr) == 2 {
		if at, ok := tr[1].(hcl.TraverseAttr); ok {
			return tr.RootName() + "." + at.Name, nil
		}
	}
	return "", ownDiag(expr.Range(), name+" takes a step, written kind.label, e.g. detrend.quiet.")
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
