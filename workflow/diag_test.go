package workflow

import (
	"path/filepath"
	"strings"
	"testing"

	"github.com/hashicorp/hcl/v2"
)

func TestDiagnosticsPointAtTheMistake(t *testing.T) {
	head := "analysis \"toy\" {\n  seed = 1\n}\nsource \"a\" {\n  files = \"x.txt\"\n}\n" // lines 1–6
	cases := []struct {
		name string
		body string // appended at line 7
		line int
		want []string
	}{
		{"an unknown block type is named with a suggestion", "combin \"s\" {\n}\n", 7,
			[]string{`A workflow has no block "combin".`, `Did you mean "combine"?`}},
		{"an unknown attribute is named with a suggestion", "combine \"s\" {\n  inputs = [source.a]\n  ofset = \"1 h\"\n}\n", 9,
			[]string{`combine "s" has no setting "ofset".`, `Did you mean "offset"?`, "A combine step takes inputs, offset and window."}},
		{"a wrong type says what was given", "combine \"s\" {\n  inputs = [source.a]\n  offset = true\n}\n", 9,
			[]string{"offset", "this is the value true"}},
		{"a missing unit suggests one", "combine \"s\" {\n  inputs = [source.a]\n  offset = 12\n}\n", 9,
			[]string{"offset", `"12 d"`}},
		{"a wrong unit lists the right ones", "combine \"s\" {\n  inputs = [source.a]\n  offset = \"12 km\"\n}\n", 9,
			[]string{"offset", "unknown time unit", "min"}},
		{"a reference to a missing step suggests the closest", "floor \"f\" {\n  input = source.aa\n}\n", 8,
			[]string{`floor "f" reads source.aa for input, and there is no source step "aa".`, `Did you mean source.a?`}},
		{"a reference to the wrong kind says which kinds fit", "floor \"f\" {\n  input = floor.g\n}\nfloor \"g\" {\n  input = source.a\n}\n", 8,
			[]string{`floor "f" reads floor.g for input, but input takes a source or combine step, not a floor step.`}},
		{"a quoted reference is explained", "floor \"f\" {\n  input = \"source.a\"\n}\n", 8,
			[]string{"A step reference is written without quotes.", "source.a"}},
		{"a missing file is named", "source \"b\" {\n  files = [\"nope.txt\"]\n}\n", 8,
			[]string{`There is no file "nope.txt"`}},
		{"a file outside the folder is refused", "source \"b\" {\n  files = \"../x.txt\"\n}\n", 8,
			[]string{`The file "../x.txt" lies outside the workflow's folder`, "--also-allow"}},
		{"a missing required attribute is named", "floor \"f\" {\n}\n", 7,
			[]string{`floor "f" does not set input, which it needs (there is no default).`, "Add input = …"}},
		{"an unknown choice suggests the closest", "source \"b\" {\n  files = \"x.txt\"\n  label = \"alhpa\"\n}\n", 9,
			[]string{`"alhpa"`, `Did you mean "alpha"?`}},
		{"a kind's own check points at its attribute", "source \"b\" {\n  files = \"x.txt\"\n  scale = 0\n}\n", 9,
			[]string{"scale", "must not be zero"}},
		{"a duplicate step is refused", "source \"a\" {\n  files = \"x.txt\"\n}\n", 7,
			[]string{"There are two steps source.a, on line 4 and on line 7."}},
		{"a cycle prints its path", "combine \"p\" {\n  inputs = [combine.q]\n}\ncombine \"q\" {\n  inputs = [combine.p]\n}\n", 7,
			[]string{"Steps depend on each other in a cycle: combine.p → combine.q → combine.p."}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := newProject(t, map[string]string{"analysis.hcl": head + c.body, "x.txt": "1\n"})
			_, err := p.load()
			diags, ok := err.(hcl.Diagnostics)
			if !ok || !diags.HasErrors() {
				t.Fatalf("no diagnostics; err = %v", err)
			}
			d := diags[0]
			text := Message(d)
			for _, w := range c.want {
				if !strings.Contains(text, w) {
					t.Errorf("diagnostic %q does not say %q", text, w)
				}
			}
			if d.Subject == nil || filepath.Base(d.Subject.Filename) != "analysis.hcl" || d.Subject.Start.Line != c.line {
				t.Errorf("diagnostic at %v, want analysis.hcl line %d", d.Subject, c.line)
			}
		})
	}
}

func TestOverrideThatMatchesNothingIsAnError(t *testing.T) {
	p := chainProject(t)
	_, err := p.load(Override{Addr: "source.b", Attr: "scal", Value: "2"})
	if err == nil || !strings.Contains(err.Error(), `Did you mean "scale"?`) {
		t.Fatalf("err = %v", err)
	}
}

func TestMissingAnalysisBlock(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": "source \"a\" { files = \"x.txt\" }\n", "x.txt": "1"})
	_, err := p.load()
	if err == nil || !strings.Contains(err.Error(), "The workflow has no analysis block.") {
		t.Fatalf("err = %v", err)
	}
}

func TestOrderPutsDependenciesFirst(t *testing.T) {
	p := newProject(t, map[string]string{
		"analysis.hcl": `
analysis "toy" { seed = 1 }
combine "last" { inputs = [floor.mid, source.a] }
floor "mid" { input = source.a }
source "a" { files = "x.txt" }
`, "x.txt": "1"})
	w, err := p.load()
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, s := range w.Order {
		got = append(got, s.Addr)
	}
	if strings.Join(got, " ") != "source.a floor.mid combine.last" {
		t.Fatalf("order %v", got)
	}
	if deps := w.Dependants(w.Step("source.a")); len(deps) != 2 {
		t.Fatalf("dependants of source.a: %d, want 2", len(deps))
	}
}
