package report

import (
	"strings"
	"testing"
)

func TestMarkersOfOneShapeAreWrittenOnceAndUsed(t *testing.T) {
	circle := func(x, y string) string {
		return `<path d="M` + x + `,` + y + `A1.4,1.4 0 1 1 ` + x + `,` + y + `Z" style="fill:#0072B2" />` + "\n"
	}
	group := `<g class="marks" data-layer="0" data-style="points" data-rows="3" data-drawn="3">` + "\n" +
		circle("71.593", "81.067") + circle("100.28", "88.481") + circle("69.7", "82.319") + "</g>\n"
	got := compactMarks(`<svg>` + group + `</svg>`)
	if n := strings.Count(got, "<use "); n != 3 {
		t.Fatalf("%d uses, want one per marker (3):\n%s", n, got)
	}
	if !strings.Contains(got, `x="28.69" y="7.41"`) { // 100.28 − 71.593, 88.481 − 81.067
		t.Errorf("the second marker's offset is not written:\n%s", got)
	}
	if strings.Count(got, "<path ") != 1 || !strings.Contains(got, "<defs>") {
		t.Errorf("the shape is not written once in a <defs>:\n%s", got)
	}

	t.Run("a group whose markers differ is left as it is", func(t *testing.T) {
		mixed := strings.Replace(group, `style="fill:#0072B2" />`+"\n</g>", `style="fill:#D55E00" />`+"\n</g>", 1)
		if out := compactMarks(`<svg>` + mixed + `</svg>`); out != `<svg>`+mixed+`</svg>` {
			t.Errorf("a mixed group was rewritten:\n%s", out)
		}
		moved := strings.Replace(group, "A1.4,1.4 0 1 1 100.28,88.481Z", "A1.4,1.4 0 1 1 90.28,88.481Z", 1)
		if out := compactMarks(`<svg>` + moved + `</svg>`); out != `<svg>`+moved+`</svg>` {
			t.Errorf("a group with a marker of another shape was rewritten:\n%s", out)
		}
	})
}
