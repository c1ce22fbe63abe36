package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The starter's words on a FITS table whose header says nothing about time: it names the
// setting to write with its candidates, and `check` does not call the workflow sound until
// it is written.
func TestStarterSaysWhatTheFileDoesNotTell(t *testing.T) {
	b, err := os.ReadFile("../../testdata/fits/lightcurve.fits")
	if err != nil {
		t.Fatal(err)
	}
	// lightcurve.fits (cfitsio) with its time keywords renamed to ones nothing reads.
	for _, k := range []string{"TIMESYS =", "TIMEREF =", "BJDREFI =", "BJDREFF ="} {
		at := bytes.Index(b, []byte(k))
		if at < 0 || at%80 != 0 {
			t.Fatalf("no %s card", k)
		}
		copy(b[at:], "X"+k[:7]+"=")
	}
	f := &folder{t: t, dir: t.TempDir()}
	f.write("bare.fits", string(b))
	code, out, errs := f.dipline("starter", "bare.fits")
	if code != 0 {
		t.Fatalf("starter: exit %d\n%s%s", code, out, errs)
	}
	for _, want := range []string{
		"the header has no TIMESYS or TIMEREF",
		"2450000, 2454833, 2457000 or 2460000 would each put it in a plausible year",
		"write time_zero",
		`the Sun's ("1 rho_sun")`,
		"it will not run until the setting named above is written in it",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("the starter's output lacks %q:\n%s", want, out)
		}
	}
	code, out, errs = f.dipline("check")
	if code == 0 || strings.Contains(out+errs, "no mistakes") || !strings.Contains(out+errs, "time_zero") {
		t.Fatalf("check on a workflow that cannot run: exit %d\n%s%s", code, out, errs)
	}
	// Written as the starter asks, the workflow checks.
	w, err := os.ReadFile(f.dir + "/analysis.hcl")
	if err != nil {
		t.Fatal(err)
	}
	f.write("analysis.hcl", strings.Replace(string(w), "# time_zero = ?", "time_zero = 2460000.25 #", 1))
	if code, out, errs := f.dipline("check"); code != 0 || !strings.Contains(out, "no mistakes") {
		t.Fatalf("check after writing time_zero: exit %d\n%s%s", code, out, errs)
	}
}

// A file the reader cannot take is refused in the reader's words, and nothing is written.
func TestStarterRefusesAFileWithoutAFluxColumn(t *testing.T) {
	f := &folder{t: t, dir: t.TempDir()}
	f.write("x.csv", "time,brightness\n2460000.1,1\n2460000.2,1\n")
	code, _, errs := f.dipline("starter", "x.csv")
	if code != exitBadUser || !strings.Contains(errs, "no flux column") {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if _, err := os.Stat(f.dir + "/analysis.hcl"); err == nil {
		t.Fatal("a workflow was written")
	}
}

// The light curve and the workflow may be named one relative and one absolute: the file is
// beside the workflow either way, and the workflow names it relative to its own folder.
// A file outside the workflow's folder is still refused.
func TestStarterTakesRelativeAndAbsoluteNamesAlike(t *testing.T) {
	f := newFolder(t)
	out := filepath.Join(f.dir, "sub", "analysis.hcl")
	if err := os.Mkdir(filepath.Dir(out), 0o755); err != nil {
		t.Fatal(err)
	}
	f.write("sub/lc.csv", lightCurveCSV())
	code, _, errs := f.dipline("starter", "sub/lc.csv", "--out", out)
	if code != 0 {
		t.Fatalf("starter sub/lc.csv --out %s: exit %d\n%s", out, code, errs)
	}
	body, err := os.ReadFile(out)
	if err != nil || !strings.Contains(string(body), `files = ["lc.csv"]`) {
		t.Errorf("the workflow does not name lc.csv beside it (%v):\n%s", err, body)
	}
	code, _, errs = f.dipline("starter", "lc.csv", "--out", filepath.Join(f.dir, "sub", "other.hcl"))
	if code != exitBadUser || !strings.Contains(errs, "is not inside the folder of") {
		t.Errorf("a light curve outside the workflow's folder: exit %d\n%s", code, errs)
	}
}
