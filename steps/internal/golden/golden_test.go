package golden

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"dipline/steps"
)

// fake is an artifact with given bytes and figures.
type fake struct {
	bytes []byte
	figs  []steps.Figure
}

func (f fake) Encode() []byte          { return f.bytes }
func (f fake) Figures() []steps.Figure { return f.figs }

func ptr(v float64) *float64 { return &v }

// Tolerances as documented in golden.go: 1e-6 relative for exact figures, 5·√2 Monte Carlo
// errors for estimated ones; undefined figures must stay undefined; a missing figure fails.
func TestCompareFigures(t *testing.T) {
	want := []figure{
		{Name: "exact", Value: ptr(100)},
		{Name: "drawn", Value: ptr(2), MCError: 0.01},
		{Name: "undefined"},
	}
	cases := []struct {
		name string
		got  []figure
		bad  []string // figure names that must be reported
	}{
		{"the same figures pass", want, nil},
		{"an exact figure within a millionth passes",
			[]figure{{Name: "exact", Value: ptr(100.00009)}, want[1], want[2]}, nil},
		{"an exact figure two millionths off fails",
			[]figure{{Name: "exact", Value: ptr(100.0002)}, want[1], want[2]}, []string{"exact"}},
		{"a drawn figure within five standard errors of the difference passes",
			[]figure{want[0], {Name: "drawn", Value: ptr(2 + 5*math.Sqrt2*0.01*0.99), MCError: 0.01}, want[2]}, nil},
		{"a drawn figure beyond them fails",
			[]figure{want[0], {Name: "drawn", Value: ptr(2.1), MCError: 0.01}, want[2]}, []string{"drawn"}},
		{"an undefined figure that became a number fails",
			[]figure{want[0], want[1], {Name: "undefined", Value: ptr(1)}}, []string{"undefined"}},
		{"a missing figure fails", want[:2], []string{"undefined"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			msgs := compareFigures(want, c.got)
			if len(msgs) != len(c.bad) {
				t.Fatalf("messages %q, want %d", msgs, len(c.bad))
			}
			for i, name := range c.bad {
				if !strings.Contains(msgs[i], "figure "+name+" ") {
					t.Errorf("message %q does not name %s", msgs[i], name)
				}
			}
		})
	}
}

// On the recording architecture the bytes decide; on another one the figures do. A record
// made on a made-up architecture with the same figures passes, whatever its result key.
func TestCheckOnAnotherArchitectureComparesFigures(t *testing.T) {
	root := t.TempDir()
	if err := os.MkdirAll(filepath.Join(root, "testdata", "golden"), 0o755); err != nil {
		t.Fatal(err)
	}
	art := fake{bytes: []byte("abc"), figs: []steps.Figure{{Name: "x", Value: 1.5}, {Name: "y", Value: math.NaN()}}}
	rec := recordOf("toy", 3, "elsewhere"+runtime.GOARCH, art)
	rec.ResultKey = strings.Repeat("0", 64) // other bits on the other machine
	b, _ := json.Marshal(rec)
	if err := os.WriteFile(filepath.Join(root, "testdata", "golden", "toy.json"), b, 0o644); err != nil {
		t.Fatal(err)
	}
	Check(t, root, "toy", 3, art)
	// The record round-trips NaN as undefined.
	var back record
	if err := json.Unmarshal(b, &back); err != nil || back.Figures[1].Value != nil || *back.Figures[0].Value != 1.5 {
		t.Errorf("record %+v (%v)", back, err)
	}
}
