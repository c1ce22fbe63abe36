package workflow

import (
	"fmt"
	"sort"

	"dipline/cache"
)

// Verdict says what a run would do with one step, and why.
type Verdict struct {
	Step string // kind.label
	// State is PendingStored, PendingToCompute or PendingDepends (states.go).
	State string
	// Reasons explain a computation: the attribute with old → new value, the file whose
	// digest changed, the upstream step whose result changed or is to compute, the version
	// bump, or a stored result that cannot be used (findStored's reason, which the run repeats
	// as its warning).
	Reasons []string
}

// Pending works out, without computing anything, which steps a run would take from the
// store and which it would compute, comparing each step to compute with the last run that
// had it. It reads the store with findStored, as Run does, so a step it calls stored is one the
// run reuses, and one to compute is one the run computes.
func Pending(w *Workflow, store *cache.Store) ([]Verdict, error) {
	runs, err := store.Runs()
	if err != nil {
		return nil, err
	}
	known := map[string]cache.ResultKey{} // result keys of the steps a run would reuse
	state := map[string]string{}          // why a step's result is not known: "is to compute", …
	var out []Verdict
	for _, s := range w.Order {
		v := Verdict{Step: s.Addr}
		var waiting []string
		for _, d := range s.Deps {
			if _, ok := known[d.Addr]; !ok {
				waiting = append(waiting, d.Addr)
			}
		}
		if len(waiting) > 0 {
			// Its key needs results not known yet; its own settings, files and version can
			// still be compared with the last run.
			v.State, state[s.Addr] = PendingDepends, "depends in turn"
			prev, err := lastProvenance(s, runs, store)
			if err != nil {
				return nil, err
			}
			if prev != nil {
				v.Reasons = append(v.Reasons, ownChanges(s, prev)...)
			}
			tail := "; it is computed unless that result comes out as before"
			if len(v.Reasons) > 0 {
				tail = "" // its own changes give it a new key whatever that result is
			}
			for _, d := range waiting {
				v.Reasons = append(v.Reasons, fmt.Sprintf("it reads the result of %s, which %s%s", d, state[d], tail))
			}
			out = append(out, v)
			continue
		}
		key, err := w.StepKey(s, known)
		if err != nil {
			return nil, err
		}
		held, err := findStored(store, s.Kind, key)
		if err != nil {
			return nil, err
		}
		state[s.Addr] = "is to compute"
		switch held.Held {
		case Usable:
			v.State = PendingStored
			known[s.Addr] = held.Result
		case NotStored:
			v.State = PendingToCompute
			if v.Reasons, err = compareWithLast(s, key, known, runs, store); err != nil {
				return nil, err
			}
		default:
			v.State, v.Reasons = PendingToCompute, []string{held.Why}
		}
		out = append(out, v)
	}
	return out, nil
}

// lastProvenance returns the provenance of the newest run's line for step s, or nil when
// no run has one that reads.
func lastProvenance(s *Step, runs []cache.Run, store *cache.Store) (*Provenance, error) {
	for i := len(runs) - 1; i >= 0; i-- {
		for _, rs := range runs[i].Steps {
			if rs.Step != s.Addr || rs.StepKey.IsZero() {
				continue
			}
			p, _, err := provenanceOf(store, rs.StepKey)
			if err != nil || p != nil {
				return p, err
			}
			break
		}
	}
	return nil, nil
}

// compareWithLast explains why s's key is new by comparing it with the provenance of the
// newest run that computed or reused the same step.
func compareWithLast(s *Step, key cache.StepKey, known map[string]cache.ResultKey,
	runs []cache.Run, store *cache.Store) ([]string, error) {
	prev, err := lastProvenance(s, runs, store)
	if err != nil || prev == nil {
		return []string{"no earlier run computed this step"}, err
	}
	why := ownChanges(s, prev)
	for _, in := range prev.Inputs {
		if rk, ok := known[in.Step]; ok && rk.String() != in.ResultKey {
			why = append(why, fmt.Sprintf("the result of %s changed: %.12s… → %s…", in.Step, in.ResultKey, rk.Short()))
		}
	}
	if prev.StepKey == key.String() {
		why = append(why, "its stored result was removed (pruned)")
	}
	if len(why) == 0 {
		why = append(why, "its inputs differ from the last run's in a way not shown here (e.g. another architecture)")
	}
	return why, nil
}

// ownChanges lists what differs in s itself from an earlier provenance record: its kind or
// version, its settings, the digests of its files, the catalogue values it reads.
func ownChanges(s *Step, prev *Provenance) []string {
	return recordChanges(prev, s.record())
}

// record is the part of a provenance record that describes the step itself, as it stands
// in the loaded workflow.
func (s *Step) record() *Provenance {
	p := &Provenance{Step: s.Addr, Kind: s.Kind.Name(), Version: s.Kind.Version(), Config: s.Rendered()}
	for _, prm := range s.Kind.Params() {
		for _, f := range s.Files[prm.Name] {
			p.Files = append(p.Files, FileRecord{Param: prm.Name, Path: f.Path, SHA256: hexKey(f.Digest), Bytes: len(f.Data)})
		}
		if row := s.Rows[prm.Name]; row != nil {
			p.Rows = append(p.Rows, row.record(prm.Name))
		}
	}
	return p
}

// recordChanges lists what differs between two records of one step: kind, version,
// settings (old → new), file digests, catalogue values.
func recordChanges(prev, now *Provenance) []string {
	if prev.Kind != now.Kind {
		return []string{fmt.Sprintf("the step was a %s step before", prev.Kind)}
	}
	var why []string
	if prev.Version != now.Version {
		why = append(why, fmt.Sprintf("the %s step kind changed version: %d → %d", now.Kind, prev.Version, now.Version))
	}
	for _, n := range unionKeys(prev.Config, now.Config) {
		old, had := prev.Config[n]
		cur, has := now.Config[n]
		switch {
		case had && has && old != cur:
			why = append(why, fmt.Sprintf("%s changed: %s → %s", n, old, cur))
		case had && !has:
			why = append(why, fmt.Sprintf("%s was removed (was %s)", n, old))
		case !had && has:
			why = append(why, fmt.Sprintf("%s was added: %s", n, cur))
		}
	}
	oldFiles := map[string]string{}
	for _, f := range prev.Files {
		oldFiles[f.Param+"\x00"+f.Path] = f.SHA256
	}
	for _, f := range now.Files {
		if d, ok := oldFiles[f.Param+"\x00"+f.Path]; ok && d != f.SHA256 {
			why = append(why, fmt.Sprintf("the file %s changed: sha256 %s… → %s…", f.Path, d[:12], f.SHA256[:12]))
		}
	}
	oldRows := map[string]RowRecord{}
	for _, r := range prev.Rows {
		oldRows[r.Param] = r
	}
	for _, r := range now.Rows {
		was, ok := oldRows[r.Param]
		switch {
		case !ok:
		case was.Row != r.Row:
			why = append(why, fmt.Sprintf("%s changed: %s → %s", r.Param, was.Row, r.Row))
		default:
			why = append(why, valueChanges(r.Row, r.Path, r.Line, was.Values, r.Values)...)
		}
	}
	return why
}

func unionKeys(a, b map[string]string) []string {
	names := map[string]bool{}
	for n := range a {
		names[n] = true
	}
	for n := range b {
		names[n] = true
	}
	sorted := make([]string, 0, len(names))
	for n := range names {
		sorted = append(sorted, n)
	}
	sort.Strings(sorted)
	return sorted
}
