package workflow

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"

	"github.com/hashicorp/hcl/v2"
)

// libraryStock are the summaries of the HCL library's diagnostics, as its sources write
// them, gathered from hcl/v2 v2.25.0 with
//
//	grep -ho 'Summary: *"[^"]*"\|Summary: *fmt.Sprintf("[^"]*"\|summary *:\?= *"[^"]*"' hclsyntax/*.go *.go
//
// (test files left out) and the two constants ops.go uses as summaries.
// TestTheStockListIsTheLibrarys checks the list against the library's sources when they are
// at hand. No message of ours may hold one of these (../shared/STYLE.md).
var libraryStock = []string{
	"Ambiguous attribute key", "Argument definition required", "Argument or block definition required",
	"Attempt to get attribute from null value", "Attempt to index null value", "Attribute name required",
	"Attribute redefined", "Call to unknown function", "Condition is null", "Duplicate argument",
	"Duplicate object key", "Error in function call", "Extra characters after expression",
	"Extra characters after interpolation expression", "Extra characters in %s marker", "Extraneous label for %s",
	"Function calls not allowed", "Inconsistent conditional result types", "Incorrect condition type",
	"Incorrect key type", "Index value required", "Invalid 'for' condition", "Invalid 'for' directive",
	"Invalid 'for' expression", "Invalid argument name", "Invalid attribute name", "Invalid block definition",
	"Invalid character", "Invalid character encoding", "Invalid escape sequence", "Invalid expanding argument value",
	"Invalid expression", "Invalid function argument", "Invalid index", "Invalid legacy index syntax",
	"Invalid multi-line string", "Invalid nested splat expressions", "Invalid number literal", "Invalid object key",
	"Invalid operand", "Invalid path step", "Invalid single-argument block definition", "Invalid string literal",
	"Invalid template control keyword", "Invalid template directive", "Invalid template interpolation value",
	"Iteration over non-iterable value", "Iteration over null value", "Missing %s for %s", "Missing argument separator",
	"Missing attribute separator", "Missing attribute value", "Missing close bracket on index",
	"Missing close bracket on splat index", "Missing closing parenthesis", "Missing expression",
	"Missing false expression in conditional", "Missing function name", "Missing item separator",
	"Missing key/value separator", "Missing map element", "Missing newline after argument",
	"Missing newline after block definition", "Missing open parenthesis", "Missing required argument",
	"Nested splat expression not allowed", "Not enough function arguments", "Null condition", "Null value as key",
	"Operation failed", "Splat of null value", "Too many function arguments", "Unbalanced parentheses",
	"Unclosed configuration block", "Unclosed configuration body", "Unclosed index brackets",
	"Unclosed template interpolation sequence", "Unexpected %q block", "Unexpected %s directive",
	"Unexpected comma after argument", "Unexpected else directive", "Unexpected end of template", "Unknown variable",
	"Unsupported argument", "Unsupported attribute", "Unsupported block type", "Unsupported operator",
	"Unterminated function call", "Unterminated object constructor expression", "Unterminated string literal",
	"Unterminated template string", "Unterminated tuple constructor expression", "Variable name required",
	"Variables not allowed",
}

// stockPattern turns a summary as the library's source writes it into a pattern for the
// text it prints.
func stockPattern(format string) *regexp.Regexp {
	re := regexp.QuoteMeta(format)
	re = strings.ReplaceAll(re, "%s", `\S+`)
	re = strings.ReplaceAll(re, "%q", `"[^"]*"`)
	return regexp.MustCompile(re)
}

// stockSummaryIn is the library summary a message holds, or "".
func stockSummaryIn(msg string) string {
	for _, s := range libraryStock {
		if stockPattern(s).MatchString(msg) {
			return s
		}
	}
	return ""
}

// example is a summary as the library would print it.
func example(format string) string {
	return strings.NewReplacer("%s", "source", "%q", `"inner"`).Replace(format)
}

func TestTheStockListIsTheLibrarys(t *testing.T) {
	out, err := exec.Command("go", "list", "-m", "-f", "{{.Dir}}", "github.com/hashicorp/hcl/v2").Output()
	dir := strings.TrimSpace(string(out))
	if err != nil || dir == "" {
		t.Skip("the library's sources are not at hand:", err)
	}
	files, _ := filepath.Glob(filepath.Join(dir, "hclsyntax", "*.go"))
	root, _ := filepath.Glob(filepath.Join(dir, "*.go"))
	literal := regexp.MustCompile(`Summary:\s*(?:fmt\.Sprintf\()?"([^"]+)"|summary\s*:?=\s*"([^"]+)"`)
	named := regexp.MustCompile(`Summary:\s*([a-zA-Z]\w*),`)
	found := map[string]bool{}
	for _, f := range append(files, root...) {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range literal.FindAllStringSubmatch(string(src), -1) {
			found[m[1]+m[2]] = true
		}
		for _, m := range named.FindAllStringSubmatch(string(src), -1) {
			if m[1] == "summary" {
				continue // the variable above
			}
			def := regexp.MustCompile(`\b` + m[1] + `\s*:?=\s*"([^"]+)"`).FindStringSubmatch(string(src))
			if def == nil {
				t.Errorf("%s: a summary from %s, whose text was not found", filepath.Base(f), m[1])
				continue
			}
			found[def[1]] = true
		}
	}
	if len(found) < 50 {
		t.Fatalf("found only %d summaries in %s; has the library's layout changed?", len(found), dir)
	}
	listed := map[string]bool{}
	for _, s := range libraryStock {
		listed[s] = true
	}
	var missing []string
	for s := range found {
		if !listed[s] {
			missing = append(missing, s)
		}
	}
	sort.Strings(missing)
	for _, s := range missing {
		t.Errorf("the library says %q, which libraryStock lacks (and words.go may not word)", s)
	}
}

func TestEveryStockSummaryGetsOurWords(t *testing.T) {
	srcs := newSources(toyRegistry())
	for _, format := range libraryStock {
		summary := example(format)
		t.Run(summary, func(t *testing.T) {
			if _, ok := stockRule(summary); !ok {
				t.Fatalf("words.go has no rule for %q", summary)
			}
			d := &hcl.Diagnostic{Severity: hcl.DiagError, Summary: summary, Detail: `The argument "x" is not expected here.`,
				Subject: &hcl.Range{Filename: "analysis.hcl", Start: hcl.Pos{Line: 1, Column: 1}, End: hcl.Pos{Line: 1, Column: 1}}}
			got := srcs.inOurWords(hcl.Diagnostics{d})
			if len(got) != 1 {
				t.Fatalf("%d diagnostics", len(got))
			}
			msg := Message(got[0])
			if s := stockSummaryIn(msg); s != "" {
				t.Errorf("%q still holds the library's %q", msg, s)
			}
			if !endsSentence(got[0].Summary) || got[0].Subject == nil {
				t.Errorf("summary %q is not a sentence, or the place was lost", got[0].Summary)
			}
			d.Subject = nil
			if got := srcs.inOurWords(hcl.Diagnostics{d}); got[0].Subject != nil || stockSummaryIn(Message(got[0])) != "" {
				t.Errorf("without a place: %+v", got[0])
			}
		})
	}
}

// Each stock diagnostic a workflow can provoke, with our words for it. The text is put on
// the lines after toyHead (lines 1–3), unless it starts with "analysis".
var provoked = []struct {
	stock string // the library's summary the text provokes
	text  string
	line  int
	want  []string
}{
	{"Unsupported argument", "source \"a\" {\n  files = \"x.txt\"\n  scal = 2\n}\n", 6,
		[]string{`source "a" has no setting "scal". Did you mean "scale"? A source step takes files, scale and label.`}},
	{"Unsupported argument", "seed = 2\n", 4,
		[]string{"seed is set outside any block. It belongs in the analysis block: move it inside the braces."}},
	{"Unsupported argument", "catalogue \"c\" {\n  file = \"x.txt\"\n  idd = \"name\"\n}\n", 6,
		[]string{`catalogue "c" has no setting "idd". Did you mean "id"? A catalogue block takes file, id and columns.`}},
	{"Unsupported argument", "analysis \"toy\" {\n  seed = 1\n  stor = \"s.db\"\n}\n", 3,
		[]string{`analysis "toy" has no setting "stor". Did you mean "store"? The analysis block takes seed, store and output.`}},
	{"Unsupported block type", "sorce \"a\" {\n  files = \"x.txt\"\n}\n", 4,
		[]string{`A workflow has no block "sorce". Did you mean "source"? Its blocks are analysis, catalogue and the step kinds: combine, floor, judge, lookup, mimic, noisy, source, tally and trouble (dipline kinds describes each).`}},
	{"Unsupported block type", "source \"a\" {\n  files = \"x.txt\"\n  inner {\n  }\n}\n", 6,
		[]string{`source "a" holds a block "inner", and a block in a workflow holds settings only. Write each setting as name = value.`}},
	{"Unsupported block type", "source \"a\" {\n  files = \"x.txt\"\n  scale {\n  }\n}\n", 6,
		[]string{`source "a" holds a block "scale", and a block in a workflow holds settings only. To set scale, write scale = … instead.`}},
	{"Missing required argument", "floor \"a\" {\n}\n", 4,
		[]string{`floor "a" does not set input, which it needs (there is no default). Add input = … to it.`}},
	{"Missing required argument", "analysis \"toy\" {\n}\n", 1,
		[]string{`analysis "toy" does not set seed, which it needs (there is no default). Add seed = … to it (the workflow's seed, a whole number from 0 to 2^53;`}},
	{"Attribute redefined", "source \"a\" {\n  files = \"x.txt\"\n  scale = 2\n  scale = 3\n}\n", 7,
		[]string{`source "a" sets scale twice, on line 6 and on line 7. Keep the one you mean and delete the other.`}},
	{"Argument or block definition required", "source \"a\" {\n  files = \"x.txt\"\n  scale 2\n}\n", 6,
		[]string{`scale is followed by neither "=" nor a block's label. A setting is written scale = value, on a line of its own.`}},
	{"Argument or block definition required", "source \"a\" {\n  files = \"x.txt\"\n}\n}\n", 7,
		[]string{"This } closes no block. Delete it, or look above it for a block whose { is missing."}},
	{"Argument or block definition required", "source \"a\" {\n  files = \"x.txt\"\n  = 2\n}\n", 6,
		[]string{`A setting or a block should start here, not "=".`}},
	{"Invalid argument name", "source \"a\" {\n  files = \"x.txt\"\n  \"scale\" = 2\n}\n", 6,
		[]string{"A setting's name is written without quotes. Write scale = … instead."}},
	{"Unclosed configuration block", "source \"a\" {\n  files = \"x.txt\"\n", 4,
		[]string{`The { that opens source "a" is never closed. Close the block with } on a line of its own; if it is closed, a bracket or a quote inside it is not.`}},
	{"Missing newline after argument", "source \"a\" {\n  files = \"x.txt\" scale = 2\n}\n", 5,
		[]string{`After the value of files comes "scale" on the same line, and a setting ends its line. Start "scale" on a new line, or delete it.`}},
	{"Unexpected comma after argument", "source \"a\" {\n  files = \"x.txt\", scale = 2\n}\n", 5,
		[]string{"Settings are separated by line breaks, not commas. Delete the comma and start the next setting on a new line."}},
	{"Missing newline after block definition", "source \"a\" {\n  files = \"x.txt\"\n} source \"b\" {\n  files = \"x.txt\"\n}\n", 6,
		[]string{`"source" follows the } that closes a block, on the same line. Start the next block or setting on a line of its own.`}},
	{"Invalid block definition", "source \"a\" = {\n  files = \"x.txt\"\n}\n", 4,
		[]string{`A block's label is followed by {, not by "=". Write source "a" { … }; "=" belongs to settings.`}},
	{"Invalid block definition", "source \"a\"\n{\n  files = \"x.txt\"\n}\n", 4,
		[]string{`A block's { must be on the same line as its kind and label. Write source "a" { on one line.`}},
	{"Invalid block definition", "source \"a\" 5 {\n  files = \"x.txt\"\n}\n", 4,
		[]string{`A block's kind is followed by its label in quotes and a {, not by "5".`}},
	{"Invalid single-argument block definition", "source \"a\" { files = \"x.txt\", scale = 2 }\n", 4,
		[]string{`A block written on one line holds one setting and ends with } on that line. Write it over several lines: kind "label" {`}},
	{"Argument definition required", "source \"a\" { inner {} }\n", 4,
		[]string{"A block written on one line holds one setting and ends with } on that line."}},
	{"Invalid expression", "source \"a\" {\n  files = \n}\n", 5,
		[]string{`files = has no value. Write the value after the "=", on the same line. A value is a string in double quotes, a number`}},
	{"Invalid expression", "source \"a\" {\n  files = \"x.txt\"\n  label = {a = }\n}\n", 6,
		[]string{`An entry of an object has no value after its "=".`}},
	{"Invalid expression", "combine \"c\" {\n  inputs = source.a\n}\nsource \"a\" {\n  files = \"x.txt\"\n}\n", 5,
		[]string{"inputs takes a list in [ ]. Write inputs = [source.a], with the brackets even for one item."}},
	{"Invalid expression", "source \"a\" {\n  files = \"x.txt\"\n  scale = @\n}\n", 6,
		[]string{`The character "@" has no place in a workflow here. A value is a string in double quotes`}},
	{"Missing expression", "source \"a\" {\n  files =", 5,
		[]string{"The file ends where a value should be. Finish the setting, and close its lists, objects and block."}},
	{"Missing item separator", "source \"a\" {\n  files = [\"x.txt\" \"y\"]\n}\n", 5,
		[]string{`Two items of a list follow each other without a comma. Separate them with commas, as in ["5 h", "40 d"].`}},
	{"Missing item separator", "source \"a\" {\n  files = [\"x.txt\"\n}\n", 6,
		[]string{"A list above this line is not closed with ]."}},
	{"Missing item separator", "source \"a\" {\n  files = [\"x.txt\"\n  scale = 2\n}\n", 6,
		[]string{"A list above this line is not closed with ]."}},
	{"Missing attribute separator", "source \"a\" {\n  files = \"x.txt\"\n  label = {a = \"b\" c = \"d\"}\n}\n", 6,
		[]string{"Two entries of an object follow each other without a comma or a line break."}},
	{"Missing key/value separator", "source \"a\" {\n  files = \"x.txt\"\n  label = {a \"b\"}\n}\n", 6,
		[]string{`An entry of an object lacks its "=" or its value. Write each entry as name = value, as in { time = "BJD" }.`}},
	{"Ambiguous attribute key", "source \"a\" {\n  files = \"x.txt\"\n  label = {a.b = \"b\"}\n}\n", 6,
		[]string{`The entry name "a.b" holds a dot, and such a name must be in quotes. Write "a.b" = … instead.`}},
	{"Incorrect key type", "source \"a\" {\n  files = \"x.txt\"\n  label = {[1] = \"b\"}\n}\n", 6,
		[]string{`The names of an object's entries are plain words or strings.`}},
	{"Unbalanced parentheses", "source \"a\" {\n  files = \"x.txt\"\n  label = (\"alpha\"\n}\n", 7,
		[]string{"A ( here is never closed. A workflow's values need no parentheses: write the value itself."}},
	{"Variables not allowed", "source \"a\" {\n  files = \"x.txt\"\n  label = alpha\n}\n", 6,
		[]string{`source "a" sets label to "alpha", a name without quotes, and only a setting that takes a step may name one. If "alpha" is text, write it in quotes: label = "alpha".`}},
	{"Variables not allowed", "analysis \"toy\" {\n  seed = x\n}\n", 2,
		[]string{`The seed is "x", a name; the seed is a whole number. For example seed = 4711.`}},
	{"Invalid attribute name", "source \"a\" {\n  files = \"x.txt\"\n  label = foo.\n}\n", 6,
		[]string{"This is neither a step reference nor a catalogue row. A step is named kind.label, as in detrend.quiet"}},
	{"Invalid legacy index syntax", "source \"a\" {\n  files = \"x.txt\"\n  label = foo.0.1\n}\n", 6,
		[]string{"This is neither a step reference nor a catalogue row."}},
	{"Invalid multi-line string", "source \"a\" {\n  files = \"x.txt\n}\n", 5,
		[]string{`This string is not closed on its line. End it with " before the line ends: a string in a workflow stays on one line.`}},
	{"Unterminated template string", "source \"a\" {\n  files = \"x.txt", 5,
		[]string{"This string is not closed on its line."}},
	{"Invalid escape sequence", "source \"a\" {\n  files = \"x\\q.txt\"\n}\n", 5,
		[]string{`"\q" is no escape a string can hold. Write \\ for a backslash (or / in a path)`}},
	{"Invalid character", "source \"a\" {\n  files = 'x.txt'\n}\n", 5,
		[]string{`Strings are written in double quotes, not single ones. Write "…" for '…'.`}},
	{"Invalid character", "source \"a\" {\n  files = “x.txt”\n}\n", 5,
		[]string{"A curly quote is no quote to a workflow."}},
	{"Invalid character", "source \"a\" {\n  files = \"x.txt\";\n}\n", 5,
		[]string{"A semicolon has no place in a workflow."}},
	{"Invalid character", "source \"a\" {\n  files = `x.txt`\n}\n", 5,
		[]string{"A backtick has no place in a workflow."}},
	{"Invalid character encoding", "source \"a\" {\n  files = \"x.txt\"\n  label = \"\xff\"\n}\n", 6,
		[]string{"This line holds bytes that are not UTF-8 text. Save the workflow as UTF-8"}},
	{"Extraneous label for %s", "source \"a\" \"b\" {\n  files = \"x.txt\"\n}\n", 4,
		[]string{`A source block takes one label, and "b" is one too many. Write source "a" { … }.`}},
	{"Missing %s for %s", "source {\n  files = \"x.txt\"\n}\n", 4,
		[]string{`This source block has no label. Give it one in quotes: source "my-label" { … }; other steps then refer to it as source.my-label.`}},
	{"Missing %s for %s", "analysis {\n  seed = 1\n}\n", 1,
		[]string{`The analysis block has no name. Give it one in quotes: analysis "my-star" { … }.`}},
}

func TestTheLibrarysMistakesAreToldInOurWords(t *testing.T) {
	for _, c := range provoked {
		t.Run(c.stock+": "+strings.SplitN(c.want[0], ".", 2)[0], func(t *testing.T) {
			text := c.text
			if !strings.HasPrefix(text, "analysis") {
				text = toyHead + text
			}
			_, diags := loadText(t, text)
			if !diags.HasErrors() {
				t.Fatal("loaded")
			}
			d := diags[0]
			msg := Message(d)
			for _, w := range c.want {
				if !strings.Contains(msg, w) {
					t.Errorf("message\n\t%s\ndoes not say\n\t%s", msg, w)
				}
			}
			if d.Subject == nil || d.Subject.Start.Line != c.line {
				t.Errorf("diagnostic at %v, want line %d", d.Subject, c.line)
			}
			for _, d := range diags {
				if s := stockSummaryIn(Message(d)); s != "" {
					t.Errorf("a message holds the library's %q: %s", s, Message(d))
				}
			}
		})
	}
}

// brokenWorkflows are more mistakes, beyond those above, that a person may make.
var brokenWorkflows = []string{
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = foo[\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = [\"a\"][\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = {(null) = \"b\"}\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = a::b(1)\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = <<EOT\nabc\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  scale = 0x10\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = {a = \"b\"\n",
	toyHead + "source \"a\" {\n  files = [\"x.txt\",\n",
	toyHead + "floor \"f\" {\n  input = source\n}\n",
	toyHead + "floor \"f\" {\n  input = source.a.b\n}\n",
	toyHead + "floor \"f\" {\n  input = \"source.a\"\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = \"${1}\"\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = \"%{if true}a%{endif}\"\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = [for x in [1] : x]\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = true ? \"a\" : \"b\"\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = upper(\"a\")\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  label = a.*.b\n}\n",
	toyHead + "source \"a\" {\n  files = \"x.txt\"\n  nested \"x\" {\n  }\n}\n",
	toyHead + "source \"a\" \"b\" \"c\" {\n}\n",
	"analysis \"toy\" \"extra\" {\n  seed = 1\n}\n",
	"analysis \"toy\" {\n  seed = 1\n}\nanalysis \"two\" {\n  seed = 2\n}\n",
	"analysis \"toy\" {\n  seed = -1\n  store = 5\n  output = true\n}\n",
	"analysis \"toy\" {\n  seed = 1\n}\ncatalogue {\n}\n",
	"analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = 1\n  id = 2\n  columns = 3\n}\n",
	"\x00\x01\x02 binary \xfe\xff\n",
	"{\n}\n",
	"analysis \"toy\" {\n  seed = 1\n",
	"analysis \"toy\" { seed = 1 store = \"x\" }\n",
	"analysis \"toy\" {\n  seed = 1\n}\n\nsource \"a\" {\n  files = \"x.txt\"\n  files = \"x.txt\"\n  scale = 1\n  label = 'alpha'\n}\n",
}

func TestNoStockSentenceSurvives(t *testing.T) {
	texts := append([]string(nil), brokenWorkflows...)
	for _, c := range provoked {
		texts = append(texts, toyHead+c.text)
	}
	for _, text := range texts {
		_, diags := loadText(t, text)
		var out bytes.Buffer
		if err := FormatDiagnostics(&out, diags); err != nil {
			t.Fatal(err)
		}
		for _, d := range diags {
			if s := stockSummaryIn(Message(d)); s != "" {
				t.Errorf("%q:\nthe message holds the library's %q: %s", text, s, Message(d))
			}
			if !endsSentence(d.Summary) {
				t.Errorf("%q:\nthe summary %q is a heading, not a sentence", text, d.Summary)
			}
		}
		if s := stockSummaryIn(out.String()); s != "" {
			t.Errorf("%q:\nthe printed text holds the library's %q:\n%s", text, s, out.String())
		}
		if strings.Contains(out.String(), "error:") || strings.Contains(out.String(), "warning:") {
			t.Errorf("%q:\nthe printed text tags its messages:\n%s", text, out.String())
		}
	}
}

func TestASetValueIsToldInOurWords(t *testing.T) {
	p := chainProject(t)
	_, err := p.load(Override{Addr: "source.b", Attr: "scale", Value: "5 6"})
	diags, ok := err.(hcl.Diagnostics)
	if !ok || !diags.HasErrors() {
		t.Fatalf("err = %v", err)
	}
	var out bytes.Buffer
	FormatDiagnostics(&out, diags)
	want := "--set source.b.scale: After the value comes more: \"6\". A --set gives one value; a string, such as a quantity with its unit, is written in double quotes, and the whole option in single quotes for the shell: --set 'detrend.quiet.span=\"12 h\"'.\n" +
		"      | 5 6\n" +
		"      |   ^\n"
	if out.String() != want {
		t.Errorf("printed\n%s\nwant\n%s", out.String(), want)
	}
	_, err = p.load(Override{Addr: "source.b", Attr: "scale", Value: "[1,"})
	if msg := Message(err.(hcl.Diagnostics)[0]); msg != "The value of this --set ends where more should follow. Close its lists and objects." {
		t.Errorf("message %s", msg)
	}
}

// A --set that names nothing says what it names, and the nearest name.
func TestASetThatNamesNothingSaysSo(t *testing.T) {
	p := newProject(t, map[string]string{"x.txt": "1\n", "analysis.hcl": "analysis \"x\" {\n  seed = 1\n}\nsource \"b\" {\n  files = \"x.txt\"\n}\n"})
	for _, tc := range []struct{ set, want string }{
		{"source.b.scal=2", `--set source.b.scal names no setting: a source step has no setting "scal". Did you mean "scale"?`},
		{"source.c.scale=2", `--set source.c.scale names no step: there is no step source.c. Did you mean "source.b"?`},
	} {
		o, err := ParseOverride(tc.set)
		if err != nil {
			t.Fatal(err)
		}
		_, err = p.load(o)
		diags, _ := err.(hcl.Diagnostics)
		if len(diags) == 0 || Message(diags[0]) != tc.want {
			t.Errorf("--set %s: got %v\nwant %s", tc.set, err, tc.want)
		}
	}
}

// Our own texts (load.go, syntax.go, graph.go, access.go, catalogue.go), each with a mistake
// that provokes it.
func TestOurOwnMessagesReadAsOneMessage(t *testing.T) {
	cases := []struct {
		name, text string
		line       int
		want       string
	}{
		{"a second catalogue of one label", "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = \"stars.csv\"\n  id = \"name\"\n}\ncatalogue \"c\" {\n  file = \"stars.csv\"\n}\n", 8,
			`There are two catalogue blocks "c", and each catalogue needs a label of its own. Rename one, or delete it.`},
		{"a second analysis block", "analysis \"toy\" {\n  seed = 1\n}\nanalysis \"two\" {\n  seed = 2\n}\n", 4,
			"This is a second analysis block, and a workflow has one. Move its settings into the first and delete it."},
		{"a label that cannot be referred to", "analysis \"toy\" {\n  seed = 1\n}\nsource \"2a\" {\n  files = \"x.txt\"\n}\n", 4,
			`The label "2a" cannot name a step, as other steps could not refer to it as source.<label>. A label holds letters, digits, '_' and '-', and starts with a letter.`},
		{"a seed that is not a whole number", "analysis \"toy\" {\n  seed = 1.5\n}\n", 2,
			"The seed must be a whole number from 0 to 2^53. For example seed = 4711."},
		{"a seed one past 2^53, which a float64 would round onto 2^53", "analysis \"toy\" {\n  seed = 9007199254740993\n}\n", 2,
			"The seed must be a whole number from 0 to 2^53. For example seed = 4711."},
		{"a store that is not a path", "analysis \"toy\" {\n  seed = 1\n  store = 5\n}\n", 3,
			`store takes a path in quotes, relative to the workflow's folder. For example store = ".dipline/store.db".`},
		{"an output that is not a path", "analysis \"toy\" {\n  seed = 1\n  output = true\n}\n", 3,
			`output takes a path in quotes, relative to the workflow's folder. For example output = "results".`},
		{"a step that reads itself", "analysis \"toy\" {\n  seed = 1\n}\ncombine \"c\" {\n  inputs = [combine.c]\n}\n", 5,
			`combine "c" reads its own result for inputs. A step can only take the results of other steps.`},
		{"a step that takes its own settings", "analysis \"toy\" {\n  seed = 1\n}\nsource \"a\" {\n  files = \"x.txt\"\n}\nmimic \"m\" {\n  input = source.a\n  like = mimic.m\n}\n", 9,
			`mimic "m" takes the settings of mimic.m for like, but like takes a source step, not a mimic step.`},
		{"settings taken from a step of another kind", "analysis \"toy\" {\n  seed = 1\n}\nsource \"a\" {\n  files = \"x.txt\"\n}\nfloor \"f\" {\n  input = source.a\n}\nmimic \"m\" {\n  input = source.a\n  like = floor.f\n}\n", 12,
			`mimic "m" takes the settings of floor.f for like, but like takes a source step, not a floor step.`},
		{"settings taken from a step the workflow lacks", "analysis \"toy\" {\n  seed = 1\n}\nsource \"a\" {\n  files = \"x.txt\"\n}\nmimic \"m\" {\n  input = source.a\n  like = source.b\n}\n", 9,
			`mimic "m" takes the settings of source.b for like, and there is no source step "b".`},
		{"a reference to a kind the workflow lacks", "analysis \"toy\" {\n  seed = 1\n}\nsource \"a\" {\n  files = \"x.txt\"\n}\nfloor \"f\" {\n  input = combine.a\n}\n", 8,
			`floor "f" reads combine.a for input, and the workflow has no step combine.a.`},
		{"a store that is a folder", "analysis \"toy\" {\n  seed = 1\n  store = \"sub\"\n}\n", 3,
			`"sub" is a folder, and the store is a file. For example store = ".dipline/store.db".`},
		{"a data file that is a folder", "analysis \"toy\" {\n  seed = 1\n}\nsource \"a\" {\n  files = \"sub\"\n}\n", 5,
			`"sub" is a folder, not a file. Name a file in it.`},
		{"a catalogue's id that is not a name", "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = \"x.txt\"\n  id = 2\n}\n", 6,
			`id takes the name of the catalogue's id column, in quotes. For example id = "name".`},
		{"a catalogue's columns that are not an object", "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = \"x.txt\"\n  columns = 3\n}\n", 6,
			`columns takes an object that maps the names steps ask for to this file's columns. For example columns = { parallax = "plx" }.`},
		{"a catalogue's column that is not a name", "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = \"x.txt\"\n  columns = { parallax = 3 }\n}\n", 6,
			`columns gives "parallax" no column name in quotes. For example columns = { parallax = "…" }.`},
		{"a catalogue's file that is not a path", "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = 1\n}\n", 5,
			`file takes the catalogue's path in quotes, relative to the workflow's folder. For example file = "stars.csv".`},
		{"a row of a catalogue that did not load", "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = \"nope.csv\"\n}\nlookup \"l\" {\n  row = catalogue.c[\"FW-1\"]\n}\n", 5,
			`There is no file "nope.csv"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := newProject(t, map[string]string{"analysis.hcl": c.text, "x.txt": "1\n", "sub/y.txt": "1\n", "stars.csv": stars})
			_, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), toyRegistry(), nil)
			if !diags.HasErrors() {
				t.Fatal("loaded")
			}
			d := diags[0]
			if msg := Message(d); !strings.Contains(msg, c.want) {
				t.Errorf("message\n\t%s\ndoes not say\n\t%s", msg, c.want)
			}
			if d.Subject == nil || d.Subject.Start.Line != c.line {
				t.Errorf("diagnostic at %v, want line %d", d.Subject, c.line)
			}
		})
	}
	t.Run("a missing workflow file", func(t *testing.T) {
		_, diags := Load(filepath.Join(t.TempDir(), "analysis.hcl"), toyRegistry())
		if msg := Message(diags[0]); !strings.Contains(msg, "There is no workflow file ") || !strings.Contains(msg, "dipline starter writes one") {
			t.Errorf("message %s", msg)
		}
	})
	t.Run("a workflow that is a folder", func(t *testing.T) {
		dir := t.TempDir()
		_, diags := Load(dir, toyRegistry())
		if msg := Message(diags[0]); msg != dir+" is not a regular file, so it cannot be a workflow. Name the workflow's file." {
			t.Errorf("message %s", msg)
		}
	})
	t.Run("a row of a catalogue that did not load is not said to be missing", func(t *testing.T) {
		p := newProject(t, map[string]string{"analysis.hcl": "analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"c\" {\n  file = \"nope.csv\"\n}\nlookup \"l\" {\n  row = catalogue.c[\"FW-1\"]\n}\n"})
		_, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), toyRegistry(), nil)
		if len(diags) != 2 || Message(diags[1]) != `The catalogue "c" did not load, so its rows cannot be read. The message about its file says why.` {
			t.Errorf("diagnostics %v", diags)
		}
	})
}
