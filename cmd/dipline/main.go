// Command dipline runs transit-analysis workflows: it reads a workflow file, recomputes only
// the steps whose inputs changed, and can trace every number back to the bytes it came from.
//
// This file holds the command line only: flags in, calls into workflow and cache, text out.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"github.com/hashicorp/hcl/v2"

	"dipline/steps"
	"dipline/steps/kinds"
	"dipline/workflow"
)

// Exit statuses (the table in README.md, "Commands").
const (
	exitOK      = 0
	exitFailed  = 1 // a fault of the program or the store, or an interrupted run
	exitBadUser = 2 // the workflow, its settings, its data or the command line is at fault
)

// registry gives the step kinds; tests add toy kinds to it.
var registry = kinds.Registry

const usage = `dipline — transit analyses as one workflow file, recomputed only where inputs change.

Usage:
  dipline run     [workflow.hcl] [--workers N] [--events FILE] [--wait DURATION] [--set kind.label.attr=value]
  dipline check   [workflow.hcl]                 validate the workflow and its data without computing
  dipline pending [workflow.hcl]                 what a run would compute, and why
  dipline trace   [workflow.hcl] kind.label[/figure] [--run RUN]
                                                 the chain from a result down to its input files
  dipline runs    [workflow.hcl]                 the runs recorded in the store
  dipline diff    [workflow.hcl] [OLD NEW] [--all]
                                                 what changed between two runs (default: previous
                                                 and latest) and how far each number moved
  dipline pin     [workflow.hcl] RUN [--note TEXT] [--remove]
                                                 keep a run (and all it used) safe from pruning
  dipline store   stats|verify|prune|merge|salvage [workflow.hcl] [options]
                                                 look after the store (dipline store help)
  dipline kinds   [BLOCK]                        the block types a workflow may hold, and their
                                                 attributes (one, when named)
  dipline starter LIGHTCURVE [--out analysis.hcl] write a starter workflow for a light curve

The workflow file defaults to analysis.hcl in the current folder. A workflow reads and
writes only inside its own folder; these options, before or after the command, widen that:
  --also-allow DIR   let the workflow use DIR too (its files, or a store or results there);
                     repeatable
  --max-data SIZE    let its data files and catalogues take up to SIZE in all, e.g. 2GiB
                     (default 512MiB)
`

func main() {
	os.Exit(realMain(os.Args[1:], os.Stdout, os.Stderr))
}

func realMain(args []string, stdout, stderr io.Writer) (code int) {
	defer func() {
		if p := recover(); p != nil {
			fmt.Fprintf(stderr, "dipline: internal error (please report it): %v\n", p)
			code = exitFailed
		}
	}()
	if len(args) == 0 || args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		fmt.Fprint(stdout, usage)
		return exitOK
	}
	reg, err := registry()
	if err != nil {
		fmt.Fprintln(stderr, "dipline:", err)
		return exitFailed
	}
	c := &cli{reg: reg, out: stdout, err: stderr}
	global := flag.NewFlagSet("dipline", flag.ContinueOnError)
	c.globalFlags(global)
	global.SetOutput(stderr)
	if err := global.Parse(args); err != nil {
		return exitBadUser
	}
	if args = global.Args(); len(args) == 0 {
		fmt.Fprintf(stderr, "dipline: name a command\n\n%s", usage)
		return exitBadUser
	}
	cmds := map[string]func([]string) int{
		"run": c.run, "check": c.check, "pending": c.pending, "trace": c.trace, "runs": c.runs,
		"pin": c.pin, "diff": c.diff, "store": c.storeCmd, "kinds": c.kinds, "starter": c.starter,
	}
	f, ok := cmds[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "dipline: unknown command %q\n\n%s", args[0], usage)
		return exitBadUser
	}
	return f(args[1:])
}

type cli struct {
	reg steps.Registry
	out io.Writer
	err io.Writer
	// access is what the workflow may reach beyond its folder (--also-allow, --max-data).
	access workflow.Access
}

// globalFlags adds the options every command that reads a workflow takes: given before the
// command or among its own options.
func (c *cli) globalFlags(fs *flag.FlagSet) {
	fs.Func("also-allow", "let the workflow use this folder too (repeatable)", func(dir string) error {
		if dir == "" {
			return errors.New("name a folder")
		}
		c.access.Allow = append(c.access.Allow, dir)
		return nil
	})
	fs.Func("max-data", "let the workflow's data files and catalogues take up to this much in all, e.g. 2GiB", func(s string) error {
		n, err := workflow.ParseSize(s)
		c.access.MaxData = n
		return err
	})
}

// flags parses options placed anywhere among the arguments and returns the positionals.
func (c *cli) flags(fs *flag.FlagSet, args []string) ([]string, bool) {
	fs.SetOutput(c.err)
	c.globalFlags(fs)
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, false
		}
		args = fs.Args()
		if len(args) == 0 {
			return pos, true
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
}

// splitWorkflow takes the workflow file from the positionals when one ends in .hcl.
func splitWorkflow(pos []string) (string, []string) {
	if len(pos) > 0 && strings.HasSuffix(pos[0], ".hcl") {
		return pos[0], pos[1:]
	}
	return "analysis.hcl", pos
}

func (c *cli) load(path string, overrides []workflow.Override) (*workflow.Workflow, bool) {
	w, diags := workflow.LoadWithAccess(path, c.reg, overrides, c.access)
	c.printDiags(diags)
	return w, w != nil && !diags.HasErrors()
}

// printDiags prints a load's diagnostics in the workflow package's layout: the file and
// line, the message, and the line with a caret under what is wrong.
func (c *cli) printDiags(diags hcl.Diagnostics) {
	workflow.FormatDiagnostics(c.err, diags)
}

// exitFor picks the exit status for an error from a run: 1 when any failure is a fault of
// the program or the store (or the run was interrupted), else 2 when the user's data or
// settings are at fault, including a setting a step refused only once it ran (a
// *workflow.SettingError, which names the file and line).
func exitFor(err error) int {
	if damagedStore(err) { // a damaged store file is not the program's fault (store.go)
		return exitBadUser
	}
	var re *workflow.RunError
	if errors.As(err, &re) {
		if re.Program() || re.Interrupted {
			return exitFailed
		}
		return exitBadUser
	}
	var ae *steps.AttrError
	if steps.IsInputError(err) || errors.As(err, &ae) {
		return exitBadUser
	}
	return exitFailed
}

func interruptible() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
}
