package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/workflow"
)

// summaryWidth is the width to which the run summary wraps its sentences.
const summaryWidth = 100

// printSummary prints, after a run, the figures of the finished steps whose results no
// finished step takes (the ends of the workflow's chains, or what was reached before a
// failure; a step that only judges others, such as vet, ends no chain), then every finished
// step's test counts and cautions, reused or computed. A what-if run (--set) says so first;
// a figure without a value is not printed as one, but named with the reason.
func (c *cli) printSummary(rep *workflow.Report) {
	if _, whatIf := workflow.WhatIf(rep.Run.Overrides, rep.Run.SetBy); whatIf != "" {
		fmt.Fprintln(c.out)
		fmt.Fprint(c.out, wrap(whatIf, "", "  ", summaryWidth))
	}
	taken := map[string]bool{}
	for _, o := range rep.Outcomes {
		if !o.Finished() || judges(o) {
			continue
		}
		for _, d := range o.Step.Deps {
			taken[d.Addr] = true
		}
	}
	for _, o := range rep.Outcomes {
		if taken[o.Step.Addr] || !o.Finished() || judges(o) {
			continue
		}
		figs := o.Artifact.Figures()
		if len(figs) == 0 {
			continue
		}
		fmt.Fprintf(c.out, "\n%s (step key %s)\n", o.Step.Addr, o.StepKey.Short())
		var notGiven []string
		for _, f := range figs {
			if !f.Defined() {
				notGiven = append(notGiven, f.NotGiven())
				continue
			}
			fmt.Fprintf(c.out, "  %-26s %s %s\n", f.Name, formatFigure(f), f.Unit)
		}
		for _, s := range notGiven {
			fmt.Fprint(c.out, wrap(s, "  ", "    ", summaryWidth))
		}
	}
	c.printJudgements(rep)
	fmt.Fprintln(c.out)
}

// formatFigure writes a figure's value rounded by its uncertainty: "v +a −b" when it gives
// an interval whose two sides differ once rounded (the smaller side to two significant
// figures, as workflow.FormatValue rounds σ), else "v ± σ".
func formatFigure(f steps.Figure) string {
	if !f.Asymmetric() || !(f.Lower > 0) || !(f.Upper > 0) {
		return workflow.FormatValue(f.Value, f.Sigma)
	}
	place := int(math.Floor(math.Log10(math.Min(f.Lower, f.Upper)))) - 1
	round := func(x float64) string {
		if place >= 0 {
			scale := math.Pow(10, float64(place))
			return strconv.FormatFloat(math.Round(x/scale)*scale, 'f', 0, 64)
		}
		return strconv.FormatFloat(x, 'f', -place, 64)
	}
	up, down := round(f.Upper), round(f.Lower)
	if up == down {
		return round(f.Value) + " ± " + up
	}
	return round(f.Value) + " +" + up + " −" + down
}

// judges reports whether a finished step judges others (a vet step): it reads the steps it
// tests without ending their chain, so they keep their place among the final steps, and its
// own verdicts are counted in the tests-and-cautions block rather than listed figure by
// figure (the results file has them all).
func judges(o *workflow.Outcome) bool {
	_, ok := o.Artifact.(steps.Judge)
	return ok
}

// printJudgements prints, for every finished step with verdicts or cautions, one count
// line per tested subject and each caution.
func (c *cli) printJudgements(rep *workflow.Report) {
	header := false
	for _, o := range rep.Outcomes {
		if !o.Finished() {
			continue
		}
		counts := verdictCounts(o.Artifact)
		cautions := steps.CautionsOf(o.Artifact)
		if len(counts) == 0 && len(cautions) == 0 {
			continue
		}
		if !header {
			fmt.Fprintf(c.out, "\ntests and cautions\n")
			header = true
		}
		fmt.Fprintf(c.out, "  %s\n", o.Step.Addr)
		for _, line := range counts {
			fmt.Fprintf(c.out, "    %s\n", line)
		}
		for _, s := range cautions {
			fmt.Fprint(c.out, wrap(s, "    ! ", "      ", summaryWidth))
		}
	}
}

// verdictCounts says, per subject of an artifact's verdicts in the order they first
// appear, how many of the tests that ran disagree and how many give a caution, and how
// many could not run: "signal1: 0 of 5 tests disagree, 1 caution; 2 could not run". When
// most could not run (a dip resting on one transit, a light curve without a star), a count
// of nothing against it would read as a clean bill, so the line leads with how few ran.
func verdictCounts(a steps.Artifact) []string {
	j, ok := a.(steps.Judge)
	if !ok {
		return nil
	}
	type tally struct{ tests, disagree, caution, notRun int }
	var order []string
	by := map[string]*tally{}
	for _, v := range j.Verdicts() {
		t := by[v.Subject]
		if t == nil {
			t = &tally{}
			by[v.Subject] = t
			order = append(order, v.Subject)
		}
		if v.Verdict == steps.VerdictNotRun {
			t.notRun++
			continue
		}
		t.tests++
		switch v.Verdict {
		case steps.VerdictDisagree:
			t.disagree++
		case steps.VerdictCaution:
			t.caution++
		}
	}
	lines := make([]string, 0, len(order))
	for _, s := range order {
		t := by[s]
		var line string
		switch all := t.tests + t.notRun; {
		case t.tests == 0:
			line = fmt.Sprintf("%s: none of the %d %s could run (the report says why)", s, all, plural(all, "test", "tests"))
		case t.notRun > t.tests:
			line = fmt.Sprintf("%s: only %d of %d tests could run (the report says why not): %d disagree, %s", s,
				t.tests, all, t.disagree, count(t.caution, "caution", "cautions"))
		default:
			line = fmt.Sprintf("%s: %d of %d %s disagree, %s", s, t.disagree, t.tests,
				plural(t.tests, "test", "tests"), count(t.caution, "caution", "cautions"))
			if t.notRun > 0 {
				line += fmt.Sprintf("; %d could not run", t.notRun)
			}
		}
		lines = append(lines, line)
	}
	return lines
}

// printUnfinished lists the steps that failed or did not run, and why.
func (c *cli) printUnfinished(rep *workflow.Report) {
	fmt.Fprintln(c.out, "did not finish")
	for _, o := range rep.Outcomes {
		switch o.Status {
		case workflow.StatusFailed:
			fmt.Fprint(c.out, wrap(o.Step.Addr+" failed: "+o.Message, "  ", "      ", summaryWidth))
		case workflow.StatusSkipped:
			fmt.Fprint(c.out, wrap(o.Step.Addr+": "+o.Message, "  ", "      ", summaryWidth))
		}
	}
	fmt.Fprintln(c.out)
}

// unfinishedLine says in one line how many steps failed and did not run, and where the
// finished steps' results are: in the store, unless its file was removed or replaced
// during the run (lost), which took them with it.
func unfinishedLine(re *workflow.RunError, written, lost bool) string {
	s := fmt.Sprintf("%d %s failed", len(re.Failed), plural(len(re.Failed), "step", "steps"))
	if n := len(re.Skipped); n > 0 {
		s += fmt.Sprintf(" and %d not run", n)
	}
	if lost {
		s += "; the store file went away during the run, so nothing this run computed is stored, and the next run computes it again"
		if written {
			s += " (the results file shows what it computed)"
		}
		return s
	}
	if written {
		return s + "; the finished steps' results are stored and in the results file"
	}
	return s + "; the finished steps' results are stored"
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// count says "no cautions", "1 caution", "3 cautions".
func count(n int, one, many string) string {
	if n == 0 {
		return "no " + many
	}
	return fmt.Sprintf("%d %s", n, plural(n, one, many))
}

// wrap breaks s into lines of at most width characters (a longer word stands alone), the
// first starting with first and the rest with rest; each line ends in a newline.
func wrap(s, first, rest string, width int) string {
	var b strings.Builder
	line, prefix := "", first
	for _, w := range strings.Fields(s) {
		if line != "" && len([]rune(prefix+line+" "+w)) > width {
			b.WriteString(prefix + line + "\n")
			line, prefix = "", rest
		}
		if line == "" {
			line = w
		} else {
			line += " " + w
		}
	}
	b.WriteString(prefix + line + "\n")
	return b.String()
}
