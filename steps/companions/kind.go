// Package companions is the companions step kind: the list of stars near the target whose
// light may fall in the photometric aperture, read from a small table (one row per companion:
// name, band, magnitude difference and its error, separation, and optionally the companion's
// radius) and checked row by row. The star and dilution steps both reference one such list,
// so the imaging result is written down once. It draws no random numbers and computes no
// dilution (the dilution step does); an empty table means high-resolution imaging found no
// companion.
//
// Main entry points: Kind (register it with the engine) and Parse (the table reader, usable
// as a library). The artifact, *List, implements stellar.CompanionSource.
package companions

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/stellar"
)

// Kind is the companions step kind.
type Kind struct{}

var (
	_ steps.Kind              = Kind{}
	_ steps.Artifact          = (*List)(nil)
	_ stellar.CompanionSource = (*List)(nil)
)

// version is bumped whenever the parsed values or the encoding change.
const version = 1

// Name implements steps.Kind.
func (Kind) Name() string { return "companions" }

// Version implements steps.Kind.
func (Kind) Version() int { return version }

// Random implements steps.Kind: reading a table draws nothing.
func (Kind) Random() bool { return false }

// Doc implements steps.Kind.
func (Kind) Doc() string {
	return "Reads the stars found near the target (magnitude difference, band, separation) from a table, for the star and dilution steps."
}

// Params implements steps.Kind.
func (Kind) Params() []steps.Param {
	return []steps.Param{
		{Name: "file", Type: steps.FileList,
			Doc: "one table, comma, tab or whitespace separated with a header row: name, band, dmag, dmag_err, separation (arcsec), and optionally radius, radius_err (R_sun); a cell \"-\" is blank; a header alone means no companion was found"},
		{Name: "columns", Type: steps.StringMap, Optional: true,
			Doc: "column names by field (keys name, band, dmag, dmag_err, separation, radius, radius_err) where the table's differ, matched without regard to case"},
	}
}

// Config is the decoded configuration of a companions block.
type Config struct {
	Columns Columns
}

// Prepare implements steps.Kind.
func (Kind) Prepare(v steps.Values) (any, error) {
	var c Config
	if n := len(v.Strs("file")); n != 1 {
		return nil, steps.Attrf("file", "give exactly one table, not %d", n)
	}
	m := v.Map("columns")
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		f := Field(-1)
		for i, name := range fieldKeys {
			if k == name {
				f = Field(i)
			}
		}
		if f < 0 {
			return nil, steps.Attrf("columns", "unknown key %q; the keys are %s", k, strings.Join(fieldKeys[:], ", "))
		}
		name := strings.TrimSpace(m[k])
		if name == "" {
			return nil, steps.Attrf("columns", "%s: empty column name", k)
		}
		c.Columns[f] = name
	}
	return c, nil
}

// Inspect reads the files as Run does and returns what Run would refuse, so that
// `dipline check` catches a bad row before anything runs. Reading is all this kind does,
// so the inspection is the run itself, its result discarded.
func (k Kind) Inspect(cfg any, in steps.Inputs) error {
	_, err := k.Run(context.Background(), cfg, in, steps.Env{})
	return err
}

// Run implements steps.Kind: it parses the one file.
func (Kind) Run(ctx context.Context, cfgAny any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	cfg, ok := cfgAny.(Config)
	if !ok {
		return nil, fmt.Errorf("companions: configuration of type %T", cfgAny)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	files := in.Files["file"]
	if len(files) != 1 {
		return nil, errors.New("companions: expected exactly one file")
	}
	list, err := Parse(files[0].Name, files[0].Data, cfg.Columns)
	if err != nil {
		return nil, err
	}
	if len(list) == 0 {
		env.Note("%s: no companion listed; the light is taken as the target's alone (imaging found no companion)", files[0].Name)
	} else {
		names := map[string]bool{}
		for _, c := range list {
			names[FigureName(c.Name)] = true
		}
		env.Note("%s: %d companion(s) in %d row(s)", files[0].Name, len(names), len(list))
	}
	return &List{Companions: list}, nil
}
