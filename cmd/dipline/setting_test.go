package main

import (
	"regexp"
	"strconv"
	"strings"
	"testing"

	"dipline/workflow"
)

// eccentricC asks the fit to let planet c's orbit be eccentric without saying how many
// planets to fit. Only the fit's Run can refuse it: the number fitted is the number of
// signals the search finds, and on the test light curve (one planet, lightCurveCSV) it
// finds one, so c is not fitted.
const eccentricC = `
fit "planets" {
  light_curve = detrend.quiet
  signals     = search.dips
  max_steps   = 200
  eccentric   = ["c"]
}
`

// lineWith returns the first line of s that contains every one of words, or "".
func lineWith(s string, words ...string) string {
	for _, line := range strings.Split(s, "\n") {
		all := true
		for _, w := range words {
			all = all && strings.Contains(line, w)
		}
		if all {
			return line
		}
	}
	return ""
}

func TestASettingRefusedWhenTheStepRunsIsTheUsersMistake(t *testing.T) {
	f := newFolder(t)
	text := workflowText + eccentricC
	line := strings.Count(text[:strings.Index(text, "eccentric")], "\n") + 1
	f.write("analysis.hcl", text)
	code, out, errs := f.dipline("run")
	if code != exitBadUser {
		t.Fatalf("exit %d, want %d\n%s\n%s", code, exitBadUser, out, errs)
	}
	t.Run("the message names the file and the attribute's line", func(t *testing.T) {
		// The place may read "analysis.hcl line 23:" or otherwise: the file's name and the
		// line's number must be on the line that names the attribute.
		msg := lineWith(errs, "fit.planets failed", "eccentric")
		number := regexp.MustCompile(`\b` + strconv.Itoa(line) + `\b`)
		if !strings.Contains(msg, "analysis.hcl") || !number.MatchString(msg) || !strings.Contains(msg, `"c" is not one of the 1 planet(s) fitted`) {
			t.Errorf("no line of stderr names analysis.hcl, line %d and the mistake:\n%s", line, errs)
		}
		if strings.Contains(errs, "fault in dipline") || strings.Contains(errs, "report it") {
			t.Errorf("the user's mistake is reported as a fault of the program:\n%s", errs)
		}
	})
	t.Run("the results file records it as the user's, with its place", func(t *testing.T) {
		rf := f.results()
		fit := stepIn(t, rf, "fit.planets")
		if fit.Status != workflow.StatusFailed || fit.Cause != workflow.CauseInput {
			t.Errorf("fit.planets: %s, %s; want failed, %s", fit.Status, fit.Cause, workflow.CauseInput)
		}
		if len(rf.Failures) != 1 || rf.Failures[0].Place == nil || !strings.HasSuffix(rf.Failures[0].Place.File, "analysis.hcl") ||
			rf.Failures[0].Place.Line != line {
			t.Errorf("failures %+v, want fit.planets placed at analysis.hcl line %d", rf.Failures, line)
		}
		if s := stepIn(t, rf, "search.dips"); s.Status != workflow.StatusComputed {
			t.Errorf("search.dips %s, want computed", s.Status)
		}
	})
	t.Run("given on the command line, it names the option", func(t *testing.T) {
		f.write("analysis.hcl", workflowText+strings.Replace(eccentricC, "  eccentric   = [\"c\"]\n", "", 1))
		code, out, errs := f.dipline("run", "--set", `fit.planets.eccentric=["c"]`)
		if code != exitBadUser {
			t.Fatalf("exit %d, want %d\n%s\n%s", code, exitBadUser, out, errs)
		}
		if lineWith(errs, "fit.planets failed", "set on the command line (--set fit.planets.eccentric)", "eccentric:") == "" {
			t.Errorf("stderr does not name the option:\n%s", errs)
		}
		if rf := f.results(); len(rf.Failures) != 1 || rf.Failures[0].Place != nil || rf.Failures[0].Cause != workflow.CauseInput {
			t.Errorf("failures %+v, want the fit's, the user's, with no place in the file", rf.Failures)
		}
	})
}
