package workflow

import (
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/hashicorp/hcl/v2"
	"github.com/hashicorp/hcl/v2/hclsyntax"

	"dipline/steps"
)

// catalogueBlock is the block type of a catalogue: a table of objects (stars) with an id
// column, read once by the engine. Steps name one row of it, catalogue.label["id"], and
// say which columns they read; only the parsed values of those columns enter their keys.
const catalogueBlock = "catalogue"

// Catalogue is one catalogue block: its file parsed into rows by id.
type Catalogue struct {
	Label string
	// Path is the file as written in the workflow; Digest its SHA-256 (for the record only:
	// no step key includes it).
	Path   string
	Digest [32]byte
	// IDColumn is the id column's name as written in the file's header.
	IDColumn string
	// Renames maps a name steps ask for to the file's column name (the block's columns).
	Renames map[string]string

	header []string
	index  map[string]int // lower-case column name → position
	rows   map[string]*catRow
	order  []string // ids in file order
	// data is the file's bytes; a row's cells are read from them when a step asks, so
	// that the index holds one entry per row whatever the number of columns.
	data  []byte
	comma rune
	// indexBytes is what the index takes in memory, as parse charges it.
	indexBytes int64
}

type catRow struct {
	line       int
	start, end int64 // the row's bytes in data (comment lines before it included)
	dups       []int // lines of later rows with the same id, the first maxListed of them
	moreDups   int   // how many more there are
}

// rowBytes is what one row takes in the catalogue's index beside its id: the map entry, the
// row record and its place in the order. We measured at most 155 bytes per row with 10-byte
// ids (Go 1.26, amd64; TestTheCatalogueIndexCostsWhatItCharges keeps it an upper bound).
// parse charges it against the data bound, so that a file of short rows cannot take ten
// times its size in memory.
const rowBytes = 176

// RowInput is one catalogue row a step reads: the asked-for columns' parsed values, after
// any command-line override.
type RowInput struct {
	Catalogue string // label
	Path      string // the catalogue file as written
	Line      int
	ID        string
	Names     []string // the asked-for names, sorted
	Values    map[string]float64
	Columns   map[string]string // asked-for name → the file's column name
	// Overridden lists "name=value" for values set on the command line.
	Overridden []string
}

// Row converts the input to what a step receives.
func (r *RowInput) Row() steps.Row {
	set := map[string]bool{}
	for _, o := range r.Overridden {
		name, _, _ := strings.Cut(o, "=")
		set[name] = true
	}
	return steps.Row{File: r.Path, Line: r.Line, ID: r.ID, Values: r.Values, Columns: r.Columns, Set: set}
}

// Address is catalogue.label["id"].
func (r *RowInput) Address() string { return rowAddress(r.Catalogue, r.ID) }

func rowAddress(label, id string) string {
	return catalogueBlock + "." + label + "[" + strconv.Quote(id) + "]"
}

// decodeCatalogue reads a catalogue block and its file.
func (w *Workflow) decodeCatalogue(b *hcl.Block) (*Catalogue, hcl.Diagnostics) {
	c := &Catalogue{Label: b.Labels[0], Renames: map[string]string{}}
	content, diags := b.Body.Content(bodySchemaOf(paramsOf[catalogueAttrs]()))
	if diags.HasErrors() {
		return nil, diags
	}
	idCol := "id"
	if a := content.Attributes["id"]; a != nil {
		v, d := a.Expr.Value(nil)
		s, ok := str(v)
		if d.HasErrors() || !ok || s == "" {
			return nil, append(diags, attrDiag(a.Expr.Range(), "id takes the name of the catalogue's id column, in quotes.", "For example id = \"name\"."))
		}
		idCol = s
	}
	if a := content.Attributes["columns"]; a != nil {
		v, d := a.Expr.Value(nil)
		if d.HasErrors() || v.IsNull() || !(v.Type().IsObjectType() || v.Type().IsMapType()) {
			return nil, append(diags, attrDiag(a.Expr.Range(), "columns takes an object that maps the names steps ask for to this file's columns.", "For example columns = { parallax = \"plx\" }."))
		}
		for it := v.ElementIterator(); it.Next(); {
			k, e := it.Element()
			s, ok := str(e)
			if !ok || s == "" {
				return nil, append(diags, attrDiag(a.Expr.Range(), fmt.Sprintf("columns gives %s no column name in quotes.", quote(k.AsString())), fmt.Sprintf("For example columns = { %s = \"…\" }.", clip(k.AsString()))))
			}
			c.Renames[strings.ToLower(k.AsString())] = s
		}
	}
	a := content.Attributes["file"]
	v, d := a.Expr.Value(nil)
	p, ok := str(v)
	if d.HasErrors() || !ok || p == "" {
		return nil, append(diags, attrDiag(a.Expr.Range(), "file takes the catalogue's path in quotes, relative to the workflow's folder.", "For example file = \"stars.csv\"."))
	}
	fi, fd := w.readFile(p, a.Expr.Range())
	if fd != nil {
		return nil, append(diags, fd)
	}
	c.Path, c.Digest = fi.Path, fi.Digest
	err := c.parse(fi.Data, idCol, w.fo.left)
	w.fo.left = max(0, w.fo.left-c.indexBytes)
	if err != nil {
		return nil, append(diags, attrDiag(a.Expr.Range(), "This catalogue cannot be used: "+sentence(err.Error()), ""))
	}
	return c, diags
}

// parse reads a comma- or tab-separated table with a header; lines starting with '#' are
// comments. Cells are kept as text: a step's columns are parsed when it asks for them, so
// that a bad cell in a column nobody reads stops nothing. The index may take at most budget
// bytes (rowBytes and the id per row).
func (c *Catalogue) parse(data []byte, idCol string, budget int64) error {
	data = bytes.TrimPrefix(data, utf8BOM) // some spreadsheets save one; it is not part of the first column's name
	headerLine, ok := firstLine(data)
	if !ok {
		return fmt.Errorf("%s: no header line", c.Path)
	}
	c.data, c.comma = data, ','
	if bytes.Contains(headerLine, []byte("\t")) && !bytes.Contains(headerLine, []byte(",")) {
		c.comma = '\t'
	}
	if err := checkWidth(c.Path, data, byte(c.comma)); err != nil {
		return err
	}
	r := c.reader(data)
	c.index = map[string]int{}
	c.rows = map[string]*catRow{}
	first := true
	var start int64
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return csvError(c.Path, err)
		}
		line, _ := r.FieldPos(0)
		if first {
			first = false
			c.header = rec
			for j, h := range rec {
				h = strings.ToLower(strings.TrimSpace(h))
				if _, dup := c.index[h]; dup {
					_, col := r.FieldPos(j)
					return fmt.Errorf("%s:%d:%d: column %s appears twice in the header", c.Path, line, col, quote(rec[j]))
				}
				c.index[h] = j
			}
			j, ok := c.index[strings.ToLower(idCol)]
			if !ok {
				return fmt.Errorf("%s:%d: no id column %s in the header (columns: %s).%s", c.Path, line, quote(idCol),
					listSome(c.header, "columns"), suggest(idCol, c.header))
			}
			c.IDColumn = c.header[j]
			start = r.InputOffset()
			continue
		}
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			start = r.InputOffset()
			continue
		}
		if len(rec) != len(c.header) {
			return fmt.Errorf("%s:%d: %s cells, but the header has %s columns", c.Path, line, thousands(len(rec)), thousands(len(c.header)))
		}
		id := strings.TrimSpace(rec[c.index[strings.ToLower(c.IDColumn)]])
		if id == "" {
			_, col := r.FieldPos(c.index[strings.ToLower(c.IDColumn)])
			return fmt.Errorf("%s:%d:%d: the id column %s is blank", c.Path, line, col, quote(c.IDColumn))
		}
		if prev := c.rows[id]; prev != nil {
			if len(prev.dups) < maxListed {
				prev.dups = append(prev.dups, line)
			} else {
				prev.moreDups++
			}
			start = r.InputOffset()
			continue
		}
		if c.indexBytes += rowBytes + int64(len(id)); c.indexBytes > budget {
			return fmt.Errorf("%s:%d: the catalogue's rows take more memory than the data bound allows (%s in all, each row some %d bytes beside its cells); if the file is right, raise the bound with dipline --max-data",
				c.Path, line, FormatSize(budget), rowBytes)
		}
		// The id is copied: it would otherwise keep the whole record alive.
		id = strings.Clone(id)
		c.rows[id] = &catRow{line: line, start: start, end: r.InputOffset()}
		c.order = append(c.order, id)
		start = r.InputOffset()
	}
	if first {
		return fmt.Errorf("%s: no header line", c.Path)
	}
	return nil
}

// reader reads records of the catalogue's format from b.
func (c *Catalogue) reader(b []byte) *csv.Reader {
	r := csv.NewReader(bytes.NewReader(b))
	r.Comment = '#'
	r.FieldsPerRecord = -1
	r.TrimLeadingSpace = true
	r.Comma = c.comma
	return r
}

// cells reads a row's cells again from the file's bytes.
func (c *Catalogue) cells(row *catRow) ([]string, error) {
	rec, err := c.reader(c.data[row.start:row.end]).Read()
	if err != nil || len(rec) != len(c.header) {
		return nil, fmt.Errorf("%s:%d: the row no longer reads as it did (%v)", c.Path, row.line, err)
	}
	return rec, nil
}

// maxCatalogueColumns bounds the cells of a catalogue's row: published catalogues carry a
// few hundred columns (from memory). The CSV reader holds 24 bytes per cell of a row before
// we see the row, so a line of a billion commas would otherwise take gigabytes.
const maxCatalogueColumns = 10000

// checkWidth refuses a row of more than maxCatalogueColumns cells before the CSV reader
// reads it. It counts separators outside quotes, record by record, skipping comment lines:
// an upper bound on the reader's cells, since the reader stops at the first quote out of
// place.
func checkWidth(path string, data []byte, comma byte) error {
	line, recLine, seps, quoted, atStart := 1, 1, 0, false, true
	for i := 0; i < len(data); i++ {
		b := data[i]
		if atStart && !quoted && seps == 0 && b == '#' {
			j := bytes.IndexByte(data[i:], '\n')
			if j < 0 {
				break
			}
			i += j - 1 // the newline is read next
			continue
		}
		atStart = false
		switch {
		case b == '"':
			quoted = !quoted
		case b == comma && !quoted:
			if seps++; seps >= maxCatalogueColumns {
				return fmt.Errorf("%s:%d: a row of more than %s cells; a catalogue may have at most %s columns", path, recLine,
					thousands(maxCatalogueColumns), thousands(maxCatalogueColumns))
			}
		case b == '\n':
			line, atStart = line+1, true
			if !quoted {
				seps, recLine = 0, line
			}
		}
	}
	return nil
}

// firstLine is the first line that is neither blank nor a comment.
func firstLine(data []byte) ([]byte, bool) {
	for len(data) > 0 {
		line := data
		if i := bytes.IndexByte(data, '\n'); i >= 0 {
			line, data = data[:i], data[i+1:]
		} else {
			data = nil
		}
		if t := bytes.TrimSpace(line); len(t) > 0 && t[0] != '#' {
			return line, true
		}
	}
	return nil, false
}

// csvError says in our words what the CSV reader found wrong, with the line and column.
func csvError(path string, err error) error {
	var pe *csv.ParseError
	if !errors.As(err, &pe) {
		return fmt.Errorf("%s: %v", path, unwrapPath(err))
	}
	what := pe.Err.Error()
	switch {
	case errors.Is(pe.Err, csv.ErrBareQuote):
		what = `a quote (") inside a cell that does not start with one; quote the whole cell and double the quotes inside it`
	case errors.Is(pe.Err, csv.ErrQuote):
		what = "a quoted cell is not closed, or its closing quote is followed by more text"
	}
	return fmt.Errorf("%s:%d:%d: %s", path, pe.Line, pe.Column, what)
}

// column finds the file's column for a name a step asks for: through the block's renames,
// then by name without regard to case.
func (c *Catalogue) column(name string) (int, bool) {
	n := strings.ToLower(name)
	if r, ok := c.Renames[n]; ok {
		n = strings.ToLower(r)
	}
	j, ok := c.index[n]
	return j, ok
}

// rowRef reads catalogue.label["id"] from an attribute.
func (w *Workflow) rowRef(expr hcl.Expression) (label, id string, d *hcl.Diagnostic) {
	bad := attrDiag(expr.Range(), "This is not a catalogue row.",
		`Name a row of a catalogue block by its id, as in catalogue.nearby["FW-3318"].`)
	tr, diags := hcl.AbsTraversalForExpr(expr)
	if diags.HasErrors() || len(tr) != 3 || tr.RootName() != catalogueBlock {
		return "", "", bad
	}
	attr, ok1 := tr[1].(hcl.TraverseAttr)
	idx, ok2 := tr[2].(hcl.TraverseIndex)
	if !ok1 || !ok2 || !idx.Key.IsKnown() || idx.Key.IsNull() {
		return "", "", bad
	}
	ids, ok := str(idx.Key)
	if !ok {
		if f, isNum := number(idx.Key); isNum {
			ids, ok = strconv.FormatFloat(f, 'f', -1, 64), true
		}
	}
	if !ok {
		return "", "", bad
	}
	return attr.Name, ids, nil
}

// decodeRow resolves a CatalogueRow attribute to its catalogue and row; the columns are
// read once the kind has said which it needs (resolveRows).
func (w *Workflow) decodeRow(s *Step, p steps.Param, expr hcl.Expression) (any, hcl.Diagnostics) {
	label, id, d := w.rowRef(expr)
	if d != nil {
		return nil, hcl.Diagnostics{d}
	}
	c := w.catalogues[label]
	if c == nil && w.unreadable[label] {
		return nil, hcl.Diagnostics{attrDiag(expr.Range(), fmt.Sprintf("The catalogue %s did not load, so its rows cannot be read.", quote(label)),
			"The message about its file says why.")}
	}
	if c == nil {
		names := make([]string, 0, len(w.catalogues))
		for n := range w.catalogues {
			names = append(names, n)
		}
		sort.Strings(names)
		return nil, hcl.Diagnostics{attrDiag(expr.Range(), fmt.Sprintf("There is no catalogue block %s.", quote(label)),
			strings.TrimSpace(suggest(label, names)))}
	}
	row := c.rows[id]
	if row == nil {
		return nil, hcl.Diagnostics{attrDiag(expr.Range(), fmt.Sprintf("%s has no row with %s %s.", c.Path, clip(c.IDColumn), quote(id)),
			strings.TrimSpace(suggest(id, c.order)))}
	}
	if len(row.dups) > 0 {
		lines := make([]string, len(row.dups))
		for i, l := range row.dups {
			lines[i] = strconv.Itoa(l)
		}
		listed := listSome(lines, "lines")
		if row.moreDups > 0 {
			listed += fmt.Sprintf(", … and %s more lines", thousands(row.moreDups))
		}
		return nil, hcl.Diagnostics{attrDiag(expr.Range(), fmt.Sprintf("%s has %s on line %d and again on line(s) %s.", c.Path, quote(id), row.line, listed),
			"Keep one of them.")}
	}
	s.Rows[p.Name] = &RowInput{Catalogue: label, Path: c.Path, Line: row.line, ID: id}
	return rowAddress(label, id), nil
}

// resolveRows reads the columns each CatalogueRow parameter's configuration asks for.
func (w *Workflow) resolveRows(s *Step) hcl.Diagnostics {
	var diags hcl.Diagnostics
	for _, p := range s.Kind.Params() {
		in := s.Rows[p.Name]
		if p.Type != steps.CatalogueRow || in == nil {
			continue
		}
		cr, ok := s.Config.(steps.ColumnReader)
		if !ok {
			diags = append(diags, attrDiag(s.attrRanges[p.Name],
				fmt.Sprintf("The %s kind reads a catalogue row but does not say which columns; this is a fault of the program (please report it).", s.Kind.Name()), ""))
			continue
		}
		c := w.catalogues[in.Catalogue]
		cells, err := c.cells(c.rows[in.ID])
		if err != nil {
			diags = append(diags, attrDiag(s.attrRanges[p.Name], "This catalogue cannot be used: "+sentence(err.Error()), ""))
			continue
		}
		row := c.rows[in.ID]
		required, optional := cr.Columns(p.Name)
		in.Values, in.Columns = map[string]float64{}, map[string]string{}
		seen := map[string]bool{}
		for i, name := range append(append([]string(nil), required...), optional...) {
			name = strings.ToLower(name)
			if seen[name] {
				continue
			}
			seen[name] = true
			in.Names = append(in.Names, name)
			j, ok := c.column(name)
			if !ok {
				if i < len(required) {
					diags = append(diags, attrDiag(s.attrRanges[p.Name],
						fmt.Sprintf("%s needs a column %q, which %s lacks (columns: %s).", s.Addr, name, c.Path, listSome(c.header, "columns")),
						fmt.Sprintf("Rename it in the catalogue block, e.g. columns = { %s = \"...\" }.%s", name, suggest(name, c.header))))
				}
				continue
			}
			in.Columns[name] = c.header[j]
			cell := strings.TrimSpace(cells[j])
			o := w.rowOverride(in.Catalogue, in.ID, name, c.header[j])
			overridden := o != nil
			if overridden {
				o.used = true
				cell = o.Value
				in.Overridden = append(in.Overridden, name+"="+o.Value)
			}
			v, blank, err := parseCell(cell)
			switch {
			case err != nil && overridden:
				diags = append(diags, attrDiag(s.attrRanges[p.Name],
					fmt.Sprintf("--set %s.%s: %v (the value replaces %s line %d, column %s).", in.Address(), name, err, c.Path, row.line, clip(c.header[j])), ""))
				continue
			case err != nil:
				diags = append(diags, attrDiag(s.attrRanges[p.Name],
					fmt.Sprintf("%s line %d, column %s (row %s): %v.", c.Path, row.line, clip(c.header[j]), clip(in.ID), err), ""))
				continue
			}
			if !blank {
				in.Values[name] = v
			}
		}
		sort.Strings(in.Names)
	}
	return diags
}

// parseCell reads a number; blank cells, "nan", "null" and "--" mean no value.
func parseCell(s string) (v float64, blank bool, err error) {
	switch strings.ToLower(s) {
	case "", "nan", "null", "none", "--", "-":
		return 0, true, nil
	}
	v, err = strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, false, fmt.Errorf("%s is not a number", quote(s))
	}
	return v, false, nil
}

// rowKey writes a row input into a step key: the id and the parsed values of the asked-for
// columns, absent ones marked. The file's digest is not part of it, so that editing
// another row, reformatting a number or adding a column changes nothing here.
func (k *keyRecord) row(in *RowInput) {
	k.str(in.ID)
	k.u64(uint64(len(in.Names)))
	for _, n := range in.Names {
		k.str(n)
		if v, ok := in.Values[n]; ok {
			k.u64(1)
			k.f64(v)
		} else {
			k.u64(0)
		}
	}
}

// RowRecord is one catalogue row a step read, kept in its provenance.
type RowRecord struct {
	Param      string            `json:"param"`
	Row        string            `json:"row"` // catalogue.label["id"]
	Path       string            `json:"path"`
	Line       int               `json:"line"`
	Values     map[string]string `json:"values"` // by asked-for name; "" for a blank cell
	Overridden []string          `json:"overridden,omitempty"`
	// Digest is the SHA-256 of the asked-for values as keyed (not of the file).
	Digest string `json:"digest"`
}

func (in *RowInput) record(param string) RowRecord {
	rr := RowRecord{Param: param, Row: in.Address(), Path: in.Path, Line: in.Line, Values: map[string]string{}, Overridden: in.Overridden}
	for _, n := range in.Names {
		if v, ok := in.Values[n]; ok {
			rr.Values[n] = strconv.FormatFloat(v, 'g', -1, 64)
		} else {
			rr.Values[n] = ""
		}
	}
	k := &keyRecord{}
	k.row(in)
	rr.Digest = hexKey(sha256.Sum256(k.buf))
	return rr
}

// valueChanges describes, column by column, how a row's values moved.
func valueChanges(row, path string, line int, was, now map[string]string) []string {
	sorted := unionKeys(was, now)
	blank := func(s string) string {
		if s == "" {
			return "(blank)"
		}
		return s
	}
	var why []string
	for _, n := range sorted {
		a, hadA := was[n]
		b, hasB := now[n]
		switch {
		case hadA && hasB && a != b:
			why = append(why, fmt.Sprintf("catalogue row %s (%s:%d) column %s: %s → %s", row, path, line, n, blank(a), blank(b)))
		case !hadA && hasB:
			why = append(why, fmt.Sprintf("catalogue row %s (%s:%d) column %s is now read: %s", row, path, line, n, blank(b)))
		case hadA && !hasB:
			why = append(why, fmt.Sprintf("catalogue row %s column %s is no longer read", row, n))
		}
	}
	return why
}

// parseRowOverride reads the left side catalogue.label["id"].column of a --set.
func parseRowOverride(lhs string) (addr, column string, err error) {
	tr, d := hclsyntax.ParseTraversalAbs([]byte(lhs), "--set", hcl.InitialPos)
	if d.HasErrors() || len(tr) != 4 || tr.RootName() != catalogueBlock {
		return "", "", fmt.Errorf(`write catalogue.label["id"].column=value, e.g. catalogue.nearby["FW-3318"].parallax=35.1`)
	}
	label, ok1 := tr[1].(hcl.TraverseAttr)
	idx, ok2 := tr[2].(hcl.TraverseIndex)
	col, ok3 := tr[3].(hcl.TraverseAttr)
	id, ok4 := str(idx.Key)
	if !ok1 || !ok2 || !ok3 || !ok4 {
		return "", "", fmt.Errorf(`write catalogue.label["id"].column=value, e.g. catalogue.nearby["FW-3318"].parallax=35.1`)
	}
	return rowAddress(label.Name, id), col.Name, nil
}

// rowOverride finds a --set for a row's column, by the name the step asked for or by the
// file's own column name.
func (w *Workflow) rowOverride(label, id, name, fileCol string) *override {
	addr := rowAddress(label, id)
	for _, n := range []string{name, fileCol} {
		if o := w.overrides[addr+"."+strings.ToLower(n)]; o != nil {
			return o
		}
	}
	return nil
}
