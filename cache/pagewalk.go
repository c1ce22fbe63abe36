package cache

import (
	"bytes"
	"fmt"
	"io"
	"sort"
)

// pageReader reads a store file's pages with ReadAt, never through a memory map, and checks
// every page id, count, offset and length against the file before using it (the layout is
// in fileformat.go). Whatever the bytes, it returns problems, never panics or faults.
// Verify walks the store's tree with it, salvage copies with it, and a panic inside bbolt
// is diagnosed with it.
type pageReader struct {
	r        io.ReaderAt
	pageSize int64
	pages    uint64 // pages [0, pages) lie within the file and below its high-water mark
}

// maxTreeDepth bounds a walk: a B+tree whose pages hold at least two elements each is never
// deeper than 64 levels over 2^64 keys, so anything deeper is a loop in damaged pages.
const maxTreeDepth = 64

// pageView is one page's header and element table, read and checked.
type pageView struct {
	r        io.ReaderAt
	at       int64 // offset of the page header in r
	span     int64 // bytes from at that belong to the page
	pageSize int64
	id       uint64
	flags    uint16
	count    int
	overflow uint32
	table    []byte // count elements of elementSize bytes
	problem  string // damage that does not stop the page being read
}

// leafElem is one key and value on a leaf page, by their offsets in the page's reader.
type leafElem struct {
	flags         uint32
	keyAt, keyLen int64
	valAt, valLen int64
	r             io.ReaderAt
	page          uint64
}

// PageProblem is a damaged page: where the store's tree reached it and what is wrong.
type PageProblem struct {
	Bucket string // the bucket whose tree holds the page ("" for the root or the freelist)
	Page   uint64
	What   string
	// Lost says the page, and whatever lies below it in the tree, could not be read; a
	// problem that does not stop reading (a wrong count of continuation pages) leaves it
	// false.
	Lost bool
}

func (p PageProblem) String() string {
	where := fmt.Sprintf("page %d", p.Page)
	if p.Bucket != "" {
		where += " (" + p.Bucket + ")"
	}
	return where + ": " + p.What
}

// header reads and checks the header of page id and its element table.
func (pr *pageReader) header(id uint64, want uint16) (*pageView, error) {
	switch {
	case id < 2:
		return nil, fmt.Errorf("a reference points at header page %d", id)
	case id >= pr.pages:
		return nil, fmt.Errorf("a reference points at page %d, beyond the file's %d readable pages", id, pr.pages)
	}
	at := int64(id) * pr.pageSize
	left := int64(pr.pages-id) * pr.pageSize
	v, err := parsePage(pr.r, at, left, pr.pageSize)
	if err != nil {
		return nil, err
	}
	if v.id != id {
		return nil, fmt.Errorf("it calls itself page %d", v.id)
	}
	if v.flags&want == 0 {
		return nil, fmt.Errorf("it is a %s page where a %s page belongs", pageKind(v.flags), pageKind(want))
	}
	return v, nil
}

// parsePage reads a page header at offset at of r, with left bytes available from there,
// and its element table. A number of continuation pages that disagrees with what the
// elements fill is not fatal (bbolt reads the page all the same, and a salvage can too):
// it is noted in the view's problem.
func parsePage(r io.ReaderAt, at, left, pageSize int64) (*pageView, error) {
	if left < pageHeaderSize {
		return nil, fmt.Errorf("the page is cut off after %d bytes", left)
	}
	h := make([]byte, pageHeaderSize)
	if _, err := r.ReadAt(h, at); err != nil {
		return nil, fmt.Errorf("its header cannot be read: %v", err)
	}
	v := &pageView{r: r, at: at, span: left, pageSize: pageSize, id: order.Uint64(h), flags: order.Uint16(h[8:]),
		count: int(order.Uint16(h[10:])), overflow: order.Uint32(h[12:])}
	switch v.flags {
	case branchPage, leafPage, freelistPage:
	default:
		return nil, fmt.Errorf("its kind is unknown (flags %#x)", v.flags)
	}
	if claimed := (int64(v.overflow) + 1) * pageSize; claimed <= left {
		v.span = claimed
	} else if left >= pageSize || v.overflow != 0 {
		v.problem = fmt.Sprintf("it claims %d continuation pages, past the end of the file", v.overflow)
	}
	if v.flags == freelistPage {
		return v, nil
	}
	n := int64(v.count) * elementSize
	if pageHeaderSize+n > v.span {
		return nil, fmt.Errorf("it claims %d elements, more than fit in it", v.count)
	}
	var err error
	if v.table, err = read(r, at+pageHeaderSize, n); err != nil {
		return nil, fmt.Errorf("its elements cannot be read: %v", err)
	}
	return v, nil
}

// checkFill notes a number of continuation pages that disagrees with the bytes the
// elements fill: bbolt gives a page exactly the pages its contents need (node.write), and
// frees that many when the page is rewritten, so a wrong number would later free pages in
// use. end is the offset just past the last key or value.
func (v *pageView) checkFill(end int64) {
	pageSize := v.pageSize
	if v.problem != "" || v.span < pageSize {
		return // already noted, or an inline page
	}
	need := max(1, (end-v.at+pageSize-1)/pageSize)
	if int64(v.overflow)+1 != need {
		v.problem = fmt.Sprintf("it claims %d continuation pages where its contents fill %d", v.overflow, need-1)
	}
}

func pageKind(flags uint16) string {
	switch flags {
	case branchPage:
		return "branch"
	case leafPage:
		return "leaf"
	case branchPage | leafPage:
		return "branch or leaf"
	case freelistPage:
		return "free-list"
	case metaPageFlag:
		return "header"
	}
	return fmt.Sprintf("unknown (flags %#x)", flags)
}

// elemAt is the offset of element i, from which its key's position counts.
func (v *pageView) elemAt(i int) int64 { return v.at + pageHeaderSize + int64(i)*elementSize }

// within checks that n bytes at offset off lie inside the page.
func (v *pageView) within(off, n int64) bool {
	return n >= 0 && off >= v.at && off+n <= v.at+v.span
}

// leaves returns the page's leaf elements, checked to lie within the page one after the
// other, as bbolt writes them (internal/common/inode.go, WriteInodeToPage: each element's
// key and value follow the previous one's, from the end of the element table, and no key is
// empty). That bounds the bytes a damaged page can point at to the page itself. On the
// first element out of place it returns those before it with the error.
func (v *pageView) leaves() ([]leafElem, error) {
	out := make([]leafElem, 0, v.count)
	next := v.at + pageHeaderSize + int64(v.count)*elementSize
	for i := range v.count {
		e := v.table[i*elementSize:]
		pos, ks, vs := int64(order.Uint32(e[4:])), int64(order.Uint32(e[8:])), int64(order.Uint32(e[12:]))
		if err := v.follows(i, v.elemAt(i)+pos, ks, ks+vs, next); err != nil {
			return out, err
		}
		out = append(out, leafElem{flags: order.Uint32(e), keyAt: next, keyLen: ks,
			valAt: next + ks, valLen: vs, r: v.r, page: v.id})
		next += ks + vs
	}
	v.checkFill(next)
	return out, nil
}

// children returns the page ids a branch page points at, checked as leaves checks.
func (v *pageView) children() ([]uint64, error) {
	out := make([]uint64, 0, v.count)
	next := v.at + pageHeaderSize + int64(v.count)*elementSize
	for i := range v.count {
		e := v.table[i*elementSize:]
		pos, ks := int64(order.Uint32(e)), int64(order.Uint32(e[4:]))
		if err := v.follows(i, v.elemAt(i)+pos, ks, ks, next); err != nil {
			return out, err
		}
		out = append(out, order.Uint64(e[8:]))
		next += ks
	}
	v.checkFill(next)
	return out, nil
}

// follows checks that element i's data (n bytes at at, its key ks of them) starts where
// the previous element's ended and lies within the page.
func (v *pageView) follows(i int, at, ks, n, next int64) error {
	switch {
	case at != next:
		return fmt.Errorf("element %d of %d does not follow the one before it", i+1, v.count)
	case ks == 0:
		return fmt.Errorf("element %d of %d has an empty key", i+1, v.count)
	case !v.within(at, n):
		return fmt.Errorf("element %d of %d points outside the page", i+1, v.count)
	}
	return nil
}

// read copies n bytes at offset off of r.
func read(r io.ReaderAt, off, n int64) ([]byte, error) {
	b := make([]byte, n)
	if n == 0 {
		return b, nil
	}
	if _, err := r.ReadAt(b, off); err != nil {
		return nil, err
	}
	return b, nil
}

func (e leafElem) key() ([]byte, error)   { return read(e.r, e.keyAt, e.keyLen) }
func (e leafElem) value() ([]byte, error) { return read(e.r, e.valAt, e.valLen) }

// walker walks trees of pages, reporting damaged pages and never visiting one twice.
type walker struct {
	pr      *pageReader
	seen    map[uint64]bool // pages the walk reached
	covered map[uint64]bool // their continuation pages
	problem func(PageProblem)
}

func newWalker(pr *pageReader, problem func(PageProblem)) *walker {
	return &walker{pr: pr, seen: map[uint64]bool{}, covered: map[uint64]bool{}, problem: problem}
}

// inUse reports whether the walk reached page id, as a page or a continuation page.
func (w *walker) inUse(id uint64) bool { return w.seen[id] || w.covered[id] }

// tree calls leaf for every element on the leaf pages of the tree whose root is page root,
// or, when inline is not nil, of the bucket page held inline in a bucket's value. A damaged
// page is reported, and the elements below it are skipped.
func (w *walker) tree(bucket string, root uint64, inline []byte, leaf func(leafElem)) {
	if inline != nil {
		r := bytes.NewReader(inline)
		v, err := parsePage(r, 0, int64(len(inline)), w.pr.pageSize)
		if err == nil && v.flags != leafPage {
			err = fmt.Errorf("an inline bucket holds a %s page", pageKind(v.flags))
		}
		var elems []leafElem
		if err == nil {
			elems, err = v.leaves()
		}
		if err != nil {
			w.problem(PageProblem{Bucket: bucket, What: "inline bucket: " + err.Error(), Lost: true})
		}
		for _, e := range elems {
			leaf(e)
		}
		return
	}
	w.page(bucket, root, 0, leaf)
}

func (w *walker) page(bucket string, id uint64, depth int, leaf func(leafElem)) {
	if depth > maxTreeDepth {
		w.problem(PageProblem{Bucket: bucket, Page: id, What: "the tree is deeper than any store's; its pages loop", Lost: true})
		return
	}
	if w.seen[id] {
		w.problem(PageProblem{Bucket: bucket, Page: id, What: "it is reached twice", Lost: true})
		return
	}
	v, err := w.pr.header(id, branchPage|leafPage)
	if err != nil {
		w.problem(PageProblem{Bucket: bucket, Page: id, What: err.Error(), Lost: true})
		return
	}
	w.seen[id] = true
	if v.flags == branchPage {
		children, err := v.children() // on an error, those before the damage
		w.note(bucket, v, err)
		for _, c := range children {
			w.page(bucket, c, depth+1, leaf)
		}
		return
	}
	elems, err := v.leaves() // on an error, those before the damage
	w.note(bucket, v, err)
	for _, e := range elems {
		leaf(e)
	}
	for i := uint64(1); i <= uint64(v.overflow) && v.problem == ""; i++ {
		w.covered[id+i] = true
	}
}

// note reports what is wrong with a page that was reached.
func (w *walker) note(bucket string, v *pageView, err error) {
	switch {
	case err != nil:
		w.problem(PageProblem{Bucket: bucket, Page: v.id, What: err.Error(), Lost: true})
	case v.problem != "":
		w.problem(PageProblem{Bucket: bucket, Page: v.id, What: v.problem})
	}
}

// bucketRef is where a bucket's tree starts: a root page, or its page held inline.
type bucketRef struct {
	root   uint64
	inline []byte
}

// buckets walks the root bucket and returns the top-level buckets it names.
func (w *walker) buckets(root uint64) map[string]bucketRef {
	out := map[string]bucketRef{}
	w.page("", root, 0, func(e leafElem) {
		if e.flags&bucketEntry == 0 {
			return
		}
		name, err1 := e.key()
		val, err2 := e.value()
		if err1 != nil || err2 != nil || len(val) < bucketHeaderSize {
			w.problem(PageProblem{Page: e.page, What: "a bucket's entry cannot be read", Lost: true})
			return
		}
		ref := bucketRef{root: order.Uint64(val)}
		if ref.root == 0 {
			ref.inline = val[bucketHeaderSize:]
		}
		out[string(name)] = ref
	})
	return out
}

// freelist returns the page ids the freelist page lists as free.
func (pr *pageReader) freelist(id uint64) ([]uint64, error) {
	v, err := pr.header(id, freelistPage)
	if err != nil {
		return nil, err
	}
	first, n := int64(0), int64(v.count)
	if v.count == 0xFFFF {
		b, err := read(pr.r, v.at+pageHeaderSize, 8)
		if err != nil {
			return nil, err
		}
		first, n = 1, int64(order.Uint64(b))
	}
	if n < 0 || n > v.span/8 || pageHeaderSize+(first+n)*8 > v.span {
		return nil, fmt.Errorf("it claims %d free pages, more than fit in it", n)
	}
	b, err := read(pr.r, v.at+pageHeaderSize+first*8, n*8)
	if err != nil {
		return nil, err
	}
	ids := make([]uint64, n)
	for i := range ids {
		ids[i] = order.Uint64(b[i*8:])
	}
	return ids, nil
}

// checkStructure walks every page the tree of the store reaches from its meta page, and its
// freelist, and returns what is wrong with them: the pages bbolt would stumble on. It reads
// page headers and element tables only, not values.
func checkStructure(r io.ReaderAt, l layout) []PageProblem {
	var problems []PageProblem
	pr := &pageReader{r: r, pageSize: l.pageSize, pages: l.pages()}
	w := newWalker(pr, func(p PageProblem) { problems = append(problems, p) })
	refs := w.buckets(l.meta.root)
	names := make([]string, 0, len(refs))
	for name := range refs {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		w.tree(name, refs[name].root, refs[name].inline, func(leafElem) {})
	}
	if l.meta.freelist != noFreelist {
		ids, err := pr.freelist(l.meta.freelist)
		if err != nil {
			problems = append(problems, PageProblem{Page: l.meta.freelist, What: "the list of free pages: " + err.Error()})
		}
		for _, id := range ids {
			if w.inUse(id) {
				problems = append(problems, PageProblem{Page: id, What: "it is in use and also listed as free"})
			}
		}
	}
	return problems
}
