package main

import (
	"flag"
	"fmt"
	"math"
	"strconv"

	"dipline/workflow"
)

// diff compares two runs: what changed in each step's inputs, and how far its numbers
// moved in units of their uncertainty, with the Monte Carlo error of each shift.
func (c *cli) diff(args []string) int {
	c.onlyLooks()
	fs := flag.NewFlagSet("diff", flag.ContinueOnError)
	all := fs.Bool("all", false, "list unchanged steps too")
	_, store, rest, code := c.storeArgs(fs, args, -1, "")
	if code != exitOK {
		return code
	}
	oldRef, newRef := "previous", "latest"
	switch len(rest) {
	case 0:
	case 2:
		oldRef, newRef = rest[0], rest[1]
	default:
		fmt.Fprintln(c.err, "dipline diff: name two runs (old then new), or none for the previous and the latest")
		return exitBadUser
	}
	rep, err := workflow.Diff(store, c.reg, oldRef, newRef)
	if err != nil {
		return c.lookupFailed("diff", err)
	}
	fmt.Fprintf(c.out, "from run %s (%s)\n  to run %s (%s)\n", rep.Old.ID, rep.Old.Started.Local().Format("2006-01-02 15:04:05"),
		rep.New.ID, rep.New.Started.Local().Format("2006-01-02 15:04:05"))
	if rep.Old.Workflow != rep.New.Workflow {
		fmt.Fprintln(c.out, "the workflow file differs between the runs")
	}
	for _, o := range rep.Overrides {
		fmt.Fprintln(c.out, o)
	}
	same := 0
	for _, d := range rep.Steps {
		if d.State == workflow.DiffUnchanged && !*all {
			same++
			continue
		}
		// The state column is as wide as the longest word, "same result" (states.go).
		fmt.Fprintf(c.out, "\n%-11s %s\n", d.State, d.Step)
		for _, w := range d.Why {
			fmt.Fprintf(c.out, "    because %s\n", w)
		}
		if d.State == workflow.DiffSameResult {
			fmt.Fprintln(c.out, "    its result is byte-identical")
		}
		for _, s := range d.Shifts {
			fmt.Fprintf(c.out, "    %-28s %s → %s %s%s\n", s.Name, workflow.FormatValue(s.Old.Value, s.Old.Sigma),
				workflow.FormatValue(s.New.Value, s.New.Sigma), s.Unit, shiftNote(s))
		}
	}
	if same > 0 {
		fmt.Fprintf(c.out, "\n%d step(s) unchanged (same step key); --all lists them\n", same)
	}
	return exitOK
}

// shiftNote says how far a number moved against its uncertainty and beside its Monte Carlo
// error.
func shiftNote(s workflow.Shift) string {
	if math.IsNaN(s.InSigma) {
		return ""
	}
	note := "   moved " + strconv.FormatFloat(s.InSigma, 'f', 2, 64) + " σ"
	if s.MCError > 0 && s.Old.Sigma > 0 {
		note += " (Monte Carlo error of the shift " + strconv.FormatFloat(s.MCError/s.Old.Sigma, 'f', 2, 64) + " σ)"
	} else if s.MCError == 0 {
		note += " (exact: no Monte Carlo error)"
	}
	return note
}
