package photometry

import (
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"

	"dipline/steps"
)

// Role is what a column holds.
type Role int

// The column roles. Time and flux are required; without an error column the errors are
// estimated, and without a flag column no row is flagged.
const (
	TimeCol Role = iota
	FluxCol
	ErrorCol
	FlagCol
	nRoles
)

// roleKeys are the keys of the `columns` object, in Role order.
var roleKeys = [nRoles]string{"time", "flux", "error", "flag"}

func (r Role) String() string { return roleKeys[r] }

// defaultNames are the column names tried, in order and without regard to case, when the
// workflow names none for a role. A short list of names in common use, with those of
// space-survey light-curve products (PDCSAP_FLUX and SAP_FLUX, QUALITY and SAP_QUALITY,
// BTJD- and BKJD-style times); anything else is named in `columns`. The survey fluxes' own
// error columns are in pairedErrors, not here, so that one flux is never given another's
// errors.
var defaultNames = [nRoles][]string{
	TimeCol:  {"time", "bjd", "bjd_tdb", "jd", "t", "btjd", "bkjd", "hjd", "mjd"},
	FluxCol:  {"flux", "rel_flux", "relative_flux", "norm_flux", "f", "pdcsap_flux", "sap_flux"},
	ErrorCol: {"flux_err", "flux_error", "error", "err", "sigma", "e"},
	FlagCol:  {"flag", "flags", "quality", "qual", "sap_quality"},
}

// bareName is a column name without blanks around it and without a unit in brackets or
// parentheses after it: "time [d]" and "flux (e-/s)" match time and flux.
func bareName(n string) string {
	n = strings.TrimSpace(n)
	for _, br := range []string{"[]", "()"} {
		if strings.HasSuffix(n, br[1:]) {
			if i := strings.LastIndexByte(n, br[0]); i > 0 {
				n = strings.TrimSpace(n[:i])
			}
		}
	}
	return n
}

// offsetNamed matches a time column's name that states the Julian date its times count
// from, as files often do (common practice): "BJD - 2457000", "bjd_tdb-2459000",
// "HJD-2450000", "time (BJD - 2456000)". The offset must be a Julian date of the era
// (2 400 000 to 2 469 999) so that a year or an id is not taken for one.
var offsetNamed = regexp.MustCompile(`(?:^|[^a-z])(bjd_tdb|bjdtdb|bjd|hjd|jd|time|t)-(2[45][0-9]{5}(?:\.[0-9]+)?)(?:$|[^0-9.])`)

// statedOffset returns the offset a time column's name states, and the time word before
// it ("bjd", "hjd", …): see offsetNamed.
func statedOffset(name string) (float64, string, bool) {
	squeezed := strings.Map(func(c rune) rune {
		if c == ' ' || c == '\t' {
			return -1
		}
		return c
	}, strings.ToLower(name))
	m := offsetNamed.FindStringSubmatch(squeezed)
	if m == nil {
		return 0, "", false
	}
	v, err := strconv.ParseFloat(m[2], 64)
	if err != nil || v >= eraLastJD {
		return 0, "", false
	}
	return v, m[1], true
}

// otherFluxes lists the columns besides the chosen ones whose names say they hold a flux
// (and not its error), for a note: a file with a raw and a corrected flux should say which
// was taken.
func otherFluxes(names []string, idx [nRoles]int) []string {
	var out []string
	for i, n := range names {
		l := strings.ToLower(bareName(n))
		taken := false
		for _, j := range idx {
			taken = taken || j == i
		}
		if !taken && strings.Contains(l, "flux") && !strings.Contains(l, "err") && !strings.Contains(l, "sig") {
			out = append(out, strconv.Quote(n))
		}
	}
	return out
}

// pairedErrors names, for a flux column of a survey product (in lower case), the column of
// its errors: an unnamed error role takes that column when the file has it, and none of the
// general names.
var pairedErrors = map[string][]string{
	"pdcsap_flux": {"pdcsap_flux_err"},
	"sap_flux":    {"sap_flux_err"},
}

// Config is what a photometry block may say. Check completes the fields below the
// attributes, which the reader works from; Read takes a Config as a library call gives it.
type Config struct {
	Files steps.Files `step:"files,required" doc:"light-curve files, text (comma, tab or whitespace separated, header row first) or FITS; each file is one segment"`
	// ColumnNames are the column names the block gives, by role key; Check reads them into
	// Columns.
	ColumnNames map[string]string `step:"columns" doc:"column names by role (keys time, flux, error, flag), matched without regard to case; unnamed roles try common names"`
	// ExtensionName is the extension as written; Check trims it into Extension.
	ExtensionName *string `step:"extension" doc:"FITS binary table by EXTNAME or 1-based extension number; default: the first with a time and a flux column"`
	// TimeScale is the scale and origin the workflow states, one of TimeScaleChoices.
	TimeScale string `step:"time_scale" default:"BJD_TDB" choices:"BJD_TDB|BJD_TT|BJD_UTC|BJD_TAI|BJD_TCB|BJD_TCG|HJD_TDB|HJD_TT|HJD_UTC|HJD_TAI|HJD_TCB|HJD_TCG|JD_TDB|JD_TT|JD_UTC|JD_TAI|JD_TCB|JD_TCG" doc:"time scale and origin of the times; FITS TIMESYS and TIMEREF must agree, and fill from it when the header lacks them"`
	// TimeZero is the Julian date of time 0 in text files, and in FITS files whose header
	// gives no reference; nil when the times are full Julian dates.
	TimeZero *float64 `step:"time_zero" doc:"Julian date of time 0 in text files, and in FITS files whose header has no BJDREFI/BJDREFF, JDREF or MJDREF; without it text times are full Julian dates"`
	// Exposure is the integration time of one point in days; nil to take it from the file.
	Exposure *float64 `step:"exposure" dim:"time" doc:"integration time of one point; default: from the FITS header (EXPOSURE, INT_TIME, TIMEDEL), else the median cadence"`
	// Band is the photometric band of every segment; nil (or blank) takes FITS FILTER if any.
	Band *string `step:"band" doc:"photometric band of every segment; default: FITS FILTER, else none"`
	// FlagMask drops a row when its flag AND the mask is nonzero; -1 is every bit.
	FlagMask          int      `step:"flag_mask" default:"-1" doc:"drop rows whose flag AND this mask is nonzero; -1 (the default) drops any nonzero flag, 0 keeps all"`
	CrowdingCorrected bool     `step:"crowding_corrected" default:"false" doc:"the flux is already corrected for light from other stars"`
	Contamination     *float64 `step:"contamination" doc:"ratio of contaminating to target flux in the aperture, when known"`

	// Columns are the column names by role, from ColumnNames; "" means try defaultNames.
	Columns [nRoles]string
	// Extension selects the FITS binary table by EXTNAME or 1-based extension number, from
	// ExtensionName; "" means the first binary table with a time and a flux column.
	Extension string
}

// band is the band every segment is given; "" takes FITS FILTER if any.
func (c *Config) band() string {
	if c.Band == nil {
		return ""
	}
	return strings.TrimSpace(*c.Band)
}

// flagMask is the mask as bits: -1 sets every one.
func (c *Config) flagMask() uint64 { return uint64(int64(c.FlagMask)) }

// contamination is the ratio of contaminating to target flux, NaN when unknown.
func (c *Config) contamination() float64 {
	if c.Contamination == nil {
		return math.NaN()
	}
	return *c.Contamination
}

// pickColumns chooses a column index for each role from the names in a file's header (-1
// when an optional role has no column). It returns the names chosen, for notes.
func pickColumns(file string, names []string, user [nRoles]string) (idx [nRoles]int, chosen [nRoles]string, err error) {
	find := func(want string) (int, error) {
		at := -1
		for i, n := range names {
			if strings.EqualFold(bareName(n), want) || strings.EqualFold(strings.TrimSpace(n), want) {
				if at >= 0 {
					return -1, fmt.Errorf("%s: columns %d and %d are both named %q (ignoring case)", file, at+1, i+1, want)
				}
				at = i
			}
		}
		return at, nil
	}
	for r := Role(0); r < nRoles; r++ {
		idx[r] = -1
		if user[r] != "" {
			i, err := find(user[r])
			if err != nil {
				return idx, chosen, err
			}
			if i < 0 {
				return idx, chosen, fmt.Errorf("%s: no column named %q for the %s (columns: %s)", file, user[r], r, describe(names))
			}
			idx[r], chosen[r] = i, names[i]
			continue
		}
		cands := defaultNames[r]
		if r == ErrorCol && idx[FluxCol] >= 0 {
			if p, ok := pairedErrors[strings.ToLower(strings.TrimSpace(chosen[FluxCol]))]; ok {
				cands = p
			}
		}
		for _, cand := range cands {
			i, err := find(cand)
			if err != nil {
				return idx, chosen, err
			}
			if i >= 0 {
				idx[r], chosen[r] = i, names[i]
				break
			}
		}
		if idx[r] < 0 && r == TimeCol {
			// A name that states its offset ("BJD - 2457000"): the first such column.
			for i, n := range names {
				if _, _, ok := statedOffset(bareName(n)); ok {
					idx[r], chosen[r] = i, names[i]
					break
				}
			}
		}
		if idx[r] < 0 && (r == TimeCol || r == FluxCol) {
			return idx, chosen, fmt.Errorf("%s: no %s column: none of %s is in the header (columns: %s); name one in columns = { %s = \"...\" }",
				file, r, strings.Join(defaultNames[r], ", "), describe(names), r)
		}
	}
	for a := Role(0); a < nRoles; a++ {
		for b := a + 1; b < nRoles; b++ {
			if idx[a] >= 0 && idx[a] == idx[b] {
				return idx, chosen, fmt.Errorf("%s: column %q is chosen for both the %s and the %s", file, chosen[a], a, b)
			}
		}
	}
	return idx, chosen, nil
}
