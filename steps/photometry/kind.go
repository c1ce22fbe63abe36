// Package photometry is the step kind that reads light curves: delimited text (comma, tab or
// whitespace, with a header row) and FITS binary tables. Each file becomes one segment with
// its own exposure time, band and instrument; rows with a set quality flag, a non-finite
// value or a non-positive error are dropped and counted; flux and errors are divided by the
// segment's median flux; files without an error column get a constant error from their
// point-to-point scatter. FITS time keywords must agree with the time scale the workflow
// states, and segments with different reference epochs are moved onto one.
//
// It does not detrend, clip outliers, bin, or convert between time scales: a file on another
// scale is refused, not converted. Files reach it as bytes from the engine; it opens no
// paths.
//
// Entry points: Kind (the steps.Kind adapter) and Read (the plain-Go core).
package photometry

import (
	"context"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/units"
)

// Kind is the photometry step kind.
type Kind struct{}

// version is bumped whenever the step's results change for the same inputs.
const version = 2

// Name implements steps.Kind.
func (Kind) Name() string { return "photometry" }

// Version implements steps.Kind.
func (Kind) Version() int { return version }

// Doc implements steps.Kind.
func (Kind) Doc() string {
	return "Reads light curves from text or FITS files into normalised segments on one time reference."
}

// Random implements steps.Kind: reading draws no random numbers.
func (Kind) Random() bool { return false }

// Params implements steps.Kind.
func (Kind) Params() []steps.Param {
	return []steps.Param{
		{Name: "files", Type: steps.FileList,
			Doc: "light-curve files, text (comma, tab or whitespace separated, header row first) or FITS; each file is one segment"},
		{Name: "columns", Type: steps.StringMap, Optional: true,
			Doc: "column names by role (keys time, flux, error, flag), matched without regard to case; unnamed roles try common names"},
		{Name: "extension", Type: steps.String, Optional: true,
			Doc: "FITS binary table by EXTNAME or 1-based extension number; default: the first with a time and a flux column"},
		{Name: "time_scale", Type: steps.String, Default: "BJD_TDB", Choices: TimeScaleChoices(),
			Doc: "time scale and origin of the times; FITS TIMESYS and TIMEREF must agree"},
		{Name: "time_zero", Type: steps.Number, Optional: true,
			Doc: "Julian date of time 0 in text files; without it their times are full Julian dates"},
		{Name: "exposure", Type: steps.Quantity, Dim: units.Time, Optional: true,
			Doc: "integration time of one point; default: from the FITS header (EXPOSURE, INT_TIME, TIMEDEL), else the median cadence"},
		{Name: "band", Type: steps.String, Optional: true,
			Doc: "photometric band of every segment; default: FITS FILTER, else none"},
		{Name: "flag_mask", Type: steps.Integer, Default: int64(-1),
			Doc: "drop rows whose flag AND this mask is nonzero; -1 (the default) drops any nonzero flag, 0 keeps all"},
		{Name: "crowding_corrected", Type: steps.Bool, Default: false,
			Doc: "the flux is already corrected for light from other stars"},
		{Name: "contamination", Type: steps.Number, Optional: true,
			Doc: "ratio of contaminating to target flux in the aperture, when known"},
	}
}

// Prepare implements steps.Kind.
func (Kind) Prepare(v steps.Values) (any, error) {
	cfg := DefaultConfig()
	if m := v.Map("columns"); m != nil {
		keys := make([]string, 0, len(m))
		for k := range m {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			role := -1
			for r, name := range roleKeys {
				if k == name {
					role = r
				}
			}
			if role < 0 {
				return nil, steps.Attrf("columns", "unknown key %q; the keys are %s", k, strings.Join(roleKeys[:], ", "))
			}
			if strings.TrimSpace(m[k]) == "" {
				return nil, steps.Attrf("columns", "%s: empty column name", k)
			}
			cfg.Columns[role] = strings.TrimSpace(m[k])
		}
	}
	if v.Has("extension") {
		cfg.Extension = strings.TrimSpace(v.Str("extension"))
		if cfg.Extension == "" {
			return nil, steps.Attrf("extension", "empty; give an EXTNAME or a 1-based extension number")
		}
		if n, err := strconv.Atoi(cfg.Extension); err == nil && n < 1 {
			return nil, steps.Attrf("extension", "%d is not an extension number; extensions count from 1", n)
		}
	}
	if v.Has("time_scale") {
		cfg.TimeScale = v.Str("time_scale")
	}
	ok := false
	for _, c := range TimeScaleChoices() {
		ok = ok || c == cfg.TimeScale
	}
	if !ok {
		return nil, steps.Attrf("time_scale", "%q is not one of %s", cfg.TimeScale, strings.Join(TimeScaleChoices(), ", "))
	}
	if v.Has("time_zero") {
		cfg.TimeZero, cfg.HasTimeZero = v.Float("time_zero"), true
		if cfg.TimeZero < 0 || math.IsInf(cfg.TimeZero, 0) || math.IsNaN(cfg.TimeZero) {
			return nil, steps.Attrf("time_zero", "%v is not a Julian date", cfg.TimeZero)
		}
	}
	if v.Has("exposure") {
		cfg.Exposure, cfg.HasExposure = v.Float("exposure"), true
		if !(cfg.Exposure > 0) || math.IsInf(cfg.Exposure, 0) {
			return nil, steps.Attrf("exposure", "must be positive")
		}
	}
	cfg.Band = strings.TrimSpace(v.Str("band"))
	if v.Has("flag_mask") {
		m := v.Int("flag_mask")
		if m < -1 {
			return nil, steps.Attrf("flag_mask", "%d: give a bit mask (0 or more), or -1 for every bit", m)
		}
		cfg.FlagMask = uint64(m)
	}
	cfg.CrowdingCorrected = v.Bool("crowding_corrected")
	if v.Has("contamination") {
		cfg.Contamination = v.Float("contamination")
		if !(cfg.Contamination >= 0) || math.IsInf(cfg.Contamination, 0) {
			return nil, steps.Attrf("contamination", "%v: the ratio of contaminating to target flux is 0 or more", cfg.Contamination)
		}
	}
	return cfg, nil
}

// Inspect reads the files as Run does and returns what Run would refuse, so that
// `dipline check` catches a bad row before anything runs. Reading is all this kind does,
// so the inspection is the run itself, its result discarded.
func (k Kind) Inspect(cfg any, in steps.Inputs) error {
	_, err := k.Run(context.Background(), cfg, in, steps.Env{})
	return err
}

// Run implements steps.Kind.
func (Kind) Run(ctx context.Context, cfg any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	c, ok := cfg.(Config)
	if !ok {
		return nil, fmt.Errorf("photometry: configuration of type %T", cfg)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	res, err := Read(c, in.Files["files"], env.Note)
	if err != nil {
		return nil, err
	}
	return res, nil
}

// Decode implements steps.Kind.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(DecodeResult(b)) }
