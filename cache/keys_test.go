package cache

import (
	"encoding/json"
	"strings"
	"testing"
)

// abcDigest is SHA-256("abc"), the example of FIPS 180-2, Appendix B.1.
const abcDigest = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"

func TestResultKeyOfMatchesThePublishedExample(t *testing.T) {
	if got := ResultKeyOf([]byte("abc")).String(); got != abcDigest {
		t.Fatalf("ResultKeyOf(abc) = %s, want %s (FIPS 180-2, B.1)", got, abcDigest)
	}
}

func TestKeyParsing(t *testing.T) {
	tests := []struct {
		name, in string
		ok       bool
		want     string // String() of the parsed key
	}{
		{"lowercase hex parses", abcDigest, true, abcDigest},
		{"uppercase hex parses to the same key", strings.ToUpper(abcDigest), true, abcDigest},
		{"a short string is refused", abcDigest[:63], false, ""},
		{"a long string is refused", abcDigest + "0", false, ""},
		{"a non-hex digit is refused", "g" + abcDigest[1:], false, ""},
		{"the empty string is refused", "", false, ""},
		{"a twelve-digit short form is refused", abcDigest[:12], false, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			sk, err1 := ParseStepKey(tc.in)
			rk, err2 := ParseResultKey(tc.in)
			if (err1 == nil) != tc.ok || (err2 == nil) != tc.ok {
				t.Fatalf("errors %v, %v; want ok=%v", err1, err2, tc.ok)
			}
			if !tc.ok {
				if !strings.Contains(err1.Error(), "step key") || !strings.Contains(err2.Error(), "result key") {
					t.Errorf("errors do not say which key: %v / %v", err1, err2)
				}
				return
			}
			if sk.String() != tc.want || rk.String() != tc.want {
				t.Errorf("String() = %s / %s, want %s", sk, rk, tc.want)
			}
			if sk.Short() != tc.want[:12] || rk.Short() != tc.want[:12] {
				t.Errorf("Short() = %s / %s, want %s", sk.Short(), rk.Short(), tc.want[:12])
			}
		})
	}
}

func TestKeysTravelThroughJSONAsHex(t *testing.T) {
	rk := ResultKeyOf([]byte("abc"))
	in := RunStep{Step: "search.periodic", StepKey: StepKey(rk), ResultKey: rk}
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(data), `"result_key":"`+abcDigest+`"`) {
		t.Errorf("JSON %s does not hold the result key as hex", data)
	}
	var out RunStep
	if err := json.Unmarshal(data, &out); err != nil {
		t.Fatal(err)
	}
	if out != in {
		t.Errorf("round trip gave %+v, want %+v", out, in)
	}

	t.Run("a zero result key is left out and reads back as zero", func(t *testing.T) {
		data, _ := json.Marshal(RunStep{Step: "fit.main"})
		if strings.Contains(string(data), "result_key") {
			t.Errorf("JSON %s holds a zero result key", data)
		}
		var back RunStep
		if err := json.Unmarshal(data, &back); err != nil || !back.ResultKey.IsZero() {
			t.Errorf("read back %v, %v", back.ResultKey, err)
		}
	})
	t.Run("a malformed key in JSON is an error", func(t *testing.T) {
		var back RunStep
		if err := json.Unmarshal([]byte(`{"step_key":"abc"}`), &back); err == nil {
			t.Error("no error for a 3-digit step key")
		}
	})
}

// fuzzParse checks that a parser either refuses s or returns a key that prints back as s in
// lowercase.
func fuzzParse[K interface{ String() string }](t *testing.T, s string, parse func(string) (K, error)) {
	k, err := parse(s)
	if err != nil {
		return
	}
	if got := k.String(); got != strings.ToLower(s) {
		t.Fatalf("parse(%q) prints as %q", s, got)
	}
}

func FuzzParseStepKey(f *testing.F) {
	for _, s := range []string{abcDigest, strings.ToUpper(abcDigest), "", "zz", abcDigest[:63] + "é"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) { fuzzParse(t, s, ParseStepKey) })
}

func FuzzParseResultKey(f *testing.F) {
	for _, s := range []string{abcDigest, strings.ToUpper(abcDigest), "", "zz", abcDigest + abcDigest} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) { fuzzParse(t, s, ParseResultKey) })
}
