package survey

import (
	"os"
	"path/filepath"
	"testing"

	"dipline/workflow"
)

// TestCellsBecomeTheExpressionsSetWouldTake holds each kind of cell to the expression it
// sets; every one must parse as --set parses it.
func TestCellsBecomeTheExpressionsSetWouldTake(t *testing.T) {
	for cell, want := range map[string]string{
		"data/t01.csv":           `"data/t01.csv"`,
		"12 h":                   `"12 h"`,
		"5.1":                    "5.1",
		"true":                   "true",
		`["a.csv", "b.csv"]`:     `["a.csv", "b.csv"]`,
		`"quoted"`:               `"quoted"`,
		`catalogue.nearby["A1"]`: `catalogue.nearby["A1"]`,
		"cost ${HOME}":           `"cost $${HOME}"`,
		`say "hi"`:               `"say \"hi\""`,
	} {
		got := cellExpr(cell)
		if got != want {
			t.Errorf("cell %q sets %s, want %s", cell, got, want)
		}
		if _, err := workflow.ParseOverride("photometry.a.files=" + got); err != nil {
			t.Errorf("cell %q: %v", cell, err)
		}
	}
}

// TestATableReadsItsTargetsInOrder reads a table with comments, spaces around cells, an
// id column not first and an empty cell.
func TestATableReadsItsTargetsInOrder(t *testing.T) {
	path := filepath.Join(t.TempDir(), "my-targets.csv")
	body := "# two targets\nphotometry.lc.files, ID ,search.dips.star_density\n a.csv , T1 , 5.1 g/cm3\nb.csv,T2,\n"
	if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	tab, err := ReadTable(path)
	if err != nil {
		t.Fatal(err)
	}
	if tab.Name != "my-targets" || len(tab.Targets) != 2 {
		t.Fatalf("table %q with %d targets", tab.Name, len(tab.Targets))
	}
	t1, t2 := tab.Targets[0], tab.Targets[1]
	if t1.ID != "T1" || t1.Line != 3 || len(t1.Overrides) != 2 || t1.Overrides[1].Value != `"5.1 g/cm3"` ||
		t1.Overrides[0].Addr != "photometry.lc" || t1.Overrides[0].Attr != "files" {
		t.Errorf("first target %+v", t1)
	}
	if t2.ID != "T2" || len(t2.Overrides) != 1 {
		t.Errorf("second target %+v: the empty cell should set nothing", t2)
	}
}
