package photometry

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/textrows"
)

// textTable is a delimited text file: a header row of column names, then one row per line.
// Lines whose first non-blank character is '#' and blank lines are skipped anywhere.
type textTable struct {
	name   string   // file name for messages
	header []string // column names as written, quotes removed
	delim  byte     // ',', '\t', ';', or 0 for runs of blanks
	body   []byte   // everything after the header line
	line   int      // line number of the header
	// fromComment is true when the header was the comment line just above the first row,
	// the first row holding numbers ("# time,flux,err").
	fromComment bool
}

// delimName says which delimiter was detected, for messages and notes.
func (t *textTable) delimName() string {
	switch t.delim {
	case ',':
		return "comma"
	case '\t':
		return "tab"
	case ';':
		return "semicolon"
	}
	return "whitespace"
}

// delimiters are the separators a text table may use, in the order ties are settled.
var delimiters = []byte{',', '\t', ';', 0}

// readTextHeader finds the header row and its delimiter. The delimiter is the one that
// cuts the header and the first row into the same number of fields, the most if several
// do (a whitespace-aligned table with a stray tab cuts into more fields by blanks than by
// the tab; a comma table whose names hold blanks cuts its rows into fewer by blanks);
// without a first row, or when none agrees, a comma if the header has one, else a tab,
// else a semicolon, else runs of blanks. A header of numbers is a data row: the comment
// line just above it is taken as the header when it cuts into as many names, else the
// file is refused, naming the line.
func readTextHeader(name string, data []byte) (*textTable, error) {
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf")) // a UTF-8 byte-order mark
	if i := bytes.IndexByte(data[:min(len(data), 4096)], 0); i >= 0 {
		return nil, steps.BadInputf("%s: byte %d is NUL: this is not a text table (FITS files are read as FITS when they start with SIMPLE  =)", name, i+1)
	}
	t := &textTable{name: name}
	var comment []byte // the comment line just above the header, if any
	rest := data
	for n := 1; len(rest) > 0; n++ {
		from := rest // the file from this line on
		var line []byte
		line, rest = textrows.NextLine(rest)
		if textrows.Skippable(line) {
			comment = nil
			if l := bytes.TrimLeft(line, " \t"); len(l) > 0 {
				comment = bytes.TrimLeft(l[1:], " \t")
			}
			continue
		}
		t.delim = chooseDelimiter(line, firstRow(rest))
		t.body, t.line = rest, n
		fields := t.split(line, nil)
		if allNumbers(fields) {
			above := t.split(comment, nil)
			if len(comment) == 0 || len(above) != len(fields) || anyNumber(above) {
				return nil, steps.BadInputf("%s:%d: the first row holds numbers, not column names; the table needs a header row naming its columns (time, flux, …) above its rows", name, n)
			}
			fields, t.body, t.line, t.fromComment = above, from, n-1, true
		}
		for _, f := range fields {
			t.header = append(t.header, string(f))
		}
		return t, nil
	}
	return nil, steps.BadInputf("%s: no header row: the file is empty or holds only comments", name)
}

// firstRow returns the first line of b that is not blank or a comment, or nil.
func firstRow(b []byte) []byte {
	for len(b) > 0 {
		var line []byte
		line, b = textrows.NextLine(b)
		if !textrows.Skippable(line) {
			return line
		}
	}
	return nil
}

// chooseDelimiter picks the delimiter of a table from its header and first row (see
// readTextHeader).
func chooseDelimiter(header, row []byte) byte {
	best, most := byte(0xff), 1
	if row != nil {
		for _, d := range delimiters {
			t := textTable{delim: d}
			if n := len(t.split(header, nil)); n > most && n == len(t.split(row, nil)) {
				best, most = d, n
			}
		}
	}
	if best != 0xff {
		return best
	}
	for _, d := range delimiters[:3] {
		if bytes.IndexByte(header, d) >= 0 {
			return d
		}
	}
	return 0
}

// allNumbers reports fields that all read as numbers (a data row, not a header).
func allNumbers(fields [][]byte) bool {
	for _, f := range fields {
		if _, err := strconv.ParseFloat(string(f), 64); err != nil {
			return false
		}
	}
	return len(fields) > 0
}

// anyNumber reports a field that reads as a number (no column name does).
func anyNumber(fields [][]byte) bool {
	for _, f := range fields {
		if _, err := strconv.ParseFloat(string(f), 64); err == nil {
			return true
		}
	}
	return false
}

// split cuts a line into fields, reusing dst. Fields are trimmed of blanks and of one pair
// of surrounding double quotes.
func (t *textTable) split(line []byte, dst [][]byte) [][]byte {
	dst = dst[:0]
	if t.delim == 0 {
		for {
			line = bytes.TrimLeft(line, " \t")
			if len(line) == 0 {
				return dst
			}
			i := bytes.IndexAny(line, " \t")
			if i < 0 {
				i = len(line)
			}
			dst = append(dst, textrows.Unquote(line[:i]))
			line = line[i:]
		}
	}
	for {
		i := bytes.IndexByte(line, t.delim)
		if i < 0 {
			return append(dst, textrows.Unquote(bytes.TrimSpace(line)))
		}
		dst = append(dst, textrows.Unquote(bytes.TrimSpace(line[:i])))
		line = line[i+1:]
	}
}

// textColumns are the values of the columns asked for, and the line number of each row.
type textColumns struct {
	vals  [][]float64
	lines []int
}

// read parses the columns idx (indices into the header) of every data row. An empty field
// is NaN (a missing value, dropped later); anything else must be a number as Go's
// strconv.ParseFloat reads it ("nan" and "inf" included).
func (t *textTable) read(idx []int) (*textColumns, error) {
	out := &textColumns{vals: make([][]float64, len(idx))}
	fields := make([][]byte, 0, len(t.header))
	rest := t.body
	for n := t.line + 1; len(rest) > 0; n++ {
		var line []byte
		line, rest = textrows.NextLine(rest)
		if textrows.Skippable(line) {
			continue
		}
		fields = t.split(line, fields)
		if len(fields) != len(t.header) {
			return nil, steps.BadInputf("%s:%d: %d fields, but the header on line %d has %d (%s-separated)", t.name, n, len(fields), t.line, len(t.header), t.delimName())
		}
		for k, c := range idx {
			f := fields[c]
			v := math.NaN()
			if len(f) > 0 && !missingToken(f) {
				var err error
				v, err = strconv.ParseFloat(string(f), 64)
				if err != nil && !isRangeErr(err) {
					return nil, t.notANumber(n, c, f)
				}
			}
			out.vals[k] = append(out.vals[k], v)
		}
		out.lines = append(out.lines, n)
	}
	return out, nil
}

// missingTokens are the words tables write for a missing value (common practice), read
// like an empty field: as NaN, a row dropped and counted. "nan" and "inf" are numbers
// to strconv.ParseFloat already.
var missingTokens = []string{"na", "n/a", "null", "none", "-nan", "+nan"}

// missingToken reports a field that says a value is missing, in any case.
func missingToken(f []byte) bool {
	for _, w := range missingTokens {
		if len(f) == len(w) && strings.EqualFold(string(f), w) {
			return true
		}
	}
	return false
}

// notANumber refuses field c of line n, saying when the number is written with a
// decimal comma.
func (t *textTable) notANumber(n, c int, f []byte) error {
	if _, err := strconv.ParseFloat(strings.Replace(string(f), ",", ".", 1), 64); err == nil && bytes.Count(f, []byte(",")) == 1 {
		return steps.BadInputf("%s:%d: column %s: %q is written with a decimal comma; save the table with decimal points", t.name, n, t.header[c], clip(string(f)))
	}
	return steps.BadInputf("%s:%d: column %s: %q is not a number", t.name, n, t.header[c], clip(string(f)))
}

// isRangeErr accepts numbers too large or small for float64: ParseFloat returns ±Inf or 0,
// which later checks treat like any other value.
func isRangeErr(err error) bool {
	ne, ok := err.(*strconv.NumError)
	return ok && ne.Err == strconv.ErrRange
}

// clip shortens a field quoted in a message.
func clip(s string) string {
	if len(s) > 40 {
		s = s[:40] + "…"
	}
	return strings.ToValidUTF8(s, "?")
}

// describe lists the header for messages: at most maxListed names, each cut to
// maxNameShown bytes, so a binary file read as text cannot flood the terminal.
func describe(names []string) string {
	const maxListed, maxNameShown = 12, 24
	if len(names) == 0 {
		return "none"
	}
	var q []string
	for i, n := range names {
		if i == maxListed {
			q = append(q, fmt.Sprintf("… %d more", len(names)-maxListed))
			break
		}
		if len(n) > maxNameShown {
			n = strings.ToValidUTF8(n[:maxNameShown], "") + "…"
		}
		q = append(q, strconv.Quote(n))
	}
	return strings.Join(q, ", ")
}

// where formats a row position in a text file.
func (c *textColumns) where(name string) func(i int) string {
	return func(i int) string { return fmt.Sprintf("%s:%d", name, c.lines[i]) }
}
