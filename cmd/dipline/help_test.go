package main

import (
	"regexp"
	"slices"
	"strings"
	"testing"
)

// everyCommand lists each command as a user calls it, store commands included.
var everyCommand = [][]string{
	{"run"}, {"check"}, {"pending"}, {"trace"}, {"runs"}, {"diff"}, {"pin"}, {"kinds"}, {"starter"},
	{"store"}, {"store", "stats"}, {"store", "verify"}, {"store", "prune"}, {"store", "merge"}, {"store", "salvage"},
}

func TestEveryCommandExplainsItselfWithAnExample(t *testing.T) {
	f := newFolder(t)
	for _, cmd := range everyCommand {
		for _, ask := range []string{"--help", "-h"} {
			name := strings.Join(cmd, " ")
			t.Run("dipline "+name+" "+ask+" exits 0 with an example", func(t *testing.T) {
				code, out, errs := f.dipline(append(append([]string{}, cmd...), ask)...)
				if code != exitOK {
					t.Fatalf("exit %d\n%s%s", code, out, errs)
				}
				if !strings.Contains(out, "Usage: dipline "+name) {
					t.Errorf("no usage line for %q:\n%s", name, out)
				}
				ex := strings.Index(out, "Examples:\n")
				if ex < 0 || !strings.Contains(out[ex:], "\n  dipline "+name) {
					t.Errorf("no example of %q:\n%s", name, out)
				}
				if errs != "" {
					t.Errorf("help wrote to the error output: %q", errs)
				}
			})
		}
	}
	for _, args := range [][]string{{"help"}, {"--help"}, {"-h"}, {}, {"help", "run"}, {"help", "store", "prune"}, {"help", "help"}} {
		t.Run("dipline "+strings.Join(args, " ")+" exits 0", func(t *testing.T) {
			code, out, errs := f.dipline(args...)
			if code != exitOK || out == "" || errs != "" {
				t.Errorf("exit %d\n%s%s", code, out, errs)
			}
		})
	}
	t.Run("the usage points at each command's help and has no stale options", func(t *testing.T) {
		_, out, _ := f.dipline("help")
		if !strings.Contains(out, "dipline run --help") || strings.Contains(out, "check --kinds") {
			t.Errorf("usage:\n%s", out)
		}
	})
}

// Go's flag package words its mistakes in its own sentences; none of them reach a user.
var stockFlagWords = []string{"flag provided but not defined", "Usage of", "invalid value", "bad flag syntax",
	"flag needs an argument", "invalid boolean", "parse error"}

// stockDefaults matches a line of the flag package's own list of options ("  -workers int").
var stockDefaults = regexp.MustCompile(`(?m)^  -[a-z]`)

func TestFlagMistakesAreInOurWords(t *testing.T) {
	f := newFolder(t)
	for _, tc := range []struct {
		name string
		args []string
		says string
	}{
		{"an unknown option is named, with the nearest one", []string{"diff", "--al"}, "there is no option --al; did you mean --all?"},
		{"an option without its value says what to write", []string{"run", "--wait"}, "--wait needs a value: write --wait DURATION"},
		{"a count that is not a number", []string{"run", "--workers", "many"}, `--workers takes a whole number, not "many"`},
		{"no workers at all", []string{"run", "--workers", "0"}, `--workers "0": it counts workers, so it is 1 or more`},
		{"fewer than none for a survey", []string{"survey", "run", "t.csv", "--workers=-1"}, `--workers "-1": it counts workers, so it is 1 or more`},
		{"a duration that does not read", []string{"run", "--wait", "soon"}, `--wait takes a duration such as 30s, 5m or 1h, not "soon"`},
		{"an on-off option given a word", []string{"pin", "latest", "--remove=perhaps"}, `--remove is on or off`},
		{"three dashes", []string{"trace", "---run", "x"}, `"---run" is not an option`},
		{"our own option's refusal keeps its reason", []string{"store", "prune", "--aged", "30"}, "has no unit"},
		{"an option before the command", []string{"--workers", "2", "run"}, "there is no option --workers"},
		{"kinds takes no options", []string{"kinds", "--all"}, "kinds takes no options"},
		{"a store command that does not exist", []string{"store", "tidy"}, `there is no store command "tidy"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errs := f.dipline(tc.args...)
			if code != exitBadUser {
				t.Errorf("exit %d, want %d", code, exitBadUser)
			}
			if !strings.Contains(errs, tc.says) {
				t.Errorf("the message lacks %q:\n%s", tc.says, errs)
			}
			for _, w := range stockFlagWords {
				if strings.Contains(out+errs, w) {
					t.Errorf("the flag package's words %q reached the user:\n%s%s", w, out, errs)
				}
			}
			if stockDefaults.MatchString(out + errs) {
				t.Errorf("the flag package's list of options reached the user:\n%s%s", out, errs)
			}
			// A command's mistake shows how the command is called; one before any command
			// or in the store's command name points at the help instead.
			if tc.args[0] != "--workers" && !slices.Equal(tc.args, []string{"store", "tidy"}) && !strings.Contains(errs, "Usage: dipline ") {
				t.Errorf("the command's usage is not shown:\n%s", errs)
			}
		})
	}
}
