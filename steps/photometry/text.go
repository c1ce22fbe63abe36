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
	delim  byte     // ',', '\t', or 0 for runs of blanks
	body   []byte   // everything after the header line
	line   int      // line number of the header
}

// delimName says which delimiter was detected, for messages and notes.
func (t *textTable) delimName() string {
	switch t.delim {
	case ',':
		return "comma"
	case '\t':
		return "tab"
	}
	return "whitespace"
}

// readTextHeader finds the header row and detects the delimiter from it: a comma if it
// has one, else a tab if it has one, else runs of blanks.
func readTextHeader(name string, data []byte) (*textTable, error) {
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf")) // a UTF-8 byte-order mark
	if i := bytes.IndexByte(data[:min(len(data), 4096)], 0); i >= 0 {
		return nil, steps.BadInputf("%s: byte %d is NUL: this is not a text table (FITS files are read as FITS when they start with SIMPLE  =)", name, i+1)
	}
	t := &textTable{name: name}
	rest := data
	for n := 1; len(rest) > 0; n++ {
		var line []byte
		line, rest = textrows.NextLine(rest)
		if textrows.Skippable(line) {
			continue
		}
		switch {
		case bytes.IndexByte(line, ',') >= 0:
			t.delim = ','
		case bytes.IndexByte(line, '\t') >= 0:
			t.delim = '\t'
		}
		for _, f := range t.split(line, nil) {
			t.header = append(t.header, string(f))
		}
		t.body, t.line = rest, n
		return t, nil
	}
	return nil, steps.BadInputf("%s: no header row: the file is empty or holds only comments", name)
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
			if len(f) > 0 {
				var err error
				v, err = strconv.ParseFloat(string(f), 64)
				if err != nil && !isRangeErr(err) {
					return nil, steps.BadInputf("%s:%d: column %s: %q is not a number", t.name, n, t.header[c], clip(string(f)))
				}
			}
			out.vals[k] = append(out.vals[k], v)
		}
		out.lines = append(out.lines, n)
	}
	return out, nil
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
