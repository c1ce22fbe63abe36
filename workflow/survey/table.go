package survey

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"dipline/workflow"
)

// Target is one row of a target table: its id and the attribute values it sets.
type Target struct {
	ID string
	// Line is the table's line the target is on (the header is line 1).
	Line int
	// Overrides are the values the row sets, in the table's column order; an empty cell
	// sets nothing, so the workflow's own value holds.
	Overrides []workflow.Override
}

// Table is a target table read from a CSV file.
type Table struct {
	Path    string // as given
	Name    string // the file's name without its extension: the survey's folder name
	Targets []Target
}

// TableError is a mistake in a target table, at a line and (when known) a column.
type TableError struct {
	Path   string
	Line   int
	Column string // the column's header; "" when the mistake is the line's
	Msg    string
}

func (e *TableError) Error() string {
	at := fmt.Sprintf("%s line %d", e.Path, e.Line)
	if e.Column != "" {
		at += ", column " + e.Column
	}
	return at + ": " + e.Msg
}

// idPattern is what a target id may be: it names files and folders, so letters, digits
// and . _ - only, starting with a letter or digit.
var idPattern = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$`)

// maxTargets bounds a table so that a mistaken file cannot start a million runs.
const maxTargets = 1_000_000

// ReadTable reads a target table: a header row naming an "id" column (matched without
// regard to case) and columns named kind.label.attribute, each cell the value that target
// sets (see cellExpr), then one row per target.
func ReadTable(path string) (*Table, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("target table: %w", err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1 // checked below, with our own words
	r.Comment = '#'
	t := &Table{Path: path, Name: strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))}
	if !idPattern.MatchString(t.Name) {
		return nil, fmt.Errorf("target table %s: its name %q is not a folder name (letters, digits, . _ -)", path, t.Name)
	}
	header, err := r.Read()
	if err != nil {
		return nil, tableReadError(path, 1, err, "it has no header row")
	}
	hline, _ := r.FieldPos(0)
	idCol, cols, err := readHeader(path, hline, header)
	if err != nil {
		return nil, err
	}
	seen := map[string]int{}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		line, _ := r.FieldPos(0)
		if err != nil {
			return nil, tableReadError(path, line, err, "")
		}
		tg, err := readRow(path, line, rec, header, idCol, cols)
		if err != nil {
			return nil, err
		}
		if first, dup := seen[tg.ID]; dup {
			return nil, &TableError{path, line, header[idCol], fmt.Sprintf("the id %q is already on line %d; each target needs its own", tg.ID, first)}
		}
		seen[tg.ID] = line
		if len(t.Targets) == maxTargets {
			return nil, &TableError{path, line, "", fmt.Sprintf("more than %d targets; split the table", maxTargets)}
		}
		t.Targets = append(t.Targets, tg)
	}
	if len(t.Targets) == 0 {
		return nil, &TableError{path, hline + 1, "", "the table has a header and no targets"}
	}
	return t, nil
}

// tableReadError turns the CSV reader's error into ours.
func tableReadError(path string, line int, err error, empty string) error {
	var pe *csv.ParseError
	switch {
	case errors.As(err, &pe):
		return &TableError{Path: path, Line: pe.Line, Msg: "not a CSV row: " + pe.Err.Error()}
	case err == io.EOF && empty != "":
		return &TableError{Path: path, Line: line, Msg: empty}
	}
	return fmt.Errorf("target table %s: %w", path, err)
}

// readHeader finds the id column and reads every other column's name as the attribute it
// sets.
func readHeader(path string, line int, header []string) (idCol int, cols []workflow.Override, err error) {
	idCol = -1
	for i, h := range header {
		header[i] = strings.TrimSpace(h)
		if strings.EqualFold(header[i], "id") {
			if idCol >= 0 {
				return 0, nil, &TableError{path, line, header[i], "a second id column"}
			}
			idCol = i
		}
	}
	if idCol < 0 {
		return 0, nil, &TableError{path, line, "", "no id column: the header needs a column named id, whose cells name the targets"}
	}
	cols = make([]workflow.Override, len(header))
	for i, h := range header {
		if i == idCol {
			continue
		}
		o, perr := workflow.ParseOverride(h + "=0")
		if perr != nil || strings.HasPrefix(h, "catalogue.") {
			return 0, nil, &TableError{path, line, h, "a column names the attribute it sets, as kind.label.attribute (photometry.survey.files); this one does not"}
		}
		cols[i] = o
	}
	return idCol, cols, nil
}

// readRow reads one target.
func readRow(path string, line int, rec, header []string, idCol int, cols []workflow.Override) (Target, error) {
	if len(rec) != len(header) {
		return Target{}, &TableError{path, line, "", fmt.Sprintf("%d cells where the header has %d columns", len(rec), len(header))}
	}
	tg := Target{ID: strings.TrimSpace(rec[idCol]), Line: line}
	if !idPattern.MatchString(tg.ID) {
		return Target{}, &TableError{path, line, header[idCol], fmt.Sprintf("the id %q is not a file name: write letters, digits, . _ or -, starting with a letter or digit, up to 64", tg.ID)}
	}
	for i, cell := range rec {
		cell = strings.TrimSpace(cell)
		if i == idCol || cell == "" {
			continue
		}
		o := cols[i]
		o.Value = cellExpr(cell)
		tg.Overrides = append(tg.Overrides, o)
	}
	return tg, nil
}

// cellExpr turns a cell into the expression it sets. A cell that reads as a number, true or
// false, starts like a list, an object or a quoted string ([ { "), or names a catalogue
// row (catalogue.nearby["A1"]) is taken as written, as --set takes it; anything else is a
// string, quoted here, so a table can say data/t01.csv or 12 h without quotes.
func cellExpr(cell string) string {
	if _, err := strconv.ParseFloat(cell, 64); err == nil || cell == "true" || cell == "false" {
		return cell
	}
	if strings.ContainsAny(cell[:1], `[{"`) || strings.HasPrefix(cell, "catalogue.") {
		return cell
	}
	q := strconv.Quote(cell)
	// HCL reads ${ and %{ in a quoted string as a template; doubling the sign keeps it text.
	q = strings.ReplaceAll(q, "${", "$${")
	return strings.ReplaceAll(q, "%{", "%%{")
}
