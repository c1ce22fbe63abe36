package workflow

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/hashicorp/hcl/v2"
)

// loadText loads a workflow text in a fresh folder (with x.txt beside it) and fails the test
// if loading takes more than a second: a guard against hangs, not a speed target.
func loadText(t *testing.T, text string) (*Workflow, hcl.Diagnostics) {
	t.Helper()
	p := newProject(t, map[string]string{"analysis.hcl": text, "x.txt": "1\n"})
	type result struct {
		w *Workflow
		d hcl.Diagnostics
	}
	done := make(chan result, 1)
	start := time.Now()
	go func() {
		w, d := LoadWith(filepath.Join(p.dir, "analysis.hcl"), toyRegistry(), nil)
		done <- result{w, d}
	}()
	select {
	case r := <-done:
		if d := time.Since(start); d > time.Second {
			t.Errorf("loading took %s", d)
		}
		return r.w, r.d
	case <-time.After(10 * time.Second):
		t.Fatal("loading did not finish in 10 s")
	}
	return nil, nil
}

// nestedForLoops is a 510-byte-class template whose loops multiply: evaluated, it runs for
// minutes.
func nestedForLoops() string {
	list := "[" + strings.TrimSuffix(strings.Repeat("1,", 30), ",") + "]"
	body := "x"
	for i := 0; i < 6; i++ {
		body = "%{ for v in " + list + " }" + body + "%{ endfor }"
	}
	return body
}

// stockSentences are the HCL library's own diagnostic summaries for these cases: our
// messages must not be them (../shared/STYLE.md).
var stockSentences = []string{"Variables not allowed", "Function calls not allowed", "Invalid template interpolation value",
	"Unsupported operator", "Invalid expression"}

func TestComputedValuesAreRefusedBeforeAnyIsEvaluated(t *testing.T) {
	cases := []struct {
		name  string
		value string // the value of source.a's label, on line 6
		want  string // the summary
	}{
		{"an interpolation", `"${1 + 1}"`, "Template in a string"},
		{"nested for loops in a template", `"` + nestedForLoops() + `"`, "Template in a string"},
		{"a for expression", `[for v in [1, 2, 3] : v]`, "Loop in a workflow"},
		{"a for expression building an object", `{for k, v in {a = 1} : k => v}`, "Loop in a workflow"},
		{"arithmetic", `1 / 2`, "Operator in a workflow"},
		{"a subtraction", `3 - 1`, "Computed value"},
		{"a condition", `true ? "alpha" : "beta"`, "Operator in a workflow"},
		{"a function call", `upper("alpha")`, "Computed value"},
		{"a negation of a negation", `- -1`, "Minus sign without a number"},
		{"a splat", `[1, 2][*]`, "Operator in a workflow"},
		{"an index into a list", `["alpha"][0]`, "Computed value"},
		{"a logical not", `!true`, "Operator in a workflow"},
	}
	for _, c := range cases {
		t.Run(c.name+" is refused at its line", func(t *testing.T) {
			_, diags := loadText(t, toyHead+"source \"a\" {\n  files = \"x.txt\"\n  label = "+c.value+"\n}\n")
			if !diags.HasErrors() {
				t.Fatal("loaded")
			}
			d := diags[0]
			if d.Summary != c.want {
				t.Errorf("summary %q, want %q (%s)", d.Summary, c.want, d.Detail)
			}
			if d.Subject == nil || d.Subject.Start.Line != 6 {
				t.Errorf("diagnostic at %v, want line 6", d.Subject)
			}
			for _, s := range stockSentences {
				if strings.Contains(diags.Error(), s) {
					t.Errorf("the message is the library's own: %s", diags.Error())
				}
			}
		})
	}
}

func TestPlainValuesStillLoad(t *testing.T) {
	w, diags := loadText(t, `analysis "toy" {
  seed  = 1
  store = "a$${b}%%{c}.db" # escapes keep a literal ${ and %{
}
source "a" {
  files = ["x.txt"] // a list of one
  scale = -2.5e-1
  label = "alpha"
}
combine "c" {
  inputs = [source.a]
  offset = "1 h"
}
`)
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	if !strings.HasSuffix(w.StorePath, "a${b}%{c}.db") {
		t.Errorf("store %s", w.StorePath)
	}
	if got := w.Step("source.a").Values["scale"]; got != -0.25 {
		t.Errorf("scale %v", got)
	}
}

func TestDeepOrLongInputIsRefusedAtOnce(t *testing.T) {
	cases := []struct {
		name  string
		value string
		want  string
		line  int
	}{
		{"thirty thousand nested brackets", strings.Repeat("[", 30000) + strings.Repeat("]", 30000), "Nesting too deep", 6},
		{"ten thousand nested objects", strings.Repeat("{a=", 10000) + "1" + strings.Repeat("}", 10000), "Nesting too deep", 6},
		{"sixty thousand minus signs", strings.Repeat("-", 60000) + "1", "Minus sign without a number", 6},
		{"a long chain of conditions", strings.Repeat("true ? 1 : ", 5000) + "1", "Operator in a workflow", 6},
		{"a long chain of additions", strings.Repeat("1 + ", 15000) + "1", "Operator in a workflow", 6},
		{"a string longer than a path", `"` + strings.Repeat("a", maxStringBytes+1) + `"`, "String too long", 6},
		{"a heredoc longer than a path", "<<EOT\n" + strings.Repeat("a", maxStringBytes+1) + "\nEOT", "String too long", 6},
		{"a list of more than a thousand items", "[" + strings.Repeat(`"a",`, maxListItems+1) + "]", "List too long", 6},
		{"an object of more than a thousand items", "{" + strings.Repeat(`a = 1, `, maxListItems+1) + "}", "List too long", 6},
		{"a number of a thousand digits", strings.Repeat("9", 1000), "Number too long", 6},
	}
	for _, c := range cases {
		t.Run(c.name+" is refused within a second", func(t *testing.T) {
			_, diags := loadText(t, toyHead+"source \"a\" {\n  files = \"x.txt\"\n  label = "+c.value+"\n}\n")
			if !diags.HasErrors() {
				t.Fatal("loaded")
			}
			if d := diags[0]; d.Summary != c.want || d.Subject == nil || d.Subject.Start.Line != c.line {
				t.Errorf("first diagnostic %q at %v (%s); want %q at line %d", d.Summary, d.Subject, d.Detail, c.want, c.line)
			}
		})
	}
}

func TestAHundredThousandNestedBracketsAreRefusedAtOnce(t *testing.T) {
	_, diags := loadText(t, toyHead+"source \"a\" {\n  files = \"x.txt\"\n  label = "+
		strings.Repeat("[", 100000)+strings.Repeat("]", 100000)+"\n}\n")
	if !diags.HasErrors() || diags[0].Summary != "Workflow file too large" {
		t.Fatalf("diags %v", diags)
	}
}

func TestAWorkflowFileIsMeasuredBeforeItIsRead(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "analysis.hcl")
	// A 100 MB string value: the file's size refuses it before a byte is read.
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	f.WriteString(toyHead + "source \"a\" {\n  files = \"")
	chunk := []byte(strings.Repeat("a", 1<<20))
	for range 100 {
		if _, err := f.Write(chunk); err != nil {
			t.Fatal(err)
		}
	}
	f.WriteString("\"\n}\n")
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	_, diags := Load(path, toyRegistry())
	if !diags.HasErrors() || diags[0].Summary != "Workflow file too large" || !strings.Contains(diags[0].Detail, "is 100 MiB") {
		t.Fatalf("diags %v", diags)
	}
}

func TestADamagedFileGivesAFewMessagesNotOnePerLine(t *testing.T) {
	_, diags := loadText(t, strings.Repeat("a b c\n", 10000)) // 10,000 blocks without braces
	if len(diags) != maxDiagnostics+1 || !strings.Contains(diags[maxDiagnostics].Detail, "more like these") {
		t.Fatalf("%d diagnostics; want %d and a count of the rest", len(diags), maxDiagnostics+1)
	}
}

func TestAnOverrideIsHeldToTheSameRules(t *testing.T) {
	p := chainProject(t)
	_, err := p.load(Override{Addr: "source.b", Attr: "scale", Value: "[for v in [1, 2] : v]"})
	if err == nil || !strings.Contains(err.Error(), "Loop in a workflow") {
		t.Fatalf("err = %v", err)
	}
}

func TestSizesReadAndWrite(t *testing.T) {
	cases := []struct {
		in   string
		want int64
	}{
		{"2GiB", 2 << 30}, {"750 MB", 750e6}, {"512mib", 512 << 20}, {"1000000", 1e6}, {"1.5 KiB", 1536},
	}
	for _, c := range cases {
		t.Run(c.in+" reads as a byte count", func(t *testing.T) {
			if got, err := ParseSize(c.in); err != nil || got != c.want {
				t.Errorf("ParseSize(%q) = %d, %v; want %d", c.in, got, err, c.want)
			}
		})
	}
	for _, bad := range []string{"", "lots", "-1GB", "2 parsecs", "1e30 TB"} {
		t.Run(bad+" is refused", func(t *testing.T) {
			if _, err := ParseSize(bad); err == nil {
				t.Errorf("ParseSize(%q) accepted", bad)
			}
		})
	}
	for n, want := range map[int64]string{300: "300 B", 1536: "1.5 KiB", 1 << 30: "1 GiB", 512 << 20: "512 MiB"} {
		if got := FormatSize(n); got != want {
			t.Errorf("FormatSize(%d) = %q, want %q", n, got, want)
		}
	}
}
