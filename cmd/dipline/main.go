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
	"runtime"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"time"

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
  dipline run     [workflow.hcl] [--workers N] [--events FILE] [--wait DURATION] [--quiet]
                  [--set kind.label.attr=value]
                                                 compute what changed, reuse the rest, write
                                                 the results
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
                                                 look after the store (dipline store --help)
  dipline survey  run|submit|status|merge|task TARGETS.csv [workflow.hcl] [options]
                                                 one workflow over a table of targets, here or
                                                 on Slurm (dipline survey --help)
  dipline kinds   [BLOCK]                        the block types a workflow may hold, and their
                                                 attributes (one, when named)
  dipline starter LIGHTCURVE [--out analysis.hcl] write a starter workflow for a light curve
  dipline help    [COMMAND]                      this text, or one command's

Each command explains itself and shows an example with --help, e.g. dipline run --help.

The workflow file defaults to analysis.hcl in the current folder. A workflow reads and
writes only inside its own folder; these options, before or after the command, widen that:
  --also-allow DIR   let the workflow use DIR too (its files, or a store or results there);
                     repeatable
  --max-data SIZE    let its data files and catalogues take up to SIZE in all, e.g. 2GiB
                     (default 512MiB)
`

// commandDoc is what a command's --help says beyond its options: how it is called, what
// it does, and examples to copy. The options are listed from the command's own flag set,
// so the help cannot fall behind them.
type commandDoc struct {
	call     string   // the command line's shape, after "dipline "
	about    string   // what the command does, in a few lines
	examples []string // whole command lines
}

// commandDocs holds every command's help, by the name of its flag set (the store's own
// commands are in store.go).
var commandDocs = map[string]commandDoc{
	"run": {
		call: "run [workflow.hcl] [options]",
		about: `Computes every step whose inputs changed since its result was stored, reuses the
rest, and writes the results file with the step key beside every number. While steps
compute, a line on the terminal says how far each one is (a plain line every few seconds
when the output is not a terminal; none with --quiet).`,
		examples: []string{
			"dipline run",
			"dipline run analysis.hcl --workers 4 --set 'search.dips.max_signals=2'",
		},
	},
	"check": {
		call: "check [workflow.hcl]",
		about: `Loads the workflow, checks every block, reference and setting, and reads its data
files and catalogue rows as a run would, without computing anything. Lists the steps
with what each one reads.`,
		examples: []string{"dipline check", "dipline check surveys/ember-12.hcl"},
	},
	"pending": {
		call: "pending [workflow.hcl]",
		about: `Says of each step what a run would do with it: stored (reused), to compute (with
the reason), or depends (on a step still to compute).`,
		examples: []string{"dipline pending"},
	},
	"trace": {
		call: "trace [workflow.hcl] kind.label[/figure] [--run RUN]",
		about: `Walks from a step's result, or one of its numbers, down through every step it
read to the digests of the input files, with each step's settings and seed.`,
		examples: []string{"dipline trace search.dips/signal1.period", "dipline trace fit.planets --run previous"},
	},
	"runs": {
		call: "runs [workflow.hcl]",
		about: `Lists the runs recorded in the store: when each started, what its steps did, and
whether it is pinned, under way or was interrupted.`,
		examples: []string{"dipline runs"},
	},
	"diff": {
		call: "diff [workflow.hcl] [OLD NEW] [--all]",
		about: `Compares two runs (by default the previous and the latest): what changed in each
step's inputs, and how far each number moved in units of its uncertainty.`,
		examples: []string{"dipline diff", "dipline diff previous latest --all"},
	},
	"pin": {
		call: "pin [workflow.hcl] RUN [--note TEXT] [--remove]",
		about: `Keeps a run, and everything it used, safe from store prune; --remove lets it go
again. RUN is an id, a prefix of one, latest or previous.`,
		examples: []string{"dipline pin latest --note 'submitted draft, 2 March'"},
	},
	"kinds": {
		call: "kinds [BLOCK]",
		about: `Lists the block types a workflow may hold, with each attribute, what it takes and
its default as it would be written; with a block type, only that one.`,
		examples: []string{"dipline kinds", "dipline kinds detrend"},
	},
	"starter": {
		call: "starter LIGHTCURVE [--out analysis.hcl] [--seed N]",
		about: `Writes a starter workflow for a light curve (CSV, TSV or FITS) lying in the
workflow's folder, ready for dipline check and dipline run.`,
		examples: []string{"dipline starter data/ember12.csv --out analysis.hcl"},
	},
}

// valueNames are the placeholders the help shows after options that take a value.
var valueNames = map[string]string{
	"workers": "N", "events": "FILE", "wait": "DURATION", "set": "kind.label.attr=value",
	"run": "RUN", "note": "TEXT", "out": "FILE", "seed": "N", "aged": "AGE", "spare": "N",
	"spare-interrupted": "AGE", "into": "NEW.db", "sample": "N", "sample-seed": "N",
	"also-allow": "DIR", "max-data": "SIZE",
}

// docOf is the help of the command whose flag set is fs.
func docOf(fs *flag.FlagSet) commandDoc {
	if d, ok := commandDocs[fs.Name()]; ok {
		return d
	}
	if d, ok := surveyDocs[fs.Name()]; ok {
		return d
	}
	return storeDocs[fs.Name()]
}

// flagMistake prints a mistake on the command line: what is wrong, how the command is
// called, and where its help is.
func (c *cli) flagMistake(fs *flag.FlagSet, what string) {
	fmt.Fprintf(c.err, "dipline %s: %s\nUsage: dipline %s\n(dipline %s --help explains it, with an example)\n", fs.Name(), what, docOf(fs).call, fs.Name())
}

// commandHelp writes the help of the command whose flag set is fs: how to call it, what it
// does, its options and its examples.
func commandHelp(w io.Writer, fs *flag.FlagSet) {
	d := docOf(fs)
	fmt.Fprintf(w, "Usage: dipline %s\n\n%s\n", d.call, d.about)
	var opts []*flag.Flag
	fs.VisitAll(func(f *flag.Flag) { opts = append(opts, f) })
	if len(opts) > 0 {
		fmt.Fprintln(w, "\nOptions:")
		for _, f := range opts {
			fmt.Fprintf(w, "  %s\n      %s%s\n", optionShape(f), f.Usage, defaultNote(f))
		}
	}
	fmt.Fprintln(w, "\nExamples:")
	for _, e := range d.examples {
		fmt.Fprintf(w, "  %s\n", e)
	}
}

// optionShape is how an option is written: --name, or --name VALUE when it takes one.
func optionShape(f *flag.Flag) string {
	if b, ok := f.Value.(interface{ IsBoolFlag() bool }); ok && b.IsBoolFlag() {
		return "--" + f.Name
	}
	v := valueNames[f.Name]
	if v == "" {
		v = "VALUE"
	}
	return "--" + f.Name + " " + v
}

// defaultWords say what an option is when it is not given, where its value would differ
// from one machine to another.
var defaultWords = map[string]string{"workers": "the number of CPUs"}

// defaultNote says what an option is when it is not given, when that is worth saying.
func defaultNote(f *flag.Flag) string {
	if w, ok := defaultWords[f.Name]; ok {
		return " (when not given: " + w + ")"
	}
	switch f.DefValue {
	case "", "0", "false", "[]":
		return ""
	}
	return " (when not given: " + f.DefValue + ")"
}

// isHelp reports whether an argument asks for help.
func isHelp(arg string) bool {
	return arg == "-h" || arg == "--help" || arg == "-help" || arg == "--h"
}

// flagMistake says in our words what is wrong with a command line the flag package
// refused. The flag package's errors are plain strings; each of its forms is matched
// here, and TestFlagMistakesAreInOurWords fails if a Go release words one differently.
// workersFlag defines --workers on fs: how many workers, 1 or more (a count of 0 or less
// would be taken silently as something else).
func workersFlag(fs *flag.FlagSet, usage string) *int {
	n := runtime.NumCPU()
	fs.Var((*countFlag)(&n), "workers", usage)
	return &n
}

// countFlag is a whole number of 1 or more.
type countFlag int

func (c *countFlag) String() string { return strconv.Itoa(int(*c)) }
func (c *countFlag) Get() any       { return int(*c) }
func (c *countFlag) Set(s string) error {
	v, err := strconv.Atoi(s)
	if err != nil {
		return errors.New("parse error")
	}
	if v < 1 {
		return errors.New("it counts workers, so it is 1 or more")
	}
	*c = countFlag(v)
	return nil
}

func flagMistake(fs *flag.FlagSet, err error) string {
	msg := err.Error()
	lookup := func(name string) *flag.Flag { return fs.Lookup(strings.TrimLeft(name, "-")) }
	if name, ok := strings.CutPrefix(msg, "flag provided but not defined: "); ok {
		name = strings.TrimLeft(name, "-")
		line := "there is no option --" + name
		if near := nearestOption(name, fs); near != "" {
			line += "; did you mean --" + near + "?"
		}
		return line
	}
	if name, ok := strings.CutPrefix(msg, "flag needs an argument: "); ok {
		f := lookup(name)
		if f == nil {
			return fmt.Sprintf("%s needs a value after it", name)
		}
		return fmt.Sprintf("--%s needs a value: write %s", f.Name, optionShape(f))
	}
	if rest, ok := strings.CutPrefix(msg, "bad flag syntax: "); ok {
		return fmt.Sprintf("%q is not an option as dipline reads them: write --name or --name=value", rest)
	}
	var value, name, why string
	if rest, ok := strings.CutPrefix(msg, "invalid value "); ok {
		if v, after, ok := cutQuoted(rest); ok {
			if n, cause, ok := strings.Cut(strings.TrimPrefix(after, " for flag "), ": "); ok {
				value, name, why = v, n, cause
			}
		}
	}
	if rest, ok := strings.CutPrefix(msg, "invalid boolean value "); ok {
		if v, after, ok := cutQuoted(rest); ok {
			if n, _, ok := strings.Cut(strings.TrimPrefix(after, " for "), ": "); ok {
				return fmt.Sprintf("--%s is on or off: write --%s alone (or --%s=false), not %q", strings.TrimLeft(n, "-"), strings.TrimLeft(n, "-"), strings.TrimLeft(n, "-"), v)
			}
		}
	}
	if name != "" {
		f := lookup(name)
		name = strings.TrimLeft(name, "-")
		switch why {
		case "parse error", "value out of range":
			want := "a value"
			if g, ok := f.Value.(flag.Getter); f != nil && ok {
				switch g.Get().(type) {
				case int, int64, uint, uint64:
					want = "a whole number"
				case float64:
					want = "a number"
				case time.Duration:
					want = "a duration such as 30s, 5m or 1h"
				}
			}
			if why == "value out of range" {
				return fmt.Sprintf("--%s takes %s, and %q is out of its range", name, want, value)
			}
			return fmt.Sprintf("--%s takes %s, not %q", name, want, value)
		}
		return fmt.Sprintf("--%s %q: %s", name, value, why)
	}
	return "the options could not be read (" + msg + ")"
}

// cutQuoted splits a Go-quoted string off the front of s.
func cutQuoted(s string) (string, string, bool) {
	q, err := strconv.QuotedPrefix(s)
	if err != nil {
		return "", "", false
	}
	v, err := strconv.Unquote(q)
	return v, s[len(q):], err == nil
}

// nearestOption is the option of fs closest to name (within two edits, or sharing a
// prefix of three letters), or "".
func nearestOption(name string, fs *flag.FlagSet) string {
	best, bestD := "", 3
	fs.VisitAll(func(f *flag.Flag) {
		d := editDistance(name, f.Name)
		if len(name) >= 3 && strings.HasPrefix(f.Name, name) {
			d = min(d, 1)
		}
		if d < bestD {
			best, bestD = f.Name, d
		}
	})
	return best
}

// editDistance is the Levenshtein distance between a and b, by bytes (option names are
// ASCII).
func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur := make([]int, len(b)+1)
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev = cur
	}
	return prev[len(b)]
}

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
	if len(args) == 0 || isHelp(args[0]) {
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
	global.SetOutput(io.Discard)
	global.Usage = func() {}
	switch err := global.Parse(args); {
	case errors.Is(err, flag.ErrHelp):
		fmt.Fprint(stdout, usage)
		return exitOK
	case err != nil:
		fmt.Fprintf(stderr, "dipline: %s\n(before the command only --also-allow and --max-data are read; a command's own options go after it: dipline --help)\n", flagMistake(global, err))
		return exitBadUser
	}
	if args = global.Args(); len(args) == 0 {
		fmt.Fprintf(stderr, "dipline: name a command\n\n%s", usage)
		return exitBadUser
	}
	cmds := c.commands()
	f, ok := cmds[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "dipline: unknown command %q\n\n%s", args[0], usage)
		return exitBadUser
	}
	code = f(args[1:])
	if c.helped { // the command was asked for its help, and gave it
		return exitOK
	}
	return code
}

// commands are dipline's commands by name.
func (c *cli) commands() map[string]func([]string) int {
	return map[string]func([]string) int{
		"run": c.run, "check": c.check, "pending": c.pending, "trace": c.trace, "runs": c.runs,
		"pin": c.pin, "diff": c.diff, "store": c.storeCmd, "kinds": c.kindsCmd, "starter": c.starter,
		"survey": c.surveyCmd,
		"help":   c.help,
	}
}

// helpOfHelp is the help of `dipline help` itself.
const helpOfHelp = `Usage: dipline help [COMMAND]

Shows what dipline's commands are, or how to use one of them.

Examples:
  dipline help
  dipline help store
`

// help is `dipline help [COMMAND]`: the usage, or one command's help (as its --help).
func (c *cli) help(args []string) int {
	switch {
	case len(args) == 0:
		fmt.Fprint(c.out, usage)
		return exitOK
	case len(args) == 1 && (args[0] == "help" || isHelp(args[0])):
		fmt.Fprint(c.out, helpOfHelp)
		return exitOK
	}
	cmd, ok := c.commands()[args[0]]
	if !ok || len(args) > 2 || len(args) == 2 && args[0] != "store" && args[0] != "survey" {
		fmt.Fprintf(c.err, "dipline help: name one command, e.g. dipline help run; the commands are %s\n", strings.Join(commandNames(), ", "))
		return exitBadUser
	}
	return cmd(append(args[1:], "--help"))
}

// commandNames lists the commands, sorted.
func commandNames() []string {
	names := []string{"store", "survey", "help"}
	for n := range commandDocs {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// kindsCmd is `dipline kinds`, which takes no options: it answers --help and refuses any
// other option before the listing (kinds.go) sees it.
func (c *cli) kindsCmd(args []string) int {
	fs := flag.NewFlagSet("kinds", flag.ContinueOnError)
	for _, a := range args {
		if isHelp(a) {
			commandHelp(c.out, fs)
			c.helped = true
			return exitOK
		}
		if strings.HasPrefix(a, "-") {
			c.flagMistake(fs, fmt.Sprintf("kinds takes no options, only a block type, not %s", a))
			return exitBadUser
		}
	}
	return c.kinds(args)
}

type cli struct {
	reg steps.Registry
	out io.Writer
	err io.Writer
	// access is what the workflow may reach beyond its folder (--also-allow, --max-data).
	access workflow.Access
	// helped is set when a command was asked for its help and printed it: the command
	// ends there, and dipline exits 0.
	helped bool
}

// onlyLooks marks a command that only reads the workflow, its data and its store: the
// load then makes no folders, so a look leaves a fresh workflow's folder as it was.
func (c *cli) onlyLooks() { c.access.Look = true }

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
// It answers --help (and -h) with the command's help on the standard output, setting
// c.helped, and a mistake with our own words and the help on the standard error; in both
// cases it reports false and the command ends.
func (c *cli) flags(fs *flag.FlagSet, args []string) ([]string, bool) {
	fs.SetOutput(io.Discard) // the flag package's own sentences never reach the user
	fs.Usage = func() {}
	c.globalFlags(fs)
	var pos []string
	for {
		if err := fs.Parse(args); errors.Is(err, flag.ErrHelp) {
			commandHelp(c.out, fs)
			c.helped = true
			return nil, false
		} else if err != nil {
			c.flagMistake(fs, flagMistake(fs, err))
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

// load loads the workflow and prints its diagnostics. A workflow whose store names a file
// that is not a store is refused here too (storefile.go), before any command opens it.
func (c *cli) load(path string, overrides []workflow.Override) (*workflow.Workflow, bool) {
	w, diags := workflow.LoadWithAccess(path, c.reg, overrides, c.access)
	c.printDiags(diags)
	if w == nil || diags.HasErrors() {
		return w, false
	}
	return w, !c.notAStore(w)
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
