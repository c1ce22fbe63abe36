package workflow

import "dipline/steps"

// stepInputs gathers what a step's Run receives: the results of the steps it references
// (ref gives them by address; nil leaves the references out, for an inspection), the bytes
// of its files and its catalogue rows. A run, a recomputation and an inspection all build
// a step's inputs here.
func stepInputs(s *Step, ref func(addr string) steps.Artifact) steps.Inputs {
	in := steps.Inputs{Refs: map[string][]steps.Artifact{}, Files: map[string][]steps.File{},
		Rows: map[string]steps.Row{}, Settings: map[string]any{}}
	for name, dep := range s.Settings {
		in.Settings[name] = dep.Config
	}
	for name, row := range s.Rows {
		in.Rows[name] = row.Row()
	}
	if ref != nil {
		for name, addrs := range s.Refs {
			for _, a := range addrs {
				in.Refs[name] = append(in.Refs[name], ref(a))
			}
		}
	}
	for name, files := range s.Files {
		for _, f := range files {
			in.Files[name] = append(in.Files[name], steps.File{Name: f.Path, Data: f.Data})
		}
	}
	return in
}

// stepEnv is what a running step is lent: the token pool, a recorder of notes, a
// reporter of progress (nil for none) and, when its kind draws random numbers, its seed.
// Progress only watches: nothing it is told reaches a key, a record or a result.
func (w *Workflow) stepEnv(s *Step, pool *steps.Pool, notef func(format string, args ...any), progress func(done, total int)) steps.Env {
	env := steps.Env{Pool: pool, Notef: notef, Progress: progress}
	if s.Kind.Random() {
		env.Seed = w.StepSeed(s)
	}
	return env
}
