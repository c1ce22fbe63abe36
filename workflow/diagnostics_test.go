package workflow

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/hashicorp/hcl/v2"

	"dipline/steps"
)

// at is a diagnostic about bytes [from, to) of src (on the line the offsets give).
func at(src string, from, to int, summary, detail string) *hcl.Diagnostic {
	pos := func(b int) hcl.Pos {
		b = min(b, len(src))
		line := strings.Count(src[:b], "\n") + 1
		col := utf8.RuneCountInString(src[strings.LastIndexByte(src[:b], '\n')+1:b]) + 1
		return hcl.Pos{Line: line, Column: col, Byte: b}
	}
	return &hcl.Diagnostic{Severity: hcl.DiagError, Summary: summary, Detail: detail,
		Subject: &hcl.Range{Filename: "analysis.hcl", Start: pos(from), End: pos(to)}}
}

// printed is what FormatDiagnostics writes for diagnostics about src.
func printed(src string, diags ...*hcl.Diagnostic) string {
	var b bytes.Buffer
	FormatDiagnostics(&b, withExcerpts(diags, map[string][]byte{"analysis.hcl": []byte(src)}))
	return b.String()
}

func TestAMessageShowsItsLineWithACaret(t *testing.T) {
	src := "analysis \"a\" {\n  seed = 1\n}\nsearch \"dips\" {\n  light_curve = detrend.quite\n}\n"
	from := strings.Index(src, "detrend.quite")
	got := printed(src, at(src, from, from+len("detrend.quite"),
		`search "dips" reads detrend.quite for light_curve, and there is no detrend step "quite".`, "Did you mean detrend.quiet?"))
	want := `analysis.hcl line 5, column 17: search "dips" reads detrend.quite for light_curve, and there is no detrend step "quite". Did you mean detrend.quiet?` + "\n" +
		"    5 |   light_curve = detrend.quite\n" +
		"      |                 ^^^^^^^^^^^^^\n"
	if got != want {
		t.Errorf("printed\n%s\nwant\n%s", got, want)
	}
}

func TestTheLayoutOfEachKindOfMessage(t *testing.T) {
	src := "analysis \"a\" {\n  seed = 1\n}\n"
	cases := []struct {
		name string
		d    *hcl.Diagnostic
		want string
	}{
		{"a warning says so after its line", func() *hcl.Diagnostic {
			d := at(src, 17, 21, "The seed is small.", "That is fine.")
			d.Severity = hcl.DiagWarning
			return d
		}(), "analysis.hcl line 2, column 3 (a warning): The seed is small. That is fine.\n    2 |   seed = 1\n      |   ^^^^\n"},
		{"a message about no place is printed alone", &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "A --set names nothing in the workflow.", Detail: "There is no step x.y."},
			"A --set names nothing in the workflow. There is no step x.y.\n"},
		{"a warning about no place says so first", &hcl.Diagnostic{Severity: hcl.DiagWarning, Summary: "Something is odd."},
			"(a warning) Something is odd.\n"},
		{"a place without a file is no place", &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "Wrong.", Subject: &hcl.Range{}},
			"Wrong.\n"},
		{"a place in a file not read names the line and column only", &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "Wrong.",
			Subject: &hcl.Range{Filename: "other.hcl", Start: hcl.Pos{Line: 7, Column: 1, Byte: 70}}}, "other.hcl line 7, column 1: Wrong.\n"},
		{"an empty range gets one caret", at(src, 14, 14, "The block is empty.", ""),
			"analysis.hcl line 1, column 15: The block is empty.\n    1 | analysis \"a\" {\n      |               ^\n"},
		{"a range over several lines is marked to the end of its first", at(src, 9, 29, "This block is odd.", ""),
			"analysis.hcl line 1, column 10: This block is odd.\n    1 | analysis \"a\" {\n      |          ^^^^^\n"},
		{"a heading and a detail are joined by a colon", at(src, 17, 21, "Wrong type for seed", "seed takes a whole number."),
			"analysis.hcl line 2, column 3: Wrong type for seed: seed takes a whole number.\n    2 |   seed = 1\n      |   ^^^^\n"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := printed(src, c.d); got != c.want {
				t.Errorf("printed\n%s\nwant\n%s", got, c.want)
			}
		})
	}
}

func TestTheCaretKeepsItsPlace(t *testing.T) {
	cases := []struct {
		name, line, subject string
		want                string // the line and the caret line, after the gutter
	}{
		{"after a tab", "\tspan = \"x\"", `"x"`, "\tspan = \"x\"\n\t       ^^^"},
		{"after tabs between words", "\tspan\t=\t\"x\"", `"x"`, "\tspan\t=\t\"x\"\n\t    \t \t^^^"},
		{"after wide runes", `  label = "日本語" + 1`, "+", "  label = \"日本語\" + 1\n                   ^"},
		{"under wide runes", `  label = "日本語"`, "日本語", "  label = \"日本語\"\n           ^^^^^^"},
		{"after an accent written as a combining mark", "  label = \"e\u0301t\u00e9\" x", "x", "  label = \"e\u0301t\u00e9\" x\n                ^"},
		{"after bytes that are not UTF-8", "  label = \"\xff\xfe\" x", "x", "  label = \"\uFFFD\uFFFD\" x\n               ^"},
		{"after a control character", "  label = \"\x1b[31m\" x", "x", "  label = \"\uFFFD[31m\" x\n                  ^"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			src := "analysis \"a\" {\n" + c.line + "\n}\n"
			from := strings.Index(src, c.subject)
			got := printed(src, at(src, from, from+len(c.subject), "Wrong.", ""))
			lines := strings.Split(strings.TrimSuffix(got, "\n"), "\n")
			if len(lines) != 3 {
				t.Fatalf("printed\n%s", got)
			}
			body := strings.TrimPrefix(lines[1], "    2 | ") + "\n" + strings.TrimPrefix(lines[2], "      | ")
			if body != c.want {
				t.Errorf("printed\n%s\nwant\n%s", body, c.want)
			}
		})
	}
}

func TestAnExcerptSurvivesAnyRange(t *testing.T) {
	cases := []struct {
		name     string
		src      string
		r        hcl.Range
		excerpts bool
	}{
		{"an empty file", "", hcl.Range{Start: hcl.InitialPos, End: hcl.InitialPos}, false},
		{"a range beyond the end", "analysis {}\n", hcl.Range{Start: hcl.Pos{Line: 9, Column: 1, Byte: 900}, End: hcl.Pos{Line: 9, Column: 3, Byte: 902}}, false},
		{"an end before the start", "analysis {}\n", hcl.Range{Start: hcl.Pos{Line: 1, Column: 5, Byte: 4}, End: hcl.Pos{Line: 1, Column: 1, Byte: 0}}, true},
		{"an end beyond the file", "analysis {}", hcl.Range{Start: hcl.Pos{Line: 1, Column: 2, Byte: 1}, End: hcl.Pos{Line: 5, Column: 1, Byte: 500}}, true},
		{"a negative offset", "analysis {}", hcl.Range{Start: hcl.Pos{Line: 1, Column: 1, Byte: -3}, End: hcl.Pos{Byte: -1}}, false},
		{"a line number that does not match the offset", "a\nb\n", hcl.Range{Start: hcl.Pos{Line: 7, Column: 1, Byte: 2}, End: hcl.Pos{Line: 7, Column: 2, Byte: 3}}, false},
		{"the end of the file", "analysis {}", hcl.Range{Start: hcl.Pos{Line: 1, Column: 12, Byte: 11}, End: hcl.Pos{Line: 1, Column: 12, Byte: 11}}, true},
		{"a blank line", "a\n   \nb", hcl.Range{Start: hcl.Pos{Line: 2, Column: 2, Byte: 3}, End: hcl.Pos{Line: 2, Column: 2, Byte: 3}}, false},
		{"a line of invalid UTF-8", "\xff\xfe\xfd\n", hcl.Range{Start: hcl.Pos{Line: 1, Column: 2, Byte: 1}, End: hcl.Pos{Line: 1, Column: 3, Byte: 2}}, true},
		{"the middle of a rune", "a = \"日\"\n", hcl.Range{Start: hcl.Pos{Line: 1, Column: 6, Byte: 6}, End: hcl.Pos{Line: 1, Column: 7, Byte: 7}}, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			c.r.Filename = "analysis.hcl"
			got := printed(c.src, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "Wrong.", Subject: &c.r})
			lines := strings.Count(got, "\n")
			if c.excerpts && (lines != 3 || !strings.Contains(got, "^")) || !c.excerpts && lines != 1 {
				t.Errorf("printed\n%s", got)
			}
		})
	}
}

func TestAnExcerptSkipsAByteOrderMarkAndALineEnding(t *testing.T) {
	src := "\xef\xbb\xbfanalysis \"a\" {\r\n  seed = x\r\n}\r\n"
	from := strings.Index(src, "analysis")
	got := printed(src, at(src, from, from+len("analysis"), "Wrong.", ""))
	if want := "analysis.hcl line 1, column 1: Wrong.\n    1 | analysis \"a\" {\n      | ^^^^^^^^\n"; got != want {
		t.Errorf("printed\n%q\nwant\n%q", got, want)
	}
	from = strings.Index(src, "x")
	got = printed(src, at(src, from, from+3, "Wrong.", ""))
	if want := "analysis.hcl line 2, column 10: Wrong.\n    2 |   seed = x\n      |          ^\n"; got != want {
		t.Errorf("printed\n%q\nwant\n%q", got, want)
	}
}

// The column is counted in characters from 1, as an editor counts them: a tab, an accented
// letter (two bytes) and a wide character (three bytes) are one column each.
func TestTheColumnCountsCharactersNotBytes(t *testing.T) {
	src := "analysis \"a\" {\n\tnote = \"é漢\" seed = x\n}\n"
	from := strings.Index(src, "x")
	got := printed(src, at(src, from, from+1, "Wrong.", ""))
	// line 2 is: tab, n, o, t, e, space, =, space, ", é, 漢, ", space, s, e, e, d, space, =, space, x
	if want := "analysis.hcl line 2, column 21: Wrong."; !strings.HasPrefix(got, want) {
		t.Errorf("printed\n%q\nwant it to begin %q", got, want)
	}
}

func TestALongLineIsShownAroundItsCaret(t *testing.T) {
	src := "analysis \"a\" { seed = 1 " + strings.Repeat("x = 1 ", 2000) + "bad }\n"
	from := strings.Index(src, "bad")
	got := printed(src, at(src, from, from+3, "Wrong.", ""))
	lines := strings.Split(strings.TrimSuffix(got, "\n"), "\n")
	if len(lines) != 3 || utf8.RuneCountInString(lines[1]) > maxExcerptColumns+12 {
		t.Fatalf("printed %d lines, the second of %d runes", len(lines), utf8.RuneCountInString(lines[1]))
	}
	shown, marks := []rune(lines[1]), []rune(lines[2])
	caret := strings.IndexRune(string(marks), '^')
	caret = utf8.RuneCountInString(string(marks)[:caret])
	if string(shown[caret:caret+3]) != "bad" || !strings.HasPrefix(lines[1], "    1 | …") {
		t.Errorf("printed\n%s", got)
	}
}

func TestAnExcerptKeepsTheExtraItWraps(t *testing.T) {
	type mine struct{ n int }
	src := "analysis {}\n"
	d := at(src, 0, 8, "Wrong.", "")
	d.Extra = &mine{7}
	got := withExcerpts(hcl.Diagnostics{d}, map[string][]byte{"analysis.hcl": []byte(src)})
	if x, ok := hcl.DiagnosticExtra[*mine](got[0]); !ok || x.n != 7 {
		t.Errorf("the extra is lost: %v", got[0].Extra)
	}
	if d.Extra.(*mine).n != 7 || excerptOfDiag(d) != nil {
		t.Error("the diagnostic given was changed")
	}
}

func TestALoadsDiagnosticsArePrintedWithTheirLines(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": toyHead + "source \"a\" {\n\tfiles = \"x.txt\"\n\tscal  = 2\n}\n", "x.txt": "1\n"})
	path := filepath.Join(p.dir, "analysis.hcl")
	_, diags := Load(path, toyRegistry())
	// The file changes after the load: what is shown is what was read.
	p.write("analysis.hcl", "")
	var out bytes.Buffer
	FormatDiagnostics(&out, diags)
	want := path + ` line 6, column 2: source "a" has no setting "scal". Did you mean "scale"? A source step takes files, scale and label.` + "\n" +
		"    6 | \tscal  = 2\n" +
		"      | \t^^^^\n"
	if out.String() != want {
		t.Errorf("printed\n%s\nwant\n%s", out.String(), want)
	}
}

func TestMessageJoinsSummaryAndDetail(t *testing.T) {
	cases := []struct{ summary, detail, want string }{
		{"There is no file \"x\".", "Name another.", "There is no file \"x\". Name another."},
		{"There is no file \"x\".", "", "There is no file \"x\"."},
		{"", "Only a detail.", "Only a detail."},
		{"Did it say \"why?\"", "Yes.", "Did it say \"why?\" Yes."},
		{"A heading", "its detail.", "A heading: its detail."},
	}
	for _, c := range cases {
		if got := Message(&hcl.Diagnostic{Summary: c.summary, Detail: c.detail}); got != c.want {
			t.Errorf("Message(%q, %q) = %q, want %q", c.summary, c.detail, got, c.want)
		}
	}
}

func FuzzExcerpt(f *testing.F) {
	f.Add([]byte("analysis \"a\" {\n\tseed = \"日本\"\n}\n"), 20, 25)
	f.Add([]byte("\xef\xbb\xbf\xff\r\n"), 0, 9)
	f.Add([]byte(""), 0, 0)
	f.Fuzz(func(t *testing.T, src []byte, from, to int) {
		line := bytes.Count(src[:max(0, min(from, len(src)))], []byte{'\n'}) + 1
		d := &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "Wrong.", Subject: &hcl.Range{Filename: "f",
			Start: hcl.Pos{Line: line, Byte: from}, End: hcl.Pos{Byte: to}}}
		var out bytes.Buffer
		FormatDiagnostics(&out, withExcerpts(hcl.Diagnostics{d}, map[string][]byte{"f": src}))
		if n := strings.Count(out.String(), "\n"); n != 1 && n != 3 {
			t.Errorf("printed %d lines:\n%s", n, out.String())
		}
		if out.Len() > 4*maxExcerptColumns+200 {
			t.Errorf("printed %d bytes", out.Len())
		}
	})
}

// TestARefusedSettingReadsAsASentence: a kind's refusal that is a predicate follows the
// attribute's name; one that is a whole sentence is not prefixed with the name again (it
// read "refuses its setting mass: mass the given method needs mass").
func TestARefusedSettingReadsAsASentence(t *testing.T) {
	for _, c := range []struct{ attr, msg, want string }{
		{"span", "must be positive, not -1 d", "span must be positive, not -1 d"},
		{"radius_range", "needs a star step", "radius_range needs a star step"},
		{"mass", "the given method needs mass", "the given method needs mass"},
		{"files", "no files given", "no files given"},
	} {
		if got := attrSentence(&steps.AttrError{Attr: c.attr, Msg: c.msg}); got != c.want {
			t.Errorf("%s, %q: got %q, want %q", c.attr, c.msg, got, c.want)
		}
	}
}
