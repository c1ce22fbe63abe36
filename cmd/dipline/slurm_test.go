package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// slurmWait bounds how long the Slurm test waits for a submission's jobs: the eight small
// targets take seconds; a cluster that has not run them in three minutes is stuck.
const slurmWait = 3 * time.Minute

// buildDipline builds the command into a temporary folder: a submission's jobs run the
// binary that submitted them, which in a test must be dipline itself, not the test.
func buildDipline(t *testing.T) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "dipline")
	out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput()
	if err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// submit runs `dipline survey submit` with the built binary in the folder and waits until
// Slurm's queue no longer holds its jobs.
func submit(t *testing.T, bin, dir string, args ...string) string {
	t.Helper()
	cmd := exec.Command(bin, append([]string{"survey", "submit", "targets.csv"}, args...)...)
	cmd.Dir = dir
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("survey submit: %v\n%s", err, out)
	}
	m := regexp.MustCompile(`job array (\d+) .* merge job (\d+)`).FindStringSubmatch(string(out))
	if m == nil {
		t.Fatalf("survey submit said:\n%s", out)
	}
	deadline := time.Now().Add(slurmWait)
	for {
		q, err := exec.Command("squeue", "-h", "-j", m[1]+","+m[2], "-o", "%i %T").CombinedOutput()
		if err != nil && !strings.Contains(string(q), "Invalid job id") {
			t.Fatalf("squeue: %v\n%s", err, q)
		}
		if err != nil || strings.TrimSpace(string(q)) == "" {
			return string(out)
		}
		if time.Now().After(deadline) {
			t.Fatalf("the jobs were still queued after %s:\n%s", slurmWait, q)
		}
		time.Sleep(200 * time.Millisecond)
	}
}

// TestASurveyOnSlurmMatchesALocalRun runs the eight-target survey on a Slurm cluster (the
// one-node cluster .ci/run starts from Debian's packages) as a job array in chunks of three
// and an afterany merge job, with one target's file missing: the merge still runs, and the
// table shows that target failed and why. With the file back, a second submission runs
// only the chunk holding it, and the merged table is byte for byte a local run's.
func TestASurveyOnSlurmMatchesALocalRun(t *testing.T) {
	if os.Getenv("DIPLINE_SLURM") != "1" {
		t.Skip("needs a Slurm cluster: DIPLINE_SLURM=1 with SLURM_CONF set (.ci/run starts a one-node cluster)")
	}
	bin := buildDipline(t)
	local := newSurveyFolder(t)
	if code, out, errs := local.dipline("survey", "run", "targets.csv", "--workers", "2"); code != 0 {
		t.Fatalf("local survey: exit %d\n%s\n%s", code, out, errs)
	}
	_, want := surveyTable(t, local)

	f := newSurveyFolder(t)
	body, _ := os.ReadFile(filepath.Join(f.dir, "t3.csv"))
	os.Remove(filepath.Join(f.dir, "t3.csv"))
	out := submit(t, bin, f.dir, "--chunk", "3")
	if !strings.Contains(out, "(3 tasks of up to 3 targets)") {
		t.Errorf("first submission: %s", out)
	}
	rows, _ := surveyTable(t, f)
	if r := rows["T-03"]; r["status"] != "failed" || !strings.Contains(r["message"], "t3.csv") {
		t.Fatalf("T-03 after the first submission: %q %q", r["status"], r["message"])
	}
	for _, id := range []string{"T-01", "T-02", "T-04", "T-08"} {
		if rows[id]["status"] != "done" {
			t.Errorf("%s after the first submission: %q %q", id, rows[id]["status"], rows[id]["message"])
		}
	}
	f.write("t3.csv", string(body))
	if out = submit(t, bin, f.dir, "--chunk", "3"); !strings.Contains(out, "(1 tasks of up to 3 targets)") {
		t.Errorf("the re-submission should run one task: %s", out)
	}
	if _, got := surveyTable(t, f); !bytes.Equal(got, want) {
		t.Errorf("the survey table from Slurm differs from the local one:\n%s\nlocal:\n%s", got, want)
	}
}
