// Package textrows holds the few line-level helpers that the readers of small text tables
// (the photometry kind's light curves, the companions kind's imaging tables) share: cutting
// lines, skipping blanks and comments, and removing the quotes around a field. It does not
// parse headers or numbers; each reader keeps its own rules for those.
package textrows

import "bytes"

// NextLine cuts the first line off b, without its line ending ("\n" or "\r\n").
func NextLine(b []byte) (line, rest []byte) {
	i := bytes.IndexByte(b, '\n')
	if i < 0 {
		line, rest = b, nil
	} else {
		line, rest = b[:i], b[i+1:]
	}
	return bytes.TrimSuffix(line, []byte("\r")), rest
}

// Skippable reports a blank line or a '#' comment.
func Skippable(line []byte) bool {
	l := bytes.TrimLeft(line, " \t")
	return len(l) == 0 || l[0] == '#'
}

// Unquote removes one pair of double quotes around a field.
func Unquote(f []byte) []byte {
	if len(f) >= 2 && f[0] == '"' && f[len(f)-1] == '"' {
		return f[1 : len(f)-1]
	}
	return f
}
