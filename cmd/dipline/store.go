package main

import (
	"errors"
	"flag"
	"fmt"
	"math"
	"strings"
	"time"

	"dipline/cache"
	"dipline/steps/units"
	"dipline/workflow"
)

const storeUsage = `Usage: dipline store COMMAND [workflow.hcl] [options]

Looks after the workflow's store.

  dipline store stats   [workflow.hcl]
        what the store holds, and its size on disk
  dipline store verify  [workflow.hcl] [--drop-damaged] [--recompute [--sample N] [--sample-seed N] [--run RUN]]
        re-hash every result, check every record and every page of the file; with
        --recompute, also compute stored steps again and require the same bits
  dipline store prune   [workflow.hcl] [--aged AGE] [--spare N] [--spare-interrupted AGE]
        drop runs (never a pinned one) and whatever no remaining run uses; shrink the file
  dipline store merge   [workflow.hcl] OTHER.db
        fold in another store, e.g. a survey shard's
  dipline store salvage [workflow.hcl] --into NEW.db
        copy all that still reads of a damaged store into a new one, listing what could not be

Ages are written as in a workflow: "30 d", "12 h", "1 yr". Each command explains its
options with --help, e.g. dipline store prune --help.

Examples:
  dipline store stats
  dipline store prune --aged "30 d" --spare 5
`

// storeDocs holds the help of each store command, by the name of its flag set.
var storeDocs = map[string]commandDoc{
	"store stats": {
		call:     "store stats [workflow.hcl]",
		about:    "Says what the store holds: results and their size, step keys, provenance records, runs and pins.",
		examples: []string{"dipline store stats"},
	},
	"store verify": {
		call: "store verify [workflow.hcl] [options]",
		about: `Re-hashes every stored result, checks that every step key maps to the result its
provenance names, and reads every record and every page of the file. With --recompute it
also runs stored steps again from their recorded inputs and requires the same bits.`,
		examples: []string{"dipline store verify", "dipline store verify --recompute --sample 3"},
	},
	"store prune": {
		call: "store prune [workflow.hcl] [options]",
		about: `Drops runs started longer ago than --aged or beyond the --spare newest (never a
pinned run, nor an interrupted one younger than --spare-interrupted), removes whatever no
remaining run uses, and shrinks the file. Ages are written as in a workflow: "30 d".`,
		examples: []string{`dipline store prune --aged "30 d"`, "dipline store prune --spare 10"},
	},
	"store merge": {
		call: "store merge [workflow.hcl] OTHER.db",
		about: `Folds another store (a survey shard's, say) into this workflow's: the same key with
the same bytes is fine, the same key with other bytes is reported as a conflict.`,
		examples: []string{"dipline store merge shards/target-0042.db"},
	},
	"store salvage": {
		call: "store salvage [workflow.hcl] --into NEW.db",
		about: `Reads a damaged store page by page, never changing it, and writes all that still
reads into a new store, listing what it dropped and why.`,
		examples: []string{"dipline store salvage --into rescued.db"},
	},
}

// defaultSpareInterrupted is how long prune keeps an interrupted run's results: a killed
// run is normally followed by a run that finishes the work and records those results as
// its own within days; two weeks also cover a long wait in a cluster's queue or an absence,
// while bounding what a run that is never resumed keeps on disk.
const defaultSpareInterrupted = "14 d"

func (c *cli) storeCmd(args []string) int {
	if len(args) == 0 {
		fmt.Fprint(c.err, "dipline store: name what to do with the store\n\n"+storeUsage)
		return exitBadUser
	}
	if args[0] == "help" || isHelp(args[0]) {
		if len(args) > 1 && args[0] == "help" { // dipline store help prune
			return c.storeCmd([]string{args[1], "--help"})
		}
		fmt.Fprint(c.out, storeUsage)
		c.helped = true
		return exitOK
	}
	sub, args := args[0], args[1:]
	fs := flag.NewFlagSet("store "+sub, flag.ContinueOnError)
	switch sub {
	case "stats":
		return c.storeStats(fs, args)
	case "verify":
		return c.storeVerify(fs, args)
	case "prune":
		return c.storePrune(fs, args)
	case "merge":
		return c.storeMerge(fs, args)
	case "salvage":
		return c.storeSalvage(fs, args)
	}
	fmt.Fprintf(c.err, "dipline store: there is no store command %q; the store's commands are stats, verify, prune, merge and salvage (dipline store --help)\n", sub)
	return exitBadUser
}

func (c *cli) storeStats(fs *flag.FlagSet, args []string) int {
	c.onlyLooks()
	_, store, _, code := c.storeArgs(fs, args, 0, "stats takes only the workflow file")
	if code != exitOK {
		return code
	}
	st, err := store.Stats()
	if err != nil {
		return c.storeFailed("store stats", err)
	}
	fmt.Fprintf(c.out, "store      %s (%s on disk)\n", rel(store.Path()), bytesText(st.FileBytes))
	fmt.Fprintf(c.out, "results    %d (%s)\n", st.Results, bytesText(st.ResultBytes))
	fmt.Fprintf(c.out, "step keys  %d, with %d provenance records\n", st.StepKeys, st.Provenance)
	fmt.Fprintf(c.out, "runs       %d, %d pinned\n", st.Runs, st.Pins)
	if st.Parts > 0 {
		fmt.Fprintf(c.out, "parts      %d finished pieces of steps' work, kept for their next run\n", st.Parts)
	}
	return exitOK
}

func (c *cli) storeVerify(fs *flag.FlagSet, args []string) int {
	drop := fs.Bool("drop-damaged", false, "delete damaged results and records that do not read, so the next run computes those steps again")
	var ro recomputeFlags
	ro.register(fs)
	w, store, _, code := c.storeArgsWith(fs, args, 0, "verify takes only the workflow file", false)
	if code != exitOK {
		return code
	}
	if code := c.verifyStored(store, *drop); code != exitOK || !ro.on {
		return code
	}
	return c.storeRecompute(w, store, ro)
}

// verifyStored re-hashes every stored result and reads every record and page, and with
// drop removes what is damaged.
func (c *cli) verifyStored(store *cache.Store, drop bool) int {
	rep, err := store.Verify()
	if err != nil {
		return c.storeFailed("store verify", err)
	}
	var agree workflow.Agreement
	if !rep.FileDamaged() {
		bad, err := workflow.BadProvenance(store)
		if err != nil {
			return c.storeFailed("store verify", err)
		}
		rep.BadRecords = append(rep.BadRecords, bad...)
		if agree, err = workflow.StoreAgreement(store); err != nil {
			return c.storeFailed("store verify", err)
		}
		rep.Disagreeing = agree.Disagreeing
	}
	c.printVerify(rep)
	for _, p := range agree.Problems {
		fmt.Fprintf(c.out, "  %s\n", p)
	}
	switch {
	case rep.OK() && len(agree.Problems) == 0:
		fmt.Fprintln(c.out, "every result matches its key, every step key the result its provenance names, and every record and page reads")
		return exitOK
	case rep.OK():
		fmt.Fprintln(c.out, "a run record lists results its step keys' provenance does not name; the store's entries themselves agree")
		return exitBadUser
	case rep.FileDamaged():
		fmt.Fprintf(c.out, "the file itself is damaged: `dipline store salvage --into NEW.db` copies all that still reads into a new store\n")
		return exitBadUser
	case !drop:
		fmt.Fprintln(c.out, "--drop-damaged removes the damaged entries, so the next run computes them again")
		return exitBadUser
	}
	n, err := store.DropDamaged(rep)
	if err != nil {
		return c.storeFailed("store verify", err)
	}
	fmt.Fprintf(c.out, "removed %d damaged entries; the next run computes them again\n", n)
	return exitOK
}

func (c *cli) printVerify(rep cache.VerifyReport) {
	fmt.Fprintf(c.out, "re-hashed %d results (%d bytes)\n", rep.Results, rep.Bytes)
	if rep.Layout != "" {
		fmt.Fprintf(c.out, "  the file: %s\n", rep.Layout)
	}
	for _, p := range rep.Pages {
		fmt.Fprintf(c.out, "  %v\n", p)
	}
	for _, k := range rep.Corrupt {
		fmt.Fprintf(c.out, "  damaged result %s\n", k)
	}
	for _, k := range rep.Missing {
		fmt.Fprintf(c.out, "  step key %s has no stored result\n", k)
	}
	for _, b := range rep.BadRecords {
		fmt.Fprintf(c.out, "  %v\n", b)
	}
}

func (c *cli) storePrune(fs *flag.FlagSet, args []string) int {
	aged := &ageFlag{}
	spareInterrupted := &ageFlag{}
	spareInterrupted.Set(defaultSpareInterrupted)
	fs.Var(aged, "aged", `drop runs started longer ago than this, e.g. "30 d"`)
	spare := fs.Int("spare", 0, "never drop the N most recently started runs (with --aged, a run is dropped only when both allow it)")
	fs.Var(spareInterrupted, "spare-interrupted", "never drop a run that was interrupted less than this long ago, so the next run can finish its work")
	_, store, _, code := c.storeArgs(fs, args, 0, "prune takes only the workflow file and its options")
	if code != exitOK {
		return code
	}
	if *spare < 0 {
		fmt.Fprintln(c.err, "dipline store prune: --spare takes a count of runs, 0 or more")
		return exitBadUser
	}
	rep, err := store.Prune(cache.PrunePolicy{Aged: aged.d, Spare: *spare, SpareInterrupted: spareInterrupted.d, Now: time.Now()})
	if err != nil {
		return c.storeFailed("store prune", err)
	}
	fmt.Fprintf(c.out, "dropped %d runs, kept %d (pinned runs are always kept); removed %d results (%s); file %s → %s\n",
		len(rep.Dropped), rep.KeptRuns, rep.Results, bytesText(rep.ResultBytes), bytesText(rep.FileBefore), bytesText(rep.FileAfter))
	for _, id := range rep.Spared {
		fmt.Fprintf(c.out, "  kept run %s: it was interrupted less than %s ago, so its results stay for the run that finishes its work\n", id, spareInterrupted)
	}
	for _, b := range rep.Unreadable {
		fmt.Fprintf(c.out, "  kept the %v; the %d keys it still names stay\n", b, len(b.Keys))
	}
	return exitOK
}

func (c *cli) storeMerge(fs *flag.FlagSet, args []string) int {
	_, store, rest, code := c.storeArgs(fs, args, 1, "merge: name the other store's database file")
	if code != exitOK {
		return code
	}
	rep, err := store.Merge(rest[0])
	if err != nil {
		return c.storeFailed("store merge", err)
	}
	fmt.Fprintf(c.out, "merged %s: %d results, %d step keys, %d provenance records, %d runs, %d pins; %d damaged results repaired\n",
		rest[0], rep.Results, rep.StepKeys, rep.Provenance, rep.Runs, rep.Pins, rep.Repaired)
	for _, cf := range rep.Conflicts {
		fmt.Fprintf(c.out, "  conflict: %v\n", cf)
	}
	if len(rep.Conflicts) > 0 {
		return exitFailed
	}
	return exitOK
}

func (c *cli) storeSalvage(fs *flag.FlagSet, args []string) int {
	into := fs.String("into", "", "the new store's file; it must not exist yet")
	_, store, _, code := c.storeArgsWith(fs, args, 0, "salvage takes the workflow file and --into NEW.db", false)
	if code != exitOK {
		return code
	}
	if *into == "" {
		fmt.Fprintln(c.err, "dipline store salvage: name the new store's file with --into NEW.db")
		return exitBadUser
	}
	rep, err := store.Salvage(*into, cache.SalvageOptions{CheckProvenance: workflow.CheckProvenance})
	if err != nil {
		return c.storeFailed("store salvage", err)
	}
	c.printSalvage(store.Path(), rep)
	if rep.Lossless() {
		return exitOK
	}
	return exitBadUser
}

func (c *cli) printSalvage(from string, rep cache.SalvageReport) {
	fmt.Fprintf(c.out, "salvaged %s into %s\n", rel(from), rep.Into)
	if len(rep.Damage) > 0 {
		fmt.Fprintln(c.out, "damage found:")
		for _, d := range rep.Damage {
			fmt.Fprintf(c.out, "  %s\n", d)
		}
	}
	fmt.Fprintf(c.out, "kept %d results (%s), %d step keys, %d provenance records, %d runs, %d pins\n",
		rep.Results, bytesText(rep.ResultBytes), rep.StepKeys, rep.Provenance, rep.Runs, rep.Pins)
	if len(rep.Dropped) > 0 {
		fmt.Fprintf(c.out, "dropped %d entries:\n", len(rep.Dropped))
		for _, d := range rep.Dropped {
			fmt.Fprintf(c.out, "  %v\n", d)
		}
	}
	if len(rep.Incomplete) > 0 {
		fmt.Fprintln(c.out, "runs kept with results lost (a new run computes those steps again):")
		for _, s := range rep.Incomplete {
			fmt.Fprintf(c.out, "  %s\n", s)
		}
	}
	if rep.Lossless() {
		fmt.Fprintln(c.out, "nothing was damaged and everything was kept")
	}
	fmt.Fprintf(c.out, "%s is left as it was; to work on with the new store, keep the old file aside and move %s to %s\n",
		rel(from), rep.Into, rel(from))
}

// storeArgsWith is storeArgs, checking the store file's layout first when check is set:
// a store cut short, or whose header pages are damaged, is then refused before the
// command starts. Verify and salvage read damaged stores, so they do not check.
func (c *cli) storeArgsWith(fs *flag.FlagSet, args []string, want int, usage string, check bool) (*workflow.Workflow, *cache.Store, []string, int) {
	pos, ok := c.flags(fs, args)
	if !ok {
		return nil, nil, nil, exitBadUser
	}
	path, rest := splitWorkflow(pos)
	if want >= 0 && len(rest) != want {
		fmt.Fprintf(c.err, "dipline %s: %s\n", fs.Name(), usage)
		return nil, nil, nil, exitBadUser
	}
	w, store, code := c.openStoreWith(path, check)
	return w, store, rest, code
}

// openStoreWith loads the workflow and opens its store, checking the store file's layout
// when check is set.
func (c *cli) openStoreWith(path string, check bool) (*workflow.Workflow, *cache.Store, int) {
	w, ok := c.load(path, nil)
	if !ok {
		return nil, nil, exitBadUser
	}
	store, err := cache.Open(w.StorePath)
	if err == nil && check {
		err = store.CheckFile()
	}
	if err != nil {
		return nil, nil, c.storeFailed("", err)
	}
	return w, store, exitOK
}

// storeFailed prints an error of the store and returns the exit status the README's table
// gives it: 2 for a damaged store file (the disk's side or a copy's, not the program's:
// dipline can only salvage it), 1 for anything else (a fault of the program, a store held
// too long by another process, a disk that refuses to write).
func (c *cli) storeFailed(cmd string, err error) int {
	prefix := "dipline"
	if cmd != "" {
		prefix += " " + cmd
	}
	fmt.Fprintf(c.err, "%s: %v\n", prefix, err)
	if damagedStore(err) {
		return exitBadUser
	}
	return exitFailed
}

// lookupFailed prints an error from looking something up in the store (a run, a step):
// the user's side (2) when it is not there or the store file is damaged, a fault (1) when
// the program failed or another process held the store too long.
func (c *cli) lookupFailed(cmd string, err error) int {
	fmt.Fprintf(c.err, "dipline %s: %v\n", cmd, err)
	if errors.Is(err, cache.ErrInternal) || errors.Is(err, cache.ErrBusy) {
		return exitFailed
	}
	return exitBadUser
}

// damagedStore reports whether err comes from a damaged store file, or from a file named
// as the store that is not one: either is the user's side (exit 2), never the program's.
func damagedStore(err error) bool {
	return errors.Is(err, cache.ErrDamaged) || errors.Is(err, cache.ErrNotAStore)
}

// ageFlag is an age given as a quantity of time in the workflow's own syntax ("30 d"),
// read by the units package's time dimension.
type ageFlag struct {
	text string
	d    time.Duration
}

func (a *ageFlag) String() string { return a.text }

func (a *ageFlag) Set(s string) error {
	days, err := units.Time.Parse(s)
	if err != nil {
		return err
	}
	hours := days * 24
	if days < 0 || hours > float64(math.MaxInt64)/float64(time.Hour) {
		return fmt.Errorf("%q: an age must be 0 or more and under 290 yr", s)
	}
	a.text, a.d = strings.TrimSpace(s), time.Duration(hours*float64(time.Hour))
	return nil
}

// bytesText writes a size in bytes for people.
func bytesText(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f KiB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d B", n)
}
