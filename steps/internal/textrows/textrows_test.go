package textrows

import (
	"strings"
	"testing"
)

func TestLinesCommentsAndQuotes(t *testing.T) {
	var lines []string
	for rest := []byte("a,b\r\n# note\n\n  \"x\",2\nlast"); rest != nil; {
		var l []byte
		l, rest = NextLine(rest)
		if !Skippable(l) {
			lines = append(lines, string(l))
		}
	}
	if got := strings.Join(lines, "|"); got != `a,b|  "x",2|last` {
		t.Errorf("lines %q", got)
	}
	for in, want := range map[string]string{`"x"`: "x", `"`: `"`, `x"`: `x"`, `""`: ""} {
		if got := string(Unquote([]byte(in))); got != want {
			t.Errorf("Unquote(%q) = %q, want %q", in, got, want)
		}
	}
}
