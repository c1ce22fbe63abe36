package main

import (
	"flag"
	"fmt"
	"time"

	"dipline/cache"
)

func (c *cli) storeCmd(args []string) int {
	if len(args) == 0 {
		fmt.Fprintln(c.err, "dipline store: say stats, verify, prune or merge")
		return exitBadUser
	}
	sub, args := args[0], args[1:]
	fs := flag.NewFlagSet("store "+sub, flag.ContinueOnError)
	var (
		olderThan = fs.Duration("older-than", 0, "prune: drop runs started longer ago than this (e.g. 720h)")
		keepLast  = fs.Int("keep-last", 0, "prune: keep only the N most recent runs (pinned runs are always kept)")
		repair    = fs.Bool("repair", false, "verify: delete damaged entries so the next run recomputes them")
	)
	_, store, rest, code := c.storeArgs(fs, args, -1, "")
	if code != exitOK {
		return code
	}
	switch sub {
	case "stats":
		st, err := store.Stats()
		if err != nil {
			fmt.Fprintln(c.err, "dipline store stats:", err)
			return exitFailed
		}
		fmt.Fprintf(c.out, "store      %s (%s on disk)\n", rel(store.Path()), bytesText(st.FileBytes))
		fmt.Fprintf(c.out, "results    %d (%s)\n", st.Results, bytesText(st.ResultBytes))
		fmt.Fprintf(c.out, "step keys  %d, with %d provenance records\n", st.StepKeys, st.Provenance)
		fmt.Fprintf(c.out, "runs       %d, %d pinned\n", st.Runs, st.Pins)
	case "verify":
		rep, err := store.Verify()
		if err != nil {
			fmt.Fprintln(c.err, "dipline store verify:", err)
			return exitFailed
		}
		fmt.Fprintf(c.out, "re-hashed %d results (%d bytes)\n", rep.Results, rep.Bytes)
		for _, k := range rep.Corrupt {
			fmt.Fprintf(c.out, "  damaged result %s\n", k)
		}
		for _, k := range rep.Missing {
			fmt.Fprintf(c.out, "  step key %s has no stored result\n", k)
		}
		if rep.OK() {
			fmt.Fprintln(c.out, "every result matches its key")
			return exitOK
		}
		if *repair {
			n, err := store.DropDamaged(rep)
			if err != nil {
				fmt.Fprintln(c.err, "dipline store verify:", err)
				return exitFailed
			}
			fmt.Fprintf(c.out, "removed %d damaged entries; the next run recomputes them\n", n)
			return exitOK
		}
		return exitFailed
	case "prune":
		rep, err := store.Prune(cache.PrunePolicy{OlderThan: *olderThan, KeepLast: *keepLast, Now: time.Now()})
		if err != nil {
			fmt.Fprintln(c.err, "dipline store prune:", err)
			return exitFailed
		}
		fmt.Fprintf(c.out, "dropped %d runs, kept %d (pinned runs are always kept); removed %d results (%s); file %s → %s\n",
			len(rep.Dropped), rep.KeptRuns, rep.Results, bytesText(rep.ResultBytes), bytesText(rep.FileBefore), bytesText(rep.FileAfter))
	case "merge":
		if len(rest) != 1 {
			fmt.Fprintln(c.err, "dipline store merge: name the other store's database file")
			return exitBadUser
		}
		rep, err := store.Merge(rest[0])
		if err != nil {
			fmt.Fprintln(c.err, "dipline store merge:", err)
			return exitFailed
		}
		fmt.Fprintf(c.out, "merged %s: %d results, %d step keys, %d provenance records, %d runs, %d pins; %d damaged results repaired\n",
			rest[0], rep.Results, rep.StepKeys, rep.Provenance, rep.Runs, rep.Pins, rep.Repaired)
		for _, cf := range rep.Conflicts {
			fmt.Fprintf(c.out, "  conflict: %v\n", cf)
		}
		if len(rep.Conflicts) > 0 {
			return exitFailed
		}
	default:
		fmt.Fprintf(c.err, "dipline store: unknown subcommand %q (stats, verify, prune, merge)\n", sub)
		return exitBadUser
	}
	return exitOK
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
