package workflow

import (
	"bytes"
	"fmt"
	"regexp"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/hashicorp/hcl/v2"
	"github.com/hashicorp/hcl/v2/hclsyntax"

	"dipline/steps"
)

// Our own words for what the HCL library finds wrong. The library's parser and its schema
// check speak of "arguments", "attributes" and "configuration blocks" in stock sentences
// that every program built on it prints; a workflow speaks of blocks and their settings.
// inOurWords rewrites each diagnostic the library gives into a message that says what is
// wrong, where (the block, by kind and label, and the setting) and what to write instead,
// with a near name when there is one. It keeps the subject, so the printer still points at
// the place. Every diagnostic of a load passes through it. Every summary in the library's
// sources has a rule here, including those a workflow cannot provoke (syntax.go refuses
// what is computed before the library sees it); words_test.go checks the list against the
// library's sources, so an upgrade that adds a summary fails a test rather than speaking
// in the library's words.
//
// A rewritten diagnostic keeps the two fields of hcl.Diagnostic as our messages use them:
// the summary is the first sentence (what is wrong), the detail the rest (what to write
// instead); Message joins them.

// sources is what one load read, kept to word its diagnostics and show their lines: the
// texts by the file name their diagnostics give (the workflow and each --set value), the
// parsed workflow (partial after a syntax error) to find the block a message is about, and
// the step kinds, whose settings a message may list.
type sources struct {
	texts map[string][]byte
	body  *hclsyntax.Body
	reg   steps.Registry
}

func newSources(reg steps.Registry) *sources {
	return &sources{texts: map[string][]byte{}, reg: reg}
}

// finish puts a load's diagnostics in our words, bounds their number and gives each the
// line it is about.
func (s *sources) finish(diags hcl.Diagnostics) hcl.Diagnostics {
	return withExcerpts(capDiagnostics(s.inOurWords(diags)), s.texts)
}

// inOurWords rewrites the library's diagnostics and drops one that repeats the place of an
// earlier one (the parser often reports a bad character, then the value it could not read
// there).
func (s *sources) inOurWords(diags hcl.Diagnostics) hcl.Diagnostics {
	out := make(hcl.Diagnostics, 0, len(diags))
	seen := map[hcl.Pos]bool{}
	said := map[string]bool{} // summary and line of what was said
	for i, d := range diags {
		if len(out) >= maxDiagnostics {
			// Beyond what will be shown: kept as they are, to be counted.
			return append(out, diags[i:]...)
		}
		if d == nil {
			continue
		}
		rule, stock := stockRule(d.Summary)
		if !stock {
			out = append(out, d)
			continue
		}
		if d.Subject != nil {
			key := d.Subject.Start
			key.Line, key.Column = 0, 0
			if seen[key] {
				continue
			}
			seen[key] = true
		}
		c := *d
		if d.Subject == nil { // the rules may read the place; a diagnostic may lack one
			placed := *d
			placed.Subject = &hcl.Range{}
			d = &placed
		}
		c.Summary, c.Detail = rule(s, d, s.spotOf(d))
		c.Summary, c.Detail = sentence(c.Summary), sentence(c.Detail)
		// The same words again on the same line, or about a string already found open
		// (the rest of the file then reads wrongly), tell nothing new.
		key := c.Summary
		if d.Subject != nil && c.Summary != unclosedStringWords {
			key += fmt.Sprint(" ", d.Subject.Start.Line)
		}
		if said[key] {
			continue
		}
		said[key] = true
		out = append(out, &c)
	}
	return out
}

// A rule words one kind of diagnostic: it returns the summary and the detail.
type rule func(s *sources, d *hcl.Diagnostic, at spot) (string, string)

// stockRule finds the rule for one of the library's summaries.
func stockRule(summary string) (rule, bool) {
	if r, ok := stockRules[summary]; ok {
		return r, true
	}
	for _, p := range stockPatterns {
		if p.re.MatchString(summary) {
			return p.rule, true
		}
	}
	return nil, false
}

// stockRules are the library's summaries (hclsyntax's parser and schema check, the
// expression evaluator, and the root package's static-expression helpers and ops.go), each
// with our wording.
var stockRules = map[string]rule{
	// Blocks and settings (the schema check).
	"Unsupported argument":      noSuchSetting,
	"Unsupported block type":    noSuchBlock,
	"Missing required argument": missingSetting,
	"Attribute redefined":       setTwice,
	"Duplicate argument":        setTwice,

	// The shape of a block or a setting (the parser).
	"Argument or block definition required":    notASettingOrBlock,
	"Argument definition required":             oneLineBlock,
	"Invalid single-argument block definition": oneLineBlock,
	"Invalid argument name":                    quotedName,
	"Invalid block definition":                 blockHeader,
	"Unclosed configuration block":             unclosedBlock,
	"Unclosed configuration body":              unclosedBlock,
	"Missing newline after argument":           afterValue,
	"Unexpected comma after argument":          commaAfterValue,
	"Missing newline after block definition":   afterBlock,

	// Values.
	"Invalid expression":                         badValue,
	"Missing expression":                         endsInValue,
	"Missing item separator":                     listComma,
	"Unterminated tuple constructor expression":  unclosedList,
	"Missing attribute separator":                objectSeparator,
	"Missing key/value separator":                objectEquals,
	"Missing attribute value":                    objectEquals,
	"Unterminated object constructor expression": unclosedObject,
	"Duplicate object key":                       objectKeyTwice,
	"Ambiguous attribute key":                    objectKeyDotted,
	"Incorrect key type":                         objectKeyPlain,
	"Null value as key":                          objectKeyPlain,
	"Invalid object key":                         objectKeyPlain,
	"Unbalanced parentheses":                     parentheses,
	"Missing closing parenthesis":                parentheses,
	"Variables not allowed":                      bareName,
	"Unknown variable":                           bareName,
	"Extra characters after expression":          extraAfterValue,

	// References written with the wrong shape.
	"Invalid attribute name":               badReference,
	"Attribute name required":              badReference,
	"Invalid legacy index syntax":          badReference,
	"Missing close bracket on index":       badReference,
	"Unclosed index brackets":              badReference,
	"Index value required":                 badReference,
	"Missing close bracket on splat index": badReference,
	"Nested splat expression not allowed":  badReference,
	"Invalid nested splat expressions":     badReference,

	// Strings, numbers and characters.
	"Unterminated template string": unclosedString,
	"Unterminated string literal":  unclosedString,
	"Invalid multi-line string":    unclosedString,
	"Invalid string literal":       badEscape,
	"Invalid escape sequence":      badEscape,
	"Invalid number literal":       badNumber,
	"Invalid character":            badCharacter,
	"Invalid character encoding":   notUTF8,

	// What a workflow refuses before the library could see it (syntax.go); these are
	// here in case one slips through.
	"Function calls not allowed":                      computed("a function call"),
	"Call to unknown function":                        computed("a function call"),
	"Missing function name":                           computed("a function call"),
	"Missing open parenthesis":                        computed("a function call"),
	"Unterminated function call":                      computed("a function call"),
	"Missing argument separator":                      computed("a function call"),
	"Too many function arguments":                     computed("a function call"),
	"Not enough function arguments":                   computed("a function call"),
	"Invalid function argument":                       computed("a function call"),
	"Error in function call":                          computed("a function call"),
	"Invalid expanding argument value":                computed("a function call"),
	"Unsupported operator":                            computed("an operation"),
	"Invalid operand":                                 computed("an operation"),
	"Operation failed":                                computed("an operation"),
	"Missing false expression in conditional":         computed("a condition"),
	"Condition is null":                               computed("a condition"),
	"Null condition":                                  computed("a condition"),
	"Incorrect condition type":                        computed("a condition"),
	"Inconsistent conditional result types":           computed("a condition"),
	"Invalid 'for' expression":                        computed("a for expression"),
	"Invalid 'for' condition":                         computed("a for expression"),
	"Iteration over null value":                       computed("a for expression"),
	"Iteration over non-iterable value":               computed("a for expression"),
	"Variable name required":                          computed("a for expression"),
	"Splat of null value":                             computed("a look-up into a computed value"),
	"Invalid index":                                   computed("a look-up into a computed value"),
	"Unsupported attribute":                           computed("a look-up into a computed value"),
	"Attempt to index null value":                     computed("a look-up into a computed value"),
	"Attempt to get attribute from null value":        computed("a look-up into a computed value"),
	"Missing map element":                             computed("a look-up into a computed value"),
	"Invalid path step":                               computed("a look-up into a computed value"),
	"Invalid template interpolation value":            template,
	"Unclosed template interpolation sequence":        template,
	"Extra characters after interpolation expression": template,
	"Unexpected end of template":                      template,
	"Unexpected else directive":                       template,
	"Invalid template directive":                      template,
	"Invalid 'for' directive":                         template,
	"Invalid template control keyword":                template,
}

// stockPatterns are the library's summaries that name a block or a directive.
var stockPatterns = []struct {
	re   *regexp.Regexp
	rule rule
}{
	{regexp.MustCompile(`^Extraneous label for [\w-]+$`), labelTooMany},
	{regexp.MustCompile(`^Missing [\w-]+ for [\w-]+$`), labelMissing},
	{regexp.MustCompile(`^Unexpected "[^"]*" block$`), blockInSettings},
	{regexp.MustCompile(`^Unexpected [\w-]+ directive$`), template},
	{regexp.MustCompile(`^Extra characters in \S+ marker$`), template},
}

// spot is where a diagnostic points, as far as the parsed file tells.
type spot struct {
	// blocks are the blocks the subject lies in, outermost first.
	blocks []*hclsyntax.Block
	// attr is the setting the subject lies in, if any.
	attr *hclsyntax.Attribute
	// text is the subject's text (its first line); line is the line it starts on, and col
	// the subject's byte offset in it.
	text, line string
	col        int
	// set is the --set a diagnostic is about ("kind.label.attr"), if any.
	set string
}

func (s *sources) spotOf(d *hcl.Diagnostic) spot {
	var at spot
	if d.Subject == nil {
		return at
	}
	r := *d.Subject
	if name, ok := strings.CutPrefix(r.Filename, "--set "); ok {
		at.set = name
	}
	src := s.texts[r.Filename]
	start := r.Start.Byte
	if start < 0 || start > len(src) {
		return at
	}
	lineStart := bytes.LastIndexByte(src[:start], '\n') + 1
	lineEnd := len(src)
	if i := bytes.IndexByte(src[start:], '\n'); i >= 0 {
		lineEnd = start + i
	}
	at.line, at.col = strings.TrimRight(string(src[lineStart:lineEnd]), "\r"), start-lineStart
	end := min(max(r.End.Byte, start), lineEnd)
	at.text = strings.TrimSpace(string(src[start:end]))
	if s.body != nil && at.set == "" {
		at.blocks = blocksAt(s.body, start)
		body := s.body
		if n := len(at.blocks); n > 0 {
			body = at.blocks[n-1].Body
		}
		if body != nil {
			for _, a := range body.Attributes {
				if a.SrcRange.Start.Byte <= start && start < a.SrcRange.End.Byte {
					at.attr = a
				}
			}
		}
	}
	return at
}

// blocksAt gives the blocks that hold the byte offset at, outermost first.
func blocksAt(b *hclsyntax.Body, at int) []*hclsyntax.Block {
	var chain []*hclsyntax.Block
	for b != nil {
		var next *hclsyntax.Block
		for _, blk := range b.Blocks {
			r := blk.Range()
			if r.Start.Byte <= at && at < max(r.End.Byte, r.Start.Byte+1) {
				next = blk
				break
			}
		}
		if next == nil {
			break
		}
		chain = append(chain, next)
		b = next.Body
	}
	return chain
}

// innermost is the block the subject lies in, or nil at the top level.
func (at spot) innermost() *hclsyntax.Block {
	if len(at.blocks) == 0 {
		return nil
	}
	return at.blocks[len(at.blocks)-1]
}

// setting is the name of the setting the diagnostic is about: the attribute the subject
// lies in, the --set's attribute, or the name that starts the subject's line.
func (at spot) setting() string {
	switch {
	case at.attr != nil:
		return at.attr.Name
	case at.set != "":
		return at.set[strings.LastIndexByte(at.set, '.')+1:]
	}
	if m := leadingName.FindStringSubmatch(at.line); m != nil {
		return m[1]
	}
	return ""
}

// leadingName is a setting's name at the start of a line: "  span = …".
var leadingName = regexp.MustCompile(`^\s*([A-Za-z_][\w-]*)\s*=`)

// owner names the block the diagnostic is about: `search "dips"`, or `the search block`
// for one without a label; "" at the top level. A --set names its step.
func (at spot) owner() string {
	if at.set != "" {
		if i := strings.LastIndexByte(at.set, '.'); i > 0 {
			kind, label, _ := strings.Cut(at.set[:i], ".")
			return clip(kind) + " " + quote(label)
		}
	}
	if b := at.innermost(); b != nil {
		return blockName(b)
	}
	return ""
}

func blockName(b *hclsyntax.Block) string {
	if len(b.Labels) > 0 {
		return clip(b.Type) + " " + quote(b.Labels[0])
	}
	return "the " + clip(b.Type) + " block"
}

// capital gives s a capital first letter, for a block name that starts a sentence.
func capital(s string) string {
	r, n := utf8.DecodeRuneInString(s)
	return string(unicode.ToUpper(r)) + s[n:]
}

// shown is a piece of the source quoted in a message, clipped: as written when it holds
// only printable characters and no quote, else with Go's escapes.
func shown(s string) string {
	if s == "" {
		return "nothing"
	}
	if len(s) <= maxQuoted && !strings.ContainsRune(s, '"') && strings.IndexFunc(s, func(r rune) bool {
		return !unicode.IsPrint(r) || r == utf8.RuneError
	}) < 0 {
		return `"` + s + `"`
	}
	return quote(s)
}

// paramsOfBlock gives the settings a block of this type takes (the engine's own blocks, or
// a step kind's), and whether its type is known.
func (s *sources) paramsOfBlock(typ string) ([]steps.Param, bool) {
	for _, b := range EngineBlocks() {
		if b.Name == typ {
			return b.Params, true
		}
	}
	if k, ok := s.reg[typ]; ok && k != nil {
		return k.Params(), true
	}
	return nil, false
}

// settingsOf lists the names of the settings a block of this type takes.
func (s *sources) settingsOf(typ string) ([]string, bool) {
	params, ok := s.paramsOfBlock(typ)
	names := make([]string, len(params))
	for i, p := range params {
		names[i] = p.Name
	}
	return names, ok
}

// docOf is a short description of one setting, or "".
func (s *sources) docOf(typ, name string) string {
	params, _ := s.paramsOfBlock(typ)
	for _, p := range params {
		if p.Name == name {
			return p.Doc
		}
	}
	return ""
}

// blockTypes are the block types a workflow's top level holds.
func (s *sources) blockTypes() []string {
	return append([]string{settingsBlock, catalogueBlock}, s.reg.Names()...)
}

// takes says which settings a block takes: "A search step takes light_curve, periods and
// span.", "The analysis block takes seed, store and output."
func (s *sources) takes(typ string) string {
	names, ok := s.settingsOf(typ)
	if !ok || len(names) == 0 {
		return ""
	}
	who := "A " + clip(typ) + " step"
	switch typ {
	case settingsBlock:
		who = "The analysis block"
	case catalogueBlock:
		who = "A catalogue block"
	}
	return fmt.Sprintf("%s takes %s.", who, andList(names))
}

// andList joins names as "a, b and c". The names are the program's own (settings, kinds),
// never the user's, so the list is short.
func andList(names []string) string {
	shown := make([]string, len(names))
	for i, n := range names {
		shown[i] = clip(n)
	}
	if len(shown) < 2 {
		return strings.Join(shown, "")
	}
	return strings.Join(shown[:len(shown)-1], ", ") + " and " + shown[len(shown)-1]
}

// valueForms is said where a value could not be read.
const valueForms = `A value is a string in double quotes, a number, true or false, a list in [ ], an object in { }, a step reference (kind.label) or a catalogue row (catalogue.label["id"]).`

// blockForm is said where a block's header could not be read.
const blockForm = `A block is written ` + blockShape + `.`

// blockShape is how a block is written.
const blockShape = `kind "label" { with its settings on the lines below, one name = value per line, and a closing } on a line of its own`

// --- blocks and settings ---

func noSuchSetting(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	name := at.text
	if name == "" {
		name = quotedIn(d.Detail)
	}
	b := at.innermost()
	if b == nil {
		for _, typ := range []string{settingsBlock, catalogueBlock} {
			if names, _ := s.settingsOf(typ); containsName(names, name) {
				return fmt.Sprintf("%s is set outside any block.", clip(name)),
					fmt.Sprintf("It belongs in the %s block: move it inside the braces.", typ)
			}
		}
		return fmt.Sprintf("%s is set outside any block.", clip(name)),
			"Settings belong inside the block they are for: the analysis block, a catalogue block or a step block."
	}
	names, _ := s.settingsOf(b.Type)
	return fmt.Sprintf("%s has no setting %s.", blockName(b), quote(name)),
		strings.TrimSpace(strings.TrimSpace(suggest(name, names)) + " " + s.takes(b.Type))
}

func noSuchBlock(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	typ := at.text
	if typ == "" {
		typ = quotedIn(d.Detail)
	}
	parents := at.blocks
	if n := len(parents); n > 0 && parents[n-1].TypeRange.Start.Byte == d.Subject.Start.Byte {
		parents = parents[:n-1] // the block itself
	}
	if len(parents) == 0 {
		return fmt.Sprintf("A workflow has no block %s.", quote(typ)),
			strings.TrimSpace(fmt.Sprintf("%s Its blocks are analysis, catalogue and the step kinds: %s (dipline kinds describes each).",
				strings.TrimSpace(suggest(typ, s.blockTypes())), andList(s.reg.Names())))
	}
	parent := parents[len(parents)-1]
	names, _ := s.settingsOf(parent.Type)
	detail := "Write each setting as name = value."
	if containsName(names, typ) {
		detail = fmt.Sprintf("To set %s, write %s = … instead.", clip(typ), clip(typ))
	} else if sg := suggest(typ, names); sg != "" {
		detail = strings.TrimSpace(sg) + " " + detail
	}
	return fmt.Sprintf("%s holds a block %s, and a block in a workflow holds settings only.", blockName(parent), quote(typ)), detail
}

func blockInSettings(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return fmt.Sprintf("A block %s stands where only settings may be.", shown(at.text)), "Write each setting as name = value."
}

func missingSetting(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	name := quotedIn(d.Detail)
	b := at.innermost()
	if b == nil {
		return fmt.Sprintf("The setting %s is missing.", clip(name)), fmt.Sprintf("Add %s = ….", clip(name))
	}
	how := fmt.Sprintf("Add %s = … to it", clip(name))
	if doc := s.docOf(b.Type, name); doc != "" {
		how += " (" + strings.TrimSuffix(doc, ".") + ")"
	}
	return fmt.Sprintf("%s does not set %s, which it needs (there is no default).", capitalName(b), clip(name)), how + "."
}

// capitalName is a block's name at the start of a sentence.
func capitalName(b *hclsyntax.Block) string {
	if len(b.Labels) > 0 {
		return blockName(b)
	}
	return capital(blockName(b))
}

func setTwice(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	name := at.text
	first := 0
	body := s.body
	if b := at.innermost(); b != nil {
		body = b.Body
	}
	if body != nil {
		if a := body.Attributes[name]; a != nil && a.NameRange.Start.Byte != d.Subject.Start.Byte {
			first = a.NameRange.Start.Line
		}
	}
	who := "The workflow"
	if b := at.innermost(); b != nil {
		who = capitalName(b)
	}
	if first > 0 {
		return fmt.Sprintf("%s sets %s twice, on line %d and on line %d.", who, clip(name), first, d.Subject.Start.Line),
			"Keep the one you mean and delete the other."
	}
	return fmt.Sprintf("%s sets %s twice.", who, clip(name)), "Keep the one you mean and delete the other."
}

func labelTooMany(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	b := at.innermost()
	if b == nil {
		return "A block has one label too many.", blockForm
	}
	extra := at.text
	if n := len(b.Labels); n > 1 {
		extra = b.Labels[n-1]
	}
	return fmt.Sprintf("A %s block takes one label, and %s is one too many.", clip(b.Type), shown(extra)),
		fmt.Sprintf("Write %s { … }.", blockName(b))
}

func labelMissing(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	b := at.innermost()
	typ := strings.TrimSpace(strings.TrimPrefix(at.line, " "))
	if b != nil {
		typ = b.Type
	} else if f := strings.Fields(typ); len(f) > 0 {
		typ = f[0]
	}
	switch typ {
	case settingsBlock:
		return "The analysis block has no name.", `Give it one in quotes: analysis "my-star" { … }.`
	case catalogueBlock:
		return "This catalogue block has no label.",
			`Give it one in quotes: catalogue "nearby" { … }; steps then name its rows as catalogue.nearby["id"].`
	}
	return fmt.Sprintf("This %s block has no label.", clip(typ)),
		fmt.Sprintf(`Give it one in quotes: %s "my-label" { … }; other steps then refer to it as %s.my-label.`, clip(typ), clip(typ))
}

// --- the shape of blocks and settings ---

func notASettingOrBlock(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	switch {
	case at.text == "}":
		return "This } closes no block.", "Delete it, or look above it for a block whose { is missing."
	case hclsyntax.ValidIdentifier(at.text):
		return fmt.Sprintf("%s is followed by neither \"=\" nor a block's label.", clip(at.text)),
			fmt.Sprintf("A setting is written %s = value, on a line of its own. %s", clip(at.text), blockForm)
	}
	return fmt.Sprintf("A setting or a block should start here, not %s.", shown(at.text)),
		"A setting is written name = value, on a line of its own. " + blockForm
}

func oneLineBlock(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "A block written on one line holds one setting and ends with } on that line.",
		"Write it over several lines: " + blockShape + "."
}

func quotedName(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	if m := quotedSetting.FindStringSubmatch(at.line); m != nil {
		return "A setting's name is written without quotes.", fmt.Sprintf("Write %s = … instead.", clip(m[1]))
	}
	return "A setting's name is written without quotes.", "Write name = value."
}

// quotedSetting is a setting whose name is in quotes: `  "span" = …`.
var quotedSetting = regexp.MustCompile(`^\s*"([A-Za-z_][\w-]*)"\s*=`)

func blockHeader(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	head := strings.TrimSpace(at.line[:min(at.col, len(at.line))])
	switch {
	case strings.Contains(d.Detail, `"="`):
		return "A block's label is followed by {, not by \"=\".", fmt.Sprintf("Write %s { … }; \"=\" belongs to settings.", clip(head))
	case strings.Contains(d.Detail, "same line"):
		return "A block's { must be on the same line as its kind and label.", fmt.Sprintf("Write %s { on one line.", clip(strings.TrimSpace(at.line)))
	}
	return fmt.Sprintf("A block's kind is followed by its label in quotes and a {, not by %s.", shown(at.text)), blockForm
}

func unclosedBlock(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	head := strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(at.line), "{"))
	if head == "" || at.text != "{" {
		return "The file ends inside a block.", "Close the block with }; if it is closed, a bracket or a quote inside it is not."
	}
	return fmt.Sprintf("The { that opens %s is never closed.", clip(head)),
		"Close the block with } on a line of its own; if it is closed, a bracket or a quote inside it is not."
}

func afterValue(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	name := at.setting()
	if name == "" {
		return fmt.Sprintf("%s follows a setting on its line, and a setting ends its line.", shown(at.text)),
			"Start each setting on a line of its own."
	}
	return fmt.Sprintf("After the value of %s comes %s on the same line, and a setting ends its line.", clip(name), shown(at.text)),
		fmt.Sprintf("Start %s on a new line, or delete it.", shown(at.text))
}

func commaAfterValue(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "Settings are separated by line breaks, not commas.", "Delete the comma and start the next setting on a new line."
}

func afterBlock(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return fmt.Sprintf("%s follows the } that closes a block, on the same line.", shown(at.text)),
		"Start the next block or setting on a line of its own."
}

// --- values ---

func badValue(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	name := at.setting()
	switch {
	case strings.Contains(d.Detail, "list expression"):
		if name != "" {
			return fmt.Sprintf("%s takes a list in [ ].", clip(name)),
				fmt.Sprintf("Write %s = [%s], with the brackets even for one item.", clip(name), clip(at.text))
		}
		return "A list in [ ] belongs here.", "Write the brackets even for one item."
	case strings.Contains(d.Detail, "variable reference"):
		if name != "" {
			return fmt.Sprintf("%s takes a step, written kind.label without quotes.", clip(name)), "For example detrend.quiet."
		}
		return "A step reference is written kind.label, without quotes.", "For example detrend.quiet."
	case strings.Contains(d.Detail, "static"):
		return "This is not a value a workflow can hold.", valueForms
	}
	if at.text == "" || at.text == "}" || at.text == "]" {
		before := strings.TrimSpace(at.line[:min(at.col, len(at.line))])
		switch {
		case strings.HasSuffix(before, "=") && strings.Count(before, "=") > 1:
			return `An entry of an object has no value after its "=".`, `Write each entry as name = value, as in { time = "BJD" }.`
		case strings.HasSuffix(before, "[") || strings.HasSuffix(before, ","):
			return "A list ends where an item should be.", `Write the items, separated by commas, as in ["5 h", "40 d"].`
		case name != "" && strings.HasSuffix(before, "="):
			return fmt.Sprintf("%s = has no value.", clip(name)), "Write the value after the \"=\", on the same line. " + valueForms
		}
		return "A value is missing here.", valueForms
	}
	return fmt.Sprintf("A value cannot begin with %s.", shown(at.text)), valueForms
}

func endsInValue(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	if at.set != "" {
		return "The value of this --set ends where more should follow.", "Close its lists and objects."
	}
	return "The file ends where a value should be.", "Finish the setting, and close its lists, objects and block."
}

func listComma(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	startsLine := strings.TrimSpace(at.line[:min(at.col, len(at.line))]) == ""
	if at.text == "" || at.text == "}" || at.text == ")" || startsLine && leadingName.MatchString(at.line) {
		return "A list above this line is not closed with ].", `End the list with ]; inside it, separate the items with commas, as in ["5 h", "40 d"].`
	}
	return "Two items of a list follow each other without a comma.", `Separate them with commas, as in ["5 h", "40 d"].`
}

func unclosedList(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "The [ that opens this list is never closed.", "End the list with ]."
}

func objectSeparator(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "Two entries of an object follow each other without a comma or a line break.",
		`Separate them with commas, as in { time = "BJD", flux = "f" }.`
}

func objectEquals(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return `An entry of an object lacks its "=" or its value.`, `Write each entry as name = value, as in { time = "BJD" }.`
}

func unclosedObject(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "The { that opens this object is never closed.", "End the object with }."
}

func objectKeyTwice(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	if k := quotedIn(d.Detail); k != "" {
		return fmt.Sprintf("This object has two entries %s.", quote(k)), "Keep the one you mean and delete the other."
	}
	return "This object names one entry twice.", "Keep the one you mean and delete the other."
}

func objectKeyDotted(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return fmt.Sprintf("The entry name %s holds a dot, and such a name must be in quotes.", shown(at.text)),
		fmt.Sprintf("Write %q = … instead.", at.text)
}

func objectKeyPlain(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "The names of an object's entries are plain words or strings.", `Write { time = "BJD" } or { "time" = "BJD" }.`
}

func parentheses(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "A ( here is never closed.", "A workflow's values need no parentheses: write the value itself."
}

func bareName(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	name, who := at.setting(), at.owner()
	word := at.text
	if word == "" {
		return "A name without quotes stands where a value should be.",
			"Write text in double quotes; only a setting that takes a step names one, as kind.label."
	}
	if name == "seed" && (at.owner() == "" || strings.HasPrefix(at.owner(), settingsBlock+" ")) {
		return fmt.Sprintf("The seed is %s, a name; the seed is a whole number.", shown(word)), "For example seed = 4711."
	}
	lead := "This is"
	if name != "" {
		lead = fmt.Sprintf("%s is", clip(name))
		if who != "" {
			lead = fmt.Sprintf("%s sets %s to", who, clip(name))
		}
	}
	instead := fmt.Sprintf("%q", word)
	if name != "" {
		instead = clip(name) + " = " + instead
	}
	return fmt.Sprintf("%s %s, a name without quotes, and only a setting that takes a step may name one.", lead, shown(word)),
		fmt.Sprintf("If %s is text, write it in quotes: %s.", shown(word), instead)
}

func extraAfterValue(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return fmt.Sprintf("After the value comes more: %s.", shown(at.text)),
		`A --set gives one value; a string, such as a quantity with its unit, is written in double quotes, and the whole option in single quotes for the shell: --set 'detrend.quiet.span="12 h"'.`
}

func badReference(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "This is neither a step reference nor a catalogue row.",
		`A step is named kind.label, as in detrend.quiet, and a catalogue row catalogue.label["id"], as in catalogue.nearby["FW-3318"].`
}

// --- strings, numbers and characters ---

func unclosedString(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return unclosedStringWords, `End it with " before the line ends: a string in a workflow stays on one line.`
}

const unclosedStringWords = "This string is not closed on its line."

func badEscape(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return fmt.Sprintf("%s is no escape a string can hold.", shown(at.text)),
		`Write \\ for a backslash (or / in a path); the escapes are \n, \t, \", \\ and \uNNNN.`
}

func badNumber(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return fmt.Sprintf("%s is not a number.", shown(at.text)), "Write numbers as 12, -0.5 or 1.5e-3."
}

func badCharacter(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	switch dt := d.Detail; {
	case strings.Contains(dt, "Single quotes"):
		return "Strings are written in double quotes, not single ones.", `Write "…" for '…'.`
	case strings.Contains(dt, "Curly quotes"):
		return "A curly quote is no quote to a workflow.",
			`Write straight double quotes "…" (a word processor may have curled them).`
	case strings.Contains(dt, `";"`):
		return "A semicolon has no place in a workflow.", "End a setting with a line break, and separate the items of a list with commas."
	case strings.Contains(dt, "`"):
		return "A backtick has no place in a workflow.", `Write strings in double quotes "…".`
	case strings.Contains(dt, "Tab"):
		return "A tab here is not read as a space.", "Indent with spaces."
	}
	return fmt.Sprintf("The character %s has no place in a workflow here.", shown(at.text)), valueForms
}

func notUTF8(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "This line holds bytes that are not UTF-8 text.", "Save the workflow as UTF-8 (an editor's encoding setting)."
}

// --- what syntax.go refuses first ---

func computed(what string) rule {
	return func(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
		return fmt.Sprintf("This is %s, and nothing in a workflow is computed.", what), plainValues + " Write the value itself."
	}
}

func template(s *sources, d *hcl.Diagnostic, at spot) (string, string) {
	return "Strings in a workflow are taken as written: ${ … } and %{ … } are not filled in.",
		`Write the text itself; to keep a literal "${" or "%{", write "$${" or "%%{".`
}

// --- helpers ---

// quotedIn is the first %q-quoted word in a library's detail, or "".
func quotedIn(detail string) string {
	m := firstQuoted.FindStringSubmatch(detail)
	if m == nil {
		return ""
	}
	return m[1]
}

var firstQuoted = regexp.MustCompile(`"((?:[^"\\]|\\.)*)"`)

func containsName(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
