package photometry

import (
	"bytes"
	"fmt"
	"math"
	"math/bits"
	"slices"
	"sort"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/fits"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/textrows"
)

// CommonOffsets are Julian dates that light-curve files commonly subtract from their times
// (common practice): 2 400 000 (the reduced Julian date), 2 450 000, 2 454 833 (the
// BKJD-style times of one survey's products), 2 457 000 (BTJD-style times) and 2 460 000.
var CommonOffsets = []float64{2400000, 2450000, 2454833, 2457000, 2460000}

// namedOffsets are the offsets a time column's name states (common practice of the survey
// products that use these names; a modified Julian date counts from JD 2400000.5).
var namedOffsets = map[string]float64{"btjd": 2457000, "bkjd": 2454833, "mjd": 2400000.5}

// A light curve of our era starts between JD 2 440 000 (1968) and JD 2 470 000 (2050) (from
// memory): an offset that puts the first time outside is not the file's.
const (
	eraFirstJD = 2440000
	eraLastJD  = 2470000
)

// gapCadences is how many median cadences a step between two kept points must exceed to be
// counted as a gap in a file's description (our choice; the reading does not use it).
const gapCadences = 5

// FileReport is what one light-curve file holds as this step's reader sees it, before a
// workflow is written for it: the columns it would read, the rows it would drop, the
// sampling, and what the file says (or does not say) about its times.
type FileReport struct {
	Format  string         // "comma-separated text", "FITS HDU 1 (LIGHTCURVE)", …
	Header  []string       // every column name, as written
	Columns [nRoles]string // the column chosen for each role ("" when none)
	// Uninherited are time keywords the primary header holds that the table does not
	// inherit (no INHERIT = T), so that they were not read.
	Uninherited []string

	Rows      int        // data rows read
	Flagged   int        // rows dropped for a nonzero flag (every bit, the default mask)
	FlagBits  []BitCount // how many rows set each bit, lowest bit first
	Undefined int        // rows whose flag is undefined (blank, or a FITS null)
	Unusable  int        // other rows dropped: a value not finite, an error not positive
	Kept      int        // rows the default reading keeps (before duplicate times)

	// Times of kept rows, in days.
	First, Last float64 // as read: after the FITS unit and offsets, before any reference
	Cadence     float64 // median spacing
	Baseline    float64 // last − first
	Gaps        int     // steps longer than gapCadences cadences
	LongestGap  float64 // the longest step, when Gaps > 0

	// Reference: the Julian date of time 0 the file states (HasRef), with where from.
	HasRef  bool
	RefJD   float64
	RefFrom string
	// FullJD: the times are full Julian dates (no reference needed).
	FullJD bool
	// Offsets are the CommonOffsets that would put the first time inside our era, when the
	// times are neither full Julian dates nor referred to a stated date.
	Offsets []float64
	// Stated is an offset the file names by other means than a keyword: its time column's
	// name (BTJD, BKJD) or a comment line above the header that names one of the common
	// offsets; StatedHow says where and quotes it, for the user to judge. NaN when none.
	Stated    float64
	StatedHow string

	// FITS only: the time keywords as written ("" when absent).
	FITS                       bool
	TimeSys, TimeRef, TimeUnit string
	// ScaleKnown: the header gives both TIMESYS and TIMEREF, read into Scale (ORIGIN_SCALE).
	ScaleKnown bool
	Scale      string
}

// BitCount is how many rows set one flag bit.
type BitCount struct {
	Bit  int // 0 for the value 1, 1 for 2, …
	Rows int
}

// InspectFile reads one file as Read would with cfg (the same column choice, units and
// offsets) and describes it. It refuses only what no setting could mend: no time or flux
// column, rows that do not parse, a FITS keyword that is not what it should be. A time
// scale the FITS header states takes the place of cfg's, so that a header on another scale
// is described rather than refused.
func InspectFile(cfg Config, f steps.File) (*FileReport, error) {
	rep := &FileReport{Stated: math.NaN()}
	quiet := func(string, ...any) {}
	var r *rawSegment
	if bytes.HasPrefix(f.Data, []byte("SIMPLE  =")) {
		rep.FITS = true
		if err := describeFITSTime(&cfg, f, rep); err != nil {
			return nil, err
		}
		var err error
		if r, err = readFITS(&cfg, f.Name, f.Data, quiet); err != nil {
			return nil, err
		}
	} else {
		t, err := readTextHeader(f.Name, f.Data)
		if err != nil {
			return nil, err
		}
		rep.Format = t.delimName() + "-separated text"
		rep.Header = t.header
		cfg.TimeZero = nil
		if r, err = readText(&cfg, f.Name, f.Data, quiet); err != nil {
			return nil, err
		}
		if v, how, ok := commentOffset(f.Data, t.line); ok {
			rep.Stated, rep.StatedHow = v, how
		}
	}
	rep.Columns = r.cols
	if v, ok := namedOffsets[strings.ToLower(bareName(r.cols[TimeCol]))]; ok {
		rep.Stated = v
		rep.StatedHow = fmt.Sprintf("the time column's name, %s, which by common practice counts from it", r.cols[TimeCol])
	} else if v, _, ok := statedOffset(r.cols[TimeCol]); ok {
		rep.Stated = v
		rep.StatedHow = fmt.Sprintf("the time column's name, %q, which states it", r.cols[TimeCol])
	}
	rep.describeRows(&cfg, r)
	if rep.Kept < 2 {
		return rep, nil
	}
	rep.HasRef = r.hasRef
	if r.hasRef {
		rep.RefJD = float64(r.refInt) + r.refFrac
		rep.RefFrom = r.refFrom
	}
	start := rep.First + rep.RefJD
	rep.FullJD = !r.hasRef && start >= minJD && start <= maxJD
	if !r.hasRef && !rep.FullJD {
		cands := CommonOffsets
		if !math.IsNaN(rep.Stated) && !slices.Contains(cands, rep.Stated) {
			cands = append(slices.Clone(cands), rep.Stated) // one the file states (an MJD's 2400000.5)
		}
		for _, o := range cands {
			if jd := o + rep.First; jd >= eraFirstJD && jd <= eraLastJD {
				rep.Offsets = append(rep.Offsets, o)
			}
		}
	}
	return rep, nil
}

// describeFITSTime finds the table Read would read and records its time keywords; a
// TIMESYS and TIMEREF this step knows replace cfg's time scale.
func describeFITSTime(cfg *Config, f steps.File, rep *FileReport) error {
	ff, err := fits.Open(f.Data)
	if err != nil {
		return steps.BadInputf("%s: %v", f.Name, err)
	}
	t, err := chooseTable(cfg, f.Name, ff, func(string, ...any) {})
	if err != nil {
		return err
	}
	h := fitsHDU{ext: t.HDU(), primary: ff.HDUs()[0], file: f.Name}
	rep.Format = "FITS " + t.HDU().String()
	rep.Header = columnNames(t)
	rep.Uninherited = h.uninherited()
	for _, k := range []struct {
		key string
		dst *string
	}{{"TIMESYS", &rep.TimeSys}, {"TIMEREF", &rep.TimeRef}, {"TIMEUNIT", &rep.TimeUnit}} {
		if *k.dst, _, err = h.str(k.key, ""); err != nil {
			return err
		}
	}
	origin, scale, _ := strings.Cut(cfg.TimeScale, "_")
	if s, ok := timesysScale[strings.ToUpper(rep.TimeSys)]; ok {
		scale = s
	}
	if o, ok := timerefOrigin[strings.ToUpper(rep.TimeRef)]; ok {
		origin = o
	}
	cfg.TimeScale = origin + "_" + scale
	rep.Scale = cfg.TimeScale
	rep.ScaleKnown = rep.TimeSys != "" && rep.TimeRef != ""
	// The reference, too, is the header's alone here: time_zero is what the starter may
	// have to suggest.
	cfg.TimeZero = nil
	return nil
}

// describeRows counts the rows the default reading drops, by flag bit and by reason, and
// measures the sampling of the rows it keeps.
func (rep *FileReport) describeRows(cfg *Config, r *rawSegment) {
	rep.Rows = len(r.time)
	perBit := map[int]int{}
	var keep []int
	for i := range r.time {
		if r.flag != nil {
			b, ok := flagBits(r.flag[i])
			switch {
			case math.IsNaN(r.flag[i]):
				rep.Undefined++
				rep.Flagged++
				continue
			case ok && b != 0:
				for b != 0 {
					k := bits.TrailingZeros64(b)
					perBit[k]++
					b &^= 1 << k
				}
				rep.Flagged++
				continue
			}
		}
		e := 1.0
		if r.err != nil {
			e = r.err[i]
		}
		if !finite(r.time[i]) || !finite(r.flux[i]) || !finite(e) || e <= 0 {
			rep.Unusable++
			continue
		}
		keep = append(keep, i)
	}
	var d lightcurve.Dropped // a flux no star gives, by the reader's own rule
	keep = dropImpossibleFlux(r, keep, &d, func(string, ...any) {})
	rep.Unusable += d.Unusable
	times := make([]float64, len(keep))
	for k, i := range keep {
		times[k] = r.time[i]
	}
	for k, n := range perBit {
		rep.FlagBits = append(rep.FlagBits, BitCount{Bit: k, Rows: n})
	}
	sort.Slice(rep.FlagBits, func(a, b int) bool { return rep.FlagBits[a].Bit < rep.FlagBits[b].Bit })
	rep.Kept = len(times)
	if len(times) < 2 {
		return
	}
	sort.Float64s(times)
	step := diffs(make([]float64, 0, len(times)), times)
	rep.First, rep.Last = times[0], times[len(times)-1]
	rep.Baseline = rep.Last - rep.First
	rep.Cadence = median(step, make([]float64, len(step)))
	for _, d := range step {
		if d > gapCadences*rep.Cadence {
			rep.Gaps++
			rep.LongestGap = math.Max(rep.LongestGap, d)
		}
	}
}

// commentOffset looks in the comment lines above a text file's header (before line
// headerLine) for a number equal to one of CommonOffsets. It returns the offset and the
// line quoted, when exactly one such offset is named; the user judges the line.
func commentOffset(data []byte, headerLine int) (float64, string, bool) {
	found := map[float64]string{}
	rest := bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	for n := 1; n < headerLine && len(rest) > 0; n++ {
		var line []byte
		line, rest = textrows.NextLine(rest)
		text := strings.TrimSpace(string(line))
		if !strings.HasPrefix(text, "#") {
			continue
		}
		for _, word := range strings.FieldsFunc(text, func(c rune) bool {
			return !(c >= '0' && c <= '9' || c == '.')
		}) {
			v, err := strconv.ParseFloat(strings.TrimSuffix(word, "."), 64)
			if err != nil {
				continue
			}
			for _, o := range CommonOffsets {
				if v == o {
					if _, seen := found[o]; !seen {
						found[o] = fmt.Sprintf("line %d of the file, which reads %q", n, quoteLine(text))
					}
				}
			}
		}
	}
	if len(found) != 1 {
		return 0, "", false
	}
	for o, how := range found {
		return o, how, true
	}
	return 0, "", false
}

// quoteLine cuts a comment line quoted to the user to maxQuoted bytes of valid text.
func quoteLine(s string) string {
	const maxQuoted = 120
	if len(s) > maxQuoted {
		s = s[:maxQuoted] + "…"
	}
	return strings.ToValidUTF8(s, "")
}
