package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// starterTemplate is the workflow `dipline starter` writes: photometry, a biweight
// detrend, a first search, a detrend with its transits masked and a second search. Every
// setting it leaves out is derived from the data and printed when the workflow runs.
const starterTemplate = `# A starter workflow for %[1]s, written by dipline starter.
# Run it with:  dipline run %[2]s
# Every setting left out takes its default or is derived from the data; the run prints each
# derived value. 'dipline kinds' lists every attribute.

analysis %[3]q {
  seed = %[4]d
}

photometry "lc" {
  files = [%[1]q]
  # Text files: the Julian date of time 0, unless the times are full Julian dates.
  # time_zero = 2460000
}

# Remove the star's variability. The window should be about three times the longest
# transit you look for, and short enough to follow the star's variability.
detrend "quiet" {
  light_curve = photometry.lc
  span        = "0.5 d"
}

search "first" {
  light_curve  = detrend.quiet
  star_density = "1 rho_sun" # the host's mean density bounds the durations searched
}

# Detrend again with the transits found left out of the trend, then search again.
detrend "masked" {
  light_curve = photometry.lc
  span        = "0.5 d"
  mask        = search.first
}

search "dips" {
  light_curve  = detrend.masked
  star_density = "1 rho_sun"
}
`

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
	text := fmt.Sprintf(starterTemplate, filepath.ToSlash(rel), *out, name, *seed)
	if err := os.WriteFile(*out, []byte(text), 0o644); err != nil {
		fmt.Fprintln(c.err, "dipline starter:", err)
		return exitFailed
	}
	fmt.Fprintf(c.out, "wrote %s; check it with: dipline check %s\n", *out, *out)
	return exitOK
}
