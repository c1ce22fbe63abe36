package workflow

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/hashicorp/hcl/v2"
)

// How a diagnostic reaches the user: one message in our own words, led by the file and the
// line it is about, then that line with its number and a caret under the subject:
//
//	analysis.hcl line 14, column 17: search "dips" reads detrend.quite for light_curve, and there is no detrend step "quite". Did you mean detrend.quiet?
//	   14 |   light_curve = detrend.quite
//	      |                 ^^^^^^^^^^^^^
//
// A warning says so after the place: "analysis.hcl line 3, column 3 (a warning): …". A message
// that is about no place in the file is printed alone. The message is one line; a terminal
// wraps it, and so the words can be searched for as written.
//
// The line shown is taken, at load time, from the very bytes Load parsed and kept with the
// diagnostic (an excerpt in its Extra), so the printer opens no file: it shows what was read
// even if the file has changed since, and needs no access to the workflow's folder.

// Message is a diagnostic's words as one message: its summary, which is the first sentence
// (what is wrong), followed by its detail (what to write instead).
func Message(d *hcl.Diagnostic) string {
	s, dt := strings.TrimSpace(d.Summary), strings.TrimSpace(d.Detail)
	switch {
	case dt == "":
		return s
	case s == "":
		return dt
	case endsSentence(s):
		return s + " " + dt
	}
	// A summary that is a heading rather than a sentence (a text not yet in our words).
	return s + ": " + dt
}

// endsSentence tells whether s ends as a sentence does.
func endsSentence(s string) bool {
	s = strings.TrimRight(s, `)"'”’`)
	r, _ := utf8.DecodeLastRuneInString(s)
	return r == '.' || r == '?' || r == '!' || r == ':' || r == '…'
}

// sentence ends s with a full stop unless it ends as a sentence already.
func sentence(s string) string {
	s = strings.TrimSpace(s)
	if s == "" || endsSentence(s) {
		return s
	}
	return s + "."
}

// FormatDiagnostics writes diagnostics for a person to read, each as described above.
func FormatDiagnostics(w io.Writer, diags hcl.Diagnostics) error {
	bw := bufio.NewWriter(w)
	for _, d := range diags {
		if d == nil {
			continue
		}
		writeDiagnostic(bw, d)
	}
	return bw.Flush()
}

func writeDiagnostic(w *bufio.Writer, d *hcl.Diagnostic) {
	ex := excerptOfDiag(d)
	where := ""
	if d.Subject != nil && d.Subject.Filename != "" {
		where = d.Subject.Filename
		line, col := d.Subject.Start.Line, d.Subject.Start.Column
		if ex != nil {
			line, col = ex.line, ex.column()
		}
		if ex == nil || ex.numbered {
			where = fmt.Sprintf("%s line %d", where, line)
			if col > 0 {
				where = fmt.Sprintf("%s, column %d", where, col)
			}
		}
	}
	warn := d.Severity == hcl.DiagWarning
	switch {
	case where != "" && warn:
		fmt.Fprintf(w, "%s (a warning): %s\n", where, Message(d))
	case where != "":
		fmt.Fprintf(w, "%s: %s\n", where, Message(d))
	case warn:
		fmt.Fprintf(w, "(a warning) %s\n", Message(d))
	default:
		fmt.Fprintf(w, "%s\n", Message(d))
	}
	if ex != nil {
		ex.write(w)
	}
}

// excerpt is the line a diagnostic's subject starts on, kept from the source at load time.
type excerpt struct {
	// line is the line's number; numbered is false for a source without lines worth
	// numbering (a --set value), whose excerpt shows no number.
	line     int
	numbered bool
	// text is the line without its line break; the caret runs under text[from:to].
	text     string
	from, to int
	// inner is the Extra the diagnostic had before (hcl.DiagnosticExtraUnwrapper).
	inner any
}

// UnwrapDiagnosticExtra gives the Extra the excerpt wraps, so that hcl.DiagnosticExtra
// still finds what the library or a step kind put there.
func (e *excerpt) UnwrapDiagnosticExtra() any { return e.inner }

func excerptOfDiag(d *hcl.Diagnostic) *excerpt {
	for x := d.Extra; x != nil; {
		if ex, ok := x.(*excerpt); ok {
			return ex
		}
		u, ok := x.(hcl.DiagnosticExtraUnwrapper)
		if !ok {
			return nil
		}
		x = u.UnwrapDiagnosticExtra()
	}
	return nil
}

// utf8BOM is the byte-order mark some editors put at the start of a UTF-8 file; the HCL
// parser skips it, and so does an excerpt.
var utf8BOM = []byte{0xef, 0xbb, 0xbf}

// newExcerpt cuts the line that r starts on out of src, or returns nil when r does not lie
// in src as its line number says (a range from elsewhere) or the line is blank. Positions
// are byte offsets, as the parser gives them.
func newExcerpt(src []byte, r hcl.Range, numbered bool) *excerpt {
	start, end := r.Start.Byte, r.End.Byte
	if start < 0 || start > len(src) {
		return nil
	}
	if end < start || end > len(src) {
		end = start
	}
	lineStart := bytes.LastIndexByte(src[:start], '\n') + 1
	if lineStart == 0 && bytes.HasPrefix(src, utf8BOM) && start >= len(utf8BOM) {
		lineStart = len(utf8BOM)
	}
	lineEnd := len(src)
	if i := bytes.IndexByte(src[start:], '\n'); i >= 0 {
		lineEnd = start + i
	}
	line := bytes.Count(src[:start], []byte{'\n'}) + 1
	if numbered && r.Start.Line != 0 && r.Start.Line != line {
		return nil
	}
	text := src[lineStart:lineEnd]
	if end > lineEnd {
		end = lineEnd
	}
	from, to := start-lineStart, end-lineStart
	if trimmed := bytes.TrimRight(text, "\r"); len(trimmed) < len(text) {
		text = trimmed
		from, to = min(from, len(text)), min(to, len(text))
	}
	if len(bytes.TrimSpace(text)) == 0 {
		return nil
	}
	return &excerpt{line: line, numbered: numbered, text: string(text), from: from, to: to}
}

// maxExcerptColumns bounds the part of a line an excerpt shows: a workflow squeezed onto
// one line would otherwise be printed whole under each of its mistakes.
const maxExcerptColumns = 120

// cell is one rune of an excerpt as printed.
type cell struct {
	show  string // what is printed for it
	pad   string // what the caret line prints under it when it is not under the caret
	width int    // the columns it takes
	at    int    // its byte offset in the line
}

// cells reads a line rune by rune. A tab is printed as a tab and padded with a tab, so the
// caret keeps its place whatever the terminal's tab stops; bytes that are not UTF-8 and
// control and format characters (which could move the cursor or reorder the text) are
// printed as U+FFFD; a wide rune takes two columns and a combining mark none.
func cells(text string) []cell {
	var out []cell
	for i := 0; i < len(text); {
		r, size := utf8.DecodeRuneInString(text[i:])
		c := cell{show: string(r), pad: " ", width: 1, at: i}
		switch {
		case r == '\t':
			c.show, c.pad = "\t", "\t"
		case r == utf8.RuneError && size <= 1, unicode.IsControl(r), unicode.Is(unicode.Cf, r):
			c.show = "\uFFFD"
		case unicode.In(r, unicode.Mn, unicode.Me):
			c.pad, c.width = "", 0
		case wide(r):
			c.pad, c.width = "  ", 2
		}
		out = append(out, c)
		i += size
	}
	return out
}

// wide tells whether a terminal gives r two columns: the East Asian Wide and Fullwidth
// ranges of Unicode Standard Annex #11 that matter in text, and the emoji blocks (the main
// ranges, from memory).
func wide(r rune) bool {
	switch {
	case r < 0x1100:
		return false
	case r <= 0x115f, // Hangul Jamo initials
		0x2e80 <= r && r <= 0x303e, // CJK radicals, punctuation
		0x3041 <= r && r <= 0x33ff, // kana, CJK compatibility
		0x3400 <= r && r <= 0x4dbf, // CJK extension A
		0x4e00 <= r && r <= 0x9fff, // CJK unified ideographs
		0xa000 <= r && r <= 0xa4cf, // Yi
		0xac00 <= r && r <= 0xd7a3, // Hangul syllables
		0xf900 <= r && r <= 0xfaff, // CJK compatibility ideographs
		0xfe30 <= r && r <= 0xfe4f, // CJK compatibility forms
		0xff00 <= r && r <= 0xff60, // fullwidth forms
		0xffe0 <= r && r <= 0xffe6,
		0x1f300 <= r && r <= 0x1f64f, // pictographs, emoticons
		0x1f900 <= r && r <= 0x1f9ff, // supplemental pictographs
		0x20000 <= r && r <= 0x3fffd: // CJK extensions B onwards
		return true
	}
	return false
}

// column is where the caret starts, counted from 1 in characters as an editor counts them
// (a tab and a wide character are one each).
func (e *excerpt) column() int {
	return utf8.RuneCountInString(e.text[:min(e.from, len(e.text))]) + 1
}

// write prints the excerpt's line and its caret line.
func (e *excerpt) write(w *bufio.Writer) {
	cs := cells(e.text)
	// The caret runs over the cells that start inside [from, to); an empty range gets one
	// caret where it starts.
	first := len(cs) // the caret is under cs[first:last]
	for i, c := range cs {
		if c.at >= e.from {
			first = i
			break
		}
	}
	last := first
	for last < len(cs) && cs[last].at < e.to {
		last++
	}
	// Show a window of the line around the caret's start when the line is long.
	lo, hi := 0, len(cs)
	if cols := columns(cs); cols > maxExcerptColumns {
		lo = first
		for back := 0; lo > 0 && back < maxExcerptColumns/3; lo-- {
			back += cs[lo-1].width
		}
		hi = lo
		for span := 0; hi < len(cs) && span < maxExcerptColumns; hi++ {
			span += cs[hi].width
		}
	}
	var show, marks strings.Builder
	if lo > 0 {
		show.WriteString("…")
		marks.WriteString(" ")
	}
	carets := 0
	for i := lo; i < hi; i++ {
		c := cs[i]
		show.WriteString(c.show)
		switch {
		case i >= first && i < last:
			n := max(c.width, 1)
			if c.show == "\t" {
				n = 1
			}
			marks.WriteString(strings.Repeat("^", n))
			carets += n
		case i < first:
			marks.WriteString(c.pad)
		}
	}
	if hi < len(cs) {
		show.WriteString("…")
	}
	if carets == 0 {
		marks.WriteString("^")
	}
	if e.numbered {
		fmt.Fprintf(w, "%5d | %s\n", e.line, show.String())
	} else {
		fmt.Fprintf(w, "%5s | %s\n", "", show.String())
	}
	fmt.Fprintf(w, "%5s | %s\n", "", marks.String())
}

func columns(cs []cell) int {
	n := 0
	for _, c := range cs {
		n += c.width
	}
	return n
}

// withExcerpts gives each diagnostic whose subject lies in one of the sources the line it
// starts on. Sources named "--set …" are values from the command line, shown without a line
// number. The diagnostics are copied, not changed.
func withExcerpts(diags hcl.Diagnostics, texts map[string][]byte) hcl.Diagnostics {
	out := make(hcl.Diagnostics, len(diags))
	for i, d := range diags {
		out[i] = d
		if d == nil || d.Subject == nil || excerptOfDiag(d) != nil {
			continue
		}
		src, ok := texts[d.Subject.Filename]
		if !ok {
			continue
		}
		ex := newExcerpt(src, *d.Subject, !strings.HasPrefix(d.Subject.Filename, "--set "))
		if ex == nil {
			continue
		}
		c := *d
		ex.inner = c.Extra
		c.Extra = ex
		out[i] = &c
	}
	return out
}
