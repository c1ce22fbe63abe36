package steptest

import (
	"bytes"
	"encoding/gob"
	"testing"

	"dipline/steps"
)

// CheckPresentation holds a presentation to the contract of steps/present.go: within a
// plot every layer's X and Y (and YLo, YHi when given) have equal lengths, every plot's
// Data names a Data that exists, and every Data's columns have equal lengths and distinct
// names. It returns the Data by name.
func CheckPresentation(t *testing.T, pr steps.Presentation) map[string]steps.Data {
	t.Helper()
	data := map[string]steps.Data{}
	for _, d := range pr.Data {
		if _, dup := data[d.Name]; dup {
			t.Errorf("two Data named %q", d.Name)
		}
		data[d.Name] = d
		cols := map[string]bool{}
		for _, s := range d.Series {
			if cols[s.Name] {
				t.Errorf("%s: two columns named %q", d.Name, s.Name)
			}
			cols[s.Name] = true
			if len(s.Values) != len(d.Series[0].Values) {
				t.Errorf("%s: column %s has %d values, %s has %d", d.Name, s.Name, len(s.Values), d.Series[0].Name, len(d.Series[0].Values))
			}
		}
	}
	for _, p := range pr.Panels {
		for _, pl := range p.Plots {
			if pl == nil {
				continue
			}
			if _, ok := data[pl.Data]; pl.Data != "" && !ok {
				t.Errorf("%s / %s: names Data %q, which is not there", p.Title, pl.Title, pl.Data)
			}
			for _, l := range pl.Layers {
				if len(l.X) != len(l.Y) || (l.YLo != nil && len(l.YLo) != len(l.X)) || (l.YHi != nil && len(l.YHi) != len(l.X)) {
					t.Errorf("%s / %s / %s: %d x, %d y, %d lo, %d hi", p.Title, pl.Title, l.Label, len(l.X), len(l.Y), len(l.YLo), len(l.YHi))
				}
			}
		}
	}
	return data
}

// PresentationBytes is a presentation's gob encoding: two presentations are the same when
// these bytes are (reflect.DeepEqual would call two NaNs different).
func PresentationBytes(t *testing.T, pr steps.Presentation) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := gob.NewEncoder(&b).Encode(pr); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// Column returns the named column of d, failing the test when there is none.
func Column(t *testing.T, d steps.Data, name string) []float64 {
	t.Helper()
	for _, s := range d.Series {
		if s.Name == name {
			return s.Values
		}
	}
	t.Fatalf("%s has no column %s", d.Name, name)
	return nil
}

// PresentsAlike presents the artifact again and fails the test unless the presentation is
// the same bytes as pr: presenting must be deterministic.
func PresentsAlike(t *testing.T, k steps.Kind, cfg any, art steps.Artifact, in steps.Inputs, pr steps.Presentation) {
	t.Helper()
	again, err := steps.PresentationOf(k, cfg, art, in)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(PresentationBytes(t, pr), PresentationBytes(t, again)) {
		t.Fatal("the presentations differ")
	}
}
