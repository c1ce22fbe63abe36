package workflow

import (
	"encoding/csv"
	"fmt"
	"io"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"

	"dipline/cache"
	"dipline/steps"
	"dipline/workflow/report"
)

// After a run, every finished step is asked what it shows (steps.PresentationOf, with the
// inputs its Run got); its Data are written as CSV and its Texts as they are, in a folder of
// its own under the output folder, and the page, report.html, gathers every step's section
// in the workflow's order with the appendix of how each result was made. A presentation
// that fails, or panics, or names a file badly becomes a note in its section: looking at
// results never fails a run. Only a file that cannot be written is an error.
//
// A presentation may hold every point of a long light curve several times over (its data
// and its plots), so the steps are shown one at a time: a step's files are written, each
// table let go once written, and its plots drawn (report.Section.Draw) before the next step
// is asked, and the page is streamed to its file. What is held at once is then the run's
// results, one step's presentation and the drawn pictures, however many steps there are.

// reportName is the page's file name in the output folder.
const reportName = "report.html"

// safeName is what a data file's stem, a text's name and a step's folder may be made of,
// so that nothing a presenter says can write outside its step's folder.
var safeName = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9_.-]*$`)

// writeReport writes the data, texts and page of a run; it returns the page's path.
func writeReport(w *Workflow, store *cache.Store, run cache.Run, outcomes []*Outcome) (string, error) {
	arts := map[string]steps.Artifact{}
	for _, o := range outcomes {
		if o.Finished() {
			arts[o.Step.Addr] = o.Artifact
		}
	}
	doc := report.Document{Title: w.Name, Subtitle: fmt.Sprintf("workflow %s · run %s", w.Path, run.ID)}
	for _, o := range outcomes {
		sec, err := presentStep(w, o, arts)
		if err != nil {
			return "", err
		}
		doc.Sections = append(doc.Sections, sec)
		doc.Appendix.Steps = append(doc.Appendix.Steps, making(w, store, o, outcomes))
	}
	doc.Appendix.Run, doc.Appendix.Overrides = runFacts(w, run)
	doc.Appendix.OverridesFrom = "Settings given on the command line"
	if run.SetBy != "" {
		doc.Appendix.OverridesFrom = "Settings replaced by " + run.SetBy
	}
	path := filepath.Join(w.OutputDir, reportName)
	if err := writeAtomicWith(path, func(out io.Writer) error { return report.Write(out, doc) }); err != nil {
		return "", err
	}
	return path, nil
}

// presentStep builds a step's section, writes its files and draws its plots; the section
// it returns holds none of the presentation's tables or series.
func presentStep(w *Workflow, o *Outcome, arts map[string]steps.Artifact) (report.Section, error) {
	sec, err := presentFiles(w, o, arts)
	sec.Draw()
	return sec, err
}

// presentFiles builds a step's section and writes its files, letting go of each table
// once it is written; the plots are left to draw.
func presentFiles(w *Workflow, o *Outcome, arts map[string]steps.Artifact) (report.Section, error) {
	s := o.Step
	sec := report.Section{Step: s.Addr, Kind: s.Kind.Name(), Label: s.Label, Status: o.Status,
		Finished: o.Finished(), Made: report.Anchor("made", s.Addr)}
	if !o.StepKey.IsZero() {
		sec.StepKey = o.StepKey.String()
	}
	if !o.Finished() {
		sec.Why = o.Message
		return sec, nil
	}
	for _, f := range o.Artifact.Figures() {
		sec.Figures = append(sec.Figures, report.Figure{Name: f.Name, Value: FormatValue(f.Value, f.Sigma), Unit: f.Unit, Doc: f.Doc})
	}
	sec.Cautions = steps.CautionsOf(o.Artifact)
	if j, ok := o.Artifact.(steps.Judge); ok {
		for _, v := range j.Verdicts() {
			sec.Verdicts = append(sec.Verdicts, report.Verdict(v))
		}
	}
	in := stepInputs(s, func(a string) steps.Artifact { return arts[a] })
	pres, err := presentGuarded(s, o.Artifact, in)
	if err != nil {
		sec.Notes = append(sec.Notes, fmt.Sprintf("What this step shows could not be made: %v. Its numbers above are unaffected.", err))
		return sec, nil
	}
	// The section keeps the panels alone; the data and texts are written below and need
	// not outlive their files.
	data, texts := pres.Data, pres.Texts
	sec.Presentation = steps.Presentation{Panels: pres.Panels}
	if len(data) == 0 && len(texts) == 0 {
		return sec, nil
	}
	if !safeName.MatchString(s.Addr) {
		sec.Notes = append(sec.Notes, fmt.Sprintf("The step's files were not written: %q cannot name a folder.", s.Addr))
		return sec, nil
	}
	for i := range data {
		d := data[i]
		data[i] = steps.Data{} // once written, the table is let go
		rows, why := checkData(d)
		if why != "" {
			sec.Notes = append(sec.Notes, why)
			continue
		}
		rel := s.Addr + "/" + d.Name + ".csv"
		write := func(out io.Writer) error { return writeCSV(out, d, rows) }
		if err := writeAtomicWith(filepath.Join(w.OutputDir, s.Addr, d.Name+".csv"), write); err != nil {
			return sec, fmt.Errorf("writing %s: %w", rel, err)
		}
		sec.Files = append(sec.Files, report.WrittenFile{Path: rel, What: rowsWord(rows)})
	}
	for _, t := range texts {
		if !safeName.MatchString(t.Name) {
			sec.Notes = append(sec.Notes, fmt.Sprintf("The text %q was not written: a file's name takes letters, digits, '.', '-' and '_'.", t.Name))
			continue
		}
		rel := s.Addr + "/" + t.Name
		if err := writeAtomic(filepath.Join(w.OutputDir, s.Addr, t.Name), []byte(t.Body)); err != nil {
			return sec, fmt.Errorf("writing %s: %w", rel, err)
		}
		sec.Files = append(sec.Files, report.WrittenFile{Path: rel, What: "text"})
	}
	return sec, nil
}

// presentGuarded asks a kind what it shows, turning a panic into an error.
func presentGuarded(s *Step, art steps.Artifact, in steps.Inputs) (p steps.Presentation, err error) {
	defer func() {
		if r := recover(); r != nil {
			p, err = steps.Presentation{}, fmt.Errorf("a fault in dipline (panic: %v)", r)
		}
	}()
	return steps.PresentationOf(s.Kind, s.Config, art, in)
}

// checkData returns the rows of a data table, or why it cannot be written as a CSV file:
// a name that cannot name a file, no column, or columns of unequal lengths.
func checkData(d steps.Data) (int, string) {
	if !safeName.MatchString(d.Name) {
		return 0, fmt.Sprintf("The data %q were not written: a file's name takes letters, digits, '.', '-' and '_'.", d.Name)
	}
	if len(d.Series) == 0 {
		return 0, fmt.Sprintf("The data %q were not written: they have no column.", d.Name)
	}
	rows := len(d.Series[0].Values)
	for _, s := range d.Series {
		if len(s.Values) != rows {
			return 0, fmt.Sprintf("The data %q were not written: column %q has %d values and %q has %d.",
				d.Name, d.Series[0].Name, rows, s.Name, len(s.Values))
		}
	}
	return rows, ""
}

// writeCSV writes a checked data table (checkData) as CSV, a header of the series' names
// and a row per value, each number in the fewest digits that read back to it.
func writeCSV(out io.Writer, d steps.Data, rows int) error {
	header := make([]string, len(d.Series))
	for i, s := range d.Series {
		header[i] = s.Name
	}
	cw := csv.NewWriter(out)
	cw.Write(header)
	cw.Flush()
	if err := cw.Error(); err != nil {
		return err
	}
	line := make([]byte, 0, 32*len(d.Series))
	for r := 0; r < rows; r++ {
		line = line[:0]
		for i, s := range d.Series {
			if i > 0 {
				line = append(line, ',')
			}
			line = strconv.AppendFloat(line, s.Values[r], 'g', -1, 64)
		}
		if _, err := out.Write(append(line, '\n')); err != nil {
			return err
		}
	}
	return nil
}

func rowsWord(n int) string {
	if n == 1 {
		return "1 row"
	}
	return strconv.Itoa(n) + " rows"
}

// runFacts are the run's lines of the appendix and the settings given on the command line.
func runFacts(w *Workflow, run cache.Run) ([]report.Pair, []report.Pair) {
	t := ToolInfo()
	facts := []report.Pair{
		{Name: "analysis", Value: w.Name},
		{Name: "run", Value: run.ID},
		{Name: "workflow file", Value: w.Path},
		{Name: "its SHA-256", Value: hexKey(w.Digest)},
		{Name: "workflow seed", Value: strconv.FormatUint(w.Seed, 10)},
		{Name: "dipline", Value: t.Version},
		{Name: "revision", Value: t.Revision},
		{Name: "built with", Value: t.Go + " for " + t.Arch},
	}
	var over []report.Pair
	for k, v := range run.Overrides {
		over = append(over, report.Pair{Name: k, Value: v})
	}
	sort.Slice(over, func(i, j int) bool { return over[i].Name < over[j].Name })
	return facts, over
}

// making is a step's entry in the appendix: its kind's version, keys, seed, settings, the
// results it read, the files with their digests and the catalogue rows with their values,
// and the notes its provenance keeps.
func making(w *Workflow, store *cache.Store, o *Outcome, outcomes []*Outcome) report.Making {
	s := o.Step
	m := report.Making{ID: report.Anchor("made", s.Addr), Step: s.Addr, Version: strconv.Itoa(s.Kind.Version())}
	if !o.StepKey.IsZero() {
		m.StepKey = o.StepKey.String()
	}
	if o.Finished() {
		m.ResultKey = o.ResultKey.String()
	}
	if s.Kind.Random() {
		m.Seed = strconv.FormatUint(w.StepSeed(s), 10)
	}
	cfg := s.Rendered()
	for _, k := range sortedKeys(cfg) {
		m.Settings = append(m.Settings, report.Pair{Name: k, Value: cfg[k]})
	}
	results := map[string]string{}
	for _, u := range outcomes {
		if u.Finished() {
			results[u.Step.Addr] = u.ResultKey.String()
		}
	}
	for _, p := range sortedKeys(s.Refs) {
		for _, a := range s.Refs[p] {
			m.Inputs = append(m.Inputs, report.Input{Param: p, Step: a, ResultKey: results[a]})
		}
	}
	for _, p := range sortedKeys(s.Files) {
		for _, f := range s.Files[p] {
			m.Files = append(m.Files, report.File{Param: p, Path: f.Path, SHA256: hexKey(f.Digest), Bytes: strconv.Itoa(len(f.Data))})
		}
	}
	for _, prm := range s.Kind.Params() {
		row := s.Rows[prm.Name]
		if row == nil {
			continue
		}
		rec := row.record(prm.Name)
		r := report.Row{Param: prm.Name, Row: rec.Row, Place: fmt.Sprintf("%s line %d", rec.Path, rec.Line), Overridden: rec.Overridden}
		for _, n := range sortedKeys(rec.Values) {
			v := rec.Values[n]
			if v == "" {
				v = "(blank)"
			}
			r.Values = append(r.Values, report.Pair{Name: n, Value: v})
		}
		m.Rows = append(m.Rows, r)
	}
	if o.Finished() && store != nil {
		if p, _, err := provenanceOf(store, o.StepKey); err == nil && p != nil {
			m.Notes = p.Notes
		}
	}
	return m
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
