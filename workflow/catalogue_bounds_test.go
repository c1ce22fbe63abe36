package workflow

import (
	"fmt"
	"runtime"
	"strings"
	"testing"

	"github.com/hashicorp/hcl/v2"
)

// maxMessage bounds one catalogue message in these tests: ten names listed, each clipped to
// maxQuoted bytes, and the sentence around them.
const maxMessage = 2000

// wideHeader is a header of n columns named c1…cn after the id column "name".
func wideHeader(n int) string {
	var b strings.Builder
	b.WriteString("name")
	for i := 1; i < n; i++ {
		fmt.Fprintf(&b, ",c%d", i)
	}
	return b.String()
}

func TestCatalogueMessagesCutLongListings(t *testing.T) {
	row := func(id string, cells int) string { return id + strings.Repeat(",1", cells-1) }
	cases := []struct {
		name string
		csv  string
		id   string // the catalogue block's id column
		ask  string // the row the lookup step reads
		want []string
		line int // the line of the workflow the message points at
	}{
		{"a missing column of five thousand", wideHeader(5000) + "\n" + row("FW-1", 5000) + "\n", "name", "FW-1",
			[]string{`needs a column "parallax"`, "name, c1, c2", "… and 4,990 more columns"}, 9},
		{"a missing id column of five thousand", wideHeader(5000) + "\n", "star", "FW-1",
			[]string{`no id column "star"`, "… and 4,990 more columns"}, 5},
		{"a header of a hundred thousand columns", wideHeader(100000) + "\n" + row("FW-1", 100000) + "\n", "name", "FW-1",
			[]string{"stars.csv:1: a row of more than 10,000 cells"}, 5},
		{"a row of a hundred thousand cells", "name,parallax\nFW-1," + strings.Repeat("1,", 100000) + "\n", "name", "FW-1",
			[]string{"stars.csv:2: a row of more than 10,000 cells"}, 5},
		{"a row whose cells run over many quoted lines", "name,parallax\nFW-1" + strings.Repeat(",\"\n\"", 20000) + "\n", "name", "FW-1",
			[]string{"stars.csv:2: a row of more than 10,000 cells"}, 5},
		{"an id repeated on ten thousand lines", "name,parallax\n" + strings.Repeat("FW-1,12\n", 10000), "name", "FW-1",
			[]string{`"FW-1" on line 2 and again on line(s) 3, 4,`, "… and 9,989 more lines"}, 9},
		{"a megabyte cell that is not a number", "name,parallax\nFW-1," + strings.Repeat("x", 1<<20) + "\n", "name", "FW-1",
			[]string{"is not a number", "(1,048,576 bytes)"}, 9},
		{"a megabyte id that is missing", "name,parallax\n" + strings.Repeat("y", 1<<20) + ",12\n", "name", "FW-1",
			[]string{`no row with name "FW-1"`}, 9},
		{"a comment line of many commas is not a row", "# " + strings.Repeat(",", 20000) + "\nname,parallax\nFW-1,x\n", "name", "FW-1",
			[]string{`"x" is not a number`}, 9},
		{"a stray quote", "name,parallax\nFW-1,1\"2\n", "name", "FW-1",
			[]string{"stars.csv:2:7:", "a quote (\") inside a cell"}, 5},
	}
	for _, c := range cases {
		t.Run(c.name+" gives a short message", func(t *testing.T) {
			flow := fmt.Sprintf("analysis \"toy\" {\n  seed = 1\n}\ncatalogue \"near\" {\n  file = \"stars.csv\"\n  id   = %q\n}\nlookup \"l\" {\n  row = catalogue.near[%q]\n}\n", c.id, c.ask)
			// The lookup's row attribute is on line 9; its catalogue's file on line 5.
			p := newProject(t, map[string]string{"analysis.hcl": flow, "stars.csv": c.csv})
			_, err := p.load()
			diags, ok := err.(hcl.Diagnostics)
			if !ok || !diags.HasErrors() {
				t.Fatalf("loaded (err %v)", err)
			}
			if s := diags[0].Subject; s == nil || s.Start.Line != c.line {
				t.Errorf("diagnostic at %v, want line %d", s, c.line)
			}
			msg := err.Error()
			if len(msg) > maxMessage {
				t.Errorf("message of %d bytes:\n%.400s…", len(msg), msg)
			}
			for _, w := range c.want {
				if !strings.Contains(msg, w) {
					t.Errorf("message does not say %q:\n%.600s", w, msg)
				}
			}
		})
	}
}

func TestListingsAndValuesAreCut(t *testing.T) {
	cases := []struct {
		name string
		got  string
		want string
	}{
		{"ten items are listed whole", listSome(strings.Split("a,b,c,d,e,f,g,h,i,j", ","), "columns"), "a, b, c, d, e, f, g, h, i, j"},
		{"eleven items say how many more", listSome(strings.Split("a,b,c,d,e,f,g,h,i,j,k", ","), "columns"), "a, b, c, d, e, f, g, h, i, j, … and 1 more columns"},
		{"a long value is clipped with its length", clip(strings.Repeat("é", 100)), strings.Repeat("é", 30) + "… (200 bytes)"},
		{"a long value is quoted with its length outside the quotes", quote(strings.Repeat("a", 61)), `"` + strings.Repeat("a", 60) + `…" (61 bytes)`},
		{"a million reads with commas", thousands(1000000), "1,000,000"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if c.got != c.want {
				t.Errorf("got %q, want %q", c.got, c.want)
			}
		})
	}
}

func TestTheCatalogueIndexCostsWhatItCharges(t *testing.T) {
	const n = 200000
	var b strings.Builder
	b.WriteString("id,a,b\n")
	for i := range n {
		fmt.Fprintf(&b, "FW-%07d,1,2\n", i) // invented ids of 10 bytes
	}
	data := []byte(b.String())
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	c := &Catalogue{Path: "stars.csv"}
	if err := c.parse(data, "id", 1<<40); err != nil {
		t.Fatal(err)
	}
	runtime.GC()
	runtime.ReadMemStats(&after)
	kept := int64(after.HeapAlloc) - int64(before.HeapAlloc)
	t.Logf("%d rows: %.1f bytes each kept, %.1f charged", n, float64(kept)/n, float64(c.indexBytes)/n)
	if kept > c.indexBytes {
		t.Errorf("the index keeps %d bytes but charges %d", kept, c.indexBytes)
	}
	runtime.KeepAlive(c)

	t.Run("a file of short rows beyond the bound is refused at the row that passes it", func(t *testing.T) {
		c := &Catalogue{Path: "stars.csv"}
		err := c.parse(data, "id", 1000*(rowBytes+10))
		if err == nil || !strings.Contains(err.Error(), "stars.csv:1002:") || !strings.Contains(err.Error(), "--max-data") {
			t.Errorf("err = %v", err)
		}
	})
}
