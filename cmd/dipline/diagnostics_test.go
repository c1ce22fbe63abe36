package main

import (
	"fmt"
	"regexp"
	"strings"
	"testing"
)

// stockWords are summaries of the HCL library's diagnostics that the mistakes below would
// print if they reached the user unchanged (the full list, checked against the library's
// sources, is in workflow/words_test.go).
var stockWords = []string{"Unsupported argument", "Unsupported block type", "Missing required argument",
	"Attribute redefined", "Variables not allowed", "Argument or block definition required", "Invalid expression",
	"Missing newline after argument", "Unclosed configuration block", "Invalid multi-line string",
	"Unterminated template string", "Missing item separator", "Invalid character", "Extraneous label for",
	"Missing label for", "Invalid block definition", "Missing expression", "argument"}

func TestMistakesArePrintedInOurLayoutAndWords(t *testing.T) {
	cases := []struct {
		name, from, to string
		line           int
		says           string
	}{
		{"a misspelt setting", "span        = \"0.5 d\"", "spann       = \"0.5 d\"", 12,
			`detrend "quiet" has no setting "spann". Did you mean "span"?`},
		{"a misspelt block kind", `search "dips" {`, `serch "dips" {`, 15, `A workflow has no block "serch". Did you mean "search"?`},
		{"a missing setting", "  light_curve = detrend.quiet\n", "", 15, `search "dips" does not set light_curve, which it needs`},
		{"a setting twice", "  span        = \"0.5 d\"\n", "  span        = \"0.5 d\"\n  span = \"1 d\"\n", 13,
			`detrend "quiet" sets span twice, on line 12 and on line 13.`},
		{"a name without quotes", "span        = \"0.5 d\"", "span        = half", 12,
			`detrend "quiet" sets span to "half", a name without quotes`},
		{"a block that is never closed", "search \"dips\" {\n  light_curve = detrend.quiet\n}\n", "search \"dips\" {\n  light_curve = detrend.quiet\n", 15,
			`The { that opens search "dips" is never closed.`},
		{"a string that is never closed", `files     = "lc.csv"`, `files     = "lc.csv`, 6, "This string is not closed on its line."},
		{"a list without a comma", `span        = "0.5 d"`, `span        = ["0.5 d" "1 d"]`, 12,
			"Two items of a list follow each other without a comma."},
		{"a label too many", `detrend "quiet" {`, `detrend "quiet" "loud" {`, 10, `A detrend block takes one label, and "loud" is one too many.`},
	}
	// The place, the line with its number, and a caret under the column the place names.
	layout := regexp.MustCompile(`^analysis\.hcl line (\d+), column (\d+): .+\n +(\d+) \| .*\n +\| ( *)\^+\n`)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := newFolder(t)
			if !strings.Contains(workflowText, c.from) {
				t.Fatalf("the workflow lacks %q", c.from)
			}
			f.write("analysis.hcl", strings.Replace(workflowText, c.from, c.to, 1))
			code, _, errs := f.dipline("check")
			if code != exitBadUser {
				t.Errorf("exit %d, want %d", code, exitBadUser)
			}
			m := layout.FindStringSubmatch(errs)
			if m == nil || m[1] != fmt.Sprint(c.line) || m[3] != m[1] || m[2] != fmt.Sprint(len(m[4])+1) {
				t.Errorf("not a message at line %d with its line and a caret under its column:\n%s", c.line, errs)
			}
			if !strings.Contains(errs, c.says) {
				t.Errorf("does not say %q:\n%s", c.says, errs)
			}
			for _, w := range stockWords {
				if strings.Contains(errs, w) {
					t.Errorf("says the library's %q:\n%s", w, errs)
				}
			}
			if strings.Contains(errs, "error:") || strings.Contains(errs, "warning:") || regexp.MustCompile(`\.hcl:\d+,`).MatchString(errs) {
				t.Errorf("printed in another program's layout:\n%s", errs)
			}
		})
	}
}
