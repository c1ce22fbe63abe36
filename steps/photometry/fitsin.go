package photometry

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/fits"
	"dipline/steps/units"
)

// Time scales and origins this step can state. The light curve's TimeScale is written
// ORIGIN_SCALE: BJD (referred to the solar-system barycentre), HJD (to the Sun's centre) or
// JD (no light-time correction: topocentric or geocentric), on one of the IAU scales.
var (
	timeOrigins = []string{"BJD", "HJD", "JD"}
	timeScales  = []string{"TDB", "TT", "UTC", "TAI", "TCB", "TCG"}
)

// TimeScaleChoices lists every ORIGIN_SCALE the time_scale parameter accepts.
func TimeScaleChoices() []string {
	var out []string
	for _, o := range timeOrigins {
		for _, s := range timeScales {
			out = append(out, o+"_"+s)
		}
	}
	return out
}

// timesysScale maps FITS TIMESYS values (FITS 4.0 §9.2.1; TDT and IAT are older names of TT
// and TAI) to our scale names.
var timesysScale = map[string]string{
	"TDB": "TDB", "TT": "TT", "TDT": "TT", "UTC": "UTC", "TAI": "TAI", "IAT": "TAI", "TCB": "TCB", "TCG": "TCG",
}

// timerefOrigin maps FITS TIMEREF values (FITS 4.0 §9.2.3; SOLARSYSTEM is the older name of
// the barycentre) to our origin names.
var timerefOrigin = map[string]string{
	"SOLARSYSTEM": "BJD", "BARYCENTER": "BJD", "HELIOCENTER": "HJD",
	"TOPOCENTER": "JD", "GEOCENTER": "JD", "LOCAL": "JD",
}

// timeUnit reads a FITS time unit ("d", "s", "min", "h", "a" or "yr") as days per unit.
func timeUnit(u string) (float64, bool) {
	u = strings.TrimSpace(u)
	if u == "a" {
		u = "yr"
	}
	f, ok := units.Time.Units[u]
	return f, ok
}

// exposureKeys are the header keywords tried, in this order, for the integration time of one
// point. Each is read in the unit given in square brackets at the start of its comment
// ("[s] …", the FITS convention for units in comments, FITS 4.0 §4.3.2), else in TIMEUNIT.
// A value longer than the median cadence is a total over the file and is passed over.
var exposureKeys = []string{"EXPOSURE", "INT_TIME", "TIMEDEL"}

// fitsHDU looks keywords up in an extension and, when it says INHERIT = T, in the primary
// header after it (FITS 4.0 §4.4.2.6, the inheritance convention).
type fitsHDU struct {
	ext, primary *fits.HDU
	file         string
}

func (h fitsHDU) card(key string) *fits.Card {
	if c := h.ext.Header.Card(key); c != nil {
		return c
	}
	if inherit, _ := h.ext.Header.Bool("INHERIT"); inherit {
		return h.primary.Header.Card(key)
	}
	return nil
}

// timeKeys are the time keywords this step reads from a table's header.
var timeKeys = []string{"TIMESYS", "TIMEREF", "TIMEUNIT", "BJDREFI", "BJDREFF", "BJDREF", "JDREFI", "JDREFF", "JDREF", "MJDREFI", "MJDREFF", "MJDREF", "TIMEZERO", "TIMEOFFS", "TIMEPIXR"}

// uninherited lists the time keywords the primary header holds and the extension neither
// holds nor inherits (no INHERIT = T): by the standard they are not the table's, but a
// file that put them there most likely meant them to be.
func (h fitsHDU) uninherited() []string {
	if inherit, _ := h.ext.Header.Bool("INHERIT"); inherit || h.primary == h.ext {
		return nil
	}
	var out []string
	for _, k := range timeKeys {
		if h.ext.Header.Card(k) == nil && h.primary.Header.Card(k) != nil {
			out = append(out, k)
		}
	}
	return out
}

// noteUninherited says which time keywords of the primary header were not read.
func (h fitsHDU) noteUninherited(at string, note noteFunc) {
	if keys := h.uninherited(); len(keys) > 0 {
		note("%s: the primary header holds %s, which this table does not inherit (it has no INHERIT = T), so they were not read: add INHERIT = T to the table's header if they are the table's, or state them in the workflow", at, strings.Join(keys, ", "))
	}
}

// str returns a string keyword, or def when absent; present but not a string is an error.
func (h fitsHDU) str(key, def string) (string, bool, error) {
	c := h.card(key)
	if c == nil {
		return def, false, nil
	}
	s, err := c.AsString()
	if err != nil {
		return "", false, steps.BadInputf("%s: %v", h.file, err)
	}
	return strings.TrimSpace(s), true, nil
}

// num returns a numeric keyword; ok is false when absent.
func (h fitsHDU) num(key string) (float64, bool, error) {
	c := h.card(key)
	if c == nil {
		return 0, false, nil
	}
	v, err := c.AsFloat()
	if err != nil {
		return 0, false, steps.BadInputf("%s: %v", h.file, err)
	}
	if !finite(v) {
		return 0, false, steps.BadInputf("%s: %s: keyword %s = %v is not finite", h.file, h.ext, key, v)
	}
	return v, true, nil
}

// chooseTable finds the binary table: the one named by extension, else the first whose
// columns include a time and a flux column.
func chooseTable(cfg *Config, file string, f *fits.File, note noteFunc) (*fits.BinaryTable, error) {
	if cfg.Extension != "" {
		t, err := f.Table(cfg.Extension)
		if err != nil {
			return nil, steps.BadInputf("%s: extension = %q: %v", file, cfg.Extension, err)
		}
		return t, nil
	}
	var seen []string
	for _, h := range f.HDUs() {
		t := h.Table()
		if t == nil {
			continue
		}
		if _, _, err := pickColumns(file, columnNames(t), cfg.Columns); err == nil {
			note("%s: reading %s, the first binary table with a time and a flux column%s", file, h, laterTables(cfg, file, f, h))
			return t, nil
		}
		seen = append(seen, fmt.Sprintf("%s with columns %s", h, describe(columnNames(t))))
	}
	if len(seen) == 0 {
		return nil, steps.BadInputf("%s: the file has no binary table extension", file)
	}
	return nil, steps.BadInputf("%s: no binary table has both a time and a flux column (%s); name the columns in columns = { ... } or choose the table with extension",
		file, strings.Join(seen, "; "))
}

// laterTables names, for a note, the binary tables after first that also have a time and
// a flux column: a file with two light curves should say which was read.
func laterTables(cfg *Config, file string, f *fits.File, first *fits.HDU) string {
	var later []string
	after := false
	for _, h := range f.HDUs() {
		if h == first {
			after = true
			continue
		}
		if t := h.Table(); after && t != nil {
			if _, _, err := pickColumns(file, columnNames(t), cfg.Columns); err == nil {
				later = append(later, h.String())
			}
		}
	}
	if len(later) == 0 {
		return ""
	}
	return fmt.Sprintf("; %s also has them: choose it with extension", strings.Join(later, " and "))
}

// columnNames lists a table's column names in order.
func columnNames(t *fits.BinaryTable) []string {
	var n []string
	for _, c := range t.Columns() {
		n = append(n, c.Name)
	}
	return n
}

// readFITS reads one binary table into a raw segment, checking that its time keywords agree
// with the scale the workflow states.
func readFITS(cfg *Config, file string, data []byte, note noteFunc) (*rawSegment, error) {
	f, err := fits.Open(data)
	if err != nil {
		return nil, steps.BadInputf("%s: %v", file, err)
	}
	t, err := chooseTable(cfg, file, f, note)
	if err != nil {
		return nil, err
	}
	h := fitsHDU{ext: t.HDU(), primary: f.HDUs()[0], file: file}
	at := fmt.Sprintf("%s %s", file, t.HDU())
	idx, chosen, err := pickColumns(at, columnNames(t), cfg.Columns)
	if err != nil {
		return nil, steps.BadInput(err)
	}
	r := &rawSegment{file: file, cols: chosen}
	r.where = func(i int) string { return fmt.Sprintf("%s row %d", at, i+1) }
	note("%s: columns %s", at, describeChoice(chosen))
	noteFluxChoice(at, columnNames(t), idx, chosen, note)

	cols := t.Columns()
	vals, err := readRoles(cols, idx, file, at, note)
	if err != nil {
		return nil, err
	}
	r.time, r.flux, r.err, r.flag = vals[TimeCol], vals[FluxCol], vals[ErrorCol], vals[FlagCol]

	h.noteUninherited(at, note)
	if err := checkScale(cfg, h, at, note); err != nil {
		return nil, err
	}
	perUnit, err := columnTimeUnit(h, cols[idx[TimeCol]], at, note)
	if err != nil {
		return nil, err
	}
	if err := readReference(cfg, h, r, at, note); err != nil {
		return nil, err
	}
	keyUnit, err := keywordTimeUnit(h, at)
	if err != nil {
		return nil, err
	}
	shift, err := timeShift(h, keyUnit, at, note)
	if err != nil {
		return nil, err
	}
	for i, v := range r.time {
		r.time[i] = v*perUnit + shift
	}
	if r.exposure, err = exposureCandidates(h, keyUnit, file); err != nil {
		return nil, err
	}
	if err := readBandAndInstrument(h, r); err != nil {
		return nil, err
	}
	return r, nil
}

// readRoles reads the column chosen for each role (idx[role], −1 when none) as floats,
// noting a column that holds several values per row, of which the first is used.
func readRoles(cols []*fits.Column, idx [nRoles]int, file, at string, note noteFunc) ([nRoles][]float64, error) {
	var vals [nRoles][]float64
	for role := Role(0); role < nRoles; role++ {
		if idx[role] < 0 {
			continue
		}
		c := cols[idx[role]]
		var err error
		if vals[role], err = c.Floats(0, nil); err != nil {
			return vals, steps.BadInputf("%s: %v", file, err)
		}
		if c.Repeat > 1 {
			note("%s: column %s holds %d values per row; the first is used", at, c.Name, c.Repeat)
		}
		if role == TimeCol && c.Type == 'E' {
			noteSinglePrecision(at, c.Name, vals[role], note)
		}
	}
	return vals, nil
}

// noteSinglePrecision says how coarsely 32-bit floats (TFORM E) resolve a time column: a
// float32 keeps 24 bits, so values near t are 2^(⌊log₂|t|⌋−23) apart (IEEE 754), a tenth
// of a second for days near 1000 but hours for full Julian dates.
func noteSinglePrecision(at, name string, t []float64, note noteFunc) {
	big := 0.0
	for _, v := range t {
		if !math.IsInf(v, 0) && !math.IsNaN(v) {
			big = math.Max(big, math.Abs(v))
		}
	}
	if big == 0 {
		return
	}
	step := math.Ldexp(1, math.Ilogb(big)-23)
	note("%s: column %s holds 32-bit floats, so times near %.6g are resolved only to %.2g of its unit (%.2g s if the unit is days); times are usually kept in 64 bits (TFORM D)",
		at, name, big, step, step*86400)
}

// keywordTimeUnit returns days per unit of the time keywords: TIMEUNIT, or seconds by
// default (FITS 4.0 §9.3).
func keywordTimeUnit(h fitsHDU, at string) (float64, error) {
	keyUnit := units.Time.Units["s"]
	if u, ok, err := h.str("TIMEUNIT", ""); err != nil {
		return 0, err
	} else if ok {
		if keyUnit, ok = timeUnit(u); !ok {
			return 0, steps.BadInputf("%s: TIMEUNIT = '%s' is not a time unit this step reads (d, s, min, h, a)", at, u)
		}
	}
	return keyUnit, nil
}

// timeShift returns what to add to the times, in days: the offsets TIMEZERO and TIMEOFFS,
// and the move to mid-exposure when TIMEPIXR says the stamps are elsewhere in the bin.
func timeShift(h fitsHDU, keyUnit float64, at string, note noteFunc) (float64, error) {
	// Offsets of the time column in its own unit: TIMEZERO (and its newer name TIMEOFFS).
	shift := 0.0
	for _, key := range []string{"TIMEZERO", "TIMEOFFS"} {
		v, ok, err := h.num(key)
		if err != nil {
			return 0, err
		}
		if ok && v != 0 {
			shift += v * keyUnit
			note("%s: %s = %g added to the times", at, key, v)
		}
	}
	// Time stamps at a fraction TIMEPIXR of the bin (0.5 = mid-exposure, the FITS default)
	// are moved to mid-exposure with the bin width TIMEDEL.
	if pixr, ok, err := h.num("TIMEPIXR"); err != nil {
		return 0, err
	} else if ok && pixr != 0.5 {
		del, okd, err := h.num("TIMEDEL")
		if err != nil {
			return 0, err
		}
		if !okd {
			return 0, steps.BadInputf("%s: TIMEPIXR = %g says the times are not mid-exposure, and there is no TIMEDEL to move them by", at, pixr)
		}
		d := (0.5 - pixr) * del * keyUnit
		shift += d
		note("%s: times moved by %s to mid-exposure (TIMEPIXR = %g, TIMEDEL = %g)", at, minutes(d), pixr, del)
	}
	return shift, nil
}

// exposureCandidates reads every exposure keyword present, in exposureKeys order, in the
// unit its comment gives in square brackets or else in TIMEUNIT (keyUnit days).
func exposureCandidates(h fitsHDU, keyUnit float64, file string) ([]exposureCandidate, error) {
	var out []exposureCandidate
	for _, key := range exposureKeys {
		c := h.card(key)
		if c == nil {
			continue
		}
		v, err := c.AsFloat()
		if err != nil {
			return nil, steps.BadInputf("%s: %v", file, err)
		}
		unit, days := "", keyUnit
		if strings.HasPrefix(c.Comment, "[") {
			if end := strings.IndexByte(c.Comment, ']'); end > 0 {
				if u, ok := timeUnit(c.Comment[1:end]); ok {
					unit, days = c.Comment[1:end], u
				}
			}
		}
		text := strconv.FormatFloat(v, 'g', -1, 64)
		if unit != "" {
			text += " " + unit
		} else {
			text += " (in TIMEUNIT)"
		}
		out = append(out, exposureCandidate{key: key, days: v * days, text: text})
	}
	return out, nil
}

// readBandAndInstrument reads the band from FILTER and the instrument from INSTRUME, or
// TELESCOP when that is absent or blank.
func readBandAndInstrument(h fitsHDU, r *rawSegment) error {
	var err error
	if r.band, _, err = h.str("FILTER", ""); err != nil {
		return err
	}
	if r.instrument, _, err = h.str("INSTRUME", ""); err != nil {
		return err
	}
	if r.instrument == "" {
		if r.instrument, _, err = h.str("TELESCOP", ""); err != nil {
			return err
		}
	}
	return nil
}

// describeChoice lists the chosen column of each role, for a note.
func describeChoice(chosen [nRoles]string) string {
	var parts []string
	for r, c := range chosen {
		if c != "" {
			parts = append(parts, fmt.Sprintf("%s %q", Role(r), c))
		}
	}
	return strings.Join(parts, ", ")
}

// checkScale compares TIMESYS and TIMEREF with the stated time scale. A keyword the header
// leaves out is filled from the workflow's time_scale (its scale for TIMESYS, its origin for
// TIMEREF) with a note saying so; a keyword that is present must agree with it, and one that
// does not is refused naming the keyword and the setting.
func checkScale(cfg *Config, h fitsHDU, at string, note noteFunc) error {
	origin, scale, _ := strings.Cut(cfg.TimeScale, "_")
	for _, k := range []timeKeyword{
		{"TIMESYS", timesysScale, "a time scale", "TDB, TT, UTC, TAI, TCB, TCG", "says the times are on %s", "%s", scale},
		{"TIMEREF", timerefOrigin, "a time reference position", "SOLARSYSTEM, BARYCENTER, HELIOCENTER, TOPOCENTER, GEOCENTER, LOCAL", "means %s times", "%s times", origin},
	} {
		if err := k.check(cfg, h, at, note); err != nil {
			return err
		}
	}
	return nil
}

// timeKeyword is one FITS time keyword checked against the workflow's time_scale, with the
// words its messages use.
type timeKeyword struct {
	name   string
	values map[string]string // the keyword's values, upper case, by what they mean
	what   string            // what a value is, for a value the step does not know
	known  string            // the values it knows, for that message
	says   string            // what a value says, with %s for its meaning
	fills  string            // what time_scale fills in, with %s for its part
	want   string            // the part of time_scale the keyword must agree with
}

// check refuses a value the step does not know or one that disagrees with time_scale, and
// notes how time_scale fills a keyword the header leaves out.
func (k timeKeyword) check(cfg *Config, h fitsHDU, at string, note noteFunc) error {
	v, given, err := h.str(k.name, "")
	if err != nil {
		return err
	}
	if !given {
		note("%s: the header has no %s; time_scale = %q fills it: "+k.fills, at, k.name, cfg.TimeScale, k.want)
		return nil
	}
	got, ok := k.values[strings.ToUpper(v)]
	if !ok {
		return steps.BadInputf("%s: %s = '%s' is not %s this step knows (%s)", at, k.name, v, k.what, k.known)
	}
	if got != k.want {
		return steps.BadInputf("%s: %s = '%s' "+k.says+", but the workflow states time_scale = %q (%s); convert the file's times or state its scale",
			at, k.name, v, got, cfg.TimeScale, k.want)
	}
	return nil
}

// columnTimeUnit returns days per unit of the time column: its TUNITn when that is a time
// unit, else TIMEUNIT, else seconds (the FITS default of TIMEUNIT). TUNITn and TIMEUNIT
// that disagree are refused.
func columnTimeUnit(h fitsHDU, c *fits.Column, at string, note noteFunc) (float64, error) {
	tu, tuGiven, err := h.str("TIMEUNIT", "s")
	if err != nil {
		return 0, err
	}
	col, colOK := timeUnit(c.Unit)
	key, keyOK := timeUnit(tu)
	switch {
	case colOK && tuGiven && keyOK && col != key:
		return 0, steps.BadInputf("%s: column %s has TUNIT%d = '%s' but TIMEUNIT = '%s'; the file contradicts itself", at, c.Name, c.Number, c.Unit, tu)
	case colOK:
		return col, nil
	case !keyOK:
		return 0, steps.BadInputf("%s: TIMEUNIT = '%s' is not a time unit this step reads (d, s, min, h, a)", at, tu)
	}
	if !tuGiven {
		note("%s: neither TUNIT%d nor TIMEUNIT gives the unit of column %s; seconds, the FITS default", at, c.Number, c.Name)
	}
	return key, nil
}

// readReference reads the Julian date of time 0: BJDREFI + BJDREFF (or BJDREF), else
// JDREFI + JDREFF (or JDREF), else MJDREFI + MJDREFF (or MJDREF) + 2 400 000.5 (FITS 4.0
// §9.2.2; BJDREF* is a convention in common use). Integer and fraction are kept apart. A
// header without any of them takes the workflow's time_zero, with a note; a header with one
// keeps its own, and a time_zero that differs is set aside with a note.
func readReference(cfg *Config, h fitsHDU, r *rawSegment, at string, note noteFunc) error {
	from, i, f, ok, err := headerReference(h)
	if err != nil {
		return err
	}
	switch {
	case ok:
		r.refInt, r.refFrac = splitJD(i, f)
		r.hasRef, r.refFrom = true, at+" "+from
		if z := cfg.TimeZero; z != nil {
			zi, zf := splitJD(*z, 0)
			if zi != r.refInt || zf != r.refFrac {
				note("%s: time_zero = %s set aside: the header's %s give the reference JD %d + %g", at, strconv.FormatFloat(*z, 'f', -1, 64), from, r.refInt, r.refFrac)
			}
		}
	case cfg.TimeZero != nil:
		r.refInt, r.refFrac = splitJD(*cfg.TimeZero, 0)
		r.hasRef, r.refFrom = true, "time_zero"
		note("%s: the header has no BJDREFI/BJDREFF, JDREF or MJDREF; time_zero = %s fills the reference", at, strconv.FormatFloat(*cfg.TimeZero, 'f', -1, 64))
	}
	return nil
}

// headerReference finds the reference keywords of readReference and returns which gave it
// (e.g. "BJDREFI/BJDREFF") and the Julian date as integer and fraction; ok is false when
// the header has none.
func headerReference(h fitsHDU) (from string, i, f float64, ok bool, err error) {
	for _, p := range []struct {
		prefix string
		mjd    bool
	}{{"BJDREF", false}, {"JDREF", false}, {"MJDREF", true}} {
		i, okI, err := h.num(p.prefix + "I")
		if err != nil {
			return "", 0, 0, false, err
		}
		f, okF, err := h.num(p.prefix + "F")
		if err != nil {
			return "", 0, 0, false, err
		}
		from := p.prefix + "I/" + p.prefix + "F"
		if !okI && !okF {
			v, ok, err := h.num(p.prefix)
			if err != nil {
				return "", 0, 0, false, err
			}
			if !ok {
				continue
			}
			i, f, from = math.Floor(v), v-math.Floor(v), p.prefix
		}
		if p.mjd {
			ri, rf := splitJD(i, f)
			i, f = float64(ri)+2400000, rf+0.5
		}
		return from, i, f, true, nil
	}
	return "", 0, 0, false, nil
}
