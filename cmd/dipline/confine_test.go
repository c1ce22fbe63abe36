package main

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"
)

// A workflow handed over by a collaborator must stay in its folder, and no damaged or
// hostile file may crash the command, hang it or exhaust memory. These tests run the
// command line as a user would.

// sharedFlow names every kind of path a workflow can: the store and the output (lines 3,
// 4), a data file (7), a catalogue (10) and a companions table (13).
const sharedFlow = `analysis "share" {
  seed   = 1
  store  = %q
  output = %q
}
photometry "raw" {
  files     = %q
  time_zero = 2460000
}
catalogue "near" {
  file = %q
}
companions "imaging" {
  file = %q
}
star "host" {
  method     = "cool-dwarf"
  teff       = "3400 ± 70 K"
  row        = catalogue.near["FW-0001"]
  companions = companions.imaging
}
`

// secret is in every file outside the workflow's folder; no message may repeat it.
const secret = "FW-SECRET-0042"

// paths are what sharedFlow names.
type paths struct{ store, output, data, catalogue, companions string }

var plainPaths = paths{".dipline/store.db", "results", "lc.csv", "stars.csv", "imaging.csv"}

// sharedFolder is a workflow's folder ("shared") beside a folder of the user's own
// ("private") that the workflow must not reach.
type sharedFolder struct {
	*folder
	private string
}

func newSharedFolder(t *testing.T, p paths) *sharedFolder {
	base := t.TempDir()
	s := &sharedFolder{folder: &folder{t: t, dir: filepath.Join(base, "shared")}, private: filepath.Join(base, "private")}
	for _, d := range []string{s.dir, s.private} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	s.write("analysis.hcl", fmt.Sprintf(sharedFlow, p.store, p.output, p.data, p.catalogue, p.companions))
	s.write("lc.csv", lightCurveCSV())
	s.write("stars.csv", starsCSV)
	s.write("imaging.csv", "name,band,dmag,dmag_err,separation\nFW-0001 B,Ks,3.50,0.10,1.20\n")
	// The user's own files: a "light curve" that is not one, a catalogue whose ids are
	// close to the workflow's, a companions table, a store and a lock file.
	for name, body := range map[string]string{
		"lc.csv":      secret + ":x:0:0:root:/root:/bin/sh\n",
		"stars.csv":   "id,parallax,parallax_err,ks,ks_err\n" + secret + ",40.0,0.05,8.0,0.02\nFW-0002,1,1,1,1\n",
		"imaging.csv": "name,band,dmag,dmag_err,separation\n" + secret + ",Ks,x,0.1,1\n",
		"victim.db":   secret + " not a store\n",
		"victim.lock": secret + " someone's notes\n",
	} {
		if err := os.WriteFile(filepath.Join(s.private, name), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return s
}

// link makes a symbolic link in the workflow's folder to a path in the private folder.
func (s *sharedFolder) link(name, target string) {
	s.t.Helper()
	os.Remove(filepath.Join(s.dir, name))
	if err := os.Symlink(filepath.Join(s.private, target), filepath.Join(s.dir, name)); err != nil {
		s.t.Fatal(err)
	}
}

// fingerprint lists every file under dir with its SHA-256, so a test can tell that nothing
// there was made, changed or removed.
func fingerprint(t *testing.T, dir string) string {
	t.Helper()
	var b strings.Builder
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		fmt.Fprint(&b, p)
		if !d.IsDir() {
			data, _ := os.ReadFile(p)
			sum := sha256.Sum256(data)
			fmt.Fprint(&b, " ", hex.EncodeToString(sum[:8]))
		}
		b.WriteByte('\n')
		return nil
	})
	return b.String()
}

func TestASharedWorkflowCannotLeaveItsFolder(t *testing.T) {
	cases := []struct {
		name  string
		paths paths
		links map[string]string // link name in the workflow's folder → target in the private one
		line  int
	}{
		{"a light curve that is a link to a file outside", plainPaths, map[string]string{"lc.csv": "lc.csv"}, 7},
		{"a light curve in a folder that is a link outside", with(plainPaths, func(p *paths) { p.data = "data/lc.csv" }), map[string]string{"data": "."}, 7},
		{"a catalogue that is a link to a file outside", plainPaths, map[string]string{"stars.csv": "stars.csv"}, 11},
		{"a catalogue in a folder that is a link outside", with(plainPaths, func(p *paths) { p.catalogue = "cat/stars.csv" }), map[string]string{"cat": "."}, 11},
		{"a companions table that is a link to a file outside", plainPaths, map[string]string{"imaging.csv": "imaging.csv"}, 14},
		{"a companions table in a folder that is a link outside", with(plainPaths, func(p *paths) { p.companions = "im/imaging.csv" }), map[string]string{"im": "."}, 14},
		{"a store that is a link to a file outside", with(plainPaths, func(p *paths) { p.store = "s.db" }), map[string]string{"s.db": "victim.db"}, 3},
		{"a store in a folder that is a link outside", plainPaths, map[string]string{".dipline": "."}, 3},
		{"an output folder that is a link to a folder outside", plainPaths, map[string]string{"results": "."}, 4},
		{"an output folder that is a link to a file outside", plainPaths, map[string]string{"results": "victim.db"}, 4},
		{"an output folder inside a folder that is a link outside", with(plainPaths, func(p *paths) { p.output = "lnk/results" }), map[string]string{"lnk": "."}, 4},
		{"a store above the folder", with(plainPaths, func(p *paths) { p.store = "../private/victim" }), nil, 3},
		{"an absolute store path", with(plainPaths, func(p *paths) { p.store = "/PRIVATE/victim" }), nil, 3},
		{"an output folder above the folder", with(plainPaths, func(p *paths) { p.output = "../private" }), nil, 4},
		{"an absolute output path", with(plainPaths, func(p *paths) { p.output = "/PRIVATE/out" }), nil, 4},
	}
	for _, c := range cases {
		t.Run(c.name+" is refused, and nothing outside changes", func(t *testing.T) {
			s := newSharedFolder(t, c.paths)
			if strings.Contains(c.paths.store+c.paths.output, "/PRIVATE") {
				text, _ := os.ReadFile(filepath.Join(s.dir, "analysis.hcl"))
				s.write("analysis.hcl", strings.ReplaceAll(string(text), "/PRIVATE", s.private))
			}
			for name, target := range c.links {
				s.link(name, target)
			}
			before := fingerprint(t, s.private)
			code, out, errs := s.dipline("run", "--workers", "1")
			if code != exitBadUser {
				t.Errorf("exit %d, want %d\n%s%s", code, exitBadUser, out, errs)
			}
			for _, want := range []string{fmt.Sprintf("analysis.hcl line %d, column ", c.line), "outside the workflow's folder", "--also-allow"} {
				if !strings.Contains(errs, want) {
					t.Errorf("stderr does not say %q:\n%s", want, errs)
				}
			}
			if strings.Contains(out+errs, secret) {
				t.Errorf("the output repeats a file outside the folder:\n%s%s", out, errs)
			}
			if after := fingerprint(t, s.private); after != before {
				t.Errorf("the private folder changed:\n%s\nwas\n%s", after, before)
			}
		})
	}
}

func TestAlsoAllowLetsTheUserWidenTheFolder(t *testing.T) {
	for _, where := range []string{"before", "after"} {
		t.Run("given "+where+" the command, it lets a link to a light curve elsewhere be read", func(t *testing.T) {
			s := newSharedFolder(t, plainPaths)
			s.write("../private/lc.csv", lightCurveCSV())
			s.link("lc.csv", "lc.csv")
			args := []string{"--also-allow", s.private, "check"}
			if where == "after" {
				args = []string{"check", "--also-allow", s.private}
			}
			if code, out, errs := s.dipline(args...); code != exitOK {
				t.Fatalf("exit %d\n%s%s", code, out, errs)
			}
			if code, _, errs := s.dipline("check"); code != exitBadUser || !strings.Contains(errs, "--also-allow") {
				t.Errorf("without the option: exit %d\n%s", code, errs)
			}
		})
	}
	t.Run("a size that is not one is refused", func(t *testing.T) {
		s := newSharedFolder(t, plainPaths)
		if code, _, errs := s.dipline("--max-data", "lots", "check"); code != exitBadUser || !strings.Contains(errs, "2GiB") {
			t.Errorf("exit %d\n%s", code, errs)
		}
	})
}

func TestALockFileThatIsNotOursSurvivesARun(t *testing.T) {
	cases := []struct {
		name  string
		store string
		allow bool
	}{
		{"a store beside a file of the same name in the folder", "notes", false},
		{"a store above the folder beside someone's lock file", "../private/victim", false},
		{"a store in an allowed folder beside someone's lock file", "../private/victim", true},
	}
	for _, c := range cases {
		t.Run(c.name+" leaves the file intact", func(t *testing.T) {
			s := newSharedFolder(t, with(plainPaths, func(p *paths) { p.store = c.store }))
			s.write("notes.lock", secret+" my notes\n")
			before := fingerprint(t, s.private)
			args := []string{"run", "--workers", "1"}
			if c.allow {
				args = append(args, "--also-allow", s.private)
			}
			code, out, errs := s.dipline(args...)
			if code != exitBadUser || !strings.Contains(errs, "analysis.hcl line 3, column ") {
				t.Errorf("exit %d, want %d naming line 3:\n%s%s", code, exitBadUser, out, errs)
			}
			if after := fingerprint(t, s.private); after != before {
				t.Errorf("the private folder changed:\n%s\nwas\n%s", after, before)
			}
			if got, _ := os.ReadFile(filepath.Join(s.dir, "notes.lock")); string(got) != secret+" my notes\n" {
				t.Errorf("notes.lock now holds %q", got)
			}
		})
	}
}

// with is p changed by f.
func with(p paths, f func(*paths)) paths { f(&p); return p }

// Hostile texts are refused at their line without being evaluated: the template loops
// would build 64 million strings. The 10 s bound guards against such runaway evaluation; it
// is not a speed target (a refusal takes milliseconds).
func TestHostileWorkflowsAreRefusedUnevaluated(t *testing.T) {
	loops := "x"
	for range 6 {
		loops = "%{ for v in [1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16,17,18,19,20] }" + loops + "%{ endfor }"
	}
	cases := []struct {
		name, text, want string
		line             int
	}{
		{"nested template loops", "analysis \"a\" {\n  seed = 1\n  store = \"" + loops + "\"\n}\n", "${ … } and %{ … } are not filled in", 3},
		{"thirty thousand nested brackets", "analysis \"a\" {\n  seed = 1\n  store = " + strings.Repeat("[", 30000) + strings.Repeat("]", 30000) + "\n}\n", "nest more than 32 deep here", 3},
		{"a hundred thousand nested brackets", "analysis \"a\" {\n  seed = " + strings.Repeat("(", 100000) + "1" + strings.Repeat(")", 100000) + "\n}\n", "a workflow file may be at most 64 KiB", 0},
		{"a for expression", "analysis \"a\" {\n  seed = 1\n}\nphotometry \"p\" {\n  files = [for f in [\"lc.csv\"] : f]\n}\n", "This is a for expression, and nothing in a workflow is computed.", 5},
		{"a string of five kilobytes", "analysis \"a\" {\n  seed = 1\n  store = \"" + strings.Repeat("s", 5000) + "\"\n}\n", "This string is longer than 4,096 bytes.", 3},
	}
	for _, c := range cases {
		t.Run(c.name+" exit with status 2 at their line", func(t *testing.T) {
			f := newFolder(t)
			f.write("analysis.hcl", c.text)
			start := time.Now()
			code, _, errs := f.dipline("check")
			if d := time.Since(start); d > 10*time.Second {
				t.Errorf("check took %s", d)
			}
			if code != exitBadUser || !strings.Contains(errs, c.want) {
				t.Errorf("exit %d, want %d and %q:\n%.500s", code, exitBadUser, c.want, errs)
			}
			if c.line > 0 && !strings.Contains(errs, fmt.Sprintf("analysis.hcl line %d, column ", c.line)) {
				t.Errorf("stderr does not name line %d:\n%.500s", c.line, errs)
			}
		})
	}
}

func TestACatalogueWithAMillionColumnsGivesAShortMessage(t *testing.T) {
	f := newFolder(t)
	var b strings.Builder
	b.WriteString("id")
	for i := range 1000000 {
		fmt.Fprintf(&b, ",c%d", i)
	}
	b.WriteString("\nFW-0001" + strings.Repeat(",1", 1000000) + "\n")
	f.write("stars.csv", b.String())
	f.write("analysis.hcl", starFlow)
	code, _, errs := f.dipline("check")
	if code != exitBadUser || !strings.Contains(errs, "analysis.hcl line 6, column ") || !strings.Contains(errs, "stars.csv:1: a row of more than 10,000 cells") {
		t.Errorf("exit %d:\n%.1000s", code, errs)
	}
	// One line, where the whole header was repeated in each of four messages (35 MB).
	if len(errs) > 1<<10 {
		t.Errorf("%d bytes of messages", len(errs))
	}
}

// helperEnv holds the arguments (NUL-separated) with which the test binary, started again,
// runs the command line as TestHelperDipline; helperDirEnv the folder it runs in, and
// helperPeakEnv the file it writes its peak resident memory to.
const (
	helperEnv     = "DIPLINE_TEST_HELPER_ARGS"
	helperDirEnv  = "DIPLINE_TEST_HELPER_DIR"
	helperPeakEnv = "DIPLINE_TEST_HELPER_PEAK"
)

// TestHelperDipline is not a test: started as a child process, it runs the command line
// and writes its own peak resident memory (VmHWM, from /proc/self/status) to a file. The
// child's rusage would not do: on Linux its ru_maxrss starts from the parent's resident
// size when the child is started (the memory of the test binary that started it).
func TestHelperDipline(t *testing.T) {
	args := os.Getenv(helperEnv)
	if args == "" {
		t.Skip("helper process only")
	}
	if err := os.Chdir(os.Getenv(helperDirEnv)); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(exitFailed)
	}
	code := realMain(strings.Split(args, "\x00"), os.Stdout, os.Stderr)
	status, err := os.ReadFile("/proc/self/status")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(exitFailed)
	}
	for _, line := range strings.Split(string(status), "\n") {
		if strings.HasPrefix(line, "VmHWM:") {
			os.WriteFile(os.Getenv(helperPeakEnv), []byte(line), 0o644)
		}
	}
	os.Exit(code)
}

// peakRSS runs the command line in a child process and returns its exit status, its
// standard error and its peak resident memory in bytes.
func peakRSS(t *testing.T, dir string, args ...string) (int, string, int64) {
	t.Helper()
	peakFile := filepath.Join(t.TempDir(), "peak")
	cmd := exec.Command(os.Args[0], "-test.run=^TestHelperDipline$")
	cmd.Env = append(os.Environ(), helperEnv+"="+strings.Join(args, "\x00"), helperDirEnv+"="+dir, helperPeakEnv+"="+peakFile)
	var errb strings.Builder
	cmd.Stderr = &errb
	err := cmd.Run()
	if _, ok := err.(*exec.ExitError); err != nil && !ok {
		t.Fatal(err)
	}
	line, err := os.ReadFile(peakFile)
	var kb int64
	if _, serr := fmt.Sscanf(string(line), "VmHWM: %d kB", &kb); err != nil || serr != nil {
		t.Fatalf("no peak from the child (%q, %v, %v); stderr:\n%s", line, err, serr, errb.String())
	}
	return cmd.ProcessState.ExitCode(), errb.String(), kb << 10
}

func TestASparseGigabyteLightCurveIsRefusedInLittleMemory(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("reads the peak from /proc, which Linux has")
	}
	f := newFolder(t) // photometry "raw" reads lc.csv on line 6
	lc, err := os.OpenFile(filepath.Join(f.dir, "lc.csv"), os.O_WRONLY|os.O_TRUNC, 0)
	if err != nil {
		t.Fatal(err)
	}
	lc.WriteString("# invented test data\ntime,flux,flux_err\n0.0,1.0,0.001\n")
	if err := lc.Truncate(1 << 30); err != nil { // the rest reads as NUL bytes, stored as a hole
		t.Fatal(err)
	}
	lc.Close()
	for _, command := range []string{"check", "run"} {
		t.Run(command+" refuses it with a peak of at most 200 MB", func(t *testing.T) {
			code, errs, rss := peakRSS(t, f.dir, command)
			t.Logf("dipline %s: exit %d, peak RSS %.1f MB (VmHWM)", command, code, float64(rss)/1e6)
			if code != exitBadUser || !strings.Contains(errs, "analysis.hcl line 6, column ") || !strings.Contains(errs, `"lc.csv" is 1 GiB`) {
				t.Errorf("exit %d:\n%s", code, errs)
			}
			if rss > 200e6 {
				t.Errorf("peak RSS %d bytes, over 200 MB", rss)
			}
		})
	}
}
