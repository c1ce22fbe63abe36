package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"dipline/steps"
	"dipline/steps/kinds"
)

func (c *cli) starter(args []string) int {
	fs := flag.NewFlagSet("starter", flag.ContinueOnError)
	out := fs.String("out", "analysis.hcl", "the workflow file to write, beside which the data must lie")
	seed := fs.Int("seed", 1, "the workflow's seed")
	pos, ok := c.flags(fs, args)
	if !ok {
		return exitBadUser
	}
	if len(pos) != 1 {
		fmt.Fprintln(c.err, "dipline starter: name one light-curve file (CSV, TSV or FITS)")
		return exitBadUser
	}
	data := pos[0]
	if _, err := os.Stat(*out); err == nil {
		fmt.Fprintf(c.err, "dipline starter: %s exists; name another file with --out\n", *out)
		return exitBadUser
	}
	rel, err := relativeTo(filepath.Dir(*out), data)
	if err != nil || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) {
		fmt.Fprintf(c.err, "dipline starter: %s is not inside the folder of %s; workflows read only files beside them\n", data, *out)
		return exitBadUser
	}
	b, err := os.ReadFile(data)
	if err != nil {
		fmt.Fprintln(c.err, "dipline starter:", err)
		return exitBadUser
	}
	name := strings.TrimSuffix(filepath.Base(data), filepath.Ext(data))
	s, err := kinds.Starter(steps.File{Name: filepath.ToSlash(rel), Data: b}, *out, name, *seed)
	if err != nil {
		fmt.Fprintf(c.err, "dipline starter: %v\n", err)
		if steps.IsInputError(err) {
			return exitBadUser
		}
		return exitFailed
	}
	if err := os.WriteFile(*out, []byte(s.Text), 0o644); err != nil {
		fmt.Fprintln(c.err, "dipline starter:", err)
		return exitFailed
	}
	fmt.Fprintf(c.out, "Read %s:\n", data)
	for _, f := range s.Found {
		fmt.Fprintf(c.out, "  - %s\n", f)
	}
	fmt.Fprintf(c.out, "It does not tell:\n")
	for _, u := range s.Unknown {
		fmt.Fprintf(c.out, "  - %s\n", u)
	}
	if s.Runs {
		fmt.Fprintf(c.out, "Wrote %s; it runs as written. Check it with: dipline check %s\n", *out, *out)
	} else {
		fmt.Fprintf(c.out, "Wrote %s; it will not run until the setting named above is written in it. Then check it with: dipline check %s\n", *out, *out)
	}
	return exitOK
}

// relativeTo is path's name relative to the folder dir, either of them given relative to
// the current folder or absolute (filepath.Rel needs both alike).
func relativeTo(dir, path string) (string, error) {
	absDir, err := filepath.Abs(dir)
	if err != nil {
		return "", err
	}
	absPath, err := filepath.Abs(path)
	if err != nil {
		return "", err
	}
	return filepath.Rel(absDir, absPath)
}
