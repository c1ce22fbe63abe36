package workflow

import (
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

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
	bad := func(summary, detail string) ([]byte, hcl.Diagnostics) {
		return nil, hcl.Diagnostics{{Severity: hcl.DiagError, Summary: summary, Detail: detail}}
	}
	unreadable := func(err error) ([]byte, hcl.Diagnostics) {
		return bad(fmt.Sprintf("The workflow %s cannot be read: %v.", path, unwrapPath(err)), "")
	}
	f, err := os.OpenFile(path, os.O_RDONLY|openNoWait, 0)
	if err != nil {
		if os.IsNotExist(err) {
			return bad(fmt.Sprintf("There is no workflow file %s.", path),
				"Name the workflow on the command line (by default dipline reads analysis.hcl in the current folder); dipline starter writes one for a light curve.")
		}
		return unreadable(err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return unreadable(err)
	}
	if st.IsDir() || !st.Mode().IsRegular() {
		return bad(fmt.Sprintf("%s is not a regular file, so it cannot be a workflow.", path), "Name the workflow's file.")
	}
	tooLarge := func(n int64) ([]byte, hcl.Diagnostics) {
		return bad(fmt.Sprintf("The workflow %s is %s, and a workflow file may be at most %s.", path, FormatSize(n), FormatSize(maxWorkflowBytes)),
			"A whole analysis takes a few kilobytes, and the bound keeps a damaged file from exhausting memory. Keep data in data files and name them.")
	}
	if st.Size() > maxWorkflowBytes {
		return tooLarge(st.Size())
	}
	src, err := io.ReadAll(io.LimitReader(f, maxWorkflowBytes+1))
	if err != nil {
		return unreadable(err)
	}
	if len(src) > maxWorkflowBytes {
		return tooLarge(int64(len(src)))
	}
	return src, nil
}

// parseWorkflow parses a workflow's text after checking its tokens, then checks every
// expression in it. A panic inside the parser is reported, not passed on. With errors, the
// file is what the parser made of it (or nil), for the messages to name blocks; it is not
// to be loaded.
func parseWorkflow(src []byte, filename string) (f *hcl.File, diags hcl.Diagnostics) {
	defer func() {
		if p := recover(); p != nil {
			f, diags = nil, hcl.Diagnostics{{Severity: hcl.DiagError,
				Summary: fmt.Sprintf("The workflow %s could not be parsed (the parser failed: %v).", filename, p),
				Detail:  "Check its brackets and quotes."}}
		}
	}()
	toks, _ := hclsyntax.LexConfig(src, filename, hcl.InitialPos)
	if d := checkTokens(toks); d.HasErrors() {
		return nil, d
	}
	toks = nil
	f, diags = hclsyntax.ParseConfig(src, filename, hcl.InitialPos)
	if diags.HasErrors() {
		return f, diags
	}
	if body, ok := f.Body.(*hclsyntax.Body); ok {
		diags = append(diags, checkBody(body)...)
	}
	return f, diags
}

// parseValue parses one expression given on the command line (--set), with the same checks.
func parseValue(src []byte, filename string) (e hclsyntax.Expression, diags hcl.Diagnostics) {
	defer func() {
		if p := recover(); p != nil {
			e, diags = nil, hcl.Diagnostics{{Severity: hcl.DiagError,
				Summary: fmt.Sprintf("The value of %s could not be parsed (the parser failed: %v).", filename, p)}}
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
const plainValues = "A workflow holds plain values: strings, numbers, true or false, lists, objects, step references (kind.label) and catalogue rows (catalogue.label[\"id\"])."

// notComputed ends the first sentence of a refusal of something computed.
const notComputed = ", and nothing in a workflow is computed."

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
				add(t.Range, fmt.Sprintf("Brackets, braces and quotes nest more than %d deep here.", maxNesting),
					"A workflow needs four or five levels; the bound keeps a damaged file from exhausting the parser's stack.")
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
				if !add(hcl.RangeBetween(str.start, t.Range), fmt.Sprintf("This string is longer than %s bytes.", thousands(maxStringBytes)),
					"Strings in a workflow hold paths, quantities and names, and the longest path Linux accepts is 4,096 bytes. Keep long text in a file.") {
					return diags
				}
			}
		case hclsyntax.TokenNumberLit:
			if len(t.Bytes) > maxNumberChars && !add(t.Range,
				fmt.Sprintf("This number is written with %s characters, and %d are enough for any number a float64 holds.", thousands(len(t.Bytes)), maxNumberChars),
				"Write it with fewer digits, e.g. 1.5e-3.") {
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
		return "Strings in a workflow are taken as written: ${ … } and %{ … } are not filled in.",
			"Write the text itself; to keep a literal \"${\" or \"%{\", write \"$${\" or \"%%{\"."
	case hclsyntax.TokenMinus:
		if next := nextToken(toks, i); next == nil || next.Type != hclsyntax.TokenNumberLit {
			return "A minus sign belongs directly before a number, as in -0.5.", plainValues
		}
	case hclsyntax.TokenStar, hclsyntax.TokenSlash, hclsyntax.TokenPlus, hclsyntax.TokenPercent,
		hclsyntax.TokenEqualOp, hclsyntax.TokenNotEqual, hclsyntax.TokenLessThan, hclsyntax.TokenLessThanEq,
		hclsyntax.TokenGreaterThan, hclsyntax.TokenGreaterThanEq, hclsyntax.TokenAnd, hclsyntax.TokenOr,
		hclsyntax.TokenBang, hclsyntax.TokenQuestion:
		return fmt.Sprintf("%q computes something%s", toks[i].Bytes, notComputed), plainValues + " Write the value itself, e.g. 0.5 rather than 1/2."
	case hclsyntax.TokenEllipsis, hclsyntax.TokenFatArrow:
		return fmt.Sprintf("%q belongs to a for expression%s", toks[i].Bytes, notComputed), plainValues + " Write the list or object out."
	case hclsyntax.TokenIdent:
		if string(toks[i].Bytes) == "for" && i > 0 && opensCollection(toks, i) {
			return "This is a for expression" + notComputed, plainValues + " Write the list or object out."
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
		return hcl.Diagnostics{attrDiag(e.Range(), "This is "+what+notComputed, strings.TrimSpace(plainValues+" "+instead))}
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
	return hcl.Diagnostics{attrDiag(r, fmt.Sprintf("This list or object has %s items, and the bound is %s.", thousands(n), thousands(maxListItems)),
		"The longest list a workflow needs, its light curve's files, holds tens; the bound keeps a damaged file from exhausting memory.")}
}

// capDiagnostics keeps the first maxDiagnostics errors and says how many more there were.
func capDiagnostics(diags hcl.Diagnostics) hcl.Diagnostics {
	if len(diags) <= maxDiagnostics {
		return diags
	}
	out := append(hcl.Diagnostics(nil), diags[:maxDiagnostics]...)
	return append(out, &hcl.Diagnostic{Severity: hcl.DiagError,
		Summary: fmt.Sprintf("… and %s more mistakes like these.", thousands(len(diags)-maxDiagnostics)),
		Detail:  "Mend the ones above first."})
}
