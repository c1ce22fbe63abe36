package photometry

import (
	"fmt"
	"math"
	"strings"
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
// workflow names none for a role. A short list of names in common use; anything else is
// named in `columns`.
var defaultNames = [nRoles][]string{
	TimeCol:  {"time", "bjd", "bjd_tdb", "jd", "t"},
	FluxCol:  {"flux", "rel_flux", "relative_flux", "norm_flux", "f"},
	ErrorCol: {"flux_err", "flux_error", "error", "err", "sigma", "e"},
	FlagCol:  {"flag", "flags", "quality", "qual"},
}

// Config is the decoded configuration of a photometry step.
type Config struct {
	// Columns are user-given column names by role; "" means try defaultNames.
	Columns [nRoles]string
	// Extension selects the FITS binary table by EXTNAME or 1-based extension number;
	// "" means the first binary table with a time and a flux column.
	Extension string
	// TimeScale is the scale and origin the workflow states, e.g. "BJD_TDB".
	TimeScale string
	// TimeZero is the Julian date of time 0 in text files, when HasTimeZero.
	TimeZero    float64
	HasTimeZero bool
	// Exposure is the integration time of one point in days, when HasExposure.
	Exposure    float64
	HasExposure bool
	// Band is the photometric band of every segment; "" means take FITS FILTER if any.
	Band string
	// FlagMask drops a row when its flag AND FlagMask is nonzero.
	FlagMask uint64
	// CrowdingCorrected and Contamination (NaN when unknown) describe every segment.
	CrowdingCorrected bool
	Contamination     float64
}

// DefaultConfig is the configuration of a block that sets nothing but its files.
func DefaultConfig() Config {
	return Config{TimeScale: "BJD_TDB", FlagMask: ^uint64(0), Contamination: math.NaN()}
}

// pickColumns chooses a column index for each role from the names in a file's header (-1
// when an optional role has no column). It returns the names chosen, for notes.
func pickColumns(file string, names []string, user [nRoles]string) (idx [nRoles]int, chosen [nRoles]string, err error) {
	find := func(want string) (int, error) {
		at := -1
		for i, n := range names {
			if strings.EqualFold(strings.TrimSpace(n), want) {
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
		for _, cand := range defaultNames[r] {
			i, err := find(cand)
			if err != nil {
				return idx, chosen, err
			}
			if i >= 0 {
				idx[r], chosen[r] = i, names[i]
				break
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
