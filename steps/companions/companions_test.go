package companions

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/steptest"
)

// fixtureTable is an invented imaging result: two companions in Ks, one with a radius.
const fixtureTable = `# invented AO result for the tests
name, band, dmag, dmag_err, separation, radius, radius_err
B,    Ks,   1.52, 0.05,     0.41,       0.31,   0.02
"C 2", Ks,  3.90, 0.12,     1.87,       ,
`

// block is what a companions block writes: the given attributes, and file when they name
// none.
func block(set map[string]any, file string) map[string]any {
	b := map[string]any{"file": []string{file}}
	for k, v := range set {
		b[k] = v
	}
	return b
}

func run(t *testing.T, set map[string]any, data string) (*List, []string, error) {
	t.Helper()
	in := steps.Inputs{Files: map[string][]steps.File{"file": {{Name: "imaging.csv", Data: []byte(data)}}}}
	art, notes, err := steptest.Run(New(), block(set, "imaging.csv"), in, nil)
	if err != nil {
		return nil, notes, err
	}
	return art.(*List), notes, nil
}

func TestParseReadsEveryField(t *testing.T) {
	l, notes, err := run(t, nil, fixtureTable)
	if err != nil {
		t.Fatal(err)
	}
	if len(l.Companions) != 2 {
		t.Fatalf("got %d companions, want 2", len(l.Companions))
	}
	b, c := l.Companions[0], l.Companions[1]
	// The values are those written in fixtureTable.
	if b.Name != "B" || b.Band != "Ks" || b.DMag != 1.52 || b.DMagErr != 0.05 || b.Separation != 0.41 || b.Radius != 0.31 || b.RadiusErr != 0.02 {
		t.Errorf("first row read as %+v", b)
	}
	if c.Name != "C 2" || c.DMag != 3.90 || !math.IsNaN(c.Radius) || !math.IsNaN(c.RadiusErr) {
		t.Errorf("second row read as %+v", c)
	}
	if len(notes) != 1 || !strings.Contains(notes[0], "2 companion") {
		t.Errorf("notes %q", notes)
	}
}

func TestTableVariants(t *testing.T) {
	cases := []struct {
		name   string
		cols   map[string]string
		data   string
		want   int
		dmag0  float64
		sepNaN bool
	}{
		{"a whitespace table with upper-case headers is read", nil,
			"NAME BAND DMAG DMAG_ERR SEPARATION\nB i 2.1 0.1 0.3\n", 1, 2.1, false},
		{"a tab table with renamed columns is read", map[string]string{"dmag": "delta_K", "dmag_err": "e_delta_K", "separation": "rho"},
			"name\tband\tdelta_K\te_delta_K\trho\nB\tKs\t0.7\t0.02\t\n", 1, 0.7, true},
		{"a dash marks a blank cell in a whitespace table", nil,
			"name band dmag dmag_err separation radius radius_err\nB Ks 1.5 0.1 - - -\n", 1, 1.5, true},
		{"a header alone means no companion", nil,
			"name,band,dmag,dmag_err,separation\n", 0, 0, false},
		{"comments and blank lines are skipped", nil,
			"\n# x\nname,band,dmag,dmag_err,separation\n\n# y\nB,Ks,-0.3,0,0.1\r\n", 1, -0.3, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			set := map[string]any{}
			if c.cols != nil {
				set["columns"] = c.cols
			}
			l, notes, err := run(t, set, c.data)
			if err != nil {
				t.Fatal(err)
			}
			if len(l.Companions) != c.want {
				t.Fatalf("%d companions, want %d", len(l.Companions), c.want)
			}
			if c.want == 0 {
				if len(notes) != 1 || !strings.Contains(notes[0], "no companion") {
					t.Errorf("an empty table should be noted, notes %q", notes)
				}
				return
			}
			if got := l.Companions[0].DMag; got != c.dmag0 {
				t.Errorf("dmag %v, want %v", got, c.dmag0)
			}
			if math.IsNaN(l.Companions[0].Separation) != c.sepNaN {
				t.Errorf("separation %v", l.Companions[0].Separation)
			}
		})
	}
}

func TestBadTablesAreRefusedWithTheirPlace(t *testing.T) {
	const head = "name,band,dmag,dmag_err,separation\n"
	cases := []struct{ name, data, want string }{
		{"a negative dmag_err names line and column", head + "B,Ks,1,-0.1,0.2\n",
			"imaging.csv:2, column dmag_err: dmag_err is negative (-0.1)"},
		{"a missing band names line and column", head + "B,,1,0.1,0.2\n",
			"imaging.csv:2, column band: the band of dmag is missing"},
		{"a non-number names line and column", head + "B,Ks,bright,0.1,0.2\n",
			`imaging.csv:2, column dmag: "bright" is not a finite number`},
		{"an infinite number is refused", head + "B,Ks,1,0.1,inf\n",
			`imaging.csv:2, column separation: "inf" is not a finite number`},
		{"a missing dmag is refused", head + "B,Ks,,0.1,0.2\n",
			"imaging.csv:2, column dmag: dmag is missing"},
		{"a missing column is refused", "name,band,dmag,separation\n",
			`imaging.csv:1: no column "dmag_err" for the dmag_err`},
		{"a short row is refused", head + "B,Ks,1,0.1\n",
			"imaging.csv:2: 4 fields, but the header has 5 columns"},
		{"a repeated name in the same band is refused", head + "B,Ks,1,0.1,0.2\nb,ks,2,0.1,0.3\n",
			`imaging.csv:3, column name: companion "b" in band ks appears already on line 2`},
		{"the name target is refused", head + "Target,Ks,1,0.1,0.2\n",
			`imaging.csv:2, column name: "Target" names the target itself`},
		{"a negative separation is refused", head + "B,Ks,1,0.1,-2\n",
			"imaging.csv:2, column separation: separation is negative"},
		{"a radius without its error is refused", "name,band,dmag,dmag_err,separation,radius,radius_err\nB,Ks,1,0.1,0.2,0.3,\n",
			"imaging.csv:2, column radius_err: the radius is given without radius_err"},
		{"a zero radius is refused", "name,band,dmag,dmag_err,separation,radius,radius_err\nB,Ks,1,0.1,0.2,0,0\n",
			"imaging.csv:2, column radius: radius 0 R_sun is not positive"},
		{"radius without a radius_err column is refused", "name,band,dmag,dmag_err,separation,radius\n",
			"imaging.csv:1: column radius is there but radius_err is not"},
		{"an empty file is refused", "# nothing\n", "imaging.csv: no header row"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, _, err := run(t, nil, c.data)
			if err == nil {
				t.Fatal("no error")
			}
			if !steps.IsInputError(err) {
				t.Errorf("%v is not an input error", err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q does not contain %q", err, c.want)
			}
		})
	}
}

func TestCheckRefusesBadAttributes(t *testing.T) {
	cases := []struct {
		name string
		set  map[string]any
		want string
	}{
		{"two files are refused", map[string]any{"file": []string{"a", "b"}}, "file: give exactly one table, not 2"},
		{"an unknown columns key is refused", map[string]any{"columns": map[string]string{"mag": "x"}}, `columns: unknown key "mag"`},
		{"an empty column name is refused", map[string]any{"columns": map[string]string{"dmag": " "}}, "columns: dmag: empty column name"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := steptest.Config(New(), block(c.set, "x.csv"))
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want %q", err, c.want)
			}
		})
	}
	t.Run("written column names are trimmed and put at their fields", func(t *testing.T) {
		cfg, err := steptest.Config(New(), block(map[string]any{"columns": map[string]string{"dmag": " dKs ", "name": "id"}}, "x.csv"))
		if err != nil {
			t.Fatal(err)
		}
		if got := cfg.(*Config).Columns; got != (Columns{FieldName: "id", FieldDMag: "dKs"}) {
			t.Fatalf("columns %q", got)
		}
	})
}

func TestEncodingRoundTripsAndRejectsDamage(t *testing.T) {
	l, _, err := run(t, nil, fixtureTable)
	if err != nil {
		t.Fatal(err)
	}
	b := l.Encode()
	back, err := Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), b) {
		t.Error("decode then encode changed the bytes")
	}
	for _, cut := range []int{0, 5, len(b) / 2, len(b) - 1} {
		if _, err := Decode(b[:cut]); err == nil {
			t.Errorf("a record cut to %d bytes decoded", cut)
		}
	}
	bad := &List{Companions: append(l.Companions[:0:0], l.Companions...)}
	bad.Companions[0].DMagErr = -1
	if _, err := Decode(bad.Encode()); err == nil {
		t.Error("a record with a negative dmag_err decoded")
	}
}

func TestFiguresNameEachCompanion(t *testing.T) {
	l, _, err := run(t, nil, fixtureTable)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]steps.Figure{}
	for _, f := range l.Figures() {
		got[f.Name] = f
	}
	// Values as written in fixtureTable; "C 2" becomes c_2 by FigureName.
	checks := []struct {
		name         string
		value, sigma float64
	}{
		{"count", 2, 0}, {"b.dmag_ks", 1.52, 0.05}, {"b.separation", 0.41, 0}, {"b.radius", 0.31, 0.02},
		{"c_2.dmag_ks", 3.90, 0.12}, {"c_2.separation", 1.87, 0},
	}
	for _, c := range checks {
		f, ok := got[c.name]
		if !ok || f.Value != c.value || f.Sigma != c.sigma {
			t.Errorf("figure %s = %+v, want %v ± %v", c.name, f, c.value, c.sigma)
		}
	}
	if _, ok := got["c_2.radius"]; ok {
		t.Error("a companion without radius has a radius figure")
	}
}

func TestGolden(t *testing.T) {
	l, _, err := run(t, nil, fixtureTable)
	if err != nil {
		t.Fatal(err)
	}
	golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), l)
}

// FuzzParse feeds arbitrary tables to Parse: it must never panic, and whatever it accepts
// must satisfy the artifact's own checks and survive an encoding round trip.
func FuzzParse(f *testing.F) {
	f.Add([]byte(fixtureTable))
	f.Add([]byte("name band dmag dmag_err separation\nB Ks 1 0.1 0.2\n"))
	f.Add([]byte("name,band,dmag,dmag_err,separation\n"))
	f.Add([]byte("name\tband\tdmag\tdmag_err\tseparation\tradius\tradius_err\nB\tKs\t1\t0\t\t0.2\t0\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		list, err := Parse("fuzz.csv", data, Columns{})
		if err != nil {
			if !steps.IsInputError(err) {
				t.Fatalf("error %v is not an input error", err)
			}
			return
		}
		l := &List{Companions: list}
		if err := l.check(); err != nil {
			t.Fatalf("accepted a table that fails the artifact's checks: %v", err)
		}
		if _, err := Decode(l.Encode()); err != nil {
			t.Fatalf("round trip: %v", err)
		}
	})
}

// FuzzDecode feeds damaged records to Decode: it must never panic, and what it accepts must
// decode again from its canonical encoding to the same bytes (a NaN of another bit pattern
// is written in the one canonical form, so the input itself may differ).
func FuzzDecode(f *testing.F) {
	list, err := Parse("x.csv", []byte(fixtureTable), Columns{})
	if err != nil {
		f.Fatal(err)
	}
	f.Add((&List{Companions: list}).Encode())
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := Decode(data)
		if err != nil {
			return
		}
		enc := l.Encode()
		again, err := Decode(enc)
		if err != nil {
			t.Fatalf("the canonical encoding of an accepted record is refused: %v", err)
		}
		if !bytes.Equal(again.Encode(), enc) {
			t.Fatal("decoding and encoding the canonical bytes changed them")
		}
	})
}

func TestOneCompanionInTwoBands(t *testing.T) {
	l, _, err := run(t, nil, "name,band,dmag,dmag_err,separation\nB,Ks,3.5,0.1,1.2\nB,survey-red,4.2,0.15,1.2\n")
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, f := range l.Figures() {
		got[f.Name] = f.Value
	}
	if got["count"] != 1 || got["b.dmag_ks"] != 3.5 || got["b.dmag_survey_red"] != 4.2 {
		t.Errorf("figures %v: want one companion with Δm 3.5 in Ks and 4.2 in survey-red", got)
	}
}

func TestACompanionInTwoBandsDecodes(t *testing.T) {
	l, _, err := run(t, nil, "name,band,dmag,dmag_err,separation\nB,Ks,3.5,0.1,1.2\nB,survey-red,4.2,0.15,1.2\n")
	if err != nil {
		t.Fatal(err)
	}
	back, err := Decode(l.Encode())
	if err != nil {
		t.Fatalf("a list with one companion in two bands does not decode: %v", err)
	}
	if !bytes.Equal(back.Encode(), l.Encode()) {
		t.Error("round trip changed the bytes")
	}
}
