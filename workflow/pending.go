package workflow

import (
	"encoding/json"
	"errors"
	"fmt"
	"sort"

	"dipline/cache"
)

// Verdict says what a run would do with one step, and why.
type Verdict struct {
	Address string
	// Reuse is true when the step's key is known and its stored result checks out.
	Reuse bool
	// Reasons explain a recomputation: the attribute with old → new value, the file whose
	// digest changed, the upstream step whose result changed or will be recomputed, the
	// version bump, or a stored result that is missing or damaged.
	Reasons []string
}

// Pending works out, without computing anything, which steps a run would reuse and which it
// would recompute, comparing each recomputed step with the last run that computed it.
func Pending(w *Workflow, store *cache.Store) ([]Verdict, error) {
	runs, err := store.Runs()
	if err != nil {
		return nil, err
	}
	known := map[string]cache.ResultKey{} // result keys of steps that would be reused
	var out []Verdict
	for _, s := range w.Order {
		v := Verdict{Address: s.Addr}
		var waiting []string
		for _, d := range s.Deps {
			if _, ok := known[d.Addr]; !ok {
				waiting = append(waiting, d.Addr)
			}
		}
		if len(waiting) > 0 {
			// Its own settings, files and version can still be compared with the last run.
			if prev := lastProvenance(s, runs, store); prev != nil {
				v.Reasons = append(v.Reasons, ownChanges(s, prev)...)
			}
			for _, d := range waiting {
				v.Reasons = append(v.Reasons, fmt.Sprintf("takes the result of %s, which will be recomputed; whether it changes is known only then", d))
			}
			out = append(out, v)
			continue
		}
		key, err := w.StepKey(s, known)
		if err != nil {
			return nil, err
		}
		rk, ok, err := store.Lookup(key)
		if err != nil {
			return nil, err
		}
		if ok {
			if _, err := store.Get(rk); err == nil {
				v.Reuse = true
				known[s.Addr] = rk
				out = append(out, v)
				continue
			} else if errors.Is(err, cache.ErrCorrupt) {
				v.Reasons = append(v.Reasons, "its stored result fails its checksum")
			} else if errors.Is(err, cache.ErrMissing) {
				v.Reasons = append(v.Reasons, "its stored result is missing")
			} else {
				return nil, err
			}
		}
		if len(v.Reasons) == 0 {
			v.Reasons = compareWithLast(s, key, known, runs, store)
		}
		out = append(out, v)
	}
	return out, nil
}

// lastProvenance returns the provenance of the newest run's entry for s's address, or nil.
func lastProvenance(s *Step, runs []cache.Run, store *cache.Store) *Provenance {
	for i := len(runs) - 1; i >= 0; i-- {
		for _, rs := range runs[i].Steps {
			if rs.Address != s.Addr || rs.StepKey.IsZero() {
				continue
			}
			if b, ok, err := store.Provenance(rs.StepKey); err == nil && ok {
				var p Provenance
				if json.Unmarshal(b, &p) == nil {
					return &p
				}
			}
			break
		}
	}
	return nil
}

// compareWithLast explains why s's key is new by comparing it with the provenance of the
// newest run that computed or reused the same address.
func compareWithLast(s *Step, key cache.StepKey, known map[string]cache.ResultKey,
	runs []cache.Run, store *cache.Store) []string {
	prev := lastProvenance(s, runs, store)
	if prev == nil {
		return []string{"no earlier run computed this step"}
	}
	why := ownChanges(s, prev)
	for _, in := range prev.Inputs {
		if rk, ok := known[in.Address]; ok && rk.String() != in.ResultKey {
			why = append(why, fmt.Sprintf("the result of %s changed: %s… → %s…", in.Address, in.ResultKey[:12], rk.Short()))
		}
	}
	if prev.StepKey == key.String() {
		why = append(why, "its stored result was removed (pruned)")
	}
	if len(why) == 0 {
		why = append(why, "its inputs differ from the last run's in a way not shown here (e.g. another architecture)")
	}
	return why
}

// ownChanges lists what differs in s itself from an earlier provenance record: its kind or
// version, its settings, the digests of its files, the catalogue values it reads.
func ownChanges(s *Step, prev *Provenance) []string {
	return recordChanges(prev, s.record())
}

// record is the part of a provenance record that describes the step itself, as it stands
// in the loaded workflow.
func (s *Step) record() *Provenance {
	p := &Provenance{Address: s.Addr, Kind: s.Kind.Name(), Version: s.Kind.Version(), Config: s.Rendered()}
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
