package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"dipline/cache"
)

// surveyPeriods are the invented periods of the survey tests' eight targets, one each.
var surveyPeriods = []float64{1.3, 1.7, 2.1, 2.5, 2.9, 3.3, 3.7, 4.1}

// surveyLightCurve is an invented 20-day light curve at 30 minutes with white noise of
// 300 ppm and a 1200 ppm, 2.4-hour box dip every period days, its noise seeded apart.
func surveyLightCurve(period float64, seed uint64) string { return boxCurve(20, period, seed) }

// boxCurve is surveyLightCurve over a number of days.
func boxCurve(days int, period float64, seed uint64) string {
	const depth = 1.2e-3
	var b strings.Builder
	b.WriteString("# invented test data\ntime,flux,flux_err\n")
	next := uniforms(seed)
	for i := 0; i < days*48; i++ {
		t := float64(i) / 48
		f := 1 + 3e-4*math.Sqrt(-2*math.Log(next()))*math.Cos(2*math.Pi*next())
		if ph := math.Mod(t-0.7, period); ph >= 0 && ph < 0.1 {
			f -= depth
		}
		fmt.Fprintf(&b, "%.6f,%.7f,0.0003\n", t, f)
	}
	return b.String()
}

// newSurveyFolder writes the test workflow, one light curve per target (t1.csv …) and a
// target table naming them (with the first written with quotes, as a user might).
func newSurveyFolder(t *testing.T) *folder {
	f := newFolder(t)
	var table strings.Builder
	table.WriteString("id,photometry.raw.files\n")
	for i, p := range surveyPeriods {
		name := fmt.Sprintf("t%d.csv", i+1)
		f.write(name, surveyLightCurve(p, uint64(100+i)))
		cell := name
		if i == 0 {
			cell = `"""t1.csv"""`
		}
		fmt.Fprintf(&table, "T-%02d,%s\n", i+1, cell)
	}
	f.write("targets.csv", table.String())
	return f
}

// surveyTable reads surveys/targets/survey.csv into rows keyed by id.
func surveyTable(t *testing.T, f *folder) (map[string]map[string]string, []byte) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(f.dir, "surveys", "targets", "survey.csv"))
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(strings.NewReader(string(b))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	rows := map[string]map[string]string{}
	for _, r := range recs[1:] {
		row := map[string]string{}
		for i, h := range recs[0] {
			row[h] = r[i]
		}
		rows[r[0]] = row
	}
	return rows, b
}

// TestASurveyRunsEveryTargetAndGathersThem runs eight targets on two workers: each is done,
// its search finds its own period, the survey table holds them all with their step keys,
// and the workflow's store holds every target's results — so running the workflow by hand
// with one target's file computes nothing.
func TestASurveyRunsEveryTargetAndGathersThem(t *testing.T) {
	f := newSurveyFolder(t)
	code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2")
	if code != 0 {
		t.Fatalf("survey run: exit %d\n%s\n%s", code, out, errs)
	}
	rows, _ := surveyTable(t, f)
	if len(rows) != len(surveyPeriods) {
		t.Fatalf("%d rows in the survey table, want %d", len(rows), len(surveyPeriods))
	}
	for i, want := range surveyPeriods {
		id := fmt.Sprintf("T-%02d", i+1)
		r := rows[id]
		p, err := strconv.ParseFloat(r["search.dips/signal1.period"], 64)
		if r["status"] != "done" || err != nil || math.Abs(p-want) > want*0.1/20 {
			t.Errorf("%s: status %q, period %q, want about %v", id, r["status"], r["search.dips/signal1.period"], want)
		}
		if len(r["search.dips step_key"]) != 64 || r["photometry.raw status"] != "computed" {
			t.Errorf("%s: step key %q, photometry %q", id, r["search.dips step_key"], r["photometry.raw status"])
		}
	}
	code, out, _ = f.dipline("run", "--set", `photometry.raw.files="t4.csv"`)
	if code != 0 || strings.Count(out, "reused") != 3 || strings.Contains(out, "computed") {
		t.Errorf("a run of target T-04's values by hand does not reuse the gathered results (exit %d):\n%s", code, out)
	}
}

// TestAFailedTargetIsInTheTableAndARerunCompletesIt leaves one target's file out: that
// target fails with the file named, the others are done, the exit status is 2; once the
// file is there, the survey runs again and every target is done.
func TestAFailedTargetIsInTheTableAndARerunCompletesIt(t *testing.T) {
	f := newSurveyFolder(t)
	body, _ := os.ReadFile(filepath.Join(f.dir, "t3.csv"))
	os.Remove(filepath.Join(f.dir, "t3.csv"))
	code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2")
	if code != exitBadUser {
		t.Fatalf("survey run with a file missing: exit %d, want 2\n%s\n%s", code, out, errs)
	}
	rows, _ := surveyTable(t, f)
	if r := rows["T-03"]; r["status"] != "failed" || !strings.Contains(r["message"], "t3.csv") || !strings.Contains(r["message"], "the target table's line 4") {
		t.Errorf("T-03: %q, %q", r["status"], r["message"])
	}
	if rows["T-04"]["status"] != "done" || !strings.Contains(out, "1 of 8 targets did not finish") {
		t.Errorf("T-04 is %q; output:\n%s", rows["T-04"]["status"], out)
	}
	code, out, _ = f.dipline("survey", "status", "targets.csv")
	if code != 0 || !strings.Contains(out, "8 targets: 7 done, 1 failed") || !strings.Contains(out, "T-03 failed") {
		t.Errorf("status (exit %d):\n%s", code, out)
	}
	f.write("t3.csv", string(body))
	if code, out, errs = f.dipline("survey", "run", "targets.csv", "--workers", "2"); code != 0 {
		t.Fatalf("survey run again: exit %d\n%s\n%s", code, out, errs)
	}
	if rows, _ = surveyTable(t, f); rows["T-03"]["status"] != "done" {
		t.Errorf("T-03 after the file came: %q", rows["T-03"]["status"])
	}
}

// A target's values come from its row of the target table, and everything said of them
// says so: a value the workflow refuses is named by the table's column, not as a --set
// option, and a target's results call themselves that target's, not a what-if run of the
// command line.
func TestATargetsValuesAreNamedAsTheTablesNotTheCommandLines(t *testing.T) {
	f := newFolder(t)
	f.write("targets.csv", "id,detrend.quiet.span\nT-01,\"0.6 d\"\nT-02,0.6 q\n")
	code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2")
	if code != exitBadUser {
		t.Fatalf("survey run with one bad value: exit %d, want 2\n%s\n%s", code, out, errs)
	}
	rows, _ := surveyTable(t, f)
	msg := rows["T-02"]["message"]
	if !strings.Contains(msg, "the target table's line 3") || !strings.Contains(msg, "column detrend.quiet.span: ") || strings.Contains(msg, "--set") {
		t.Errorf("T-02's message names the value as %q", msg)
	}
	b, err := os.ReadFile(filepath.Join(f.dir, "surveys", "targets", "targets", "T-01", "results.json"))
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"detrend.quiet.span=\"0.6 d\""`, "one survey target's", "row T-01 of the target table targets.csv, line 2"} {
		if !bytes.Contains(b, []byte(want)) {
			t.Errorf("T-01's results lack %q", want)
		}
	}
	if bytes.Contains(b, []byte("command line")) {
		t.Errorf("T-01's results speak of the command line:\n%s", b)
	}
}

// TestATaskRunsItsChunkOnly runs the second task of chunks of three: targets 4–6, and
// nothing else.
func TestATaskRunsItsChunkOnly(t *testing.T) {
	f := newSurveyFolder(t)
	code, out, errs := f.dipline("survey", "task", "targets.csv", "--chunk", "3", "--index", "1")
	if code != 0 {
		t.Fatalf("survey task: exit %d\n%s\n%s", code, out, errs)
	}
	for i := range surveyPeriods {
		id := fmt.Sprintf("T-%02d", i+1)
		_, err := os.Stat(filepath.Join(f.dir, "surveys", "targets", "targets", id, "state.json"))
		if ran := err == nil; ran != (i >= 3 && i < 6) {
			t.Errorf("%s ran: %v", id, ran)
		}
	}
	if code, _, errs = f.dipline("survey", "task", "targets.csv", "--chunk", "3", "--index", "3"); code != exitBadUser || !strings.Contains(errs, "holds no target") {
		t.Errorf("a task past the table: exit %d, %s", code, errs)
	}
}

// TestTargetTableMistakesNameTheLineAndColumn holds each mistake of a table to a message
// with the file, line and column, and exit status 2, before anything runs.
func TestTargetTableMistakesNameTheLineAndColumn(t *testing.T) {
	cases := []struct{ table, want string }{
		{"name\nA\n", "line 1: no id column"},
		{"id,files\nA,t1.csv\n", "line 1, column files: a column names the attribute"},
		{"id,photometry.raw.files\nA,t1.csv\nA,t2.csv\n", `line 3, column id: the id "A" is already on line 2`},
		{"id,photometry.raw.files\nA/B,t1.csv\n", `line 2, column id: the id "A/B" is not a file name`},
		{"id,photometry.raw.files\nA,t1.csv,extra\n", "line 2: 3 cells where the header has 2 columns"},
		{"id,photometry.raw.files\n", "line 2: the table has a header and no targets"},
	}
	for _, c := range cases {
		f := newFolder(t)
		f.write("targets.csv", c.table)
		code, _, errs := f.dipline("survey", "run", "targets.csv")
		if code != exitBadUser || !strings.Contains(errs, "targets.csv "+c.want) {
			t.Errorf("table %q: exit %d, %q; want %q", c.table, code, errs, c.want)
		}
		if _, err := os.Stat(filepath.Join(f.dir, "surveys")); err == nil {
			t.Errorf("table %q: a bad table left a survey folder", c.table)
		}
	}
}

// fakeSlurm puts an sbatch on PATH that logs its arguments, one call per line, and answers
// job ids 101, 102, …; and an squeue that knows no job.
func fakeSlurm(t *testing.T) (log string) {
	dir := t.TempDir()
	log = filepath.Join(dir, "calls.log")
	sbatch := "#!/bin/sh\necho \"$@\" >> '" + log + "'\nn=$(wc -l < '" + log + "')\necho $((100 + n))\n"
	squeue := "#!/bin/sh\necho 'slurm_load_jobs error: Invalid job id specified' >&2\nexit 1\n"
	for name, body := range map[string]string{"sbatch": sbatch, "squeue": squeue} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	t.Setenv("PATH", dir+string(os.PathListSeparator)+os.Getenv("PATH"))
	return log
}

// TestASubmitHandsSlurmOnlyTheChunksNotDone fails one target, then submits with chunks of
// three: one array task (the chunk holding the failed target) and a merge job after it,
// on any end of the array; the task's script runs `survey task` for its chunk, and doing what
// it says, then what the merge script says, completes the survey.
func TestASubmitHandsSlurmOnlyTheChunksNotDone(t *testing.T) {
	f := newSurveyFolder(t)
	body, _ := os.ReadFile(filepath.Join(f.dir, "t3.csv"))
	os.Remove(filepath.Join(f.dir, "t3.csv"))
	if code, _, _ := f.dipline("survey", "run", "targets.csv"); code != exitBadUser {
		t.Fatalf("the first run should fail one target: exit %d", code)
	}
	log := fakeSlurm(t)
	code, out, errs := f.dipline("survey", "submit", "targets.csv", "--chunk", "3", "--sbatch", "--time=00:10:00")
	if code != 0 || !strings.Contains(out, "submitted job array 101 (1 tasks of up to 3 targets) and merge job 102") {
		t.Fatalf("submit: exit %d\n%s\n%s", code, out, errs)
	}
	calls, _ := os.ReadFile(log)
	lines := strings.Split(strings.TrimSpace(string(calls)), "\n")
	if len(lines) != 2 || !strings.Contains(lines[0], "--array=0 ") || !strings.Contains(lines[0], "--time=00:10:00") ||
		!strings.Contains(lines[1], "--dependency=afterany:101") || !strings.Contains(lines[1], "--kill-on-invalid-dep=yes") {
		t.Fatalf("sbatch calls:\n%s", calls)
	}
	slurm := filepath.Join(f.dir, "surveys", "targets", "slurm")
	task, _ := os.ReadFile(filepath.Join(slurm, "task.sh"))
	merge, _ := os.ReadFile(filepath.Join(slurm, "merge.sh"))
	if !strings.Contains(string(task), `survey task '`) || !strings.Contains(string(task), `--chunk 3 --index "$SLURM_ARRAY_TASK_ID"`) ||
		!strings.Contains(string(merge), "survey merge '") {
		t.Fatalf("scripts:\n%s\n%s", task, merge)
	}
	if code, out, _ = f.dipline("survey", "status", "targets.csv"); !strings.Contains(out, "no longer queued") {
		t.Errorf("status after the jobs: exit %d\n%s", code, out)
	}
	f.write("t3.csv", string(body))
	if code, out, errs = f.dipline("survey", "task", "targets.csv", "--chunk", "3", "--index", "0"); code != 0 || strings.Contains(out, "T-01") {
		t.Fatalf("the task (exit %d) should run T-03 alone, T-01 and T-02 being done:\n%s\n%s", code, out, errs)
	}
	if code, out, errs = f.dipline("survey", "merge", "targets.csv"); code != 0 {
		t.Fatalf("merge: exit %d\n%s\n%s", code, out, errs)
	}
	if rows, _ := surveyTable(t, f); rows["T-03"]["status"] != "done" {
		t.Errorf("T-03 after the task: %q", rows["T-03"]["status"])
	}
	if code, out, _ = f.dipline("survey", "submit", "targets.csv", "--chunk", "3"); code != 0 || !strings.Contains(out, "nothing to submit") {
		t.Errorf("a submit with every target done: exit %d\n%s", code, out)
	}
}

// TestATemplatesOwnFileMayBeAPlaceholder runs a survey whose workflow names a light curve
// that does not exist: every target sets its own, so the survey loads the workflow as its
// first target will, runs every target and gathers them into the workflow's store.
func TestATemplatesOwnFileMayBeAPlaceholder(t *testing.T) {
	f := newSurveyFolder(t)
	os.Remove(filepath.Join(f.dir, "lc.csv"))
	code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2")
	if code != 0 || !strings.Contains(out, "gathered 8 target stores") {
		t.Fatalf("survey run with a placeholder file: exit %d\n%s\n%s", code, out, errs)
	}
	if rows, _ := surveyTable(t, f); len(rows) != 8 || rows["T-05"]["status"] != "done" {
		t.Errorf("the table holds %d rows; T-05 is %q", len(rows), rows["T-05"]["status"])
	}
}

// TestASurveysCompletenessMapsAddUp gives the survey's workflow a small completeness step
// around one written star: the merge adds the eight maps up into combined.csv, one row per
// figure of the completeness kind's Combine, with the number of targets and, in a cell
// without planets, the upper limit on the planets per star (the numbers themselves are
// checked in steps/completeness).
func TestASurveysCompletenessMapsAddUp(t *testing.T) {
	f := newSurveyFolder(t)
	f.write("analysis.hcl", workflowText+`
star "host" {
  method = "given"
  radius = "0.5 ± 0.01 R_sun"
  mass   = "0.5 ± 0.02 M_sun"
}

completeness "reach" {
  light_curve  = photometry.raw
  detrend      = detrend.quiet
  search       = search.dips
  star         = star.host
  period_range = ["1 d", "5 d"]
  period_cells = 1
  radius_range = ["1 R_earth", "4 R_earth"]
  radius_cells = 2
  per_cell     = 2
}
`)
	code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2")
	if code != 0 || !strings.Contains(out, "combined.csv") {
		t.Fatalf("survey run: exit %d\n%s\n%s", code, out, errs)
	}
	b, err := os.ReadFile(filepath.Join(f.dir, "surveys", "targets", "combined.csv"))
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(strings.NewReader(string(b))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	got := map[string][]string{}
	for _, r := range recs[1:] {
		got[r[0]+" "+r[1]] = r
	}
	if r := got["completeness.reach targets"]; r == nil || r[2] != "8" {
		t.Errorf("combined.csv's targets row %q, want 8:\n%s", r, b)
	}
	for _, cell := range []string{"p1_r1", "p1_r2"} {
		r := got["completeness.reach "+cell+".occurrence"]
		if r == nil || r[2] != "0" {
			t.Errorf("%s: occurrence row %q, want 0 planets per star (no fit, so no planets)", cell, r)
			continue
		}
		if up, err := strconv.ParseFloat(r[4], 64); err != nil || !(up > 0) {
			t.Errorf("%s: upper limit %q, want a positive number", cell, r[4])
		}
	}
	if got["completeness.reach caution"] == nil {
		t.Error("combined.csv carries no caution")
	}
}

// TestASurveyLeavesADamagedShardAlone damages a page of one target's store that a run
// reusing everything would never read: as dipline run does, the survey refuses that
// target, names the damage and leaves the file as it was; the other target is done.
func TestASurveyLeavesADamagedShardAlone(t *testing.T) {
	f := newSurveyFolder(t)
	f.write("targets.csv", "id,photometry.raw.files\nT-01,t1.csv\nT-02,t2.csv\n")
	if code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2"); code != 0 {
		t.Fatalf("survey run: exit %d\n%s\n%s", code, out, errs)
	}
	shard := filepath.Join("surveys", "targets", "shards", "T-02.db")
	if _, err := cache.DamagePageForTest(filepath.Join(f.dir, shard), "provenance", cache.DamageKind); err != nil {
		t.Fatal(err)
	}
	before := f.fileBytes(shard)
	// A survey runs again only targets not done; T-02's state is taken away, as after a
	// lost state file, so that it runs on its damaged store.
	if err := os.Remove(filepath.Join(f.dir, "surveys", "targets", "targets", "T-02", "state.json")); err != nil {
		t.Fatal(err)
	}
	code, out, errs := f.dipline("survey", "run", "targets.csv", "--workers", "2")
	state := string(f.fileBytes(filepath.Join("surveys", "targets", "targets", "T-02", "state.json")))
	if code != exitBadUser || !strings.Contains(out, "T-02 failed") || !strings.Contains(out, "T-01 done") ||
		!strings.Contains(state, "is damaged") || !strings.Contains(state, "page ") {
		t.Errorf("exit %d, want %d with T-02 failed on its damaged page\n%s%s\nstate: %s", code, exitBadUser, out, errs, state)
	}
	if !bytes.Equal(f.fileBytes(shard), before) {
		t.Error("the damaged shard was written to")
	}
}
