package survey

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"

	"dipline/cache"
	"dipline/steps"
	"dipline/workflow"
)

// MergeResult says what a merge gathered.
type MergeResult struct {
	// Merged counts the shards merged and what they brought; Conflicts lists, per target,
	// the entries its shard holds with other bytes than the store (the store's are kept).
	Merged    int
	Copied    cache.MergeReport
	Conflicts map[string][]cache.Conflict
	// States are the targets' states in table order.
	States []State
	// TablePath is the survey table written; CombinedPath the table of what the targets'
	// results add up to ("" when no step's kind adds its results up), and Cautions that
	// table's cautions, for the command to print.
	TablePath, CombinedPath string
	Cautions                []string
}

// Merge gathers every target's shard into store (the workflow's own) and writes the survey
// table. A target without a shard (it never ran, or failed before storing anything) is
// passed over; its state says why. Each shard's merge takes the store's run lock
// (cache.Store.Merge), so the caller must not hold it.
func (e Env) Merge(t *Table, store *cache.Store) (MergeResult, error) {
	res := MergeResult{Conflicts: map[string][]cache.Conflict{}}
	for _, tg := range t.Targets {
		res.States = append(res.States, e.Layout.ReadState(tg.ID))
		shard := e.Layout.Shard(tg.ID)
		if _, err := os.Stat(shard); errors.Is(err, fs.ErrNotExist) {
			continue
		}
		rep, err := store.Merge(shard)
		if err != nil {
			return res, fmt.Errorf("merging the shard of target %s: %w", tg.ID, err)
		}
		res.Merged++
		res.Copied.Results += rep.Results
		res.Copied.StepKeys += rep.StepKeys
		res.Copied.Provenance += rep.Provenance
		res.Copied.Runs += rep.Runs
		if len(rep.Conflicts) > 0 {
			res.Conflicts[tg.ID] = rep.Conflicts
		}
	}
	results, err := e.readAll(t, res.States)
	if err != nil {
		return res, err
	}
	b, err := table(t, res.States, results)
	if err != nil {
		return res, err
	}
	res.TablePath = e.Layout.TablePath()
	if err := writeWhole(res.TablePath, b); err != nil {
		return res, err
	}
	comb, cautions, err := e.combined(t, results, store)
	if err != nil || comb == nil {
		return res, err
	}
	res.CombinedPath, res.Cautions = e.Layout.CombinedPath(), cautions
	return res, writeWhole(res.CombinedPath, comb)
}

// combined adds up, for every step whose kind can (steps.Combiner: a completeness map's
// occurrence, say), the results of the targets where that step finished, read from store,
// and returns them as CSV — step, figure, value, the distances down and up to its interval's
// ends, unit, meaning; a caution is a row whose figure is "caution" — with the cautions
// apart. A step whose results do not add up (maps that do not line up) gives a caution
// row saying why. nil when no step adds anything up. Rows follow the steps in the order first
// met and each kind's own order, so the same targets give the same bytes.
func (e Env) combined(t *Table, results []*workflow.ResultsFile, store *cache.Store) ([]byte, []string, error) {
	type group struct {
		kind steps.Kind
		ids  []string
		arts []steps.Artifact
	}
	groups := map[string]*group{}
	var order []string
	for i, tg := range t.Targets {
		for _, s := range results[i].Steps {
			k := e.Registry[s.Kind]
			if k == nil || (s.Status != workflow.StatusComputed && s.Status != workflow.StatusReused) {
				continue
			}
			if _, ok := k.(steps.Combiner); !ok {
				continue
			}
			art, err := storedArtifact(store, k, s.ResultKey)
			if err != nil {
				return nil, nil, fmt.Errorf("target %s, %s: %w", tg.ID, s.Step, err)
			}
			g := groups[s.Step]
			if g == nil {
				g = &group{kind: k}
				groups[s.Step] = g
				order = append(order, s.Step)
			}
			g.ids, g.arts = append(g.ids, tg.ID), append(g.arts, art)
		}
	}
	var rows [][]string
	var cautions []string
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	for _, step := range order {
		g := groups[step]
		c, err := g.kind.(steps.Combiner).Combine(g.ids, g.arts)
		if err != nil {
			c.Cautions = append(c.Cautions, err.Error())
		}
		for _, f := range c.Figures {
			row := []string{step, f.Name, "", "", "", f.Unit, f.Doc}
			if f.Defined() {
				row[2] = num(f.Value)
				if f.Asymmetric() {
					row[3], row[4] = num(f.Lower), num(f.Upper)
				} else if f.Sigma > 0 {
					row[3], row[4] = num(f.Sigma), num(f.Sigma)
				}
			} else {
				row[6] = f.NotGiven()
			}
			rows = append(rows, row)
		}
		for _, s := range c.Cautions {
			rows = append(rows, []string{step, "caution", "", "", "", "", s})
			cautions = append(cautions, step+": "+s)
		}
	}
	if len(rows) == 0 {
		return nil, nil, nil
	}
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write([]string{"step", "figure", "value", "minus", "plus", "unit", "meaning"})
	w.WriteAll(rows)
	return buf.Bytes(), cautions, w.Error()
}

// storedArtifact reads and decodes the result stored under a result key in hex.
func storedArtifact(store *cache.Store, k steps.Kind, key string) (steps.Artifact, error) {
	rk, err := cache.ParseResultKey(key)
	if err != nil {
		return nil, err
	}
	b, err := store.Get(rk)
	if err != nil {
		return nil, err
	}
	return k.Decode(b)
}

// readAll reads every target's results file, in table order (readResults).
func (e Env) readAll(t *Table, states []State) ([]*workflow.ResultsFile, error) {
	results := make([]*workflow.ResultsFile, len(t.Targets))
	for i, tg := range t.Targets {
		rf, err := e.readResults(tg.ID, states[i])
		if err != nil {
			return nil, err
		}
		results[i] = rf
	}
	return results, nil
}

// table writes the survey table as CSV: per target its id, status and message, then per
// step of its results its status and step key, then every figure (value, and its σ where
// it has one) under "step/figure" — the columns in the order first met, targets in table
// order. It holds no times or run ids, so the same targets give the same bytes wherever
// they ran.
func table(t *Table, states []State, results []*workflow.ResultsFile) ([]byte, error) {
	var cols []string
	seen := map[string]bool{}
	add := func(c string) {
		if !seen[c] {
			seen[c] = true
			cols = append(cols, c)
		}
	}
	for _, rf := range results {
		for _, s := range rf.Steps {
			add(s.Step + " status")
			add(s.Step + " step_key")
			for _, f := range s.Figures {
				add(s.Step + "/" + f.Name)
				if f.Sigma != nil {
					add(s.Step + "/" + f.Name + " sigma")
				}
			}
		}
	}
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(append([]string{"id", "status", "message"}, cols...))
	for i, tg := range t.Targets {
		w.Write(append([]string{tg.ID, states[i].Status, states[i].Message}, cells(results[i], cols)...))
	}
	w.Flush()
	return buf.Bytes(), w.Error()
}

// readResults reads a finished or failed target's results file; an empty one for a target
// that has none (it never ran, or did not load).
func (e Env) readResults(id string, st State) (*workflow.ResultsFile, error) {
	rf := &workflow.ResultsFile{}
	if st.Status != StateDone && st.Status != StateFailed {
		return rf, nil
	}
	b, err := os.ReadFile(filepath.Join(e.Layout.TargetDir(id), "results.json"))
	if errors.Is(err, fs.ErrNotExist) {
		return rf, nil
	}
	if err == nil {
		err = json.Unmarshal(b, rf)
	}
	if err != nil {
		return nil, fmt.Errorf("target %s: its results file does not read: %w", id, err)
	}
	return rf, nil
}

// cells gives one target's values in the table's columns ("" where it has none).
func cells(rf *workflow.ResultsFile, cols []string) []string {
	vals := map[string]string{}
	num := func(v *float64) string { return strconv.FormatFloat(*v, 'g', -1, 64) }
	for _, s := range rf.Steps {
		vals[s.Step+" status"] = s.Status
		vals[s.Step+" step_key"] = s.StepKey
		for _, f := range s.Figures {
			if f.Value != nil {
				vals[s.Step+"/"+f.Name] = num(f.Value)
			}
			if f.Sigma != nil {
				vals[s.Step+"/"+f.Name+" sigma"] = num(f.Sigma)
			}
		}
	}
	out := make([]string, len(cols))
	for i, c := range cols {
		out[i] = vals[c]
	}
	return out
}

// writeWhole writes a file whole or not at all (a temporary file renamed into place).
func writeWhole(path string, b []byte) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), ".tmp-*")
	if err != nil {
		return err
	}
	_, werr := tmp.Write(b)
	if cerr := tmp.Close(); werr == nil {
		werr = cerr
	}
	if werr == nil {
		werr = os.Chmod(tmp.Name(), 0o644)
	}
	if werr == nil {
		werr = os.Rename(tmp.Name(), path)
	}
	if werr != nil {
		os.Remove(tmp.Name())
	}
	return werr
}
