package workflow

import (
	"bufio"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"sort"
	"strings"
	"sync"
	"time"

	"dipline/cache"
	"dipline/steps"
)

// Provenance is stored beside each computed result, under its step key: everything that
// went into the result and what made it. Artifacts never hold any of this.
//
// The step is named under "step"; records made before store format 2 named it under
// "address", and read the same (UnmarshalJSON).
type Provenance struct {
	Step      string            `json:"step"` // kind.label
	Kind      string            `json:"kind"`
	Version   int               `json:"version"`
	StepKey   string            `json:"step_key"`
	ResultKey string            `json:"result_key"`
	Config    map[string]string `json:"config"`
	Inputs    []InputRecord     `json:"inputs,omitempty"`
	Files     []FileRecord      `json:"files,omitempty"`
	Rows      []RowRecord       `json:"catalogue_rows,omitempty"`
	Seed      *uint64           `json:"seed,omitempty"`
	Notes     []string          `json:"notes,omitempty"`
	Tool      Tool              `json:"tool"`
	Started   time.Time         `json:"started"`
	Seconds   float64           `json:"seconds"`
}

// UnmarshalJSON reads a provenance record of either store format (see Provenance).
func (p *Provenance) UnmarshalJSON(b []byte) error {
	type record Provenance // the same fields without this method
	return cache.UnmarshalFormerStep(b, (*record)(p), &p.Step)
}

// CheckProvenance says whether a stored provenance record reads: JSON of a Provenance that
// names the step key it is stored under. Verify lists the records that do not, and a
// salvage drops them.
func CheckProvenance(k cache.StepKey, rec []byte) error {
	var p Provenance
	if err := json.Unmarshal(rec, &p); err != nil {
		return fmt.Errorf("not a provenance record (%v)", err)
	}
	switch {
	case p.StepKey == "":
		return errors.New("it names no step key")
	case p.StepKey != k.String():
		return fmt.Errorf("it names another step key, %.12s…", p.StepKey)
	}
	return nil
}

// BadProvenance reads the store's provenance records one at a time and returns those that
// do not read, each with what is wrong.
func BadProvenance(store *cache.Store) ([]cache.BadRecord, error) {
	var bad []cache.BadRecord
	err := store.EachProvenance(func(k cache.StepKey, rec []byte) {
		if err := CheckProvenance(k, rec); err != nil {
			bad = append(bad, cache.ProvenanceProblem(k, rec, err))
		}
	})
	return bad, err
}

// InputRecord is one referenced step's keys at the time of computation.
type InputRecord struct {
	Param     string `json:"param"`
	Step      string `json:"step"` // kind.label; "address" in store format 1
	StepKey   string `json:"step_key"`
	ResultKey string `json:"result_key"`
}

// UnmarshalJSON reads an input record of either store format (see Provenance).
func (in *InputRecord) UnmarshalJSON(b []byte) error {
	type record InputRecord // the same fields without this method
	return cache.UnmarshalFormerStep(b, (*record)(in), &in.Step)
}

// FileRecord is one file read, by the path written in the workflow and its SHA-256.
type FileRecord struct {
	Param  string `json:"param"`
	Path   string `json:"path"`
	SHA256 string `json:"sha256"`
	Bytes  int    `json:"bytes"`
}

// Tool names the program that computed a result.
type Tool struct {
	Version  string `json:"version"`
	Revision string `json:"revision"`
	Go       string `json:"go"`
	Arch     string `json:"arch"`
}

// Version is this release of dipline; a build may set it with
// -ldflags "-X dipline/workflow.Version=…". The module version from the build information
// takes its place when the binary was installed as a module.
var Version = "0.1.0-dev"

var toolOnce = sync.OnceValue(func() Tool {
	t := Tool{Version: Version, Revision: "unknown (built without version-control data)",
		Go: runtime.Version(), Arch: runtime.GOOS + "/" + runtime.GOARCH}
	if bi, ok := debug.ReadBuildInfo(); ok {
		if v := bi.Main.Version; v != "" && v != "(devel)" {
			t.Version = v
		}
		modified := false
		for _, s := range bi.Settings {
			switch s.Key {
			case "vcs.revision":
				t.Revision = s.Value
			case "vcs.modified":
				modified = s.Value == "true"
			}
		}
		if modified {
			t.Revision += " (with uncommitted changes)"
		}
	}
	return t
})

// ToolInfo describes this build of dipline.
func ToolInfo() Tool { return toolOnce() }

// ResultsFile is the documented results file a run writes to the output folder: every
// step's status, every finished step's numbers with the step key they came from, its
// cautions and verdicts, and each step that failed or did not run with the reason. See
// DEVELOPERS.md, "Provenance, runs and the results file".
type ResultsFile struct {
	Schema   string `json:"schema"`
	Analysis string `json:"analysis"`
	Workflow string `json:"workflow"`
	Run      string `json:"run"`
	// Overrides lists a what-if run's command-line settings as written after --set
	// ("fit.planets.max_steps=2500"), sorted; WhatIf says in a sentence that the results
	// are those of a what-if run with these settings replaced. Both are absent for a run of
	// the workflow file as it stands.
	Overrides []string `json:"overrides,omitempty"`
	WhatIf    string   `json:"what_if,omitempty"`
	// Statuses counts the steps by status (StatusComputed, StatusReused, StatusFailed,
	// StatusSkipped: states.go).
	Statuses map[string]int `json:"statuses"`
	// Failures lists the steps that failed or did not run, in the workflow's order;
	// empty when every step finished.
	Failures []FailureEntry `json:"failures"`
	Steps    []StepResults  `json:"steps"`
}

// FailureEntry is one step that failed or did not run.
type FailureEntry struct {
	Step   string `json:"step"`
	Kind   string `json:"kind"`
	Status string `json:"status"`
	// Cause is CauseInput, CauseProgram, CauseUpstream, CauseStopped or CauseNothing.
	Cause   string `json:"cause"`
	Message string `json:"message"`
	// Place is the line of the workflow file holding a setting the step refused when it
	// ran (cause input); absent otherwise.
	Place *Place `json:"place,omitempty"`
}

// StepResults is one step's line: its status and, when it finished, its numbers.
type StepResults struct {
	Step      string `json:"step"`
	Kind      string `json:"kind"`
	Status    string `json:"status"`
	StepKey   string `json:"step_key,omitempty"`
	ResultKey string `json:"result_key,omitempty"`
	// Cause and Message say why a step failed or did not run; Place where the setting it
	// refused is written, as in FailureEntry.
	Cause   string `json:"cause,omitempty"`
	Message string `json:"message,omitempty"`
	Place   *Place `json:"place,omitempty"`
	// Warning says why a stored result could not be used, for a step computed again.
	Warning string `json:"warning,omitempty"`
	// Notes says of each figure whose value is undefined that it is left out, and why
	// ("b.on_c.radius_earth is not given: …"); absent when every figure has a value.
	Notes    []string       `json:"notes,omitempty"`
	Cautions []string       `json:"cautions,omitempty"`
	Verdicts []VerdictEntry `json:"verdicts,omitempty"`
	Figures  []FigureEntry  `json:"figures"`
}

// VerdictEntry is one test's judgement of one subject (steps.Verdict).
type VerdictEntry struct {
	Subject   string `json:"subject"`
	Test      string `json:"test"`
	Verdict   string `json:"verdict"`
	Threshold string `json:"threshold"`
	Reason    string `json:"reason"`
}

// FigureEntry is one number with the step key beside it. A figure whose value is undefined
// has no entry: its step's notes say why (steps.Figure.NotGiven).
type FigureEntry struct {
	Name string `json:"name"`
	// Value is never null (an undefined figure is left out); a pointer as in schema 3.
	Value *float64 `json:"value"`
	Sigma *float64 `json:"sigma,omitempty"`
	// Lower and Upper are the distances from value down to the lower and up to the upper
	// end of its interval (the 16th and 84th percentiles unless the doc names others), for
	// a number summarised from draws; absent when the kind gives only sigma.
	Lower   *float64 `json:"err_lower,omitempty"`
	Upper   *float64 `json:"err_upper,omitempty"`
	MCError *float64 `json:"mc_error,omitempty"` // Monte Carlo standard error of value
	Unit    string   `json:"unit,omitempty"`
	Doc     string   `json:"doc,omitempty"`
	StepKey string   `json:"step_key"`
}

// resultsSchema names the results file's format. Version 3 added a failure's "place" and
// a recomputed step's "warning", and the status words are those of states.go. Version 4
// added a figure's "err_lower" and "err_upper", a step's "notes" (an undefined figure is
// left out and named there, where version 3 wrote its value as null), and a what-if run's
// "overrides" and "what_if".
const resultsSchema = "dipline-results/4"

// resultsOf builds the results file of a run from its outcomes, in the workflow's order.
func resultsOf(w *Workflow, runID string, outcomes []*Outcome) ResultsFile {
	rf := ResultsFile{Schema: resultsSchema, Analysis: w.Name, Workflow: w.Path, Run: runID,
		Statuses: map[string]int{StatusComputed: 0, StatusReused: 0, StatusFailed: 0, StatusSkipped: 0},
		Failures: []FailureEntry{}, Steps: []StepResults{}}
	rf.Overrides, rf.WhatIf = WhatIf(overrideMap(w.Overrides), w.SetBy)
	for _, o := range outcomes {
		rf.Statuses[o.Status]++
		sr := StepResults{Step: o.Step.Addr, Kind: o.Step.Kind.Name(), Status: o.Status, Warning: o.Warning, Figures: []FigureEntry{}}
		if !o.StepKey.IsZero() {
			sr.StepKey = o.StepKey.String()
		}
		if !o.Finished() {
			sr.Cause, sr.Message, sr.Place = o.Cause, o.Message, o.Place
			rf.Failures = append(rf.Failures, FailureEntry{Step: sr.Step, Kind: sr.Kind, Status: o.Status,
				Cause: o.Cause, Message: o.Message, Place: o.Place})
			rf.Steps = append(rf.Steps, sr)
			continue
		}
		sr.ResultKey = o.ResultKey.String()
		sr.Cautions = steps.CautionsOf(o.Artifact)
		if j, ok := o.Artifact.(steps.Judge); ok {
			for _, v := range j.Verdicts() {
				sr.Verdicts = append(sr.Verdicts, VerdictEntry(v))
			}
		}
		sr.Figures, sr.Notes = figureEntries(o.Artifact.Figures(), sr.StepKey)
		rf.Steps = append(rf.Steps, sr)
	}
	return rf
}

// figureEntries writes the figures that have a value, and says of each of the others that
// it is not given and why.
func figureEntries(figs []steps.Figure, stepKey string) ([]FigureEntry, []string) {
	out := make([]FigureEntry, 0, len(figs))
	var notes []string
	for _, f := range figs {
		if !f.Defined() { // JSON has no NaN, and a paper no use for one
			notes = append(notes, f.NotGiven())
			continue
		}
		v := f.Value
		e := FigureEntry{Name: f.Name, Value: &v, Unit: f.Unit, Doc: f.Doc, StepKey: stepKey}
		if f.Sigma != 0 && finite(f.Sigma) {
			s := f.Sigma
			e.Sigma = &s
		}
		if f.Asymmetric() {
			lo, hi := f.Lower, f.Upper
			e.Lower, e.Upper = &lo, &hi
		}
		if f.MCError != 0 && finite(f.MCError) {
			m := f.MCError
			e.MCError = &m
		}
		out = append(out, e)
	}
	return out, notes
}

// overrideMap is a run's command-line settings by name, as its run record holds them
// (startRecord).
func overrideMap(list []Override) map[string]string {
	if len(list) == 0 {
		return nil
	}
	m := map[string]string{}
	for _, o := range list {
		m[o.Addr+"."+o.Attr] = o.Value
	}
	return m
}

// WhatIf turns a run's replaced settings (cache.Run.Overrides: name → value as written)
// into the lines the results file lists ("fit.planets.max_steps=2500", sorted by name) and
// one plain sentence saying the results are a what-if run with them replaced on the command
// line, or, when setBy names a survey target's row, one target's results; nil and "" when
// there are none. The results file and the run summary both use it.
func WhatIf(overrides map[string]string, setBy string) (settings []string, sentence string) {
	if len(overrides) == 0 {
		return nil, ""
	}
	names := make([]string, 0, len(overrides))
	for n := range overrides {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		settings = append(settings, n+"="+overrides[n])
	}
	what := "this setting"
	if len(settings) > 1 {
		what = fmt.Sprintf("these %d settings", len(settings))
	}
	if setBy != "" {
		return settings, fmt.Sprintf("These results are one survey target's: the workflow file was run with %s replaced by %s (%s); the workflow file alone gives other results.",
			what, setBy, strings.Join(settings, ", "))
	}
	sentence = fmt.Sprintf("These results are from a what-if run: the workflow file was run with %s replaced on the command line (--set %s); the workflow file alone may give other results.",
		what, strings.Join(settings, ", --set "))
	return settings, sentence
}

func finite(f float64) bool { return f-f == 0 }

// resultsMode is the mode of the files a run writes: results are for sharing, readable by
// all like any file a user writes (a temporary file is created 0600).
const resultsMode = 0o644

// writeAtomic writes data to path through a temporary file and a rename, so a reader
// never sees half a file.
func writeAtomic(path string, data []byte) error {
	return writeAtomicWith(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// writeAtomicWith is writeAtomic for a file that write streams out (through a buffer), so
// that a large one is never held whole in memory.
func writeAtomicWith(path string, write func(io.Writer) error) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*")
	if err != nil {
		return err
	}
	err = tmp.Chmod(resultsMode)
	if err == nil {
		buf := bufio.NewWriterSize(tmp, 1<<16)
		if err = write(buf); err == nil {
			err = buf.Flush()
		}
	}
	if err == nil {
		err = tmp.Sync()
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		os.Remove(tmp.Name())
		return err
	}
	return os.Rename(tmp.Name(), path)
}

func marshal(v any) []byte {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		panic(err) // only our own plain structs are marshalled here
	}
	return append(b, '\n')
}

func hexKey(k [32]byte) string { return hex.EncodeToString(k[:]) }
