package workflow

import (
	"fmt"
	"io"
	"os"
	"sort"

	"github.com/hashicorp/hcl/v2"
	"github.com/hashicorp/hcl/v2/hclsyntax"
	"github.com/zclconf/go-cty/cty"
)

// A workflow holds plain values: strings, numbers, true and false, lists, objects, step
// references (kind.label) and catalogue rows (catalogue.label["id"]). Nothing in it is
// computed, so a file cannot keep the tool busy: templates (${…}, %{…}), for expressions,
// arithmetic, conditions, function calls and splats are refused with a word on what to write
// instead. The check runs twice: on the tokens before the parser sees them (nesting, which
// the parser follows by recursion, and anything the parser would recurse on without a
// bracket), then on the parsed expressions before any is evaluated.

// readWorkflow reads the workflow file, refusing one larger than maxWorkflowBytes before
// reading it.
func readWorkflow(path string) ([]byte, hcl.Diagnostics) {
	bad := func(detail string) ([]byte, hcl.Diagnostics) {
		return nil, hcl.Diagnostics{{Severity: hcl.DiagError, Summary: "Cannot read the workflow", Detail: detail}}
	}
	f, err := os.OpenFile(path, os.O_RDONLY|openNoWait, 0)
	if err != nil {
		if os.IsNotExist(err) {
			return bad(fmt.Sprintf("There is no workflow file %s.", quote(path)))
		}
		return bad(fmt.Sprintf("%s: %v.", path, unwrapPath(err)))
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return bad(fmt.Sprintf("%s: %v.", path, unwrapPath(err)))
	}
	if st.IsDir() || !st.Mode().IsRegular() {
		return bad(fmt.Sprintf("%s is not a regular file.", path))
	}
	tooLarge := func(n int64) ([]byte, hcl.Diagnostics) {
		return nil, hcl.Diagnostics{{Severity: hcl.DiagError, Summary: "Workflow file too large", Detail: fmt.Sprintf(
			"%s is %s; a workflow file may be at most %s (a whole analysis takes a few kilobytes), so that a damaged file cannot exhaust memory. Keep data in data files and name them.",
			path, FormatSize(n), FormatSize(maxWorkflowBytes))}}
	}
	if st.Size() > maxWorkflowBytes {
		return tooLarge(st.Size())
	}
	src, err := io.ReadAll(io.LimitReader(f, maxWorkflowBytes+1))
	if err != nil {
		return bad(fmt.Sprintf("%s: %v.", path, unwrapPath(err)))
	}
	if len(src) > maxWorkflowBytes {
		return tooLarge(int64(len(src)))
	}
	return src, nil
}

// parseWorkflow parses a workflow's text after checking its tokens, then checks every
// expression in it. A panic inside the parser is reported, not passed on.
func parseWorkflow(src []byte, filename string) (f *hcl.File, diags hcl.Diagnostics) {
	defer func() {
		if p := recover(); p != nil {
			f, diags = nil, hcl.Diagnostics{{Severity: hcl.DiagError, Summary: "Unreadable workflow",
				Detail: fmt.Sprintf("%s could not be parsed (the parser failed: %v); check its brackets and quotes.", filename, p)}}
		}
	}()
	toks, _ := hclsyntax.LexConfig(src, filename, hcl.InitialPos)
	if d := checkTokens(toks); d.HasErrors() {
		return nil, d
	}
	toks = nil
	f, diags = hclsyntax.ParseConfig(src, filename, hcl.InitialPos)
	if diags.HasErrors() {
		return nil, diags
	}
	if body, ok := f.Body.(*hclsyntax.Body); ok {
		diags = append(diags, checkBody(body)...)
	}
	if diags.HasErrors() {
		return nil, diags
	}
	return f, diags
}

// parseValue parses one expression given on the command line (--set), with the same checks.
func parseValue(src []byte, filename string) (e hclsyntax.Expression, diags hcl.Diagnostics) {
	defer func() {
		if p := recover(); p != nil {
			e, diags = nil, hcl.Diagnostics{{Severity: hcl.DiagError, Summary: "Unreadable value",
				Detail: fmt.Sprintf("%s could not be parsed (the parser failed: %v).", filename, p)}}
		}
	}()
	toks, _ := hclsyntax.LexExpression(src, filename, hcl.InitialPos)
	if d := checkTokens(toks); d.HasErrors() {
		return nil, d
	}
	e, diags = hclsyntax.ParseExpression(src, filename, hcl.InitialPos)
	if diags.HasErrors() {
		return nil, diags
	}
	if d := checkExpr(e); d.HasErrors() {
		return nil, d
	}
	return e, diags
}

// plainValues is said wherever something computed is refused.
const plainValues = "A workflow holds plain values: strings, numbers, true or false, lists, objects, step references (kind.label) and catalogue rows (catalogue.label[\"id\"]); nothing in it is computed."

// checkTokens refuses, before parsing, nesting deeper than maxNesting, templates, operators
// and over-long strings and numbers. It stops at the first nesting error (the rest of the
// file is then beyond the parser) and after maxDiagnostics others.
func checkTokens(toks hclsyntax.Tokens) hcl.Diagnostics {
	var diags hcl.Diagnostics
	add := func(r hcl.Range, summary, detail string) bool {
		diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: summary, Detail: detail, Subject: r.Ptr()})
		return len(diags) < maxDiagnostics
	}
	depth := 0
	var str struct {
		start hcl.Range
		bytes int
		open  bool
	}
	for i, t := range toks {
		switch t.Type {
		case hclsyntax.TokenOBrace, hclsyntax.TokenOBrack, hclsyntax.TokenOParen, hclsyntax.TokenOQuote,
			hclsyntax.TokenOHeredoc, hclsyntax.TokenTemplateInterp, hclsyntax.TokenTemplateControl:
			depth++
			if depth > maxNesting {
				add(t.Range, "Nesting too deep", fmt.Sprintf(
					"Brackets, braces and quotes nest more than %d deep here; a workflow needs four or five levels, and the limit keeps a damaged file from exhausting the parser's stack.", maxNesting))
				return diags
			}
			if t.Type == hclsyntax.TokenOQuote || t.Type == hclsyntax.TokenOHeredoc {
				str.start, str.bytes, str.open = t.Range, 0, true
			}
		case hclsyntax.TokenCBrace, hclsyntax.TokenCBrack, hclsyntax.TokenCParen, hclsyntax.TokenCQuote,
			hclsyntax.TokenCHeredoc, hclsyntax.TokenTemplateSeqEnd:
			depth = max(depth-1, 0)
			str.open = false
		case hclsyntax.TokenQuotedLit, hclsyntax.TokenStringLit:
			if !str.open {
				continue
			}
			str.bytes += len(t.Bytes)
			if str.bytes > maxStringBytes {
				str.open = false
				if !add(hcl.RangeBetween(str.start, t.Range), "String too long", fmt.Sprintf(
					"This string is longer than %s bytes; strings in a workflow hold paths, quantities and names, and the longest path Linux accepts is 4,096 bytes. Keep long text in a file.",
					thousands(maxStringBytes))) {
					return diags
				}
			}
		case hclsyntax.TokenNumberLit:
			if len(t.Bytes) > maxNumberChars && !add(t.Range, "Number too long", fmt.Sprintf(
				"This number is written with %s characters; %d are enough for any number a float64 holds.",
				thousands(len(t.Bytes)), maxNumberChars)) {
				return diags
			}
		}
		if summary, detail := refusedToken(toks, i); summary != "" && !add(t.Range, summary, detail) {
			return diags
		}
	}
	return diags
}

// refusedToken says why token i has no place in a workflow, or "".
func refusedToken(toks hclsyntax.Tokens, i int) (summary, detail string) {
	switch toks[i].Type {
	case hclsyntax.TokenTemplateInterp, hclsyntax.TokenTemplateControl:
		return "Template in a string", "Strings in a workflow are taken as written: ${ … } and %{ … } are not filled in. Write the text itself; to keep a literal \"${\" or \"%{\", write \"$${\" or \"%%{\"."
	case hclsyntax.TokenMinus:
		if next := nextToken(toks, i); next == nil || next.Type != hclsyntax.TokenNumberLit {
			return "Minus sign without a number", "A minus sign belongs directly before a number, as in -0.5. " + plainValues
		}
	case hclsyntax.TokenStar, hclsyntax.TokenSlash, hclsyntax.TokenPlus, hclsyntax.TokenPercent,
		hclsyntax.TokenEqualOp, hclsyntax.TokenNotEqual, hclsyntax.TokenLessThan, hclsyntax.TokenLessThanEq,
		hclsyntax.TokenGreaterThan, hclsyntax.TokenGreaterThanEq, hclsyntax.TokenAnd, hclsyntax.TokenOr,
		hclsyntax.TokenBang, hclsyntax.TokenQuestion:
		return "Operator in a workflow", fmt.Sprintf("%q computes something. %s Write the value itself, e.g. 0.5 rather than 1/2.", toks[i].Bytes, plainValues)
	case hclsyntax.TokenEllipsis, hclsyntax.TokenFatArrow:
		return "Loop in a workflow", fmt.Sprintf("%q belongs to a for expression. %s Write the list or object out.", toks[i].Bytes, plainValues)
	case hclsyntax.TokenIdent:
		if string(toks[i].Bytes) == "for" && i > 0 && opensCollection(toks, i) {
			return "Loop in a workflow", "A for expression computes a list or an object. " + plainValues + " Write the list or object out."
		}
	}
	return "", ""
}

// nextToken is the next token after i that is not a comment or a line break.
func nextToken(toks hclsyntax.Tokens, i int) *hclsyntax.Token {
	for j := i + 1; j < len(toks); j++ {
		if t := toks[j].Type; t != hclsyntax.TokenComment && t != hclsyntax.TokenNewline {
			return &toks[j]
		}
	}
	return nil
}

// opensCollection tells whether token i is the first inside a [ or a {, as the word "for"
// of a for expression is.
func opensCollection(toks hclsyntax.Tokens, i int) bool {
	for j := i - 1; j >= 0; j-- {
		switch toks[j].Type {
		case hclsyntax.TokenComment, hclsyntax.TokenNewline:
			continue
		case hclsyntax.TokenOBrack, hclsyntax.TokenOBrace:
			return true
		}
		return false
	}
	return false
}

// checkBody checks every expression of a parsed file, in the file's order, before any is
// evaluated.
func checkBody(b *hclsyntax.Body) hcl.Diagnostics {
	var diags hcl.Diagnostics
	attrs := make([]*hclsyntax.Attribute, 0, len(b.Attributes))
	for _, a := range b.Attributes {
		attrs = append(attrs, a)
	}
	sort.Slice(attrs, func(i, j int) bool { return attrs[i].SrcRange.Start.Byte < attrs[j].SrcRange.Start.Byte })
	for _, a := range attrs {
		diags = append(diags, checkExpr(a.Expr)...)
	}
	for _, blk := range b.Blocks {
		diags = append(diags, checkBody(blk.Body)...)
	}
	return diags
}

// checkExpr refuses any expression but a plain value. It recurses only through lists,
// objects and parentheses, which the token check has bounded to maxNesting.
func checkExpr(e hclsyntax.Expression) hcl.Diagnostics {
	refuse := func(what, instead string) hcl.Diagnostics {
		return hcl.Diagnostics{attrDiag(e.Range(), "Computed value", fmt.Sprintf("This is %s. %s %s", what, plainValues, instead))}
	}
	switch e := e.(type) {
	case *hclsyntax.LiteralValueExpr, *hclsyntax.ScopeTraversalExpr:
		return nil
	case *hclsyntax.ParenthesesExpr:
		return checkExpr(e.Expression)
	case *hclsyntax.TemplateExpr:
		for _, part := range e.Parts {
			if _, ok := part.(*hclsyntax.LiteralValueExpr); !ok {
				return refuse("a template", "Write the text itself.")
			}
		}
		return nil
	case *hclsyntax.UnaryOpExpr:
		if lit, ok := e.Val.(*hclsyntax.LiteralValueExpr); ok && e.Op == hclsyntax.OpNegate && lit.Val.Type().Equals(cty.Number) {
			return nil
		}
		return refuse("an operation", "Write the value itself.")
	case *hclsyntax.TupleConsExpr:
		if len(e.Exprs) > maxListItems {
			return tooMany(e.Range(), len(e.Exprs))
		}
		var diags hcl.Diagnostics
		for _, x := range e.Exprs {
			diags = append(diags, checkExpr(x)...)
		}
		return diags
	case *hclsyntax.ObjectConsExpr:
		if len(e.Items) > maxListItems {
			return tooMany(e.Range(), len(e.Items))
		}
		var diags hcl.Diagnostics
		for _, it := range e.Items {
			diags = append(diags, checkExpr(it.KeyExpr)...)
			diags = append(diags, checkExpr(it.ValueExpr)...)
		}
		return diags
	case *hclsyntax.ObjectConsKeyExpr:
		return checkExpr(e.Wrapped)
	case *hclsyntax.BinaryOpExpr:
		return refuse("arithmetic or a comparison", "Write the value itself, e.g. 0.5 rather than 1/2.")
	case *hclsyntax.ConditionalExpr:
		return refuse("a condition", "Write the value itself.")
	case *hclsyntax.ForExpr:
		return refuse("a for expression", "Write the list or object out.")
	case *hclsyntax.FunctionCallExpr:
		return refuse("a function call", "Write the value itself.")
	case *hclsyntax.SplatExpr, *hclsyntax.RelativeTraversalExpr, *hclsyntax.IndexExpr:
		return refuse("a look-up into a computed value", "Index only a catalogue by a written id, as in catalogue.label[\"id\"].")
	}
	return refuse("an expression dipline does not evaluate", "")
}

func tooMany(r hcl.Range, n int) hcl.Diagnostics {
	return hcl.Diagnostics{attrDiag(r, "List too long", fmt.Sprintf(
		"This list or object has %s items; the limit is %s (the longest list a workflow needs, its light curve's files, holds tens).",
		thousands(n), thousands(maxListItems)))}
}

// capDiagnostics keeps the first maxDiagnostics errors and says how many more there were.
func capDiagnostics(diags hcl.Diagnostics) hcl.Diagnostics {
	if len(diags) <= maxDiagnostics {
		return diags
	}
	out := append(hcl.Diagnostics(nil), diags[:maxDiagnostics]...)
	return append(out, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "More mistakes",
		Detail: fmt.Sprintf("… and %s more like these; mend the ones above first.", thousands(len(diags)-maxDiagnostics))})
}
