package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"

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
	if _, err := os.Stat(data); err != nil {
		fmt.Fprintln(c.err, "dipline starter:", err)
		return exitBadUser
	}
	if _, err := os.Stat(*out); err == nil {
		fmt.Fprintf(c.err, "dipline starter: %s exists; name another file with --out\n", *out)
		return exitBadUser
	}
	rel, err := filepath.Rel(filepath.Dir(*out), data)
	if err != nil || strings.HasPrefix(rel, "..") {
		fmt.Fprintf(c.err, "dipline starter: %s is not inside the folder of %s; workflows read only files beside them\n", data, *out)
		return exitBadUser
	}
	name := strings.TrimSuffix(filepath.Base(data), filepath.Ext(data))
	text := kinds.Starter(filepath.ToSlash(rel), *out, name, *seed)
	if err := os.WriteFile(*out, []byte(text), 0o644); err != nil {
		fmt.Fprintln(c.err, "dipline starter:", err)
		return exitFailed
	}
	fmt.Fprintf(c.out, "wrote %s; check it with: dipline check %s\n", *out, *out)
	return exitOK
}
