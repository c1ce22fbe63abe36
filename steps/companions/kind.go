// Package companions is the companions step kind: the list of stars near the target whose
// light may fall in the photometric aperture, read from a small table (one row per companion:
// name, band, magnitude difference and its error, separation, and optionally the companion's
// radius) and checked row by row. The star and dilution steps both reference one such list,
// so the imaging result is written down once. It draws no random numbers and computes no
// dilution (the dilution step does); an empty table means high-resolution imaging found no
// companion.
//
// Main entry points: New (register it with the engine) and Parse (the table reader, usable
// as a library). The artifact, *List, implements stellar.CompanionSource.
package companions

import (
	"context"
	"errors"

	"dipline/steps"
	"dipline/steps/internal/stellar"
)

// Kind is the companions step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the companions kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var (
	_ steps.Typed[Config]     = Kind{}
	_ steps.Artifact          = (*List)(nil)
	_ stellar.CompanionSource = (*List)(nil)
)

// version is bumped whenever the parsed values or the encoding change.
const version = 1

// Name implements steps.Typed.
func (Kind) Name() string { return "companions" }

// Version implements steps.Typed.
func (Kind) Version() int { return version }

// Random implements steps.Typed: reading a table draws nothing.
func (Kind) Random() bool { return false }

// Doc implements steps.Typed.
func (Kind) Doc() string {
	return "Reads the stars found near the target (magnitude difference, band, separation) from a table, for the star and dilution steps."
}

// Config is what a companions block may say. Check completes Columns, which Parse reads.
type Config struct {
	File steps.Files `step:"file,required" doc:"one table, comma, tab or whitespace separated with a header row: name, band, dmag, dmag_err, separation (arcsec), and optionally radius, radius_err (R_sun); a cell \"-\" is blank; a header alone means no companion was found"`
	// ColumnNames are the column names the block gives, by field key; Check reads them into
	// Columns.
	ColumnNames map[string]string `step:"columns" doc:"column names by field (keys name, band, dmag, dmag_err, separation, radius, radius_err) where the table's differ, matched without regard to case"`

	// Columns are the column names by field, from ColumnNames; "" means the field's key.
	Columns Columns
}

// Check implements steps.Typed: one table, and columns keyed by known fields.
func (Kind) Check(c *Config) error {
	if n := len(c.File); n != 1 {
		return steps.Attrf("file", "give exactly one table, not %d", n)
	}
	cols, err := steps.NamedColumns("columns", c.ColumnNames, fieldKeys[:])
	if err != nil {
		return err
	}
	c.Columns = Columns(cols)
	return nil
}

// Inspect reads the files as Run does and returns what Run would refuse, so that
// `dipline check` catches a bad row before anything runs. Reading is all this kind does,
// so the inspection is the run itself, its result discarded.
func (k Kind) Inspect(c *Config, in steps.Inputs) error {
	_, err := k.Run(context.Background(), c, in, steps.Env{})
	return err
}

// Run implements steps.Typed: it parses the one file.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
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
