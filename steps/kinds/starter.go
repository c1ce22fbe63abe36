package kinds

import (
	"fmt"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/photometry"
)

// StarterWorkflow is a starter workflow for one light curve, with what reading the file
// told and what it could not tell.
type StarterWorkflow struct {
	Text    string   // the workflow file
	Found   []string // what the file says, one finding a line
	Unknown []string // what it does not say, each with what to write
	// Runs is false when the workflow cannot run before the user writes a setting (a time
	// reference the file does not state); Unknown then says which.
	Runs bool
}

// Starter reads a light curve with the photometry kind's own reader and writes a workflow
// for it: photometry, a first detrend and search, a detrend with the transits found left
// out of the trend, a second search, a vet step and a fit; the star and derive steps are
// sketched in comments. file.Name is the file's path relative to the workflow (slashes),
// out the workflow's own path (for the comment saying how to run it), name the analysis
// label and seed its seed. The workflow runs as written whenever the file states its time
// reference; when it does not, Runs is false and Unknown names the candidates. A file the
// reader cannot take at all (no time or flux column, a row that does not parse) is an error
// in the reader's words.
func Starter(file steps.File, out, name string, seed int) (*StarterWorkflow, error) {
	c, err := photometry.New().Schema().New()
	if err != nil {
		return nil, err
	}
	cfg := c.(*photometry.Config)
	if err := (photometry.Kind{}).Check(cfg); err != nil {
		return nil, err
	}
	rep, err := photometry.InspectFile(*cfg, file)
	if err != nil {
		return nil, err
	}
	s := &StarterWorkflow{Runs: true}
	p := planTimes(rep, s)
	s.describe(rep)
	if rep.Kept < 2 {
		s.Runs = false
		s.Unknown = append(s.Unknown, fmt.Sprintf("usable rows: only %d of %d rows are usable, and a light curve needs at least 2", rep.Kept, rep.Rows))
	}
	if s.Runs {
		s.readAsWritten(*cfg, p, file)
	}
	if len(rep.Uninherited) > 0 {
		s.Unknown = append(s.Unknown, fmt.Sprintf("the primary header: it holds %s, which the table does not inherit (no INHERIT = T), so they were not read; if they are the table's, add INHERIT = T to its header, or write them in the workflow",
			strings.Join(rep.Uninherited, ", ")))
	}
	s.Unknown = append(s.Unknown,
		`the star's density: nothing in a light curve gives it, so both searches use the Sun's ("1 rho_sun"); write the host's in star_density, since it sets the transit durations searched, or, once the star step sketched at the end is written, replace star_density on both searches by star = star.host`)
	s.Text = starterText(file.Name, out, name, seed, p)
	return s, nil
}

// readAsWritten reads the file as the written workflow's photometry step will, and when
// that stops (a median flux of zero, rows that leave too few points) says so, so that the
// starter never promises a run the first step refuses.
func (s *StarterWorkflow) readAsWritten(cfg photometry.Config, p timePlan, file steps.File) {
	if p.zero != "" {
		v, err := strconv.ParseFloat(p.zero, 64)
		if err != nil {
			return // written from a float; cannot happen
		}
		cfg.TimeZero = &v
	}
	if p.scale != "" {
		cfg.TimeScale = p.scale
	}
	if _, err := photometry.Read(cfg, []steps.File{file}, nil); err != nil {
		s.Runs = false
		s.Unknown = append(s.Unknown, "the light curve: the photometry step would stop on it as written: "+err.Error())
	}
}

// timePlan is what the photometry block says about time.
type timePlan struct {
	zero        string // time_zero as written, "" for none
	zeroWhy     string // the comment beside it
	zeroMissing string // when the reference is unknown: the commented line to complete
	scale       string // time_scale as written, "" to leave the default
	scaleWhy    string
}

// planTimes decides the photometry block's time settings from what the file says and
// records the findings and the gaps in s.
func planTimes(rep *photometry.FileReport, s *StarterWorkflow) timePlan {
	var p timePlan
	const defaultScale = "BJD_TDB"
	switch {
	case rep.FITS && rep.ScaleKnown:
		s.Found = append(s.Found, fmt.Sprintf("time scale: %s (TIMESYS = '%s', TIMEREF = '%s')", rep.Scale, rep.TimeSys, rep.TimeRef))
		if rep.Scale != defaultScale {
			p.scale, p.scaleWhy = rep.Scale, "as the header states (TIMESYS, TIMEREF)"
		}
	case rep.FITS:
		missing := []string{}
		if rep.TimeSys == "" {
			missing = append(missing, "TIMESYS")
		}
		if rep.TimeRef == "" {
			missing = append(missing, "TIMEREF")
		}
		p.scale = rep.Scale
		p.scaleWhy = "the header has no " + strings.Join(missing, " or ") + "; this fills it: check it"
		s.Unknown = append(s.Unknown, fmt.Sprintf("the time scale: the header has no %s; the workflow states time_scale = %q, which fills it; write the scale the times are on if it is another",
			strings.Join(missing, " or "), rep.Scale))
	default:
		col := strings.ToLower(rep.Columns[photometry.TimeCol])
		switch {
		case strings.Contains(col, "bjd_tdb") || col == "btjd" || col == "bkjd":
			s.Found = append(s.Found, fmt.Sprintf("time scale: BJD_TDB, from the time column's name %s", rep.Columns[photometry.TimeCol]))
		case strings.HasPrefix(col, "hjd"):
			p.scale, p.scaleWhy = "HJD_UTC", "the time column is named "+rep.Columns[photometry.TimeCol]+"; heliocentric dates are most often on UTC: check it"
			s.Unknown = append(s.Unknown, fmt.Sprintf("the time scale: the column %s holds heliocentric Julian dates, on a scale the file does not state; the workflow takes HJD_UTC, the usual one (common practice); write another if the times are on it",
				rep.Columns[photometry.TimeCol]))
		default:
			s.Unknown = append(s.Unknown, fmt.Sprintf("the time scale: a text file does not state it; the workflow takes %s, the default; write time_scale if the times are on another (e.g. \"HJD_UTC\")", defaultScale))
		}
	}
	if rep.Kept < 2 {
		return p
	}
	offsets := make([]string, len(rep.Offsets))
	for i, o := range rep.Offsets {
		offsets[i] = jd(o)
	}
	switch {
	case rep.HasRef:
		s.Found = append(s.Found, fmt.Sprintf("time reference: JD %s from %s", jd(rep.RefJD), rep.RefFrom))
	case rep.FullJD:
		s.Found = append(s.Found, fmt.Sprintf("times: full Julian dates (the first is %s); no time_zero is needed", jd(rep.First)))
	case stated(rep):
		p.zero = jd(rep.Stated)
		p.zeroWhy = "named in " + strings.SplitN(rep.StatedHow, ",", 2)[0] + ": check it"
		s.Found = append(s.Found, fmt.Sprintf("times: days from an offset (the first is %s); %s would each fit, and time_zero = %s is written because the file names it: %s",
			num(rep.First), listOr(offsets), jd(rep.Stated), rep.StatedHow))
	default:
		s.Runs = false
		where := "time_zero"
		if rep.FITS {
			where = "time_zero (the header has no BJDREFI/BJDREFF, JDREF or MJDREF, so the workflow must give the reference)"
		}
		if len(rep.Offsets) == 0 {
			p.zeroMissing = "time_zero = ?  # the Julian date of time 0: nothing in the file says it"
			s.Unknown = append(s.Unknown, fmt.Sprintf("the time reference: the first time is %s, which is neither a full Julian date nor days after any of the common offsets %s; write %s as the Julian date of time 0",
				num(rep.First), listAnd(jds(photometry.CommonOffsets)), where))
		} else {
			p.zeroMissing = fmt.Sprintf("time_zero = ?  # the Julian date of time 0; the times fit %s", listOr(offsets))
			s.Unknown = append(s.Unknown, fmt.Sprintf("the time reference: the first time is %s, days from an offset the file does not state; %s would each put it in a plausible year, so the starter cannot choose; write %s, e.g. time_zero = %s if that is what the times count from",
				num(rep.First), listOr(offsets), where, offsets[len(offsets)-1]))
		}
	}
	return p
}

// stated reports whether the file names an offset that also fits its times.
func stated(rep *photometry.FileReport) bool {
	for _, o := range rep.Offsets {
		if o == rep.Stated {
			return true
		}
	}
	return false
}

// describe adds the findings about columns, rows and sampling.
func (s *StarterWorkflow) describe(rep *photometry.FileReport) {
	var cols []string
	for r, c := range rep.Columns {
		if c != "" {
			cols = append(cols, fmt.Sprintf("%s %q", photometry.Role(r), c))
		}
	}
	s.Found = append([]string{fmt.Sprintf("format: %s; columns %s", rep.Format, strings.Join(cols, ", "))}, s.Found...)
	if rep.Columns[photometry.ErrorCol] == "" {
		s.Found = append(s.Found, "errors: no error column; the run estimates one error per point from the point-to-point scatter")
	}
	rows := fmt.Sprintf("rows: %d read", rep.Rows)
	if rep.Flagged > 0 {
		var b []string
		for _, bc := range rep.FlagBits {
			b = append(b, fmt.Sprintf("bit %d (value %d): %d", bc.Bit, uint64(1)<<bc.Bit, bc.Rows))
		}
		if rep.Undefined > 0 {
			b = append(b, fmt.Sprintf("undefined flag: %d", rep.Undefined))
		}
		rows += fmt.Sprintf("; %d with a nonzero flag are dropped (rows per flag bit, a row may set several: %s)", rep.Flagged, strings.Join(b, ", "))
	} else if rep.Columns[photometry.FlagCol] != "" {
		rows += "; no row is flagged"
	}
	if rep.Unusable > 0 {
		rows += fmt.Sprintf("; %d more dropped for a value that is not finite or an error that is not positive", rep.Unusable)
	}
	s.Found = append(s.Found, rows+fmt.Sprintf("; %d kept", rep.Kept))
	if rep.Kept < 2 {
		return
	}
	sampling := fmt.Sprintf("sampling: median spacing %s; baseline %s d", duration(rep.Cadence), num(rep.Baseline))
	if rep.Gaps > 0 {
		sampling += fmt.Sprintf("; %d gap(s) longer than five spacings, the longest %s", rep.Gaps, duration(rep.LongestGap))
	} else {
		sampling += "; no gap longer than five spacings"
	}
	s.Found = append(s.Found, sampling)
}

// duration writes days in minutes, hours or days, whichever reads best.
func duration(d float64) string {
	switch {
	case d < 2.0/24:
		return num(d*1440) + " min"
	case d < 2:
		return num(d*24) + " h"
	}
	return num(d) + " d"
}

// num writes a number with five significant digits.
func num(v float64) string { return strconv.FormatFloat(v, 'g', 5, 64) }

// jd writes a Julian date in full.
func jd(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }

func jds(v []float64) []string {
	out := make([]string, len(v))
	for i, x := range v {
		out[i] = jd(x)
	}
	return out
}

func listOr(v []string) string  { return list(v, "or") }
func listAnd(v []string) string { return list(v, "and") }

func list(v []string, word string) string {
	switch len(v) {
	case 0:
		return "none"
	case 1:
		return v[0]
	}
	return strings.Join(v[:len(v)-1], ", ") + " " + word + " " + v[len(v)-1]
}

// starterText writes the workflow.
func starterText(data, out, name string, seed int, p timePlan) string {
	var b strings.Builder
	fmt.Fprintf(&b, `# A starter workflow for %[1]s, written by dipline starter.
# Check it with:  dipline check %[2]s
# Run it with:    dipline run %[2]s
# Every setting left out takes its default or is derived from the data; the run prints each
# derived value. 'dipline kinds' lists every attribute.

analysis %[3]q {
  seed = %[4]d
}

photometry "lc" {
  files = [%[1]q]
`, data, out, name, seed)
	if p.scale != "" {
		fmt.Fprintf(&b, "  time_scale = %q # %s\n", p.scale, p.scaleWhy)
	}
	switch {
	case p.zero != "":
		fmt.Fprintf(&b, "  time_zero = %s # %s\n", p.zero, p.zeroWhy)
	case p.zeroMissing != "":
		fmt.Fprintf(&b, "  # The file does not say what its times count from: complete this line.\n  # %s\n", p.zeroMissing)
	}
	b.WriteString(starterSteps)
	return b.String()
}

// starterSteps follows the photometry block. Every search states the Sun's density because
// the file cannot give the star's; the comment says so where the user will change it.
const starterSteps = `}

# Remove the star's own variability with a robust local quadratic in a sliding window. The
# window is chosen from the light curve: the run prints the choice and what it weighed (how
# much of a transit each window keeps against the bias the star's variability leaves).
detrend "first" {
  light_curve = photometry.lc
}

search "first" {
  light_curve  = detrend.first
  star_density = "1 rho_sun" # the Sun's: write the host's; it bounds the durations searched
}

# Detrend again with the transits found left out of the trend, so that they keep their
# depth, then search again.
detrend "masked" {
  light_curve = photometry.lc
  mask        = search.first
}

search "dips" {
  light_curve  = detrend.masked
  star_density = "1 rho_sun" # the Sun's: write the host's
}

# Test every signal: odd and even depths, a secondary eclipse, the shape, period ratios, the
# star's own periods. Each test says whether the data agree, give a caution or disagree.
# Vetting supports, and does not replace, a validation of a planet.
vet "dips" {
  signals     = search.dips
  light_curve = detrend.masked
  fit         = fit.planets # the fitted shape: grazing, density and blend tests
  # star = star.host        # once the star below is written
}

# A limb-darkened transit model fitted to the signals of the second search: posterior
# samples of each planet's period, epoch, radius ratio and impact parameter, and of the
# star's density the transits imply. Sampling stops once the chains are long enough, or
# after max_steps updates. It needs at least one signal.
fit "planets" {
  light_curve = detrend.masked
  signals     = search.dips
}

# What usually follows needs the star, which a light curve cannot give. Fill in the
# catalogue file and the star's id, remove the '#' and run again ('dipline kinds' lists
# every attribute). Once the star is written, replace star_density on both searches by
# star = star.host: they then search for the star's own density, read from the star step
# as the vet reads it, and the density is written once (a revision of the star's catalogue
# row then re-runs the searches and the fit after them).
#
# catalogue "nearby" {                  # a table of stars with an id column
#   file = "stars.csv"                  # beside this workflow: parallax, magnitudes, …
# }
#
# star "host" {                         # radius, mass, density of the host
#   method = "cool-dwarf"               # or another method 'dipline kinds' lists
#   row    = catalogue.nearby["YOUR-STAR-ID"]
# }
#
# derive "planets" {                    # radius, orbit, temperature and follow-up metrics
#   fit  = fit.planets
#   star = star.host
# }
`
