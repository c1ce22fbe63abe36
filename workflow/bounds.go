package workflow

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// The bounds a workflow file and the data it names are held to. A workflow is handed from
// one collaborator to another, so a damaged or hostile file must be refused at once, with
// its place named, before it can exhaust memory or the stack or keep the tool busy. Each
// bound is far above what an analysis of a star needs; the reason is beside it. Only the
// data bound can be raised (Access.MaxData, the command line's --max-data): real data grow
// with the mission, a workflow's text does not.
const (
	// maxWorkflowBytes bounds the workflow file: the demo's workflow, a whole analysis with
	// its comments, is 3.3 KB, so 64 KiB is twenty times that. It also bounds the parser's
	// work: about a hundred bytes and a microsecond per token, so some 7 MB and 0.1 s at
	// worst.
	maxWorkflowBytes = 64 << 10

	// maxNesting bounds how deeply braces, brackets, parentheses and strings nest. A step's
	// settings need four (a block, an object, a list, a string); the HCL parser recurses
	// once per level, and 10⁵ levels exhausted the goroutine stack.
	maxNesting = 32

	// maxStringBytes bounds one string value: strings hold paths, quantities and names, and
	// the longest path Linux accepts is 4,096 bytes (PATH_MAX, from memory).
	maxStringBytes = 4096

	// maxListItems bounds the items of one list or object: the longest list a workflow
	// holds is a light curve's files, one per observing sector or quarter, which number in
	// the tens.
	maxListItems = 1000

	// maxNumberChars bounds how a number is written: a float64 needs 17 significant digits
	// (IEEE 754), so 64 characters leave room for zeros, a sign and an exponent.
	maxNumberChars = 64

	// maxDiagnostics bounds the mistakes reported at once: a binary file given as a
	// workflow would otherwise print one message per byte.
	maxDiagnostics = 20

	// maxListed bounds the names a message lists (columns of a header, lines of repeated
	// ids): a catalogue with a million columns printed its whole header in every message.
	maxListed = 10

	// maxQuoted bounds how much of a cell or a value a message repeats.
	maxQuoted = 60
)

// DefaultMaxData bounds the bytes one workflow's data files and catalogues take together
// (each file is measured before it is read): 512 MiB holds a few hundred sectors of
// two-minute-cadence light curves or a catalogue of some million stars (estimates, from
// memory), and keeps a damaged or hostile file (a 1 GB sparse "light curve") from taking
// more memory than a laptop has. Raise it with --max-data.
const DefaultMaxData = 512 << 20

// ParseSize reads a size such as "2 GiB", "750MB", "512 MiB" or "1000000" (bytes). kB, MB,
// GB and TB are powers of 1000, KiB, MiB, GiB and TiB powers of 1024; the unit's case does
// not matter.
func ParseSize(s string) (int64, error) {
	t := strings.TrimSpace(s)
	i := strings.IndexFunc(t, func(r rune) bool { return !(unicode.IsDigit(r) || r == '.') })
	num, unit := t, ""
	if i >= 0 {
		num, unit = strings.TrimSpace(t[:i]), strings.TrimSpace(t[i:])
	}
	units := map[string]float64{"": 1, "b": 1, "kb": 1e3, "mb": 1e6, "gb": 1e9, "tb": 1e12,
		"kib": 1 << 10, "mib": 1 << 20, "gib": 1 << 30, "tib": 1 << 40}
	scale, ok := units[strings.ToLower(unit)]
	v, err := strconv.ParseFloat(num, 64)
	if !ok || err != nil || !(v > 0) {
		return 0, fmt.Errorf("%q is not a size; write e.g. 2GiB, 750MB or 512MiB", s)
	}
	if v*scale >= math.MaxInt64/2 {
		return 0, fmt.Errorf("%q is more than any disk holds", s)
	}
	return int64(v * scale), nil
}

// FormatSize writes a byte count in binary units, e.g. "1.0 GiB" or "300 B".
func FormatSize(n int64) string {
	if n < 1<<10 {
		return fmt.Sprintf("%d B", n)
	}
	f, unit := float64(n), ""
	for _, u := range []string{"KiB", "MiB", "GiB", "TiB"} {
		if f < 1<<10 {
			break
		}
		f, unit = f/(1<<10), u
	}
	return strings.TrimSuffix(strconv.FormatFloat(f, 'f', 1, 64), ".0") + " " + unit
}

// thousands writes n with a comma every three digits: 999,990.
func thousands(n int) string {
	s := strconv.Itoa(n)
	if n < 0 {
		return "-" + thousands(-n)
	}
	var b strings.Builder
	for i, r := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(r)
	}
	return b.String()
}

// listSome joins at most maxListed items, each clipped, and says how many more there are:
// "a, b, c, … and 999,990 more columns".
func listSome(items []string, noun string) string {
	n := min(len(items), maxListed)
	shown := make([]string, n)
	for i := range n {
		shown[i] = clip(items[i])
	}
	s := strings.Join(shown, ", ")
	if more := len(items) - n; more > 0 {
		s += fmt.Sprintf(", … and %s more %s", thousands(more), noun)
	}
	return s
}

// clip shortens a value a message repeats to maxQuoted bytes and says how long it was:
// "FW-0001FW-0001…(2,000,000 bytes)".
func clip(s string) string {
	if len(s) <= maxQuoted {
		return s
	}
	return head(s) + "…" + fmt.Sprintf(" (%s bytes)", thousands(len(s)))
}

// quote is %q of a value, clipped as clip does.
func quote(s string) string {
	if len(s) <= maxQuoted {
		return strconv.Quote(s)
	}
	return strconv.Quote(head(s)+"…") + fmt.Sprintf(" (%s bytes)", thousands(len(s)))
}

// head is the first maxQuoted bytes of s, cut on a rune boundary.
func head(s string) string {
	cut := maxQuoted
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return s[:cut]
}
