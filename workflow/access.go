package workflow

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/hashicorp/hcl/v2"

	"dipline/cache"
)

// Access says what a workflow may reach beyond its own folder and how much data it may
// read. The zero value confines it to its folder with DefaultMaxData. Paths given here come
// from the command line: they are the user's own and trusted, unlike the workflow's text.
type Access struct {
	// Allow lists folders outside the workflow's own that it may read from and write to
	// (--also-allow); relative ones are taken from the current folder.
	Allow []string
	// MaxData bounds the bytes of the workflow's data files and catalogues together
	// (--max-data); 0 means DefaultMaxData.
	MaxData int64
	// Look is set by the commands that only read (check, pending, trace, runs, diff, the
	// store's stats and verify): the store's and the results' places are checked but their
	// folders are not made, so a look at a fresh workflow leaves its folder as it was.
	Look bool
}

// allowHint is how a refusal tells the user to widen the folders a workflow may use.
const allowHint = "If you trust this workflow, allow the folder on the command line: dipline --also-allow DIR <command> …"

// folders holds a workflow's open roots for the length of one load: its own folder first,
// then the folders the user allowed. Every path the workflow names is opened through one of
// them (os.Root), so that neither ".." nor a symbolic link leads out of it, and nothing can
// change between checking a path and opening it.
type folders struct {
	dirs  []string // absolute, as given (dirs[0] is the workflow's folder)
	real  []string // the same with symbolic links resolved, to place where a link leads
	roots []*os.Root
	look  bool  // check the places written to without making their folders (Access.Look)
	limit int64 // data bytes allowed in all
	left  int64 // data bytes still allowed
	read  map[string]*FileInput
}

func openFolders(dir string, acc Access) (*folders, hcl.Diagnostics) {
	fo := &folders{look: acc.Look, limit: acc.MaxData, read: map[string]*FileInput{}}
	if fo.limit <= 0 {
		fo.limit = DefaultMaxData
	}
	fo.left = fo.limit
	var diags hcl.Diagnostics
	for i, d := range append([]string{dir}, acc.Allow...) {
		abs, err := filepath.Abs(d)
		var root *os.Root
		if err == nil {
			root, err = os.OpenRoot(abs)
		}
		if err != nil {
			what := "the workflow's folder"
			if i > 0 {
				what = "--also-allow " + d
			}
			diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError,
				Summary: fmt.Sprintf("%s cannot be used: %v.", capital(what), unwrapPath(err))})
			continue
		}
		real, err := filepath.EvalSymlinks(abs)
		if err != nil {
			real = abs
		}
		fo.dirs, fo.real, fo.roots = append(fo.dirs, abs), append(fo.real, real), append(fo.roots, root)
	}
	if diags.HasErrors() {
		fo.close()
		return nil, diags
	}
	return fo, nil
}

func (fo *folders) close() {
	for _, r := range fo.roots {
		r.Close()
	}
	fo.roots = nil
}

// locate finds the folder that holds a path as written: the workflow's own for a relative
// path that stays inside it, else an allowed folder. An absolute path is taken only inside
// an allowed folder, so that a collaborator's copy of the workflow reads the same files.
func (fo *folders) locate(p string) (int, string, bool) {
	full, first := filepath.Clean(p), 1
	if !filepath.IsAbs(p) {
		full, first = filepath.Join(fo.dirs[0], p), 0
	}
	for i := first; i < len(fo.dirs); i++ {
		if rel, ok := within(fo.dirs[i], full); ok {
			return i, rel, true
		}
	}
	return 0, "", false
}

// relocate finds, for a path that left folder i through a symbolic link, an allowed folder
// that holds where the link leads. Whatever it finds is opened through that folder's root
// in turn, so a link changed meanwhile still cannot lead further.
func (fo *folders) relocate(i int, rel string) (int, string, bool) {
	real, err := realPath(filepath.Join(fo.dirs[i], rel))
	if err != nil {
		return 0, "", false
	}
	for j := 1; j < len(fo.dirs); j++ {
		if r, ok := within(fo.real[j], real); ok && j != i {
			return j, r, true
		}
	}
	return 0, "", false
}

// within gives full relative to dir when it lies inside it.
func within(dir, full string) (string, bool) {
	rel, err := filepath.Rel(dir, full)
	if err != nil || filepath.IsAbs(rel) || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) {
		return "", false
	}
	return rel, true
}

// realPath resolves the symbolic links of the longest part of p that exists.
func realPath(p string) (string, error) {
	rest := ""
	for {
		r, err := filepath.EvalSymlinks(p)
		if err == nil {
			return filepath.Join(r, rest), nil
		}
		parent := filepath.Dir(p)
		if !errors.Is(err, fs.ErrNotExist) || parent == p {
			return "", err
		}
		rest, p = filepath.Join(filepath.Base(p), rest), parent
	}
}

// escapes tells whether an os.Root refused a path for leaving it (by ".." or a link). The
// os package does not export that error; its text is stable and our tests check it.
func escapes(err error) bool {
	for ; err != nil; err = errors.Unwrap(err) {
		if err.Error() == "path escapes from parent" {
			return true
		}
	}
	return false
}

// readFile reads a data file or catalogue the workflow names: through the roots, only a
// regular file, and only if its size (measured before reading) fits in the data left to
// read. A file named twice is read once, so that both places get the same bytes.
func (fo *folders) readFile(p string, r hcl.Range) (*FileInput, *hcl.Diagnostic) {
	i, rel, ok := fo.locate(p)
	if !ok {
		return nil, outsideDiag(r, "file", p, fo.dirs[0])
	}
	f, err := fo.roots[i].OpenFile(rel, os.O_RDONLY|openNoWait, 0)
	if escapes(err) {
		if j, rel2, ok := fo.relocate(i, rel); ok {
			i, rel = j, rel2
			f, err = fo.roots[i].OpenFile(rel, os.O_RDONLY|openNoWait, 0)
		}
	}
	if err != nil {
		return nil, fo.openDiag(r, "file", p, err)
	}
	defer f.Close()
	key := fmt.Sprintf("%d/%s", i, rel)
	if prev := fo.read[key]; prev != nil {
		return &FileInput{Path: p, Data: prev.Data, Digest: prev.Digest}, nil
	}
	data, d := fo.take(f, p, r)
	if d != nil {
		return nil, d
	}
	fi := &FileInput{Path: p, Data: data, Digest: sha256.Sum256(data)}
	fo.read[key] = fi
	return fi, nil
}

// take reads an open file whole if it is a regular file that fits in the data left.
func (fo *folders) take(f *os.File, p string, r hcl.Range) ([]byte, *hcl.Diagnostic) {
	st, err := f.Stat()
	if err != nil {
		return nil, attrDiag(r, fmt.Sprintf("%s cannot be read: %v.", quote(p), unwrapPath(err)), "")
	}
	if d := notAFile(r, p, st); d != nil {
		return nil, d
	}
	if st.Size() > fo.left {
		return nil, fo.tooLarge(r, p, st.Size())
	}
	buf := bytes.NewBuffer(make([]byte, 0, st.Size()+bytes.MinRead))
	n, err := buf.ReadFrom(io.LimitReader(f, fo.left+1))
	if err != nil {
		return nil, attrDiag(r, fmt.Sprintf("%s cannot be read: %v.", quote(p), unwrapPath(err)), "")
	}
	if n > fo.left { // it grew while being read
		return nil, fo.tooLarge(r, p, n)
	}
	fo.left -= n
	return buf.Bytes(), nil
}

func notAFile(r hcl.Range, p string, st fs.FileInfo) *hcl.Diagnostic {
	switch {
	case st.IsDir():
		return attrDiag(r, fmt.Sprintf("%s is a folder, not a file.", quote(p)), "Name a file in it.")
	case !st.Mode().IsRegular():
		return attrDiag(r, fmt.Sprintf("%s is not a regular file (it is a pipe, a device or a socket).", quote(p)), "Name a file.")
	}
	return nil
}

func (fo *folders) tooLarge(r hcl.Range, p string, size int64) *hcl.Diagnostic {
	used := fo.limit - fo.left
	need := (used + size + (1<<30 - 1)) >> 30 // whole GiB
	sofar := ""
	if used > 0 {
		sofar = fmt.Sprintf(" (%s of it already taken)", FormatSize(used))
	}
	return attrDiag(r, fmt.Sprintf(
		"%s is %s, and the data files and catalogues of one workflow (with the catalogues' indexes) may take %s in all%s.",
		quote(p), FormatSize(size), FormatSize(fo.limit), sofar), fmt.Sprintf(
		"The bound keeps a damaged or hostile file from exhausting memory. If the file is right, raise it on the command line: dipline --max-data %dGiB <command> ….", need))
}

// place checks a path the workflow writes to and makes its folder inside the roots: the
// store's file (whose lock file lies beside it) or the output folder. It returns the
// absolute path, for the store and the results writer to open.
func (fo *folders) place(p string, r hcl.Range, what string, folder bool) (string, *hcl.Diagnostic) {
	i, rel, ok := fo.locate(p)
	if !ok {
		return "", outsideDiag(r, what, p, fo.dirs[0])
	}
	err := fo.makeIn(i, rel, folder)
	if escapes(err) {
		if j, rel2, ok := fo.relocate(i, rel); ok {
			i, rel = j, rel2
			err = fo.makeIn(i, rel, folder)
		}
	}
	if err != nil {
		return "", fo.openDiag(r, what, p, err)
	}
	if folder {
		return filepath.Join(fo.dirs[i], rel), nil
	}
	for _, name := range []string{rel, rel + ".lock"} {
		st, err := fo.roots[i].Stat(name)
		switch {
		case errors.Is(err, fs.ErrNotExist):
		case err != nil:
			return "", fo.openDiag(r, what, p, err)
		case st.IsDir():
			return "", attrDiag(r, fmt.Sprintf("%s is a folder, and the store is a file.", quote(name)), "For example store = \".dipline/store.db\".")
		case !st.Mode().IsRegular():
			return "", notAFile(r, name, st)
		}
	}
	if d := fo.checkLock(i, rel+".lock", r); d != nil {
		return "", d
	}
	return filepath.Join(fo.dirs[i], rel), nil
}

// checkLock refuses a store whose lock file holds something other than a run lock: the
// lock is written by every run, and a workflow must not name a store beside someone's file
// to overwrite it. (cache.LockRun refuses it too; here it is found at once, with the place
// in the workflow.)
func (fo *folders) checkLock(i int, name string, r hcl.Range) *hcl.Diagnostic {
	f, err := fo.roots[i].OpenFile(name, os.O_RDONLY|openNoWait, 0)
	if err != nil {
		return nil // none yet, or one LockRun will report on
	}
	defer f.Close()
	head, err := io.ReadAll(io.LimitReader(f, lockBytes+1))
	if err != nil || len(head) > lockBytes || !cache.IsRunLock(head) {
		return attrDiag(r, fmt.Sprintf("%s, where this store's run lock belongs, holds something else, and dipline leaves it as it is.", quote(name)),
			"Move it aside, or name another store.")
	}
	return nil
}

// lockBytes is as much of a lock file as checkLock reads: a run lock is far smaller.
const lockBytes = 4096

// makeIn makes the folder of a place (the place itself when it is a folder) in root i, and
// checks that a file there stays inside the root. When the command only looks, a folder
// not made yet is left unmade; one that exists is still checked.
func (fo *folders) makeIn(i int, rel string, folder bool) error {
	dir := rel
	if !folder {
		dir = filepath.Dir(rel)
	}
	if dir != "." && fo.look {
		if _, err := fo.roots[i].Stat(dir); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return err
		}
	} else if dir != "." {
		if err := fo.roots[i].MkdirAll(dir, 0o755); err != nil {
			return err
		}
	}
	if folder {
		return nil
	}
	for _, name := range []string{rel, rel + ".lock"} {
		if _, err := fo.roots[i].Stat(name); escapes(err) {
			return err
		}
	}
	return nil
}

// openDiag turns an error from a root into a diagnostic that names the path as written
// and never anything read from the file. what is "file", "store" or "output".
func (fo *folders) openDiag(r hcl.Range, what, p string, err error) *hcl.Diagnostic {
	switch {
	case escapes(err):
		return attrDiag(r, fmt.Sprintf("The %s %s leads outside the workflow's folder (%s) through a symbolic link.", what, quote(p), fo.dirs[0]),
			"dipline follows links only within the workflow's folder and the folders you allow, so that a workflow from someone else cannot reach your other files. "+allowHint)
	case errors.Is(err, fs.ErrNotExist) && what == "file":
		return attrDiag(r, fmt.Sprintf("There is no file %s (looked in %s).", quote(p), fo.dirs[0]), "")
	case errors.Is(err, fs.ErrPermission):
		return attrDiag(r, fmt.Sprintf("%s cannot be used: permission denied.", quote(p)), "")
	}
	return attrDiag(r, fmt.Sprintf("%s cannot be used: %v.", quote(p), unwrapPath(err)), "")
}

// outsideDiag refuses a path outside the workflow's folder; what is "file", "store" or
// "output".
func outsideDiag(r hcl.Range, what, p, dir string) *hcl.Diagnostic {
	if filepath.IsAbs(p) {
		if rel, ok := within(dir, filepath.Clean(p)); ok {
			return attrDiag(r, fmt.Sprintf("The %s %s is written as an absolute path; write it as %s, relative to the workflow's folder.", what, quote(p), quote(filepath.ToSlash(rel))),
				"An absolute path would lead a collaborator's copy of the folder back to yours.")
		}
		return attrDiag(r, fmt.Sprintf("The %s %s lies outside the workflow's folder (%s).", what, quote(p), dir),
			"Name files relative to the workflow's folder, so that a collaborator's copy finds the same files. "+allowHint)
	}
	return attrDiag(r, fmt.Sprintf("The %s %s lies outside the workflow's folder (%s).", what, quote(p), dir),
		"dipline reads and writes only inside it, so that a workflow from someone else cannot reach your other files. "+allowHint)
}

// unwrapPath gives the reason inside an *fs.PathError, without the path (a message names
// the path as the workflow wrote it).
func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}
