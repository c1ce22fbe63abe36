package survey

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
)

// Slurm is how a survey is handed to a Slurm cluster: a job array whose tasks each run a
// chunk of targets (`dipline survey task`), and a merge job that starts when every task has
// ended, however it ended (afterany: one failed task must not cancel the merge), gathering
// the shards and writing the survey table.
type Slurm struct {
	// Binary is the absolute path of the dipline the tasks run.
	Binary string
	// Chunk is the number of targets one array task runs, one after another.
	Chunk int
	// Extra are further sbatch options for both jobs (--partition, --time, --account …).
	Extra []string
	// Allow are the folders beyond the workflow's own the tasks may use (--also-allow).
	Allow []string
	// Sbatch and Squeue name the commands; "sbatch" and "squeue" when empty.
	Sbatch, Squeue string
}

// Jobs is what a submission recorded in slurm/jobs.json: the array's and the merge's job
// ids, the chunk size and the array's task indices.
type Jobs struct {
	Array string `json:"array"`
	Merge string `json:"merge"`
	Chunk int    `json:"chunk"`
	Tasks []int  `json:"tasks"`
}

// ChunkOf returns the targets of array task index i with chunks of size n: the i-th run of
// n targets in table order.
func ChunkOf(targets []Target, n, i int) []Target {
	lo, hi := i*n, min((i+1)*n, len(targets))
	if n < 1 || i < 0 || lo >= len(targets) {
		return nil
	}
	return targets[lo:hi]
}

// Pending returns the array task indices, with chunks of n, holding a target that is not
// done: what a (re-)submission must run.
func (e Env) Pending(t *Table, n int) []int {
	var out []int
	for i := 0; i*n < len(t.Targets); i++ {
		for _, tg := range ChunkOf(t.Targets, n, i) {
			if e.Layout.ReadState(tg.ID).Status != StateDone {
				out = append(out, i)
				break
			}
		}
	}
	return out
}

// Submit writes the job scripts and submits the array for the tasks not yet done, then the
// merge job after it; it returns the jobs, or none (and no error) when every target is done.
func (e Env) Submit(ctx context.Context, t *Table, s Slurm) (Jobs, error) {
	if s.Chunk < 1 {
		return Jobs{}, fmt.Errorf("a chunk of %d targets: give at least one target per task", s.Chunk)
	}
	jobs := Jobs{Chunk: s.Chunk, Tasks: e.Pending(t, s.Chunk)}
	if len(jobs.Tasks) == 0 {
		return jobs, nil
	}
	dir := e.Layout.SlurmDir()
	task, merge, err := e.writeScripts(t, s)
	if err != nil {
		return jobs, err
	}
	name := "dipline-" + t.Name
	args := append([]string{"--parsable", "--job-name=" + name, "--array=" + indexList(jobs.Tasks),
		"--chdir=" + filepath.Dir(e.Workflow), "--output=" + filepath.Join(dir, "task-%A_%a.out")}, s.Extra...)
	if jobs.Array, err = sbatch(ctx, s, append(args, task)); err != nil {
		return jobs, err
	}
	args = append([]string{"--parsable", "--job-name=" + name + "-merge", "--dependency=afterany:" + jobs.Array,
		"--kill-on-invalid-dep=yes", "--chdir=" + filepath.Dir(e.Workflow), "--output=" + filepath.Join(dir, "merge-%j.out")}, s.Extra...)
	if jobs.Merge, err = sbatch(ctx, s, append(args, merge)); err != nil {
		return jobs, fmt.Errorf("the array %s is submitted, the merge job is not: %w", jobs.Array, err)
	}
	b, _ := json.MarshalIndent(jobs, "", "  ")
	return jobs, writeWhole(filepath.Join(dir, "jobs.json"), append(b, '\n'))
}

// writeScripts writes the array task's and the merge job's scripts.
func (e Env) writeScripts(t *Table, s Slurm) (task, merge string, err error) {
	dir := e.Layout.SlurmDir()
	table, err := filepath.Abs(t.Path)
	if err != nil {
		return "", "", err
	}
	common := []string{shellQuote(table), shellQuote(e.Workflow)}
	for _, a := range s.Allow {
		common = append(common, "--also-allow", shellQuote(a))
	}
	head := "#!/bin/sh\n# Written by dipline survey submit for the survey " + t.Name + ".\n"
	task = filepath.Join(dir, "task.sh")
	body := head + fmt.Sprintf("# Each array task runs %d targets of the table, one after another.\nexec %s survey task %s --chunk %d --index \"$SLURM_ARRAY_TASK_ID\"\n",
		s.Chunk, shellQuote(s.Binary), strings.Join(common, " "), s.Chunk)
	if err := writeScript(task, body); err != nil {
		return "", "", err
	}
	merge = filepath.Join(dir, "merge.sh")
	body = head + "# Runs when every array task has ended: gathers the shards and writes survey.csv.\nexec " +
		shellQuote(s.Binary) + " survey merge " + strings.Join(common, " ") + "\n"
	return task, merge, writeScript(merge, body)
}

func writeScript(path, body string) error {
	if err := writeWhole(path, []byte(body)); err != nil {
		return err
	}
	return os.Chmod(path, 0o755)
}

// sbatch submits one job and returns its id.
func sbatch(ctx context.Context, s Slurm, args []string) (string, error) {
	cmd := s.Sbatch
	if cmd == "" {
		cmd = "sbatch"
	}
	out, err := run(ctx, cmd, args)
	if err != nil {
		return "", err
	}
	id, _, _ := strings.Cut(strings.TrimSpace(out), ";") // --parsable: "id" or "id;cluster"
	if _, perr := strconv.Atoi(id); perr != nil {
		return "", fmt.Errorf("sbatch answered %q, not a job id", strings.TrimSpace(out))
	}
	return id, nil
}

// run runs a command and returns its output; a failure carries what it wrote.
func run(ctx context.Context, name string, args []string) (string, error) {
	var out, errb bytes.Buffer
	c := exec.CommandContext(ctx, name, args...)
	c.Stdout, c.Stderr = &out, &errb
	if err := c.Run(); err != nil {
		return "", fmt.Errorf("%s: %v: %s", name, err, strings.TrimSpace(errb.String()))
	}
	return out.String(), nil
}

// indexList writes task indices as Slurm's --array takes them, runs joined: "0-3,5,7-8".
func indexList(ix []int) string {
	ix = append([]int(nil), ix...)
	sort.Ints(ix)
	var parts []string
	for i := 0; i < len(ix); {
		j := i
		for j+1 < len(ix) && ix[j+1] == ix[j]+1 {
			j++
		}
		if j > i {
			parts = append(parts, fmt.Sprintf("%d-%d", ix[i], ix[j]))
		} else {
			parts = append(parts, strconv.Itoa(ix[i]))
		}
		i = j + 1
	}
	return strings.Join(parts, ",")
}

// shellQuote quotes a word for sh.
func shellQuote(s string) string { return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'" }

// ReadJobs returns the last submission's jobs; ok is false when there was none.
func (e Env) ReadJobs() (Jobs, bool, error) {
	b, err := os.ReadFile(filepath.Join(e.Layout.SlurmDir(), "jobs.json"))
	if errors.Is(err, fs.ErrNotExist) {
		return Jobs{}, false, nil
	}
	var j Jobs
	if err == nil {
		err = json.Unmarshal(b, &j)
	}
	return j, err == nil, err
}

// ErrNotQueued says Slurm no longer knows the jobs: they ended long enough ago.
var ErrNotQueued = errors.New("the jobs are no longer queued")

// Queue returns the state Slurm's queue gives each of the jobs' entries ("123_4 RUNNING"),
// empty when none is queued any more.
func Queue(ctx context.Context, s Slurm, j Jobs) ([]string, error) {
	cmd := s.Squeue
	if cmd == "" {
		cmd = "squeue"
	}
	out, err := run(ctx, cmd, []string{"-h", "-j", j.Array + "," + j.Merge, "-o", "%i %T"})
	if err != nil && strings.Contains(err.Error(), "Invalid job id") {
		return nil, ErrNotQueued // Slurm refuses ids it has forgotten: none is queued
	}
	if err != nil {
		return nil, err
	}
	var lines []string
	for _, l := range strings.Split(strings.TrimSpace(out), "\n") {
		if l = strings.TrimSpace(l); l != "" {
			lines = append(lines, l)
		}
	}
	return lines, nil
}
