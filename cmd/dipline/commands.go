package main

import (
	"errors"
	"flag"
	"fmt"
	"os"
	"sort"
	"strings"
	"time"

	"dipline/cache"
	"dipline/workflow"
)

// listFlag collects a repeatable option.
type listFlag []string

func (l *listFlag) String() string     { return strings.Join(*l, ",") }
func (l *listFlag) Set(s string) error { *l = append(*l, s); return nil }

func (c *cli) run(args []string) int {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	workers := workersFlag(fs, "worker tokens shared by steps and numerical cores")
	events := fs.String("events", "", "write one JSON object per step to this file")
	wait := fs.Duration("wait", 30*time.Second, "how long to wait for another run holding the store")
	quiet := fs.Bool("quiet", false, "show nothing of how far the computing steps are")
	var sets listFlag
	fs.Var(&sets, "set", "override one attribute for this run: kind.label.attribute=value (repeatable)")
	pos, ok := c.flags(fs, args)
	if !ok {
		return exitBadUser
	}
	path, rest := splitWorkflow(pos)
	if len(rest) > 0 {
		fmt.Fprintf(c.err, "dipline run: unexpected argument %q\n", rest[0])
		return exitBadUser
	}
	overrides, ok := c.overrides("run", sets)
	if !ok {
		return exitBadUser
	}
	w, ok := c.load(path, overrides)
	if !ok {
		return exitBadUser
	}
	lock, err := cache.LockRun(w.StorePath, *wait, func(holder string) {
		fmt.Fprintf(c.err, "waiting up to %s for the store to be free (held by %s) …\n", *wait, holder)
	})
	if err != nil {
		fmt.Fprintln(c.err, "dipline run:", err)
		if errors.Is(err, cache.ErrNotALock) {
			return exitBadUser // a file of someone else's where the lock belongs
		}
		return exitFailed
	}
	defer lock.Release()
	store, err := cache.OpenForRun(w.StorePath)
	if err != nil {
		code := c.storeFailed("run", err)
		c.nothingStored(w)
		return code
	}
	opt := workflow.Options{Workers: *workers, OnEvent: c.printEvent}
	if *events != "" {
		f, err := os.Create(*events)
		if err != nil {
			fmt.Fprintln(c.err, "dipline run:", err)
			return exitFailed
		}
		defer f.Close()
		opt.Events = f
	}
	var show *progressShow
	if !*quiet {
		// While the run lasts, other output wipes the progress line first (progress.go).
		show = newProgressShow(c.err, progressOnTerminal(c.err), progressClock)
		out, errw := c.out, c.err
		c.out, c.err = show.before(out), show.before(errw)
		defer func() { c.out, c.err = out, errw }()
		opt.OnProgress = show.update
		opt.OnEvent = func(ev workflow.Event) {
			show.end(ev.Step)
			c.printEvent(ev)
		}
	}
	ctx, stop := interruptible()
	defer stop()
	t0 := time.Now()
	rep, err := workflow.Run(ctx, w, store, opt)
	if show != nil {
		show.close() // every step is over: the line goes before the summary
	}
	if rep == nil { // Run gives a report whenever it ran: here the store took no record
		fmt.Fprintln(c.err, "dipline run:", err)
		c.nothingStored(w)
		return exitFor(err)
	}
	c.printSummary(rep)
	code := exitOK
	if err != nil {
		code = exitFor(err)
		c.printRunError(rep, err)
	}
	line := fmt.Sprintf("run %s · %.2f s", rep.Run.ID, time.Since(t0).Seconds())
	if rep.ResultsPath != "" {
		line += " · results in " + rel(rep.ResultsPath)
	}
	if rep.ReportPath != "" {
		line += " · report " + rel(rep.ReportPath)
	}
	fmt.Fprintln(c.out, line)
	return code
}

// nothingStored says that a run which could not use its store left everything as it was.
func (c *cli) nothingStored(w *workflow.Workflow) {
	fmt.Fprintf(c.err, "dipline run: nothing ran and nothing was stored; the results in %s/ are left as they were\n", rel(w.OutputDir))
}

// overrides reads the --set values of a command.
func (c *cli) overrides(cmd string, sets []string) ([]workflow.Override, bool) {
	var out []workflow.Override
	for _, s := range sets {
		o, err := workflow.ParseOverride(s)
		if err != nil {
			fmt.Fprintf(c.err, "dipline %s: %v\n", cmd, err)
			return nil, false
		}
		out = append(out, o)
	}
	return out, true
}

// printRunError says what did not finish and why, after the summary of a run that ended
// with an error.
func (c *cli) printRunError(rep *workflow.Report, err error) {
	c.printUnfinished(rep)
	var re *workflow.RunError
	switch {
	case errors.As(err, &re) && re.Interrupted:
		fmt.Fprintln(c.err, "dipline run: stopped; finished steps are stored, the rest will run next time")
	case errors.As(err, &re):
		for _, o := range re.Failed {
			fmt.Fprintf(c.err, "dipline run: %s failed: %s\n", o.Step.Addr, o.Message)
		}
		for _, f := range re.Faults {
			fmt.Fprintln(c.err, "dipline run:", f)
		}
		fmt.Fprintf(c.err, "dipline run: %s\n", unfinishedLine(re, rep.ResultsPath != "", errors.Is(err, cache.ErrReplaced)))
	default:
		fmt.Fprintln(c.err, "dipline run:", err)
	}
}

func rel(p string) string {
	if wd, err := os.Getwd(); err == nil && strings.HasPrefix(p, wd+string(os.PathSeparator)) {
		return p[len(wd)+1:]
	}
	return p
}

func (c *cli) printEvent(ev workflow.Event) {
	mark := map[string]string{
		workflow.StatusComputed: "computed", workflow.StatusReused: "reused  ",
		workflow.StatusFailed: "FAILED  ", workflow.StatusSkipped: "skipped ",
	}[ev.Status]
	key := ""
	if ev.StepKey != "" {
		key = ev.StepKey[:12]
	}
	if ev.Warning != "" {
		fmt.Fprintf(c.out, "  !  %s: %s\n", ev.Step, ev.Warning)
	}
	fmt.Fprintf(c.out, "  %s  %-28s %7.2f s  %s\n", mark, ev.Step, ev.Seconds, key)
	if ev.Status == workflow.StatusComputed {
		for _, n := range ev.Notes {
			fmt.Fprintf(c.out, "      · %s\n", n)
		}
	}
	if ev.Status == workflow.StatusFailed || ev.Status == workflow.StatusSkipped {
		fmt.Fprintf(c.out, "      %s\n", ev.Error)
	}
}

func (c *cli) check(args []string) int {
	c.onlyLooks()
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	pos, ok := c.flags(fs, args)
	if !ok {
		return exitBadUser
	}
	path, _ := splitWorkflow(pos)
	w, ok := c.load(path, nil)
	if !ok {
		return exitBadUser
	}
	// The data too: what a run would refuse in a file is caught here, before anything runs.
	if refused := workflow.Inspect(w); len(refused) > 0 {
		for _, r := range refused {
			fmt.Fprintf(c.err, "%s %s: %v\n", w.Path, r.Step.Addr, r.Err)
		}
		fmt.Fprintf(c.out, "%s: %d steps; the data of %d would be refused\n", path, len(w.Steps), len(refused))
		return exitBadUser
	}
	fmt.Fprintf(c.out, "%s: %d steps, no mistakes found in the workflow or its data\n", path, len(w.Steps))
	for _, s := range w.Order {
		var deps []string
		for _, d := range s.Deps {
			deps = append(deps, d.Addr)
		}
		line := "  " + s.Addr
		if len(deps) > 0 {
			line += "  ← " + strings.Join(deps, ", ")
		}
		var lenders []string
		for _, name := range s.SettingsParams() {
			lenders = append(lenders, s.Settings[name].Addr)
		}
		if len(lenders) > 0 {
			line += "; the settings of " + strings.Join(lenders, ", ")
		}
		fmt.Fprintln(c.out, line)
	}
	return exitOK
}

func (c *cli) openStore(path string) (*workflow.Workflow, *cache.Store, int) {
	return c.openStoreWith(path, true)
}

// storeArgs parses a command's options, takes the workflow file from the positionals,
// checks that want further arguments remain (any number when want < 0; usage says what
// they are) and opens the workflow's store, refusing one whose file is cut short or whose
// header is damaged (store.go, storeArgsWith). A non-zero code means the command is over.
func (c *cli) storeArgs(fs *flag.FlagSet, args []string, want int, usage string) (*workflow.Workflow, *cache.Store, []string, int) {
	return c.storeArgsWith(fs, args, want, usage, true)
}

func (c *cli) pending(args []string) int {
	c.onlyLooks()
	w, store, _, code := c.storeArgs(flag.NewFlagSet("pending", flag.ContinueOnError), args, 0, "takes only the workflow file")
	if code != exitOK {
		return code
	}
	// As run does before it starts: what pending says a run would reuse, a run on a
	// damaged store would refuse.
	if err := store.CheckPages(); err != nil {
		return c.storeFailed("pending", err)
	}
	verdicts, err := workflow.Pending(w, store)
	if err != nil {
		return c.storeFailed("pending", err)
	}
	n := 0
	for _, v := range verdicts {
		// The state column is as wide as the longest word, "to compute" (states.go).
		fmt.Fprintf(c.out, "  %-10s  %s\n", v.State, v.Step)
		if v.State == workflow.PendingStored {
			continue
		}
		n++
		for _, r := range v.Reasons {
			fmt.Fprintf(c.out, "                because %s\n", r)
		}
	}
	if n == 0 {
		fmt.Fprintln(c.out, "every step's result is stored; a run would compute nothing")
	}
	return exitOK
}

func (c *cli) trace(args []string) int {
	c.onlyLooks()
	fs := flag.NewFlagSet("trace", flag.ContinueOnError)
	runRef := fs.String("run", "latest", "the run to trace in (id, prefix, latest or previous)")
	_, store, rest, code := c.storeArgs(fs, args, 1, "name one step (kind.label) or one figure (kind.label/name)")
	if code != exitOK {
		return code
	}
	t, err := workflow.Trace(store, c.reg, *runRef, rest[0])
	if err != nil {
		fmt.Fprintln(c.err, "dipline trace:", err)
		return exitBadUser
	}
	if t.Figure != nil {
		fmt.Fprintf(c.out, "%s/%s = %s %s   (%s)\n", t.Step, t.Figure.Name,
			workflow.FormatValue(t.Figure.Value, t.Figure.Sigma), t.Figure.Unit, t.Figure.Doc)
	}
	fmt.Fprintf(c.out, "run %s, started %s\n", t.Run.ID, t.Run.Started.Local().Format("2006-01-02 15:04:05"))
	c.printNode(t.Root, "", map[string]bool{})
	return exitOK
}

func (c *cli) printNode(n *workflow.TraceNode, indent string, shown map[string]bool) {
	p := n.Provenance
	fmt.Fprintf(c.out, "%s%s  (%s v%d)\n", indent, p.Step, p.Kind, p.Version)
	in := indent + "    "
	if shown[p.StepKey] {
		fmt.Fprintf(c.out, "%sstep key   %s (shown above)\n", in, p.StepKey)
		return
	}
	shown[p.StepKey] = true
	fmt.Fprintf(c.out, "%sstep key   %s\n", in, p.StepKey)
	fmt.Fprintf(c.out, "%sresult key %s\n", in, p.ResultKey)
	fmt.Fprintf(c.out, "%scomputed   %s in %.2f s by dipline %s (revision %s, %s %s)\n", in,
		p.Started.Local().Format("2006-01-02 15:04:05"), p.Seconds, p.Tool.Version, p.Tool.Revision, p.Tool.Go, p.Tool.Arch)
	names := make([]string, 0, len(p.Config))
	for k := range p.Config {
		names = append(names, k)
	}
	sort.Strings(names)
	for _, k := range names {
		fmt.Fprintf(c.out, "%s  %s = %s\n", in, k, p.Config[k])
	}
	if p.Seed != nil {
		fmt.Fprintf(c.out, "%s  seed = %d\n", in, *p.Seed)
	}
	for _, note := range p.Notes {
		fmt.Fprintf(c.out, "%s  · %s\n", in, note)
	}
	for _, f := range p.Files {
		fmt.Fprintf(c.out, "%sfile       %s  sha256 %s  (%d bytes)\n", in, f.Path, f.SHA256, f.Bytes)
	}
	for _, r := range p.Rows {
		cols := make([]string, 0, len(r.Values))
		for k, v := range r.Values {
			if v == "" {
				v = "(blank)"
			}
			cols = append(cols, k+"="+v)
		}
		sort.Strings(cols)
		fmt.Fprintf(c.out, "%srow        %s  %s:%d  %s\n", in, r.Row, r.Path, r.Line, strings.Join(cols, " "))
		if len(r.Overridden) > 0 {
			fmt.Fprintf(c.out, "%s  · set on the command line: %s\n", in, strings.Join(r.Overridden, ", "))
		}
	}
	for _, child := range n.Inputs {
		c.printNode(child, in, shown)
	}
}

func (c *cli) runs(args []string) int {
	c.onlyLooks()
	_, store, _, code := c.storeArgs(flag.NewFlagSet("runs", flag.ContinueOnError), args, 0, "takes only the workflow file")
	if code != exitOK {
		return code
	}
	runs, bad, err := store.RunRecords()
	if err != nil {
		return c.storeFailed("runs", err)
	}
	pins, err := store.Pins()
	if err != nil {
		return c.storeFailed("runs", err)
	}
	if len(runs) == 0 && len(bad) == 0 {
		fmt.Fprintln(c.out, "the store holds no runs yet; dipline run makes the first")
		return exitOK
	}
	live := store.Liveness()
	for _, r := range runs {
		fmt.Fprintln(c.out, runLine(r, live.StateOf(r), pins))
	}
	for _, b := range bad {
		fmt.Fprintf(c.out, "%.80s  its record cannot be read (%s); skipped (`dipline store verify --drop-damaged` removes it)\n", b.Key, b.Why)
	}
	return exitOK
}

// runLine describes one run: its id and start, what its steps did, whether it is still
// under way or was interrupted, its pin and its command-line settings.
func runLine(r cache.Run, state string, pins map[string]string) string {
	counts := map[string]int{}
	for _, s := range r.Steps {
		counts[s.Status]++
	}
	line := fmt.Sprintf("%s  %s  %d computed, %d reused", r.ID, r.Started.Local().Format("2006-01-02 15:04"),
		counts[workflow.StatusComputed], counts[workflow.StatusReused])
	if n := counts[workflow.StatusFailed]; n > 0 {
		line += fmt.Sprintf(", %d failed", n)
	}
	switch state {
	case cache.RunUnderWay:
		line += fmt.Sprintf(" so far  [under way, pid %d]", r.PID)
	case cache.RunInterrupted:
		line += "  [interrupted: stopped before it ended; what it stored is kept]"
	}
	if note, ok := pins[r.ID]; ok {
		line += "  [pinned: " + note + "]"
	}
	keys := make([]string, 0, len(r.Overrides))
	for k := range r.Overrides {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		line += fmt.Sprintf("  --set %s=%s", k, r.Overrides[k])
	}
	return line
}

func (c *cli) pin(args []string) int {
	fs := flag.NewFlagSet("pin", flag.ContinueOnError)
	note := fs.String("note", "pinned", "why the run is kept, e.g. the paper it supports")
	remove := fs.Bool("remove", false, "unpin the run")
	_, store, rest, code := c.storeArgs(fs, args, 1, "name one run (id, prefix, latest or previous)")
	if code != exitOK {
		return code
	}
	if err := store.CheckPages(); err != nil { // pin writes: never into a damaged file
		return c.storeFailed("pin", err)
	}
	run, err := store.FindRun(rest[0])
	if err != nil {
		return c.lookupFailed("pin", err)
	}
	if *remove {
		err = store.Unpin(run.ID)
	} else {
		err = store.Pin(run.ID, *note)
	}
	if err != nil {
		return c.storeFailed("pin", err)
	}
	verb := "pinned"
	if *remove {
		verb = "unpinned"
	}
	fmt.Fprintf(c.out, "%s run %s\n", verb, run.ID)
	return exitOK
}
