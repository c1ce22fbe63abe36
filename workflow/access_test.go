package workflow

import (
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/hashicorp/hcl/v2"
)

// secretRow is the content of a file outside the workflow's folder: no message may repeat
// any of it (invented).
const secretRow = "FW-SECRET-0042,12.5,3300\n"

// confined is a workflow folder with a folder beside it that the workflow must not reach.
type confined struct {
	t       *testing.T
	dir     string // the workflow's folder
	outside string // a folder beside it
}

func newConfined(t *testing.T) *confined {
	t.Helper()
	base := t.TempDir()
	c := &confined{t: t, dir: filepath.Join(base, "shared"), outside: filepath.Join(base, "private")}
	for _, d := range []string{c.dir, c.outside} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	c.put(c.outside, "stars.csv", "name,parallax,teff\n"+secretRow)
	c.put(c.outside, "lc.txt", secretRow)
	c.put(c.dir, "x.txt", "1\n")
	return c
}

func (c *confined) put(dir, name, body string) {
	c.t.Helper()
	p := filepath.Join(dir, name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		c.t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		c.t.Fatal(err)
	}
}

// link makes a symbolic link in the workflow's folder.
func (c *confined) link(target, name string) {
	c.t.Helper()
	p := filepath.Join(c.dir, name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		c.t.Fatal(err)
	}
	if err := os.Symlink(target, p); err != nil {
		c.t.Fatal(err)
	}
}

func (c *confined) load(text string, acc Access) (*Workflow, hcl.Diagnostics) {
	c.t.Helper()
	c.put(c.dir, "analysis.hcl", text)
	return LoadWithAccess(filepath.Join(c.dir, "analysis.hcl"), toyRegistry(), nil, acc)
}

// listing names everything under dir, so a test can tell that nothing was made there.
func listing(t *testing.T, dir string) string {
	t.Helper()
	var names []string
	filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		names = append(names, p)
		return nil
	})
	return strings.Join(names, "\n")
}

const toyHead = "analysis \"toy\" {\n  seed = 1\n}\n" // lines 1–3

func TestSymbolicLinksCannotLeadOutOfTheWorkflowsFolder(t *testing.T) {
	cases := []struct {
		name  string
		setup func(c *confined)
		body  string // from line 4
		line  int
	}{
		{"a data file that is a link to a file outside",
			func(c *confined) { c.link(filepath.Join(c.outside, "lc.txt"), "lc.txt") },
			"source \"a\" {\n  files = \"lc.txt\"\n}\n", 5},
		{"a data file in a folder that is a link to a folder outside",
			func(c *confined) { c.link(c.outside, "data") },
			"source \"a\" {\n  files = [\"x.txt\", \"data/lc.txt\"]\n}\n", 5},
		{"a data file through a relative link",
			func(c *confined) { c.link("../private/lc.txt", "lc.txt") },
			"source \"a\" {\n  files = \"lc.txt\"\n}\n", 5},
		{"a catalogue that is a link to a file outside",
			func(c *confined) { c.link(filepath.Join(c.outside, "stars.csv"), "stars.csv") },
			"catalogue \"near\" {\n  file = \"stars.csv\"\n  id   = \"name\"\n}\nlookup \"l\" {\n  row = catalogue.near[\"FW-SECRET-0043\"]\n}\n", 5},
		{"a catalogue in a folder that is a link to a folder outside",
			func(c *confined) { c.link(c.outside, "cat") },
			"catalogue \"near\" {\n  file = \"cat/stars.csv\"\n  id   = \"name\"\n}\nlookup \"l\" {\n  row = catalogue.near[\"FW-SECRET-0043\"]\n}\n", 5},
		{"a store that is a link to a file outside",
			func(c *confined) { c.link(filepath.Join(c.outside, "victim.db"), "store.db") },
			"", 0},
		{"a store's lock file that is a link to a file outside",
			func(c *confined) { c.link(filepath.Join(c.outside, "lc.txt"), "store.db.lock") },
			"", 0},
		{"a store in a folder that is a link to a folder outside",
			func(c *confined) { c.link(c.outside, ".dipline") },
			"", 0},
		{"an output folder that is a link to a folder outside",
			func(c *confined) { c.link(c.outside, "out") },
			"", 0},
		{"the default output folder as a link to a folder outside",
			func(c *confined) { c.link(c.outside, "results") },
			"", 0},
	}
	for _, tc := range cases {
		t.Run(tc.name+" is refused", func(t *testing.T) {
			c := newConfined(t)
			tc.setup(c)
			text := toyHead + tc.body
			switch {
			case strings.Contains(tc.name, "store that") || strings.Contains(tc.name, "lock file"):
				text = "analysis \"toy\" {\n  seed  = 1\n  store = \"store.db\"\n}\n"
				tc.line = 3
			case strings.Contains(tc.name, "an output folder"):
				text = "analysis \"toy\" {\n  seed   = 1\n  output = \"out\"\n}\n"
				tc.line = 3
			case tc.body == "":
				tc.line = 1 // the analysis block, which leaves the default
			}
			before := listing(t, c.outside)
			w, diags := c.load(text, Access{})
			if w != nil || !diags.HasErrors() {
				t.Fatalf("loaded; want a refusal")
			}
			d := diags[0]
			msg := Message(d)
			for _, want := range []string{"leads outside the workflow's folder", "through a symbolic link", "--also-allow"} {
				if !strings.Contains(msg, want) {
					t.Errorf("message %q does not say %q", msg, want)
				}
			}
			if strings.Contains(diags.Error(), "SECRET") {
				t.Errorf("a message repeats the content of a file outside: %s", diags.Error())
			}
			if d.Subject == nil || d.Subject.Start.Line != tc.line {
				t.Errorf("diagnostic at %v, want line %d", d.Subject, tc.line)
			}
			if after := listing(t, c.outside); after != before {
				t.Errorf("the folder outside changed:\n%s\nwas\n%s", after, before)
			}
		})
	}
}

func TestPathsThatLeaveTheFolderAreRefused(t *testing.T) {
	cases := []struct {
		name, attr string
		text       func(c *confined) string
	}{
		{"a store above the folder", "store", func(c *confined) string { return "../private/store.db" }},
		{"an absolute store path", "store", func(c *confined) string { return filepath.Join(c.outside, "store.db") }},
		{"an output folder above the folder", "output", func(c *confined) string { return "../private/results" }},
		{"an absolute output path", "output", func(c *confined) string { return c.outside }},
		{"a store that climbs out and back in through ..", "store", func(c *confined) string { return "a/../../private/s.db" }},
	}
	for _, tc := range cases {
		t.Run(tc.name+" is refused and nothing is made there", func(t *testing.T) {
			c := newConfined(t)
			before := listing(t, c.outside)
			_, diags := c.load("analysis \"toy\" {\n  seed = 1\n  "+tc.attr+" = \""+tc.text(c)+"\"\n}\n", Access{})
			if !diags.HasErrors() {
				t.Fatal("loaded; want a refusal")
			}
			d := diags[0]
			if msg := Message(d); !strings.Contains(msg, "The "+tc.attr+" ") || !strings.Contains(msg, "lies outside the workflow's folder") ||
				!strings.Contains(msg, "--also-allow") {
				t.Errorf("diagnostic %q", msg)
			}
			if d.Subject == nil || d.Subject.Start.Line != 3 {
				t.Errorf("diagnostic at %v, want line 3", d.Subject)
			}
			if after := listing(t, c.outside); after != before {
				t.Errorf("something was made outside:\n%s", after)
			}
		})
	}
}

func TestAnAbsolutePathInsideTheFolderIsAskedForRelative(t *testing.T) {
	c := newConfined(t)
	c.put(c.dir, "data/stars.csv", "name,parallax\nFW-2,12\n")
	abs := filepath.Join(c.dir, "data", "stars.csv")
	_, diags := c.load("analysis \"toy\" {\n  seed = 1\n}\n\ncatalogue \"near\" {\n  file = \""+abs+"\"\n}\n", Access{})
	if !diags.HasErrors() {
		t.Fatal("loaded; want a refusal (an absolute path would lead a copy of the folder back here)")
	}
	msg := Message(diags[0])
	if strings.Contains(msg, "outside") || !strings.Contains(msg, `write it as "data/stars.csv"`) {
		t.Errorf("diagnostic %q; want the relative path offered, not \"outside\"", msg)
	}
	if d := diags[0]; d.Subject == nil || d.Subject.Start.Line != 6 {
		t.Errorf("diagnostic at %v, want line 6", d.Subject)
	}
}

func TestAlsoAllowWidensWhatTheWorkflowMayUse(t *testing.T) {
	cases := []struct {
		name  string
		setup func(c *confined)
		text  func(c *confined) string
		check func(t *testing.T, c *confined, w *Workflow)
	}{
		{"a data file above the folder",
			func(c *confined) {},
			func(c *confined) string { return toyHead + "source \"a\" {\n  files = \"../private/lc.txt\"\n}\n" },
			func(t *testing.T, c *confined, w *Workflow) {
				if got := string(w.Step("source.a").Files["files"][0].Data); got != secretRow {
					t.Errorf("read %q", got)
				}
			}},
		{"a data file behind a link into the allowed folder",
			func(c *confined) { c.link(c.outside, "data") },
			func(c *confined) string { return toyHead + "source \"a\" {\n  files = \"data/lc.txt\"\n}\n" },
			func(t *testing.T, c *confined, w *Workflow) {
				if got := string(w.Step("source.a").Files["files"][0].Data); got != secretRow {
					t.Errorf("read %q", got)
				}
			}},
		{"an absolute store path in the allowed folder",
			func(c *confined) {},
			func(c *confined) string {
				return "analysis \"toy\" {\n  seed = 1\n  store = \"" + filepath.Join(c.outside, "db", "s.db") + "\"\n}\n"
			},
			func(t *testing.T, c *confined, w *Workflow) {
				if w.StorePath != filepath.Join(c.outside, "db", "s.db") {
					t.Errorf("store %s", w.StorePath)
				}
				if st, err := os.Stat(filepath.Join(c.outside, "db")); err != nil || !st.IsDir() {
					t.Errorf("the store's folder was not made: %v", err)
				}
			}},
		{"a results folder behind a link into the allowed folder",
			func(c *confined) { c.link(c.outside, "results") },
			func(c *confined) string { return toyHead },
			func(t *testing.T, c *confined, w *Workflow) {
				real, _ := filepath.EvalSymlinks(c.outside)
				if got, _ := filepath.EvalSymlinks(w.OutputDir); got != real {
					t.Errorf("output %s, want the allowed folder %s", w.OutputDir, real)
				}
			}},
	}
	for _, tc := range cases {
		t.Run(tc.name+" is allowed", func(t *testing.T) {
			c := newConfined(t)
			tc.setup(c)
			w, diags := c.load(tc.text(c), Access{Allow: []string{c.outside}})
			if diags.HasErrors() {
				t.Fatal(diags)
			}
			tc.check(t, c, w)
		})
	}
}

func TestLinksWithinTheFolderAreFollowed(t *testing.T) {
	c := newConfined(t)
	c.put(c.dir, "raw/one.txt", "2\n")
	c.link("raw", "data")
	c.link("x.txt", "same.txt")
	w, diags := c.load(toyHead+"source \"a\" {\n  files = [\"data/one.txt\", \"same.txt\"]\n}\n", Access{})
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	files := w.Step("source.a").Files["files"]
	if string(files[0].Data) != "2\n" || string(files[1].Data) != "1\n" {
		t.Errorf("read %q and %q", files[0].Data, files[1].Data)
	}
	if !strings.HasPrefix(w.StorePath, c.dir) || !strings.HasPrefix(w.OutputDir, c.dir) {
		t.Errorf("store %s, output %s: want both in %s", w.StorePath, w.OutputDir, c.dir)
	}
}

func TestDataAreMeasuredBeforeTheyAreRead(t *testing.T) {
	t.Run("a file larger than the bound is refused, naming it and the option", func(t *testing.T) {
		c := newConfined(t)
		c.put(c.dir, "big.txt", strings.Repeat("1\n", 600))
		_, diags := c.load(toyHead+"source \"a\" {\n  files = \"big.txt\"\n}\n", Access{MaxData: 1000})
		if !diags.HasErrors() {
			t.Fatal("loaded")
		}
		d := diags[0]
		for _, want := range []string{`"big.txt" is 1.2 KiB`, "1000 B in all", "--max-data 1GiB"} {
			if !strings.Contains(Message(d), want) {
				t.Errorf("%q does not say %q", Message(d), want)
			}
		}
		if d.Subject == nil || d.Subject.Start.Line != 5 {
			t.Errorf("diagnostic at %v, want line 5", d.Subject)
		}
	})
	t.Run("the bound holds for all files together", func(t *testing.T) {
		c := newConfined(t)
		c.put(c.dir, "a.txt", strings.Repeat("1\n", 300))
		c.put(c.dir, "b.txt", strings.Repeat("2\n", 300))
		_, diags := c.load(toyHead+"source \"a\" {\n  files = [\"a.txt\", \"b.txt\"]\n}\n", Access{MaxData: 1000})
		if !diags.HasErrors() || !strings.Contains(Message(diags[0]), `"b.txt" is 600 B`) || !strings.Contains(Message(diags[0]), "600 B of it already taken") {
			t.Fatalf("diags %v", diags)
		}
	})
	t.Run("a file named twice is read and counted once", func(t *testing.T) {
		c := newConfined(t)
		c.put(c.dir, "a.txt", strings.Repeat("1\n", 300))
		w, diags := c.load(toyHead+"source \"a\" {\n  files = [\"a.txt\", \"./a.txt\"]\n}\nsource \"b\" {\n  files = \"a.txt\"\n}\n", Access{MaxData: 1000})
		if diags.HasErrors() {
			t.Fatal(diags)
		}
		if a, b := w.Step("source.a").Files["files"], w.Step("source.b").Files["files"]; &a[0].Data[0] != &b[0].Data[0] {
			t.Error("the same file was read twice")
		}
	})
	t.Run("a sparse gigabyte is refused without being read", func(t *testing.T) {
		c := newConfined(t)
		f, err := os.Create(filepath.Join(c.dir, "lc.txt"))
		if err != nil {
			t.Fatal(err)
		}
		if err := f.Truncate(1 << 30); err != nil {
			t.Fatal(err)
		}
		f.Close()
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		_, diags := c.load(toyHead+"source \"a\" {\n  files = \"lc.txt\"\n}\n", Access{})
		runtime.ReadMemStats(&after)
		if !diags.HasErrors() || !strings.Contains(Message(diags[0]), `"lc.txt" is 1 GiB`) {
			t.Fatalf("diags %v", diags)
		}
		if grew := after.TotalAlloc - before.TotalAlloc; grew > 16<<20 {
			t.Errorf("loading allocated %d bytes; the file was read", grew)
		}
	})
}

func TestAStoreBesideSomeonesFileLeavesItAlone(t *testing.T) {
	c := newConfined(t)
	const notes = "my notes, not a lock\n"
	c.put(c.dir, "notes.lock", notes)
	_, diags := c.load("analysis \"toy\" {\n  seed  = 1\n  store = \"notes\"\n}\n", Access{})
	if !diags.HasErrors() || !strings.Contains(Message(diags[0]), `"notes.lock", where this store's run lock belongs, holds something else`) || diags[0].Subject.Start.Line != 3 {
		t.Fatalf("diags %v", diags)
	}
	if b, _ := os.ReadFile(filepath.Join(c.dir, "notes.lock")); string(b) != notes {
		t.Errorf("the file now holds %q", b)
	}
}

func TestAnAllowedFolderThatDoesNotExistIsNamed(t *testing.T) {
	c := newConfined(t)
	_, diags := c.load(toyHead, Access{Allow: []string{filepath.Join(c.outside, "nope")}})
	if !diags.HasErrors() || !strings.Contains(Message(diags[0]), "--also-allow") {
		t.Fatalf("diags %v", diags)
	}
}
