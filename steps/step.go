// Package steps defines the contract between the workflow engine and the step kinds.
//
// A step kind declares its parameters (a schema the engine decodes a block against), turns
// the decoded values into its own configuration, and runs as a pure function of that
// configuration, the artifacts of the steps it references and the bytes of the files it
// names. The engine hashes exactly those inputs into the step key, so nothing else may
// influence a result: no clock, no environment, no map order, no worker count.
//
// This package knows no HCL and no astronomy. Kinds live one per folder below it; the list
// the command line uses is in steps/kinds.
package steps

import (
	"context"
	"errors"
	"fmt"
	"strings"
)

// Kind is one step kind as the engine sees it: the block type of the workflow language and
// the code behind it. A kind is written against its own configuration struct and turned
// into a Kind by Define; nothing else needs to learn about it.
type Kind interface {
	// Name is the block type in a workflow file, e.g. "detrend".
	Name() string
	// Version is bumped whenever the kind's numerical behaviour or its encoding changes.
	Version() int
	// Doc is one sentence shown by `dipline kinds`.
	Doc() string
	// Random reports whether Run draws random numbers; only such kinds receive a seed,
	// and only their keys include it.
	Random() bool
	// Schema is the block's attributes, read from the configuration struct's tags.
	Schema() *Schema
	// Params is Schema().Params().
	Params() []Param
	// Check checks a decoded configuration (a pointer to the kind's configuration struct,
	// from Schema().New and Set) as a whole and completes it. An *AttrError points the user
	// at the attribute at fault.
	Check(cfg any) error
	// Run computes the artifact. It must be a pure function of its arguments.
	Run(ctx context.Context, cfg any, in Inputs, env Env) (Artifact, error)
	// Decode reads an artifact back from its canonical encoding.
	Decode(b []byte) (Artifact, error)
}

// Artifact is a step's result: science only (no keys, paths, labels or times), with a
// canonical encoding so that equal science gives equal bytes.
type Artifact interface {
	// Encode returns the canonical, versioned encoding.
	Encode() []byte
	// Figures lists the numbers that go into the results file and the run summary.
	Figures() []Figure
}

// Inspector is implemented by kinds that read files and can look at them without running:
// `dipline check` calls Inspect with the same configuration, files and catalogue rows Run
// would get (no references, no seed), so that what a run would refuse in the data is
// caught before anything runs. Errors are the user's (file and row, as Run gives them).
// A kind written against its configuration C gives `Inspect(*C, Inputs) error`.
type Inspector interface {
	Inspect(cfg any, in Inputs) error
}

// Cautioner is implemented by artifacts whose numbers need a word of caution: a period
// that may be an alias, a signal carried by one event, a star that disagrees with the
// transit. Each caution is one plain sentence, derived from the artifact's own science (so
// it is the same whether the step was computed or reused). The results file lists them
// beside the step's figures and the run summary prints them.
type Cautioner interface {
	Cautions() []string
}

// CautionsOf returns a's cautions, or nil when it has none or gives none.
func CautionsOf(a Artifact) []string {
	if c, ok := a.(Cautioner); ok {
		return c.Cautions()
	}
	return nil
}

// Combiner is implemented by kinds whose results over a survey's targets add up to figures
// of the survey as a whole: an occurrence rate from every target's completeness map, say.
// The survey merge calls Combine once per step of the workflow, with the targets' ids and
// artifacts of that step (those that finished), in table order. An error says why the
// results cannot be added up (maps that do not line up); the merge reports it and writes
// the rest.
type Combiner interface {
	Combine(ids []string, arts []Artifact) (Combined, error)
}

// Combined is what a survey's results add up to: figures, and the cautions they carry.
type Combined struct {
	Figures  []Figure
	Cautions []string
}

// The three verdicts a test can give, in plain words of our own.
const (
	VerdictAgree    = "agree"    // the data agree with the tested hypothesis (e.g. a planet)
	VerdictCaution  = "caution"  // something is worth a look, not a failure on its own
	VerdictDisagree = "disagree" // the data disagree with the tested hypothesis
	// VerdictNotRun is not a judgement: the test could not run (no fit, no star, too few
	// points), and its Reason says why.
	VerdictNotRun = "not run"
)

// Verdict is one test's judgement of one subject (a signal, a planet) of an artifact.
type Verdict struct {
	// Subject is what was tested, as in the figure names ("signal1").
	Subject string
	// Test names the test in a word or two of snake case ("odd_even").
	Test string
	// Verdict is VerdictAgree, VerdictCaution, VerdictDisagree or VerdictNotRun.
	Verdict string
	// Threshold says what the verdict was measured against and where that comes from
	// ("3 σ; common practice").
	Threshold string
	// Reason is one plain line saying why.
	Reason string
}

// Judge is implemented by artifacts that judge their subjects (a vet step's). The results
// file lists the verdicts beside the step's figures, and the run summary counts them.
type Judge interface {
	Verdicts() []Verdict
}

// FigureKey turns a label (a host star's name, a segment id, a band) into a part of a
// figure's name: lower-case letters and digits kept, everything else "_".
func FigureKey(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
		} else {
			b.WriteByte('_')
		}
	}
	return b.String()
}

// Figure is one reported number with its uncertainty and unit.
type Figure struct {
	// Name is a dotted path unique within the artifact, e.g. "signal1.period".
	Name string
	// Value is the number itself.
	Value float64
	// Sigma is its one-sigma uncertainty, or 0 when it has none.
	Sigma float64
	// MCError is the Monte Carlo standard error of Value when Value is estimated from
	// random draws (a posterior median, say), or 0 when Value is exact given the inputs.
	// Two runs with different seeds differ by about √2 × MCError.
	MCError float64
	// Lower and Upper are the distances from Value down to the lower end and up to the upper
	// end of its interval, for a number summarised from draws whose spread may be lopsided:
	// the 16th and 84th percentiles unless Doc names other ones. Both are positive (or zero
	// at a bound); both are 0 when not known, and then Sigma stands for either side.
	Lower, Upper float64
	// Unit is the unit of Value, Sigma, Lower and Upper ("d", "ppm", "" for dimensionless).
	Unit string
	// Doc says in a few words what the number is.
	Doc string
	// Reason says why Value is undefined (NaN or ±Inf), as a clause that reads after
	// "<name> is not given: ", e.g. "the companion's radius is not known". It is used only
	// when Value is undefined; empty, the results file and the run summary say the number
	// could not be computed from these data. An undefined figure is never written as a
	// number (Defined).
	Reason string
}

// Defined reports whether the figure has a value: not NaN and not ±Inf.
func (f Figure) Defined() bool { return f.Value-f.Value == 0 }

// defaultReason is why a figure is undefined when its kind does not say.
const defaultReason = "it could not be computed from these data"

// NotGiven says, for an undefined figure, that it is left out and why: "<name> is not
// given: <reason>". The reason is the figure's own, or defaultReason.
func (f Figure) NotGiven() string {
	r := strings.TrimSuffix(strings.TrimSpace(f.Reason), ".")
	if r == "" {
		r = defaultReason
	}
	return f.Name + " is not given: " + r
}

// Asymmetric reports whether the figure states its interval side by side (Lower and Upper,
// both finite, not both zero).
func (f Figure) Asymmetric() bool {
	return f.Lower-f.Lower == 0 && f.Upper-f.Upper == 0 && (f.Lower != 0 || f.Upper != 0)
}

// File is the content of one file a step reads. The engine reads it once, hashes the same
// bytes it hands over, and gives the name only for messages: steps never open paths.
type File struct {
	// Name is the path as written in the workflow, for messages.
	Name string
	// Data is the file's content.
	Data []byte
}

// Inputs are the resolved references, files and catalogue rows of one step, by parameter
// name.
type Inputs struct {
	Refs  map[string][]Artifact
	Files map[string][]File
	Rows  map[string]Row
	// Settings holds, for each settings parameter (SettingsRef), the named step's checked
	// configuration: a pointer to its kind's configuration struct.
	Settings map[string]any
}

// Row is the part of one catalogue row a step reads: the parsed values of the columns its
// configuration asked for (see ColumnReader), and nothing else, so that only those values
// enter the step's key.
type Row struct {
	// File is the catalogue's path as written and Line the row's line in it (1-based),
	// for messages; ID is the row's id.
	File string
	Line int
	ID   string
	// Values holds the asked-for columns by the name the step asked with. A blank cell is
	// absent; a column the catalogue lacks is absent too (the engine has already refused a
	// missing required column).
	Values map[string]float64
	// Columns maps each asked-for name to the catalogue's own column name, for messages.
	Columns map[string]string
	// Set names the values given on the command line (--set) instead of the file's.
	Set map[string]bool
}

// Get returns the named value and whether the row has it.
func (r Row) Get(name string) (float64, bool) {
	v, ok := r.Values[name]
	return v, ok
}

// Where names the row (and a column, when given) for messages: "stars.csv:4 (FW-3318), column plx".
func (r Row) Where(name string) string {
	s := fmt.Sprintf("%s:%d (%s)", r.File, r.Line, r.ID)
	if c, ok := r.Columns[name]; ok {
		s += ", column " + c
	}
	if r.Set[name] {
		s += ", as given with --set"
	}
	return s
}

// ColumnReader is implemented by the configuration (a pointer to the struct, after Check) of
// a kind with CatalogueRow parameters: for one such parameter it lists the columns the step
// reads, by the names the step uses. The engine matches them to the catalogue's columns
// without regard to case (after the catalogue block's renames), refuses a missing required
// column, and keys the step by the parsed values of exactly these columns.
type ColumnReader interface {
	Columns(param string) (required, optional []string)
}

// Ref returns the single artifact referenced by the named parameter, or nil.
func (in Inputs) Ref(name string) Artifact {
	if r := in.Refs[name]; len(r) > 0 {
		return r[0]
	}
	return nil
}

// Env is what the engine lends a running step.
type Env struct {
	// Seed is the step's own seed, derived from the workflow seed and the step's name.
	// It is zero for kinds that do not declare randomness.
	Seed uint64
	// Pool holds the worker tokens shared by all running steps and their numerical cores.
	Pool *Pool
	// Notef records a derived default or other fact worth telling the user; the engine
	// prints it and keeps it in the step's provenance record.
	Notef func(format string, args ...any)
	// Progress reports done out of total units of work; it may be nil.
	Progress func(done, total int)
	// Parts keeps finished pieces of the step's work between runs; it may be nil (a
	// recomputation for a referee, a test): then every piece is computed.
	Parts Parts
}

// Parts keeps the finished pieces of a step whose result is made of many independent ones
// (an injection–recovery's injections), so that a run asking for more pieces, or a run
// stopped half-way and started again, computes only the pieces it lacks. The engine keys
// each piece by everything the step's result depends on except the attributes tagged
// reuse:"parts" (those that only choose which pieces are made, such as a grid's extent),
// together with the key the kind gives, which must name the piece completely (its
// parameters, written exactly). A piece must be the same bytes whether it was stored or
// computed, so the result does not depend on what was found.
type Parts interface {
	// Get returns the piece stored under key, if any.
	Get(key []byte) ([]byte, bool)
	// Put stores a finished piece under key. A piece that cannot be stored is only a head
	// start lost; the engine notes it.
	Put(key, piece []byte)
}

// Note calls Notef when it is set.
func (e Env) Note(format string, args ...any) {
	if e.Notef != nil {
		e.Notef(format, args...)
	}
}

// AttrError is a configuration mistake in one attribute of a block.
type AttrError struct {
	Attr string
	Msg  string
}

func (e *AttrError) Error() string { return fmt.Sprintf("%s: %s", e.Attr, e.Msg) }

// Attrf builds an *AttrError.
func Attrf(attr, format string, args ...any) error {
	return &AttrError{Attr: attr, Msg: fmt.Sprintf(format, args...)}
}

// InputError marks a problem with the user's data (a bad row, a truncated file) as opposed
// to a fault of the program; the command line exits with status 2 on it.
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

// BadInput wraps err as an *InputError.
func BadInput(err error) error {
	if err == nil {
		return nil
	}
	return &InputError{Err: err}
}

// BadInputf formats an *InputError, conventionally "file:row: what is wrong".
func BadInputf(format string, args ...any) error {
	return &InputError{Err: fmt.Errorf(format, args...)}
}

// IsInputError reports whether err is or wraps an *InputError.
func IsInputError(err error) bool {
	var ie *InputError
	return errors.As(err, &ie)
}

// NothingToWorkOn is the error of a step that ran and found nothing to work on (a fit handed
// a search that found no signal). It is no failure: the engine records the step as skipped
// with the reason, skips the steps that read it with the same cause, and the run's exit
// status does not count it.
type NothingToWorkOn struct{ Why string }

func (e *NothingToWorkOn) Error() string { return e.Why }

// Nothing formats a *NothingToWorkOn.
func Nothing(format string, args ...any) error {
	return &NothingToWorkOn{Why: fmt.Sprintf(format, args...)}
}

// IsNothing reports whether err is, or wraps, a *NothingToWorkOn.
func IsNothing(err error) bool {
	var n *NothingToWorkOn
	return errors.As(err, &n)
}

// Decoded adapts a kind's typed decoder to Kind.Decode: on an error it returns a nil
// Artifact, never a typed nil pointer inside a non-nil interface. Use it as
// `return steps.Decoded(Decode(b))`.
func Decoded[T Artifact](a T, err error) (Artifact, error) {
	if err != nil {
		return nil, err
	}
	return a, nil
}
