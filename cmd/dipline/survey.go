package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"

	"dipline/cache"
	"dipline/workflow/survey"
)

const surveyUsage = `Usage: dipline survey COMMAND TARGETS.csv [workflow.hcl] [options]

Runs one workflow over many targets. The target table is a CSV file with a header: a column
named id naming each target, and columns named kind.label.attribute giving that target's
value of the attribute (photometry.survey.files, star.host.row, search.dips.star_density …),
written as in the workflow, quotes optional for text; an empty cell keeps the workflow's value.
Each target runs as the workflow with its values set, as --set would set them, in its own
store and results folder under surveys/<table name>/ beside the workflow.

  dipline survey run    TARGETS.csv [workflow.hcl] [--workers N]
        run every target on this machine, then gather them (as merge does)
  dipline survey submit TARGETS.csv [workflow.hcl] [--chunk N] [--sbatch OPTION]…
        hand the targets not yet done to Slurm as a job array, and a merge job after it
  dipline survey status TARGETS.csv [workflow.hcl]
        how far the survey is: each target's state, and Slurm's queue
  dipline survey merge  TARGETS.csv [workflow.hcl]
        gather the targets' stores into the workflow's and write surveys/<name>/survey.csv
  dipline survey task   TARGETS.csv [workflow.hcl] --chunk N --index I
        run one array task's targets (the command a submitted job runs)

Examples:
  dipline survey run targets.csv analysis.hcl --workers 8
  dipline survey submit targets.csv --chunk 4 --sbatch --partition=short --sbatch --time=02:00:00
`

// surveyDocs holds the help of each survey command, by the name of its flag set.
var surveyDocs = map[string]commandDoc{
	"survey run": {
		call: "survey run TARGETS.csv [workflow.hcl] [--workers N]",
		about: `Runs every target of the table on this machine, as many at once as there are workers,
each in its own store and results folder, then gathers the stores into the workflow's and
writes the survey table. A target that fails does not stop the others.`,
		examples: []string{"dipline survey run targets.csv analysis.hcl --workers 8"},
	},
	"survey submit": {
		call: "survey submit TARGETS.csv [workflow.hcl] [--chunk N] [--sbatch OPTION]…",
		about: `Writes a Slurm job script and submits it as a job array, one task per chunk of targets,
for the chunks holding a target not yet done (so a second submit runs only what is missing
or failed), then a merge job that starts when every task has ended, however it ended.`,
		examples: []string{"dipline survey submit targets.csv --chunk 4 --sbatch --time=01:00:00"},
	},
	"survey status": {
		call:     "survey status TARGETS.csv [workflow.hcl]",
		about:    "Counts the targets by state from their folders, lists the failed ones with why, and shows Slurm's queue for the last submission.",
		examples: []string{"dipline survey status targets.csv"},
	},
	"survey merge": {
		call: "survey merge TARGETS.csv [workflow.hcl]",
		about: `Folds every target's store into the workflow's (the same key must hold the same bytes;
a conflict is reported and the workflow's kept) and writes the survey table: per target its
state, every step's step key and every figure.`,
		examples: []string{"dipline survey merge targets.csv"},
	},
	"survey task": {
		call:     "survey task TARGETS.csv [workflow.hcl] --chunk N --index I",
		about:    "Runs the targets of one array task (the I-th chunk of N), skipping those already done: what a submitted job runs.",
		examples: []string{"dipline survey task targets.csv --chunk 4 --index 0"},
	},
}

func init() {
	valueNames["chunk"], valueNames["index"], valueNames["sbatch"] = "N", "I", "OPTION"
}

// surveyCmd is `dipline survey COMMAND …`.
func (c *cli) surveyCmd(args []string) int {
	if len(args) == 0 {
		fmt.Fprint(c.err, "dipline survey: name what to do with the survey\n\n"+surveyUsage)
		return exitBadUser
	}
	if args[0] == "help" || isHelp(args[0]) {
		fmt.Fprint(c.out, surveyUsage)
		c.helped = true
		return exitOK
	}
	sub, args := args[0], args[1:]
	fs := flag.NewFlagSet("survey "+sub, flag.ContinueOnError)
	cmds := map[string]func(*flag.FlagSet, []string) int{
		"run": c.surveyRun, "submit": c.surveySubmit, "status": c.surveyStatus, "merge": c.surveyMerge, "task": c.surveyTask,
	}
	if f, ok := cmds[sub]; ok {
		return f(fs, args)
	}
	fmt.Fprintf(c.err, "dipline survey: there is no survey command %q; they are run, submit, status, merge and task (dipline survey --help)\n", sub)
	return exitBadUser
}

// surveyArgs parses the flags, reads the table and checks that the workflow loads.
func (c *cli) surveyArgs(fs *flag.FlagSet, args []string) (*survey.Table, survey.Env, bool) {
	pos, ok := c.flags(fs, args)
	if !ok {
		return nil, survey.Env{}, false
	}
	if len(pos) == 0 || strings.HasSuffix(pos[0], ".hcl") {
		c.flagMistake(fs, "name the target table first")
		return nil, survey.Env{}, false
	}
	tablePath := pos[0]
	path, rest := splitWorkflow(pos[1:])
	if len(rest) > 0 {
		c.flagMistake(fs, fmt.Sprintf("unexpected argument %q", rest[0]))
		return nil, survey.Env{}, false
	}
	t, err := survey.ReadTable(tablePath)
	if err != nil {
		fmt.Fprintf(c.err, "dipline %s: %v\n", fs.Name(), err)
		return nil, survey.Env{}, false
	}
	// The workflow is a template: its own data files may be placeholders, so it is loaded
	// with the first target's values, which is how every target will load it.
	w, ok := c.load(path, t.Targets[0].Overrides)
	if !ok {
		return nil, survey.Env{}, false
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		fmt.Fprintf(c.err, "dipline %s: %v\n", fs.Name(), err)
		return nil, survey.Env{}, false
	}
	return t, survey.Env{Workflow: abs, Registry: c.reg, Access: c.access, Layout: survey.NewLayout(w.Dir, t), StorePath: w.StorePath, Table: t.Path}, true
}

func (c *cli) surveyRun(fs *flag.FlagSet, args []string) int {
	workers := workersFlag(fs, "workers shared by the targets run at once")
	t, env, ok := c.surveyArgs(fs, args)
	if !ok {
		return exitBadUser
	}
	ctx, stop := interruptible()
	defer stop()
	n := 0
	states, err := env.RunLocal(ctx, t.Targets, *workers, func(s survey.State) {
		n++
		fmt.Fprintf(c.out, "[%d/%d] %s %s\n", n, len(t.Targets), s.ID, s.Status)
	})
	if err != nil {
		fmt.Fprintln(c.err, "dipline survey run:", err)
		return exitFailed
	}
	if code := c.surveyGather(t, env); code != exitOK {
		return code
	}
	return c.surveyOutcome(states)
}

// surveyOutcome prints the failed targets and picks the exit status: 2 when any failed
// (a target's data or values were at fault, or a step refused them), 0 when all are done.
func (c *cli) surveyOutcome(states []survey.State) int {
	failed := 0
	for _, s := range states {
		if s.Status != survey.StateDone {
			failed++
			fmt.Fprintf(c.out, "  %s %s: %s\n", s.ID, s.Status, s.Message)
		}
	}
	if failed > 0 {
		fmt.Fprintf(c.out, "%d of %d targets did not finish every step; the survey table says which, and why\n", failed, len(states))
		return exitBadUser
	}
	return exitOK
}

// surveyGather merges the shards into the workflow's store and writes the survey table.
func (c *cli) surveyGather(t *survey.Table, env survey.Env) int {
	store, err := cache.Open(env.StorePath)
	if err == nil {
		err = store.CheckFile()
	}
	if err != nil {
		return c.storeFailed("survey merge", err)
	}
	res, err := env.Merge(t, store)
	if err != nil {
		return c.storeFailed("survey merge", err)
	}
	fmt.Fprintf(c.out, "gathered %d target stores into %s (%d results, %d step keys new); survey table %s\n",
		res.Merged, rel(store.Path()), res.Copied.Results, res.Copied.StepKeys, rel(res.TablePath))
	if res.CombinedPath != "" {
		fmt.Fprintf(c.out, "the targets' results added up: %s\n", rel(res.CombinedPath))
		for _, s := range res.Cautions {
			fmt.Fprintf(c.out, "  ! %s\n", s)
		}
	}
	for id, cs := range res.Conflicts {
		for _, cf := range cs {
			fmt.Fprintf(c.out, "  conflict in target %s: %v\n", id, cf)
		}
	}
	if len(res.Conflicts) > 0 {
		return exitFailed
	}
	return exitOK
}

func (c *cli) surveyMerge(fs *flag.FlagSet, args []string) int {
	t, env, ok := c.surveyArgs(fs, args)
	if !ok {
		return exitBadUser
	}
	if code := c.surveyGather(t, env); code != exitOK {
		return code
	}
	states := make([]survey.State, len(t.Targets))
	for i, tg := range t.Targets {
		states[i] = env.Layout.ReadState(tg.ID)
	}
	return c.surveyOutcome(states)
}

func (c *cli) surveyTask(fs *flag.FlagSet, args []string) int {
	chunk := fs.Int("chunk", 1, "targets per array task")
	index := fs.Int("index", -1, "the array task's index (Slurm's SLURM_ARRAY_TASK_ID)")
	t, env, ok := c.surveyArgs(fs, args)
	if !ok {
		return exitBadUser
	}
	mine := survey.ChunkOf(t.Targets, *chunk, *index)
	if len(mine) == 0 {
		c.flagMistake(fs, fmt.Sprintf("task %d of chunks of %d holds no target of the %d in the table", *index, *chunk, len(t.Targets)))
		return exitBadUser
	}
	var todo []survey.Target
	for _, tg := range mine {
		if env.Layout.ReadState(tg.ID).Status != survey.StateDone {
			todo = append(todo, tg)
		}
	}
	ctx, stop := interruptible()
	defer stop()
	states, err := env.RunLocal(ctx, todo, taskWorkers(), func(s survey.State) {
		fmt.Fprintf(c.out, "%s %s %s\n", s.ID, s.Status, s.Message)
	})
	if err != nil {
		fmt.Fprintln(c.err, "dipline survey task:", err)
		return exitFailed
	}
	return c.surveyOutcome(states)
}

// taskWorkers is the CPUs Slurm gave the task (SLURM_CPUS_PER_TASK), else the machine's.
func taskWorkers() int {
	var n int
	if _, err := fmt.Sscan(os.Getenv("SLURM_CPUS_PER_TASK"), &n); err == nil && n > 0 {
		return n
	}
	return runtime.NumCPU()
}

func (c *cli) surveySubmit(fs *flag.FlagSet, args []string) int {
	chunk := fs.Int("chunk", 1, "targets per array task, run one after another")
	var extra listFlag
	fs.Var(&extra, "sbatch", "an sbatch option for both jobs, e.g. --sbatch --partition=short (repeatable)")
	t, env, ok := c.surveyArgs(fs, args)
	if !ok {
		return exitBadUser
	}
	bin, err := os.Executable()
	if err != nil {
		fmt.Fprintln(c.err, "dipline survey submit:", err)
		return exitFailed
	}
	s := survey.Slurm{Binary: bin, Chunk: *chunk, Extra: extra, Allow: c.access.Allow}
	jobs, err := env.Submit(context.Background(), t, s)
	switch {
	case err != nil:
		fmt.Fprintln(c.err, "dipline survey submit:", err)
		return exitFailed
	case len(jobs.Tasks) == 0:
		fmt.Fprintf(c.out, "every target of %s is done; nothing to submit (dipline survey merge writes the table)\n", t.Path)
		return exitOK
	}
	fmt.Fprintf(c.out, "submitted job array %s (%d tasks of up to %d targets) and merge job %s after it; dipline survey status %s shows how far it is\n",
		jobs.Array, len(jobs.Tasks), jobs.Chunk, jobs.Merge, t.Path)
	return exitOK
}

func (c *cli) surveyStatus(fs *flag.FlagSet, args []string) int {
	t, env, ok := c.surveyArgs(fs, args)
	if !ok {
		return exitBadUser
	}
	counts := map[string]int{}
	var failed []survey.State
	for _, tg := range t.Targets {
		s := env.Layout.ReadState(tg.ID)
		counts[s.Status]++
		if s.Status == survey.StateFailed || s.Status == survey.StateDamaged {
			failed = append(failed, s)
		}
	}
	fmt.Fprintf(c.out, "%d targets: ", len(t.Targets))
	var parts []string
	for _, st := range []string{survey.StateDone, survey.StateRunning, survey.StateFailed, survey.StateNotRun, survey.StateDamaged} {
		if counts[st] > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", counts[st], st))
		}
	}
	fmt.Fprintln(c.out, strings.Join(parts, ", "))
	for _, s := range failed {
		fmt.Fprintf(c.out, "  %s %s: %s\n", s.ID, s.Status, s.Message)
	}
	c.printQueue(env)
	return exitOK
}

// printQueue shows Slurm's queue for the last submission, when there was one.
func (c *cli) printQueue(env survey.Env) {
	jobs, ok, err := env.ReadJobs()
	if err != nil || !ok {
		return
	}
	lines, err := survey.Queue(context.Background(), survey.Slurm{}, jobs)
	switch {
	case errors.Is(err, survey.ErrNotQueued) || err == nil && len(lines) == 0:
		fmt.Fprintf(c.out, "Slurm: array %s and merge %s are no longer queued\n", jobs.Array, jobs.Merge)
	case err != nil:
		fmt.Fprintf(c.out, "Slurm's queue could not be read: %v\n", err)
	default:
		fmt.Fprintf(c.out, "Slurm (array %s, merge %s):\n", jobs.Array, jobs.Merge)
		for _, l := range lines {
			fmt.Fprintf(c.out, "  %s\n", l)
		}
	}
}
