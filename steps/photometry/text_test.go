package photometry

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/steptest"
)

func TestTextLayoutsGiveTheSameLightCurve(t *testing.T) {
	// The three files hold the same rows (testdata/csv/README.md), with differently spelled
	// column names: Time/Rel_Flux/Flux_Err/Quality, TIME/FLUX/ERR/FLAG, time/flux/flux_err/flag.
	var first []byte
	for _, c := range []struct{ file, errCol string }{
		{"csv/segment.csv", "Flux_Err"}, {"csv/segment.tsv", "ERR"}, {"csv/segment.txt", "flux_err"},
	} {
		t.Run(c.file+" reads like the others", func(t *testing.T) {
			res, notes, err := runKind(t, map[string]any{"time_zero": 2460100.5}, load(t, c.file))
			if err != nil {
				t.Fatal(err)
			}
			// README: rows 4, 21, 38, 55 flagged; row 30 not finite; row 45 negative error.
			d := res.Stats[0].Dropped
			if got := res.LC.Len(); got != 54 || d.Flagged != 4 || d.Unusable != 1 || d.BadError != 1 {
				t.Fatalf("%d points, dropped %+v; the README says 54 kept, 4 flagged, 1 not finite, 1 bad error", got, d)
			}
			if res.LC.RefInt != 2460100 || res.LC.RefFrac != 0.5 {
				t.Errorf("reference %d + %v, want time_zero 2460100.5 split as 2460100 + 0.5", res.LC.RefInt, res.LC.RefFrac)
			}
			enc := res.Encode()
			if first == nil {
				first = enc
			} else if !bytes.Equal(first, enc) {
				t.Error("a different layout of the same rows gave different bytes")
			}
			// Row 45 is on line 49 of each file (two comment lines and the header come
			// first), and on line 50 of the CSV, which has a comment between rows.
			line := "49"
			if strings.HasSuffix(c.file, ".csv") {
				line = "50"
			}
			if want := "segment" + c.file[len("csv/segment"):] + ":" + line + ": column " + c.errCol + ": -0.0005 is not a positive error; 1 such rows dropped"; !containsNote(notes, want) {
				t.Errorf("no note %q among %q", want, notes)
			}
		})
	}
}

func containsNote(notes []string, s string) bool {
	for _, n := range notes {
		if strings.Contains(n, s) {
			return true
		}
	}
	return false
}

func TestTextDelimiterAndColumnMatching(t *testing.T) {
	cases := []struct {
		name, text, delim string
		columns           map[string]string
		time, flux        []float64
	}{
		{"a comma header is split on commas", "t,FLUX\n2460000.1,5\n2460000.2,6\n2460000.3,7\n", "comma", nil,
			[]float64{2460000.1, 2460000.2, 2460000.3}, []float64{5, 6, 7}},
		{"a tab header is split on tabs and keeps an empty field as missing", "Time\tFlux\tNote\n2460000.1\t5\t\n2460000.2\t6\tx\n2460000.3\t7\t\n", "tab", nil,
			[]float64{2460000.1, 2460000.2, 2460000.3}, []float64{5, 6, 7}},
		{"runs of blanks separate fields when there is no comma or tab", "  JD    rel_flux \n 2460000.1   5 \n\n 2460000.2 6\n2460000.3      7\n", "whitespace", nil,
			[]float64{2460000.1, 2460000.2, 2460000.3}, []float64{5, 6, 7}},
		{"user column names match without regard to case", "# c\nA,B,mag\r\n1,2460000.1,5\r\n2,2460000.2,6\r\n3,2460000.3,7\r\n", "comma",
			map[string]string{"time": "b", "flux": "A"},
			[]float64{2460000.1, 2460000.2, 2460000.3}, []float64{1, 2, 3}},
		{"quoted header names are unquoted", "\"time\",\"flux\"\n2460000.1,5\n2460000.2,6\n2460000.3,7\n", "comma", nil,
			[]float64{2460000.1, 2460000.2, 2460000.3}, []float64{5, 6, 7}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, err := readTextHeader("x.txt", []byte(c.text))
			if err != nil {
				t.Fatal(err)
			}
			if tab.delimName() != c.delim {
				t.Fatalf("delimiter %s, want %s", tab.delimName(), c.delim)
			}
			var user [nRoles]string
			for k, v := range c.columns {
				for r, key := range roleKeys {
					if key == k {
						user[r] = v
					}
				}
			}
			idx, _, err := pickColumns("x.txt", tab.header, user)
			if err != nil {
				t.Fatal(err)
			}
			cols, err := tab.read([]int{idx[TimeCol], idx[FluxCol]})
			if err != nil {
				t.Fatal(err)
			}
			for i := range c.time {
				if cols.vals[0][i] != c.time[i] || cols.vals[1][i] != c.flux[i] {
					t.Fatalf("row %d = (%v, %v), the text says (%v, %v)", i, cols.vals[0][i], cols.vals[1][i], c.time[i], c.flux[i])
				}
			}
		})
	}
}

func TestTextErrorsNameFileLineAndColumn(t *testing.T) {
	cases := []struct {
		name, text, want string
	}{
		{"a word in a number column names line and column",
			"# x\ntime,flux,flux_err\n2460000.1,1,0.1\n2460000.2,abc,0.1\n",
			"data/x.csv:4: column flux: \"abc\" is not a number"},
		{"a short row names its line and the header's field count",
			"time,flux\n2460000.1,1\n2460000.2\n",
			"data/x.csv:3: 1 fields, but the header on line 1 has 2 (comma-separated)"},
		{"a missing time column lists the names tried and found",
			"when,flux\n1,2\n",
			"data/x.csv: no time column: none of time, bjd, bjd_tdb, jd, t, btjd, bkjd, hjd, mjd is in the header (columns: \"when\", \"flux\"); name one in columns = { time = \"...\" }"},
		{"two columns named alike are ambiguous",
			"time,FLUX,flux\n1,2,3\n",
			"data/x.csv: columns 2 and 3 are both named \"flux\" (ignoring case)"},
		{"a file of comments has no header",
			"# only\n\n# comments\n",
			"data/x.csv: no header row: the file is empty or holds only comments"},
		{"a header without rows is refused",
			"time,flux\n# nothing\n",
			"data/x.csv: the header on line 1 is followed by no rows"},
		{"a fractional flag names the row",
			"time,flux,flag\n2460000.1,1,0\n2460000.2,1,0.5\n2460000.3,1,0\n",
			"data/x.csv:3: column flag: 0.5 is not a whole-number flag"},
		{"relative times without time_zero are not Julian dates",
			"time,flux\n0.1,1\n0.2,1\n0.3,1\n",
			"data/x.csv:2: the earliest time, 0.1, with no reference given"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, _, err := runKind(t, nil, []steps.File{{Name: "data/x.csv", Data: []byte(c.text)}})
			if err == nil || !strings.HasPrefix(err.Error(), c.want) {
				t.Fatalf("error %v\nwant   %s", err, c.want)
			}
			if !steps.IsInputError(err) {
				t.Errorf("%v is not marked as bad input", err)
			}
		})
	}
}

func TestFullJulianDatesKeepTheirDayAsReference(t *testing.T) {
	text := "bjd,flux,err\n2460123.75,10,1\n2460123.80,12,1\n2460123.85,11,1\n"
	res, _, err := runKind(t, nil, []steps.File{{Name: "x.csv", Data: []byte(text)}})
	if err != nil {
		t.Fatal(err)
	}
	// 2460123.75 − 2460123 = 0.75 exactly (both in float64; Sterbenz lemma).
	if res.LC.RefInt != 2460123 || res.LC.RefFrac != 0 || res.LC.Segments[0].Time[0] != 0.75 {
		t.Fatalf("reference %d + %v, first time %v", res.LC.RefInt, res.LC.RefFrac, res.LC.Segments[0].Time[0])
	}
	// Median of 10, 12, 11 is 11: the flux 12 becomes 12/11.
	if got := res.LC.Segments[0].Flux[1]; got != 12.0/11 {
		t.Errorf("normalised flux %v, want 12/11", got)
	}
}

func FuzzTextTable(f *testing.F) {
	f.Add([]byte("time,flux,flux_err,quality\n2460000.1,1,0.1,0\n2460000.2,nan,0.1,1\n"))
	f.Add([]byte("# c\nT\tF\n1\t2\n\n3\t4\n"))
	f.Add([]byte("  time flux\n 2460000 1\n2460001 2\n2460002 1.5\n"))
	f.Add([]byte("\xef\xbb\xbf\"time\",\"flux\"\r\n1,2\r\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		tab, err := readTextHeader("f.csv", data)
		if err != nil {
			return
		}
		idx, _, err := pickColumns("f.csv", tab.header, [nRoles]string{})
		if err != nil {
			return
		}
		var want []int
		for _, i := range idx {
			if i >= 0 {
				want = append(want, i)
			}
		}
		cols, err := tab.read(want)
		if err != nil {
			return
		}
		for _, v := range cols.vals {
			if len(v) != len(cols.lines) {
				t.Fatalf("%d values for %d rows", len(v), len(cols.lines))
			}
		}
		// The whole step on the same bytes must not panic either.
		cfg := DefaultConfig()
		res, err := Read(cfg, []steps.File{{Name: "f.csv", Data: data}}, nil)
		if err == nil {
			for _, s := range res.LC.Segments {
				for _, e := range s.Err {
					if !(e > 0) || math.IsInf(e, 0) {
						t.Fatalf("kept a point with error %v", e)
					}
				}
			}
		}
	})
}

func TestBinaryDataIsNotReadAsText(t *testing.T) {
	// A binary file named .csv: refused at once, with a short message naming the file.
	data := append([]byte("time,flux\n1,"), 0, 1, 2, 3, 0xff, '\n')
	_, _, err := runKind(t, nil, []steps.File{{Name: "data/odd.csv", Data: data}})
	if err == nil || !strings.Contains(err.Error(), "data/odd.csv: byte 13 is NUL") || len(err.Error()) > 200 {
		t.Fatalf("error %v", err)
	}
}

func TestLongHeadersAreCutInMessages(t *testing.T) {
	// Forty long column names, none a time: the message lists twelve, each cut short.
	var names []string
	for i := 0; i < 40; i++ {
		names = append(names, strings.Repeat("x", 50)+strconv.Itoa(i))
	}
	data := []byte(strings.Join(names, ",") + "\n")
	_, _, err := runKind(t, nil, []steps.File{{Name: "wide.csv", Data: data}})
	if err == nil || !strings.Contains(err.Error(), "… 28 more") || len(err.Error()) > 800 {
		t.Fatalf("error (%d bytes) %v", len(fmt.Sprint(err)), err)
	}
}

// Rows repeating an earlier row's time: the first in the file is kept, the rest dropped,
// counted and named in a note (line of the first repeat, and how many carried another
// flux); a file whose usable rows all share one time is refused. Invented rows.
func TestDuplicateTimesAreDroppedAndCounted(t *testing.T) {
	csv := "time,flux,flux_err\n" +
		"2460000.10,1.000,0.001\n" +
		"2460000.20,1.001,0.001\n" +
		"2460000.20,1.001,0.001\n" + // an exact repeat
		"2460000.30,0.999,0.001\n" +
		"2460000.20,1.050,0.001\n" + // the same time again, out of order, another flux
		"2460000.40,1.002,0.001\n"
	res, notes, err := runKind(t, nil, []steps.File{{Name: "dup.csv", Data: []byte(csv)}})
	if err != nil {
		t.Fatal(err)
	}
	seg := res.LC.Segments[0]
	if len(seg.Time) != 4 || res.Stats[0].Dropped.Duplicate != 2 || res.LC.Dropped.Duplicate != 2 {
		t.Fatalf("%d points, %d and %d duplicates dropped; want 4 and 2", len(seg.Time), res.Stats[0].Dropped.Duplicate, res.LC.Dropped.Duplicate)
	}
	// The kept flux at 0.20 is the first row's, 1.001 (relative to the median of the four).
	med := (1.000 + 1.001) / 2 // the median of 0.999, 1.000, 1.001, 1.002
	if got := seg.Flux[1] * med; math.Abs(got-1.001) > 1e-12 {
		t.Errorf("kept flux %.6f, want the first row's 1.001", got)
	}
	joined := strings.Join(notes, "\n")
	if !strings.Contains(joined, "dup.csv:4") || !strings.Contains(joined, "2 row(s) repeating an earlier time dropped") || !strings.Contains(joined, "1 of them with a different flux") {
		t.Errorf("notes do not name the repeats: %q", notes)
	}
	figs := map[string]float64{}
	for _, f := range res.Figures() {
		figs[f.Name] = f.Value
	}
	if figs["segment1.dropped_duplicate_time"] != 2 {
		t.Errorf("figures %v", figs)
	}
	_, _, err = runKind(t, nil, []steps.File{{Name: "one.csv", Data: []byte("time,flux\n2460000.5,1\n2460000.5,1.1\n2460000.5,0.9\n")}})
	if err == nil || !strings.Contains(err.Error(), "one.csv: every usable row has the same time") || !steps.IsInputError(err) {
		t.Errorf("one time only: %v", err)
	}
}

// Inspect (what `dipline check` calls) refuses what Run refuses, with the same words: a
// flux cell that is not a number names the file, line and column.
func TestInspectRefusesWhatRunRefuses(t *testing.T) {
	csv := "time,flux,flux_err\n2460000.1,1.0,0.001\n2460000.2,oops,0.001\n2460000.3,1.0,0.001\n"
	files := []steps.File{{Name: "bad.csv", Data: []byte(csv)}}
	cfg, err := steptest.Config(New(), block(nil, files))
	if err != nil {
		t.Fatal(err)
	}
	kind := New().(steps.Inspector) // as the engine calls it
	ierr := kind.Inspect(cfg, steps.Inputs{Files: map[string][]steps.File{"files": files}})
	_, _, rerr := runKind(t, nil, files)
	if ierr == nil || rerr == nil || ierr.Error() != rerr.Error() || !steps.IsInputError(ierr) || !strings.Contains(ierr.Error(), "bad.csv:3: column flux") {
		t.Errorf("inspect %v, run %v", ierr, rerr)
	}
	good := []steps.File{{Name: "good.csv", Data: []byte("time,flux\n2460000.1,1\n2460000.2,1.1\n2460000.3,0.9\n")}}
	if err := kind.Inspect(cfg, steps.Inputs{Files: map[string][]steps.File{"files": good}}); err != nil {
		t.Errorf("a good file: %v", err)
	}
}
