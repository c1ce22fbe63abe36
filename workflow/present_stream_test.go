package workflow

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"dipline/steps"
)

// A data table is streamed to its file: the bytes are those of the table, and a write
// that fails part-way leaves neither the file nor its temporary behind.
func TestADataFileIsStreamedWholeOrNotAtAll(t *testing.T) {
	dir := t.TempDir()
	d := steps.Data{Name: "curve", Series: []steps.Series{{Name: "time", Values: []float64{1, 2.5}}, {Name: "flux", Values: []float64{0.999, 1e-7}}}}
	rows, why := checkData(d)
	if why != "" || rows != 2 {
		t.Fatalf("checkData: %d rows, %q", rows, why)
	}
	path := filepath.Join(dir, "curve.csv")
	if err := writeAtomicWith(path, func(w io.Writer) error { return writeCSV(w, d, rows) }); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(path); string(got) != "time,flux\n1,0.999\n2.5,1e-07\n" {
		t.Errorf("file %q", got)
	}
	broken := filepath.Join(dir, "broken.csv")
	err := writeAtomicWith(broken, func(w io.Writer) error {
		w.Write([]byte(strings.Repeat("x", 1<<17))) // past the buffer: on disk already
		return errors.New("the disk is full")
	})
	if err == nil {
		t.Fatal("a failed write reported success")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 || entries[0].Name() != "curve.csv" {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("after a failed write the folder holds %v", names)
	}
}
