package photometry

import (
	"bytes"
	"crypto/sha256"
	"strconv"
	"strings"

	"dipline/steps"
)

// Read turns files into a light curve: one segment per file, each cleaned, normalised by its
// median flux and given an exposure time, then all put on one time reference and ordered by
// their first time. note receives every default the step derives (which columns, which
// exposure, the median divided by, …). Errors name the file and, where it applies, the line
// or row and the column.
//
// A file is FITS when it starts with a SIMPLE card, else delimited text.
func Read(cfg Config, files []steps.File, note func(format string, args ...any)) (*Result, error) {
	if note == nil {
		note = func(string, ...any) {}
	}
	if len(files) == 0 {
		return nil, steps.Attrf("files", "no files given")
	}
	if err := sameBytesTwice(files); err != nil {
		return nil, err
	}
	var bs []built
	for k, f := range files {
		var r *rawSegment
		var err error
		if bytes.HasPrefix(f.Data, []byte("SIMPLE  =")) {
			r, err = readFITS(&cfg, f.Name, f.Data, note)
		} else {
			r, err = readText(&cfg, f.Name, f.Data, note)
		}
		if err != nil {
			return nil, err
		}
		b, err := build(&cfg, r, strconv.Itoa(k+1), note)
		if err != nil {
			return nil, err
		}
		bs = append(bs, b)
	}
	res := &Result{LC: combine(&cfg, bs, note)}
	for _, b := range bs {
		res.Stats = append(res.Stats, b.stats)
	}
	if err := res.LC.Validate(); err != nil {
		return nil, err
	}
	return res, nil
}

// readText reads a delimited text file. Times are in days; time_zero, when given, is the
// Julian date of time 0, else the times are full Julian dates.
func readText(cfg *Config, name string, data []byte, note noteFunc) (*rawSegment, error) {
	t, err := readTextHeader(name, data)
	if err != nil {
		return nil, err
	}
	idx, chosen, err := pickColumns(name, t.header, cfg.Columns)
	if err != nil {
		return nil, steps.BadInput(err)
	}
	note("%s: %s-separated; columns %s", name, t.delimName(), describeChoice(chosen))
	noteFluxChoice(name, t.header, idx, chosen, note)
	if t.fromComment {
		note("%s:%d: the column names are taken from this comment line, as the first row below it holds numbers", name, t.line)
	}
	var want []int
	var roles []Role
	for r := Role(0); r < nRoles; r++ {
		if idx[r] >= 0 {
			want, roles = append(want, idx[r]), append(roles, r)
		}
	}
	cols, err := t.read(want)
	if err != nil {
		return nil, err
	}
	r := &rawSegment{file: name, cols: chosen, where: cols.where(name)}
	for k, role := range roles {
		switch role {
		case TimeCol:
			r.time = cols.vals[k]
		case FluxCol:
			r.flux = cols.vals[k]
		case ErrorCol:
			r.err = cols.vals[k]
		case FlagCol:
			r.flag = cols.vals[k]
		}
	}
	if len(cols.lines) == 0 {
		return nil, steps.BadInputf("%s: the header on line %d is followed by no rows", name, t.line)
	}
	if cfg.TimeZero != nil {
		r.hasRef = true
		r.refInt, r.refFrac = splitJD(*cfg.TimeZero, 0)
		r.refFrom = "time_zero"
	}
	return r, nil
}

// sameBytesTwice refuses a list that names one file twice, or two files holding the same
// bytes: each segment's points would count twice, and every error bar would shrink by √2
// with nothing to show it.
func sameBytesTwice(files []steps.File) error {
	seen := map[[32]byte]string{}
	for _, f := range files {
		sum := sha256.Sum256(f.Data)
		if first, ok := seen[sum]; ok {
			if first == f.Name {
				return steps.Attrf("files", "%s is named twice; its points would count twice. Name each file once", f.Name)
			}
			return steps.Attrf("files", "%s and %s hold the same bytes; their points would count twice. Name one of them", first, f.Name)
		}
		seen[sum] = f.Name
	}
	return nil
}

// noteFluxChoice questions a flux column named like a magnitude, and says which flux was
// taken when the file has others (a raw and a corrected one, say), and how to take another.
func noteFluxChoice(at string, names []string, idx [nRoles]int, chosen [nRoles]string, note noteFunc) {
	if l := strings.ToLower(chosen[FluxCol]); strings.Contains(l, "mag") && !strings.Contains(l, "flux") {
		note("%s: the flux column %q is named like a magnitude; this step reads flux, which falls in a transit where a magnitude rises: convert it (flux = 10^(−0.4·mag)) if it is one", at, chosen[FluxCol])
	}
	if others := otherFluxes(names, idx); len(others) > 0 {
		note("%s: the flux taken is %q; the file also has %s: to take another, name it in columns = { flux = \"...\" }", at, chosen[FluxCol], strings.Join(others, ", "))
	}
}
