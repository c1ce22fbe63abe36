// Package photometry is the step kind that reads light curves: delimited text (comma, tab or
// whitespace, with a header row) and FITS binary tables. Each file becomes one segment with
// its own exposure time, band and instrument; rows with a set quality flag, a non-finite
// value or a non-positive error are dropped and counted; flux and errors are divided by the
// segment's median flux; files without an error column get a constant error from their
// point-to-point scatter. FITS time keywords must agree with the time scale the workflow
// states; the workflow's time_scale and time_zero fill those a header leaves out, with a
// note. Segments with different reference epochs are moved onto one. InspectFile describes
// a file as the reader sees it (for the starter workflow).
//
// It does not detrend, clip outliers, bin, or convert between time scales: a file on another
// scale is refused, not converted. Files reach it as bytes from the engine; it opens no
// paths.
//
// Entry points: New (the kind, for the engine's registry) and Read (the plain-Go core).
package photometry

import (
	"context"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
)

// Kind is the photometry step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the photometry kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var (
	_ steps.Typed[Config] = Kind{}
	_ steps.Artifact      = (*Result)(nil)
)

// version is bumped whenever the step's results change for the same inputs. 3: the column
// candidates take survey products' names (a SAP_QUALITY column now flags rows; a survey
// flux takes its own error column), and a FITS header without a reference keyword takes
// time_zero, which version 2 set aside.
const version = 4

// Name implements steps.Typed.
func (Kind) Name() string { return "photometry" }

// Version implements steps.Typed.
func (Kind) Version() int { return version }

// Doc implements steps.Typed.
func (Kind) Doc() string {
	return "Reads light curves from text or FITS files into normalised segments on one time reference."
}

// Random implements steps.Typed: reading draws no random numbers.
func (Kind) Random() bool { return false }

// Check implements steps.Typed: it holds the values to what the reader can take and
// completes Columns and Extension.
func (Kind) Check(c *Config) error {
	cols, err := steps.NamedColumns("columns", c.ColumnNames, roleKeys[:])
	if err != nil {
		return err
	}
	c.Columns = [nRoles]string(cols)
	c.Extension = ""
	if c.ExtensionName != nil {
		c.Extension = strings.TrimSpace(*c.ExtensionName)
		if c.Extension == "" {
			return steps.Attrf("extension", "empty; give an EXTNAME or a 1-based extension number")
		}
		if n, err := strconv.Atoi(c.Extension); err == nil && n < 1 {
			return steps.Attrf("extension", "%d is not an extension number; extensions count from 1", n)
		}
	}
	if z := c.TimeZero; z != nil && (*z < 0 || math.IsInf(*z, 0) || math.IsNaN(*z)) {
		return steps.Attrf("time_zero", "%v is not a Julian date", *z)
	}
	if e := c.Exposure; e != nil && (!(*e > 0) || math.IsInf(*e, 0)) {
		return steps.Attrf("exposure", "must be positive")
	}
	if c.FlagMask < -1 {
		return steps.Attrf("flag_mask", "%d: give a bit mask (0 or more), or -1 for every bit", c.FlagMask)
	}
	if f := c.Contamination; f != nil && (!(*f >= 0) || math.IsInf(*f, 0)) {
		return steps.Attrf("contamination", "%v: the ratio of contaminating to target flux is 0 or more", *f)
	}
	return nil
}

// Inspect reads the files as Run does and returns what Run would refuse, so that
// `dipline check` catches a bad row before anything runs. Reading is all this kind does,
// so the inspection is the run itself, its result discarded.
func (k Kind) Inspect(c *Config, in steps.Inputs) error {
	_, err := k.Run(context.Background(), c, in, steps.Env{})
	return err
}

// Run implements steps.Typed.
func (Kind) Run(ctx context.Context, c *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	res, err := Read(*c, in.Files["files"], env.Note)
	if err != nil {
		return nil, err
	}
	return res, nil
}

// Decode implements steps.Typed.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(DecodeResult(b)) }
