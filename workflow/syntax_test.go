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
// if loading has not finished in 10 s: a guard against hangs and runaway evaluation (the
// hostile texts below would run for hours), not a speed target, so it is far above the
// milliseconds a load takes even on a busy machine.
func loadText(t *testing.T, text string) (*Workflow, hcl.Diagnostics) {
	t.Helper()
	p := newProject(t, map[string]string{"analysis.hcl": text, "x.txt": "1\n"})
	type result struct {
		w *Workflow
		d hcl.Diagnostics
	}
	done := make(chan result, 1)
	go func() {
		w, d := LoadWith(filepath.Join(p.dir, "analysis.hcl"), toyRegistry(), nil)
		done <- result{w, d}
	}()
	select {
	case r := <-done:
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

func TestComputedValuesAreRefusedBeforeAnyIsEvaluated(t *testing.T) {
	cases := []struct {
		name  string
		value string // the value of source.a's label, on line 6
		want  string // the summary
	}{
		{"an interpolation", `"${1 + 1}"`, "Strings in a workflow are taken as written: ${ … } and %{ … } are not filled in."},
		{"nested for loops in a template", `"` + nestedForLoops() + `"`, "Strings in a workflow are taken as written: ${ … } and %{ … } are not filled in."},
		{"a for expression", `[for v in [1, 2, 3] : v]`, "This is a for expression, and nothing in a workflow is computed."},
		{"a for expression building an object", `{for k, v in {a = 1} : k => v}`, "This is a for expression, and nothing in a workflow is computed."},
		{"arithmetic", `1 / 2`, `"/" computes something, and nothing in a workflow is computed.`},
		{"a subtraction", `3 - 1`, "This is arithmetic or a comparison, and nothing in a workflow is computed."},
		{"a condition", `true ? "alpha" : "beta"`, `"?" computes something, and nothing in a workflow is computed.`},
		{"a function call", `upper("alpha")`, "This is a function call, and nothing in a workflow is computed."},
		{"a negation of a negation", `- -1`, "A minus sign belongs directly before a number, as in -0.5."},
		{"a splat", `[1, 2][*]`, `"*" computes something, and nothing in a workflow is computed.`},
		{"an index into a list", `["alpha"][0]`, "This is a look-up into a computed value, and nothing in a workflow is computed."},
		{"a logical not", `!true`, `"!" computes something, and nothing in a workflow is computed.`},
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
			for _, d := range diags {
				if s := stockSummaryIn(Message(d)); s != "" {
					t.Errorf("the message holds the library's %q: %s", s, Message(d))
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
	if got := w.Step("source.a").Config.(*sourceConfig).Scale; got != -0.25 {
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
		{"thirty thousand nested brackets", strings.Repeat("[", 30000) + strings.Repeat("]", 30000), "nest more than 32 deep here", 6},
		{"ten thousand nested objects", strings.Repeat("{a=", 10000) + "1" + strings.Repeat("}", 10000), "nest more than 32 deep here", 6},
		{"sixty thousand minus signs", strings.Repeat("-", 60000) + "1", "A minus sign belongs directly before a number", 6},
		{"a long chain of conditions", strings.Repeat("true ? 1 : ", 5000) + "1", `"?" computes something`, 6},
		{"a long chain of additions", strings.Repeat("1 + ", 15000) + "1", `"+" computes something`, 6},
		{"a string longer than a path", `"` + strings.Repeat("a", maxStringBytes+1) + `"`, "This string is longer than 4,096 bytes.", 6},
		{"a heredoc longer than a path", "<<EOT\n" + strings.Repeat("a", maxStringBytes+1) + "\nEOT", "This string is longer than 4,096 bytes.", 6},
		{"a list of more than a thousand items", "[" + strings.Repeat(`"a",`, maxListItems+1) + "]", "This list or object has 1,001 items, and the bound is 1,000.", 6},
		{"an object of more than a thousand items", "{" + strings.Repeat(`a = 1, `, maxListItems+1) + "}", "This list or object has 1,001 items, and the bound is 1,000.", 6},
		{"a number of a thousand digits", strings.Repeat("9", 1000), "This number is written with 1,000 characters", 6},
	}
	for _, c := range cases {
		t.Run(c.name+" is refused within a second", func(t *testing.T) {
			_, diags := loadText(t, toyHead+"source \"a\" {\n  files = \"x.txt\"\n  label = "+c.value+"\n}\n")
			if !diags.HasErrors() {
				t.Fatal("loaded")
			}
			if d := diags[0]; !strings.Contains(d.Summary, c.want) || d.Subject == nil || d.Subject.Start.Line != c.line {
				t.Errorf("first diagnostic %q at %v (%s); want %q at line %d", d.Summary, d.Subject, d.Detail, c.want, c.line)
			}
		})
	}
}

func TestAHundredThousandNestedBracketsAreRefusedAtOnce(t *testing.T) {
	_, diags := loadText(t, toyHead+"source \"a\" {\n  files = \"x.txt\"\n  label = "+
		strings.Repeat("[", 100000)+strings.Repeat("]", 100000)+"\n}\n")
	if !diags.HasErrors() || !strings.Contains(Message(diags[0]), "KiB, and a workflow file may be at most 64 KiB.") {
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
	if !diags.HasErrors() || !strings.Contains(Message(diags[0]), "is 100 MiB, and a workflow file may be at most 64 KiB.") {
		t.Fatalf("diags %v", diags)
	}
}

func TestADamagedFileGivesAFewMessagesNotOnePerLine(t *testing.T) {
	_, diags := loadText(t, strings.Repeat("a b c\n", 10000)) // 10,000 blocks without braces
	if len(diags) != maxDiagnostics+1 || !strings.Contains(Message(diags[maxDiagnostics]), "more mistakes like these") {
		t.Fatalf("%d diagnostics; want %d and a count of the rest", len(diags), maxDiagnostics+1)
	}
}

func TestAnOverrideIsHeldToTheSameRules(t *testing.T) {
	p := chainProject(t)
	_, err := p.load(Override{Addr: "source.b", Attr: "scale", Value: "[for v in [1, 2] : v]"})
	if err == nil || !strings.Contains(err.Error(), "This is a for expression, and nothing in a workflow is computed.") {
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
