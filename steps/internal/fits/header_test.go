package fits

import (
	"strings"
	"testing"
)

func card80(s string) []byte {
	return []byte(s + strings.Repeat(" ", 80-len(s)))
}

// The value rules checked here are those of FITS 4.0 §4.2 (character strings, logical,
// integer and real values, the D exponent, undefined values, commentary keywords).
func TestParseCard(t *testing.T) {
	cases := []struct {
		name, card string
		typ        ValueType
		str        string
		i          int64
		f          float64
		b          bool
		comment    string
	}{
		{"a string keeps its leading blanks and drops its trailing ones",
			"OBJECT  = '  star b  '         / a name", Str, "  star b", 0, 0, false, "a name"},
		{"two quotes inside a string stand for one",
			"OBSERVER= 'O''Neil '", Str, "O'Neil", 0, 0, false, ""},
		{"an empty string is a string",
			"EMPTY   = ''", Str, "", 0, 0, false, ""},
		{"a slash inside a string is not a comment",
			"PATH    = 'a/b'  / real comment", Str, "a/b", 0, 0, false, "real comment"},
		{"T is a true logical", "SIMPLE  =                    T / conforms", Logical, "", 0, 0, true, "conforms"},
		{"F is a false logical", "EXTEND  =                    F", Logical, "", 0, 0, false, ""},
		{"a signed integer is an integer", "TESTI   =                  -42", Integer, "", -42, -42, false, ""},
		{"a D exponent is a real", "TESTD   =              1.5D+03", Real, "", 0, 1500, false, ""},
		{"a trailing point makes a real", "TZERO2  =                 100.", Real, "", 0, 100, false, ""},
		{"an integer beyond int64 is a real", "HUGE    = 123456789012345678901234", Real, "", 0, 1.2345678901234568e23, false, ""},
		{"nothing after the equals sign is undefined", "UNDEF   =                      / no value", Undefined, "", 0, 0, false, "no value"},
		{"an unterminated string is malformed", "BAD     = 'abc", Malformed, "", 0, 0, false, ""},
		{"text after a string is malformed", "BAD     = 'abc' xyz", Malformed, "", 0, 0, false, ""},
		{"a word is malformed", "BAD     = inf", Malformed, "", 0, 0, false, ""},
		{"two points are malformed", "BAD     = 1.2.3", Malformed, "", 0, 0, false, ""},
		{"a lone sign is malformed", "BAD     = -", Malformed, "", 0, 0, false, ""},
		{"COMMENT cards carry no value even with an equals sign", "COMMENT = 'not a value'", NoValue, "", 0, 0, false, "= 'not a value'"},
		{"a keyword without = in column 9 is commentary", "NOTE      just text", NoValue, "", 0, 0, false, "just text"},
		{"a complex value is recognised", "CPX     = (1.0, 2.0)", Complex, "", 0, 0, false, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := parseCard(card80(c.card), &HDU{Index: 1})
			if got.Type != c.typ || got.Str != c.str || got.Int != c.i || got.Real != c.f || got.Bool != c.b || got.Comment != c.comment {
				t.Fatalf("parseCard(%q) = %+v", c.card, got)
			}
		})
	}
}

func TestCardAccessorsExplainAMismatch(t *testing.T) {
	c := parseCard(card80("TIMESYS =                   42"), &HDU{Index: 2})
	if _, err := c.AsString(); err == nil || err.Error() != `HDU 2: keyword TIMESYS: "42" is an integer, not a string` {
		t.Fatalf("AsString error: %v", err)
	}
	if v, err := c.AsFloat(); err != nil || v != 42 {
		t.Fatalf("AsFloat: %v, %v", v, err)
	}
	if _, err := c.AsBool(); err == nil {
		t.Fatal("AsBool accepted an integer")
	}
}

// TFORM rules: FITS 4.0 §7.3.3.1 and Table 18 (element sizes).
func TestParseForm(t *testing.T) {
	cases := []struct {
		form          string
		repeat, width int64
		typ, desc     byte
		err           string
	}{
		{form: "D", repeat: 1, width: 8, typ: 'D'},
		{form: "3E", repeat: 3, width: 12, typ: 'E'},
		{form: "20A", repeat: 20, width: 20, typ: 'A'},
		{form: "20A10", repeat: 20, width: 20, typ: 'A'},
		{form: "0J", repeat: 0, width: 0, typ: 'J'},
		{form: "1K", repeat: 1, width: 8, typ: 'K'},
		{form: "13X", repeat: 13, width: 2, typ: 'X'},
		{form: "2M", repeat: 2, width: 32, typ: 'M'},
		{form: "1PE(100)", repeat: 1, width: 8, typ: 'E', desc: 'P'},
		{form: "QD(7)", repeat: 1, width: 16, typ: 'D', desc: 'Q'},
		{form: "2PE", err: "repeat count 2 of a P column must be 0 or 1"},
		{form: "1P", err: "variable-length column without a valid element type"},
		{form: "12", err: "no data type letter"},
		{form: "1Z", err: `unknown data type "Z"`},
		{form: "99999999999D", err: `repeat count "99999999999" is too large`},
	}
	for _, c := range cases {
		t.Run("TFORM "+c.form, func(t *testing.T) {
			r, typ, desc, w, err := parseForm(c.form)
			if c.err != "" {
				if err == nil || err.Error() != c.err {
					t.Fatalf("error %v, want %q", err, c.err)
				}
				return
			}
			if err != nil || r != c.repeat || w != c.width || typ != c.typ || desc != c.desc {
				t.Fatalf("parseForm = %d %c %c %d %v", r, typ, desc, w, err)
			}
		})
	}
}
