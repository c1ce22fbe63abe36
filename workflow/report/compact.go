package report

import (
	"crypto/sha256"
	"encoding/hex"
	"regexp"
	"strconv"
	"strings"
)

// A light curve draws thousands of markers, and the SVG backend writes each as a full path
// of about a hundred bytes: the demo's page weighed 5 MB, nearly all of it markers. Every
// marker of a layer is the same shape moved, so compactMarks writes the shape once, in a
// <defs> before the layer's group, and each marker as a <use> of it at its offset — one
// element per marker still, so that marks can be counted against the data.

// markPath matches one marker as the backend writes it.
var markPath = regexp.MustCompile(`^<path d="M(-?[0-9.]+),(-?[0-9.]+)([^"]*)" style="([^"]*)" />$`)

// markGroup matches a layer's group of markers (see the "marks" class in plot.go).
var markGroup = regexp.MustCompile(`(?s)(<g class="marks"[^>]*>\n)(.*?)(</g>\n)`)

// compactMarks rewrites each group of markers in svg; a group whose markers are not all the
// same shape and style is left as it is.
func compactMarks(svg string) string {
	sum := sha256.Sum256([]byte(svg))
	prefix := "m" + hex.EncodeToString(sum[:4]) // ids unique on a page of many plots
	n := 0
	return markGroup.ReplaceAllStringFunc(svg, func(g string) string {
		parts := markGroup.FindStringSubmatch(g)
		lines := strings.Split(strings.TrimSuffix(parts[2], "\n"), "\n")
		if len(lines) < 2 {
			return g
		}
		first := markPath.FindStringSubmatch(lines[0])
		if first == nil {
			return g
		}
		x0, y0 := num(first[1]), num(first[2])
		id := prefix + "-" + strconv.Itoa(n)
		n++
		var b strings.Builder
		b.WriteString(`<defs><path id="` + id + `" d="M` + first[1] + "," + first[2] + first[3] + `" style="` + first[4] + `" /></defs>` + "\n")
		b.WriteString(parts[1])
		for _, l := range lines {
			m := markPath.FindStringSubmatch(l)
			if m == nil || m[4] != first[4] || !sameShape(m[3], first[3], num(m[1])-x0, num(m[2])-y0) {
				return g
			}
			b.WriteString(`<use href="#` + id + `" x="` + short(num(m[1])-x0) + `" y="` + short(num(m[2])-y0) + `" />` + "\n")
		}
		b.WriteString(parts[3])
		return b.String()
	})
}

// sameShape tells whether the rest of a marker's path (after its first point) is the
// template's moved by (dx, dy): the same commands, radii and flags, every coordinate
// shifted alike to within the backend's rounding (five significant figures on each of four numbers: under 0.025 pt on plots under 1000 pt wide, which no screen shows).
func sameShape(rest, template string, dx, dy float64) bool {
	a, b := pathTokens.FindAllString(rest, -1), pathTokens.FindAllString(template, -1)
	if len(a) != len(b) {
		return false
	}
	// Per command, which of its numbers are x and y coordinates; the others (an arc's
	// radii, rotation and flags) must not move.
	roles := map[string]string{"M": "xy", "L": "xy", "A": "...ffxy", "H": "x", "V": "y", "Z": ""}
	role, k := "", 0
	for i := range a {
		if c := a[i]; c[0] >= 'A' && c[0] <= 'Z' {
			if c != b[i] {
				return false
			}
			role, k = roles[c], 0
			continue
		}
		if role == "" {
			return false
		}
		shift := 0.0
		switch role[k%len(role)] {
		case 'x':
			shift = dx
		case 'y':
			shift = dy
		}
		k++
		if d := num(a[i]) - num(b[i]) - shift; d > 0.025 || d < -0.025 {
			return false
		}
	}
	return true
}

// pathTokens splits a path's data into command letters and numbers.
var pathTokens = regexp.MustCompile(`[A-Za-z]|-?[0-9]*\.?[0-9]+`)

func num(s string) float64 {
	f, _ := strconv.ParseFloat(s, 64)
	return f
}

// short writes an offset to a hundredth of a point, which no screen shows.
func short(f float64) string {
	s := strconv.FormatFloat(f, 'f', 2, 64)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" || s == "" {
		return "0"
	}
	return s
}
