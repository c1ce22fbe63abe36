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
	t := &table{file: file}
	rest, lineNo, err := t.readHeader(data)
	if err != nil {
		return nil, err
	}
	if err := t.locate(cols, lineNo); err != nil {
		return nil, err
	}
	var out []stellar.Companion
	seen := map[string]int{}
	for len(rest) > 0 {
		var line []byte
		line, rest = textrows.NextLine(rest)
		lineNo++
		if textrows.Skippable(line) {
			continue
		}
		r, err := t.row(line, lineNo)
		if err != nil {
			return nil, err
		}
		var c stellar.Companion
		if c.Name, c.Band, err = r.identity(); err != nil {
			return nil, err
		}
		// One companion may be measured in several bands, one row per band.
		key := FigureName(c.Name) + "\x00" + FigureName(c.Band)
		if prev, dup := seen[key]; dup {
			return nil, steps.BadInputf("%s: companion %q in band %s appears already on line %d (same name and band, up to case and punctuation)", r.at(FieldName), c.Name, c.Band, prev)
		}
		seen[key] = lineNo
		if err := r.measurements(&c); err != nil {
			return nil, err
		}
		if err := r.radius(&c); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, nil
}

// table is a companion table being read: its file, its header, the delimiter the header
// uses, and the column of each field (−1 for an optional field the table lacks).
type table struct {
	file   string
	delim  byte
	header []string
	idx    [numFields]int
}

// readHeader finds the first row that is neither blank nor a comment, takes the delimiter
// from it and splits it into the header. It returns the data after the header and the
// header's line number.
func (t *table) readHeader(data []byte) (rest []byte, lineNo int, err error) {
	rest = data
	for len(rest) > 0 && t.header == nil {
		var line []byte
		line, rest = textrows.NextLine(rest)
		lineNo++
		if textrows.Skippable(line) {
			continue
		}
		switch {
		case bytes.IndexByte(line, ',') >= 0:
			t.delim = ','
		case bytes.IndexByte(line, '\t') >= 0:
			t.delim = '\t'
		}
		t.header = split(line, t.delim)
	}
	if t.header == nil {
		return nil, lineNo, steps.BadInputf("%s: no header row: the file is empty or holds only comments; an empty table still needs its header (%s)",
			t.file, strings.Join(fieldKeys[:5], ", "))
	}
	return rest, lineNo, nil
}

// locate finds each field's column in the header (line lineNo), by the name cols gives or
// else the field's own, and checks that every required field is there and that radius and
// radius_err come together.
func (t *table) locate(cols Columns, lineNo int) error {
	for f := Field(0); f < numFields; f++ {
		want := cols[f]
		if want == "" {
			want = fieldKeys[f]
		}
		t.idx[f] = -1
		for i, h := range t.header {
			if strings.EqualFold(h, want) {
				if t.idx[f] >= 0 {
					return steps.BadInputf("%s:%d: columns %d and %d are both named %q (ignoring case)", t.file, lineNo, t.idx[f]+1, i+1, want)
				}
				t.idx[f] = i
			}
		}
		if t.idx[f] < 0 && !f.optional() {
			hint := ""
			if cols[f] == "" {
				hint = fmt.Sprintf("; name it in columns = { %s = \"...\" }", f)
			}
			return steps.BadInputf("%s:%d: no column %q for the %s (columns: %s)%s", t.file, lineNo, want, f, strings.Join(t.header, ", "), hint)
		}
	}
	if (t.idx[FieldRadius] < 0) != (t.idx[FieldRadiusErr] < 0) {
		have, lack := FieldRadius, FieldRadiusErr
		if t.idx[FieldRadius] < 0 {
			have, lack = lack, have
		}
		return steps.BadInputf("%s:%d: column %s is there but %s is not; give both or neither", t.file, lineNo, have, lack)
	}
	return nil
}

// row is one data row of a table: its line number and its fields.
type row struct {
	t      *table
	lineNo int
	fields []string
}

// row splits a data line and checks that it has one field per column.
func (t *table) row(line []byte, lineNo int) (row, error) {
	fields := split(line, t.delim)
	if len(fields) != len(t.header) {
		return row{}, steps.BadInputf("%s:%d: %d fields, but the header has %d columns", t.file, lineNo, len(fields), len(t.header))
	}
	return row{t: t, lineNo: lineNo, fields: fields}, nil
}

// at names the row's cell of field f for an error message: file, line and column.
func (r row) at(f Field) string {
	return fmt.Sprintf("%s:%d, column %s", r.t.file, r.lineNo, r.t.header[r.t.idx[f]])
}

// cell returns the row's text for field f; "" when blank or when the table lacks the column.
func (r row) cell(f Field) string {
	i := r.t.idx[f]
	if i < 0 || r.fields[i] == blankCell {
		return ""
	}
	return r.fields[i]
}

// num parses the row's cell of field f; blank gives NaN and blank=true.
func (r row) num(f Field) (v float64, blank bool, err error) {
	s := r.cell(f)
	if s == "" {
		return math.NaN(), true, nil
	}
	v, perr := strconv.ParseFloat(s, 64)
	if perr != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false, steps.BadInputf("%s: %q is not a finite number", r.at(f), s)
	}
	return v, false, nil
}

// identity returns the companion's name and the band of its magnitude difference, both
// required; the name "target" is kept for the target itself.
func (r row) identity() (name, band string, err error) {
	name = r.cell(FieldName)
	if name == "" {
		return "", "", steps.BadInputf("%s: the name is missing", r.at(FieldName))
	}
	if strings.EqualFold(name, "target") {
		return "", "", steps.BadInputf("%s: %q names the target itself in the dilution step; call the companion something else", r.at(FieldName), name)
	}
	band = r.cell(FieldBand)
	if band == "" {
		return "", "", steps.BadInputf("%s: the band of dmag is missing", r.at(FieldBand))
	}
	return name, band, nil
}

// measurements reads dmag and dmag_err (both required) and the separation (blank when
// unknown) into c.
func (r row) measurements(c *stellar.Companion) error {
	var (
		blank bool
		err   error
	)
	if c.DMag, blank, err = r.num(FieldDMag); err != nil {
		return err
	} else if blank {
		return steps.BadInputf("%s: dmag is missing", r.at(FieldDMag))
	}
	if c.DMagErr, blank, err = r.num(FieldDMagErr); err != nil {
		return err
	} else if blank {
		return steps.BadInputf("%s: dmag_err is missing (write 0 for a difference taken as exact)", r.at(FieldDMagErr))
	} else if c.DMagErr < 0 {
		return steps.BadInputf("%s: dmag_err is negative (%g); errors must not be negative", r.at(FieldDMagErr), c.DMagErr)
	}
	if c.Separation, _, err = r.num(FieldSeparation); err != nil {
		return err
	} else if c.Separation < 0 {
		return steps.BadInputf("%s: separation is negative (%g arcsec)", r.at(FieldSeparation), c.Separation)
	}
	return nil
}

// radius reads the radius and radius_err into c: NaN when the table has no radius column,
// else both blank or both given.
func (r row) radius(c *stellar.Companion) error {
	c.Radius, c.RadiusErr = math.NaN(), math.NaN()
	if r.t.idx[FieldRadius] < 0 {
		return nil
	}
	var (
		rblank, eblank bool
		err            error
	)
	if c.Radius, rblank, err = r.num(FieldRadius); err != nil {
		return err
	}
	if c.RadiusErr, eblank, err = r.num(FieldRadiusErr); err != nil {
		return err
	}
	switch {
	case rblank && !eblank:
		return steps.BadInputf("%s: radius_err is given but the radius is not", r.at(FieldRadiusErr))
	case !rblank && eblank:
		return steps.BadInputf("%s: the radius is given without radius_err (write 0 for a radius taken as exact)", r.at(FieldRadiusErr))
	case !rblank && !(c.Radius > 0):
		return steps.BadInputf("%s: radius %g R_sun is not positive", r.at(FieldRadius), c.Radius)
	case !eblank && c.RadiusErr < 0:
		return steps.BadInputf("%s: radius_err is negative (%g); errors must not be negative", r.at(FieldRadiusErr), c.RadiusErr)
	}
	return nil
}

// FigureName turns a companion's name into the part of a figure name that stands for it:
// letters, digits and '_' are kept, letters in lower case, and every other run of
// characters (a '-' included, so that no figure name holds a hyphen that reads as a minus
// sign: "FW-3318 B" is fw_3318_b) becomes one '_'. Parse refuses two companions with the
// same FigureName.
func FigureName(name string) string {
	var b strings.Builder
	under := false
	for _, r := range name {
		switch {
		case r >= 'a' && r <= 'z', r >= '0' && r <= '9', r == '_':
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
