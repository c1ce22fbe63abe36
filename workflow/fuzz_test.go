package workflow

import (
	"bytes"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/hashicorp/hcl/v2"
)

// Fuzz targets for the loader and the catalogue reader. Run each for minutes after a change
// to either (DEVELOPERS.md): go test ./workflow -run '^$' -fuzz FuzzLoad -fuzztime 5m, and
// the same with FuzzCatalogue. The default test run replays the seeds below and the corpus
// in testdata/fuzz.

// The bounds a load must keep on any input, whatever it finds wrong.
const (
	fuzzMaxData     = 1 << 20  // the data bound the fuzzed loads run under
	fuzzMaxAlloc    = 64 << 20 // bytes one load may allocate in all
	fuzzMaxMessage  = 16 << 10 // bytes of one diagnostic's summary and detail
	fuzzMaxDuration = 5 * time.Second
)

func FuzzLoad(f *testing.F) {
	seeds := []string{
		catalogueFlow,
		toyHead + "source \"a\" {\n  files = \"lc.txt\"\n  scale = -2\n}\nfloor \"f\" {\n  input = source.a\n}\n",
		toyHead + "source \"a\" {\n  files = [\"lc.txt\", \"link.txt\"]\n}\n",
		toyHead + "source \"a\" {\n  files = \"linkdir/secret.csv\"\n}\n",
		"analysis \"toy\" {\n  seed = 1\n  store = \"../private/s.db\"\n  output = \"linkdir\"\n}\n",
		"analysis \"toy\" {\n  seed = 1\n  store = \"sub/x.db\"\n}\ncatalogue \"near\" {\n  file = \"link.txt\"\n  id = \"name\"\n}\nlookup \"l\" {\n  row = catalogue.near[\"FW-SECRET-0043\"]\n}\n",
		toyHead + "source \"a\" {\n  files = \"lc.txt\"\n  label = \"%{ for v in [1, 2] }${v}%{ endfor }\"\n}\n",
		toyHead + "combine \"c\" {\n  inputs = [for v in [source.a] : v]\n  window = [\"1 h\", \"2 h\"]\n}\n",
		toyHead + "source \"a\" {\n  files = \"lc.txt\"\n  label = [[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[1]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]\n}\n",
		"catalogue \"near\" {\n  file = \"stars.csv\"\n  columns = { parallax = \"plx\" }\n}\n",
	}
	for _, s := range seeds {
		f.Add(s, []byte("1\n2\n"), []byte(stars))
	}
	f.Add(catalogueFlow, []byte{}, []byte("name,parallax\nFW-1,\"1\"2\nFW-1,3\n"))
	f.Fuzz(func(t *testing.T, text string, data, cat []byte) {
		base := t.TempDir()
		dir, outside := filepath.Join(base, "shared"), filepath.Join(base, "private")
		for name, body := range map[string][]byte{
			"shared/analysis.hcl": []byte(text), "shared/lc.txt": data, "shared/stars.csv": cat,
			"private/secret.csv": []byte("name,parallax\n" + secretRow),
		} {
			p := filepath.Join(base, name)
			os.MkdirAll(filepath.Dir(p), 0o755)
			if err := os.WriteFile(p, body, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		os.Symlink(filepath.Join(outside, "secret.csv"), filepath.Join(dir, "link.txt"))
		os.Symlink(outside, filepath.Join(dir, "linkdir"))

		w, diags, alloc := loadMeasured(t, filepath.Join(dir, "analysis.hcl"))
		if alloc > fuzzMaxAlloc {
			t.Errorf("loading allocated %d bytes", alloc)
		}
		if (w == nil) != diags.HasErrors() {
			t.Fatalf("workflow %v with diagnostics %v", w != nil, diags)
		}
		if len(diags) > maxDiagnostics+1 {
			t.Errorf("%d diagnostics", len(diags))
		}
		for _, d := range diags {
			if n := len(d.Summary) + len(d.Detail); n > fuzzMaxMessage {
				t.Errorf("a message of %d bytes: %.200s…", n, d.Detail)
			}
			if strings.Contains(d.Summary+d.Detail, "SECRET") {
				t.Errorf("a message repeats a file outside the folder: %s", d.Detail)
			}
		}
		// Printing them survives whatever line they point at, and stays short: a message and
		// two lines of at most maxExcerptColumns runes (of four bytes at most) each.
		var printed bytes.Buffer
		if err := FormatDiagnostics(&printed, diags); err != nil {
			t.Fatal(err)
		}
		if n := printed.Len(); n > len(diags)*(fuzzMaxMessage+2*(4*maxExcerptColumns+64)) {
			t.Errorf("%d bytes printed for %d diagnostics", n, len(diags))
		}
		if w == nil {
			return
		}
		for _, p := range []string{w.StorePath, w.OutputDir} {
			if _, ok := within(dir, p); !ok {
				t.Errorf("%s lies outside the workflow's folder %s", p, dir)
			}
		}
		for _, s := range w.Steps {
			for _, files := range s.Files {
				for _, fi := range files {
					if strings.Contains(string(fi.Data), "SECRET") {
						t.Errorf("%s read %s from outside the folder", s.Addr, fi.Path)
					}
				}
			}
		}
	})
}

// loadMeasured loads a workflow under the fuzzing bounds and says how many bytes it
// allocated; it fails the test if the load does not finish in fuzzMaxDuration.
func loadMeasured(t *testing.T, path string) (*Workflow, hcl.Diagnostics, uint64) {
	type result struct {
		w     *Workflow
		d     hcl.Diagnostics
		alloc uint64
	}
	done := make(chan result, 1)
	go func() {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		w, d := LoadWithAccess(path, toyRegistry(), nil, Access{MaxData: fuzzMaxData})
		runtime.ReadMemStats(&after)
		done <- result{w, d, after.TotalAlloc - before.TotalAlloc}
	}()
	select {
	case r := <-done:
		return r.w, r.d, r.alloc
	case <-time.After(fuzzMaxDuration):
		t.Fatalf("loading did not finish in %s", fuzzMaxDuration)
	}
	return nil, nil, 0
}

func FuzzCatalogue(f *testing.F) {
	f.Add([]byte(stars), "name", "FW-1", "parallax")
	f.Add([]byte("id\tteff\n# a comment\nA\t3300\nA\t3400\n"), "id", "A", "teff")
	f.Add([]byte("name,plx\n\"FW,1\",\"1\"\"2\"\n"), "name", "FW,1", "plx")
	f.Add([]byte("\n\n#\n"), "", "", "")
	f.Fuzz(func(t *testing.T, data []byte, idCol, id, col string) {
		c := &Catalogue{Path: "stars.csv", Renames: map[string]string{"alias": col}}
		if err := c.parse(data, idCol, fuzzMaxData); err != nil {
			if n := len(err.Error()); n > fuzzMaxMessage {
				t.Errorf("a message of %d bytes", n)
			}
			return
		}
		if len(c.rows) != len(c.order) {
			t.Fatalf("%d rows by id, %d in order", len(c.rows), len(c.order))
		}
		for _, rid := range c.order {
			if rid == "" || strings.TrimSpace(rid) != rid {
				t.Errorf("id %q is blank or padded", rid)
			}
			// A row read again from the file's bytes is the row that was indexed.
			cells, err := c.cells(c.rows[rid])
			if err != nil {
				t.Fatalf("row %q: %v", rid, err)
			}
			if got := strings.TrimSpace(cells[c.index[strings.ToLower(c.IDColumn)]]); got != rid {
				t.Fatalf("row %q reads back with the id %q", rid, got)
			}
		}
		for _, name := range []string{col, "alias", c.IDColumn} {
			j, ok := c.column(name)
			if ok && (j < 0 || j >= len(c.header)) {
				t.Fatalf("column %q at %d of %d", name, j, len(c.header))
			}
			if r := c.rows[id]; ok && r != nil {
				cells, _ := c.cells(r)
				if _, _, err := parseCell(strings.TrimSpace(cells[j])); err != nil && len(err.Error()) > 2*maxQuoted+64 {
					t.Errorf("a cell's message of %d bytes", len(err.Error()))
				}
			}
		}
		if s := suggest(id, c.order); len(s) > 2*maxQuoted+64 {
			t.Errorf("a suggestion of %d bytes", len(s))
		}
	})
}
