package companions

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/textrows"
)

// Field is one column the table may hold.
type Field int

// The table's fields. Name, band, dmag, dmag_err and separation are required columns; radius
// and radius_err are optional and go together.
const (
	FieldName Field = iota
	FieldBand
	FieldDMag
	FieldDMagErr
	FieldSeparation
	FieldRadius
	FieldRadiusErr
	numFields
)

// fieldKeys are the default column names and the keys of the `columns` attribute, in Field order.
var fieldKeys = [numFields]string{"name", "band", "dmag", "dmag_err", "separation", "radius", "radius_err"}

func (f Field) String() string { return fieldKeys[f] }

// optional reports whether a table may lack the column.
func (f Field) optional() bool { return f == FieldRadius || f == FieldRadiusErr }

// Columns holds the column name to read for each field; "" means the field's own name.
type Columns [numFields]string

// blankCell is written for an empty cell where blanks cannot be (whitespace-separated tables).
const blankCell = "-"

// Parse reads a companion table: a header row of column names, then one companion per row.
// Fields are separated by commas if the header has one, else by tabs if it has one, else by
// runs of blanks; blank lines and lines starting with '#' are skipped; one pair of double
// quotes around a field is removed; a cell "-" is blank. Column names are matched without regard to case. A table
// with a header and no rows is valid and gives no companions.
//
// Every value is checked: name and band must be given, names must be unique (and not
// "target", which names the target in the dilution step), dmag finite, dmag_err finite and
// not negative, separation blank (unknown) or finite and not negative, radius blank or
// positive with a radius_err that is finite and not negative. Errors name the file, the line
// and the column, and are steps input errors.
func Parse(file string, data []byte, cols Columns) ([]stellar.Companion, error) {
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	if i := bytes.IndexByte(data, 0); i >= 0 {
		return nil, steps.BadInputf("%s: byte %d is NUL: this is not a text table", file, i+1)
	}
	var (
		delim  byte
		header []string
		lineNo int
		rest   = data
	)
	for len(rest) > 0 && header == nil {
		var line []byte
		line, rest = textrows.NextLine(rest)
		lineNo++
		if textrows.Skippable(line) {
			continue
		}
		switch {
		case bytes.IndexByte(line, ',') >= 0:
			delim = ','
		case bytes.IndexByte(line, '\t') >= 0:
			delim = '\t'
		}
		header = split(line, delim)
	}
	if header == nil {
		return nil, steps.BadInputf("%s: no header row: the file is empty or holds only comments; an empty table still needs its header (%s)",
			file, strings.Join(fieldKeys[:5], ", "))
	}
	var idx [numFields]int
	for f := Field(0); f < numFields; f++ {
		want := cols[f]
		if want == "" {
			want = fieldKeys[f]
		}
		idx[f] = -1
		for i, h := range header {
			if strings.EqualFold(h, want) {
				if idx[f] >= 0 {
					return nil, steps.BadInputf("%s:%d: columns %d and %d are both named %q (ignoring case)", file, lineNo, idx[f]+1, i+1, want)
				}
				idx[f] = i
			}
		}
		if idx[f] < 0 && !f.optional() {
			hint := ""
			if cols[f] == "" {
				hint = fmt.Sprintf("; name it in columns = { %s = \"...\" }", f)
			}
			return nil, steps.BadInputf("%s:%d: no column %q for the %s (columns: %s)%s", file, lineNo, want, f, strings.Join(header, ", "), hint)
		}
	}
	if (idx[FieldRadius] < 0) != (idx[FieldRadiusErr] < 0) {
		have, lack := FieldRadius, FieldRadiusErr
		if idx[FieldRadius] < 0 {
			have, lack = lack, have
		}
		return nil, steps.BadInputf("%s:%d: column %s is there but %s is not; give both or neither", file, lineNo, have, lack)
	}
	colName := func(f Field) string { return header[idx[f]] }

	var out []stellar.Companion
	seen := map[string]int{}
	for len(rest) > 0 {
		var line []byte
		line, rest = textrows.NextLine(rest)
		lineNo++
		if textrows.Skippable(line) {
			continue
		}
		fields := split(line, delim)
		if len(fields) != len(header) {
			return nil, steps.BadInputf("%s:%d: %d fields, but the header has %d columns", file, lineNo, len(fields), len(header))
		}
		at := func(f Field) string { return fmt.Sprintf("%s:%d, column %s", file, lineNo, colName(f)) }
		cell := func(f Field) string {
			if idx[f] < 0 || fields[idx[f]] == blankCell {
				return ""
			}
			return fields[idx[f]]
		}
		// num parses a cell; blank gives NaN and blank=true.
		num := func(f Field) (v float64, blank bool, err error) {
			s := cell(f)
			if s == "" {
				return math.NaN(), true, nil
			}
			v, perr := strconv.ParseFloat(s, 64)
			if perr != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return 0, false, steps.BadInputf("%s: %q is not a finite number", at(f), s)
			}
			return v, false, nil
		}
		var c stellar.Companion
		c.Name = cell(FieldName)
		if c.Name == "" {
			return nil, steps.BadInputf("%s: the name is missing", at(FieldName))
		}
		if strings.EqualFold(c.Name, "target") {
			return nil, steps.BadInputf("%s: %q names the target itself in the dilution step; call the companion something else", at(FieldName), c.Name)
		}
		c.Band = cell(FieldBand)
		if c.Band == "" {
			return nil, steps.BadInputf("%s: the band of dmag is missing", at(FieldBand))
		}
		// One companion may be measured in several bands, one row per band.
		key := FigureName(c.Name) + "\x00" + FigureName(c.Band)
		if prev, dup := seen[key]; dup {
			return nil, steps.BadInputf("%s: companion %q in band %s appears already on line %d (same name and band, up to case and punctuation)", at(FieldName), c.Name, c.Band, prev)
		}
		seen[key] = lineNo
		var (
			blank bool
			err   error
		)
		if c.DMag, blank, err = num(FieldDMag); err != nil {
			return nil, err
		} else if blank {
			return nil, steps.BadInputf("%s: dmag is missing", at(FieldDMag))
		}
		if c.DMagErr, blank, err = num(FieldDMagErr); err != nil {
			return nil, err
		} else if blank {
			return nil, steps.BadInputf("%s: dmag_err is missing (write 0 for a difference taken as exact)", at(FieldDMagErr))
		} else if c.DMagErr < 0 {
			return nil, steps.BadInputf("%s: dmag_err is negative (%g); errors must not be negative", at(FieldDMagErr), c.DMagErr)
		}
		if c.Separation, _, err = num(FieldSeparation); err != nil {
			return nil, err
		} else if c.Separation < 0 {
			return nil, steps.BadInputf("%s: separation is negative (%g arcsec)", at(FieldSeparation), c.Separation)
		}
		c.Radius, c.RadiusErr = math.NaN(), math.NaN()
		if idx[FieldRadius] >= 0 {
			var rblank, eblank bool
			if c.Radius, rblank, err = num(FieldRadius); err != nil {
				return nil, err
			}
			if c.RadiusErr, eblank, err = num(FieldRadiusErr); err != nil {
				return nil, err
			}
			switch {
			case rblank && !eblank:
				return nil, steps.BadInputf("%s: radius_err is given but the radius is not", at(FieldRadiusErr))
			case !rblank && eblank:
				return nil, steps.BadInputf("%s: the radius is given without radius_err (write 0 for a radius taken as exact)", at(FieldRadiusErr))
			case !rblank && !(c.Radius > 0):
				return nil, steps.BadInputf("%s: radius %g R_sun is not positive", at(FieldRadius), c.Radius)
			case !eblank && c.RadiusErr < 0:
				return nil, steps.BadInputf("%s: radius_err is negative (%g); errors must not be negative", at(FieldRadiusErr), c.RadiusErr)
			}
		}
		out = append(out, c)
	}
	return out, nil
}

// FigureName turns a companion's name into the part of a figure name that stands for it:
// letters, digits, '-' and '_' are kept, letters in lower case, and every other run of
// characters becomes one '_'. Parse refuses two companions with the same FigureName.
func FigureName(name string) string {
	var b strings.Builder
	under := false
	for _, r := range name {
		switch {
		case r >= 'a' && r <= 'z', r >= '0' && r <= '9', r == '-', r == '_':
			b.WriteRune(r)
			under = false
		case r >= 'A' && r <= 'Z':
			b.WriteRune(r - 'A' + 'a')
			under = false
		default:
			if !under {
				b.WriteByte('_')
				under = true
			}
		}
	}
	return b.String()
}

// split cuts a line into trimmed fields at delim, or at runs of blanks when delim is 0.
func split(line []byte, delim byte) []string {
	var out []string
	if delim == 0 {
		for _, f := range bytes.Fields(line) {
			out = append(out, unquote(string(f)))
		}
		return out
	}
	for {
		i := bytes.IndexByte(line, delim)
		if i < 0 {
			return append(out, unquote(strings.TrimSpace(string(line))))
		}
		out = append(out, unquote(strings.TrimSpace(string(line[:i]))))
		line = line[i+1:]
	}
}

func unquote(f string) string {
	return strings.TrimSpace(string(textrows.Unquote([]byte(f))))
}
