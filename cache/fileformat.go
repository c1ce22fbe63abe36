package cache

import (
	"encoding/binary"
	"fmt"
	"hash/fnv"
	"io"
)

// The store file's layout, read here without bbolt so that a damaged file can be checked
// before bbolt maps it into memory, and salvaged when bbolt cannot read it. Followed from
// the source of go.etcd.io/bbolt v1.5.0:
//
//   - internal/common/page.go, type Page: a page starts with its id (uint64), flags
//     (uint16), element count (uint16) and number of continuation pages (uint32); type
//     branchPageElement (pos, ksize uint32; child page id uint64) and leafPageElement
//     (flags, pos, ksize, vsize uint32), where pos counts from the element itself
//     (leafPageElement.Key, .Value);
//   - internal/common/meta.go, type Meta and Meta.Validate: magic, version, page size,
//     flags (uint32 each), root bucket (page id, sequence), freelist page id, high-water
//     page id, transaction id and a checksum, which Meta.Sum64 computes as FNV-1a 64 over
//     the fields before it;
//   - internal/common/types.go: Magic 0xED0CDAED, Version 2, PgidNoFreelist;
//   - internal/common/bucket.go, type InBucket: a bucket's value is its root page id and
//     sequence, followed by the bucket's page itself when the root id is 0 (inline);
//   - internal/common/page.go, Page.FreelistPageIds: a freelist page lists page ids;
//     a count of 0xFFFF means the first id is the count;
//   - db.go, DB.getPageSize, getPageSizeFromFirstMeta and getPageSizeFromSecondMeta: the
//     page size comes from the first valid meta page, the second one searched at 1 KiB ×
//     2^i; DB.mmap: the file opens if either meta page validates; DB.meta: the valid one
//     with the higher transaction id is used; DB.fileSize: a file under two pages is
//     refused.
//
// bbolt writes these structs through unsafe pointers, so every field is in the machine's
// own byte order.
const (
	boltMagic   uint32 = 0xED0CDAED
	boltVersion uint32 = 2

	pageHeaderSize   = 16 // id, flags, count, overflow
	elementSize      = 16 // a branch or a leaf element
	bucketHeaderSize = 16 // root page id, sequence
	metaChecksummed  = 56 // bytes of Meta before its checksum
	metaPageBytes    = pageHeaderSize + metaChecksummed + 8

	branchPage   = 0x01
	leafPage     = 0x02
	metaPageFlag = 0x04
	freelistPage = 0x10

	bucketEntry = 0x01 // a leaf element whose value is a bucket

	noFreelist = ^uint64(0)

	// Page sizes outside these bounds are not ones bbolt writes (it uses the system's
	// page size, and searches for the second meta page up to 16 MiB).
	minPageSize = 512
	maxPageSize = 1 << 24
)

var order = binary.NativeEndian

// metaPage is one of the two header pages of a store file.
type metaPage struct {
	page     uint64 // where it was read: 0 or 1
	magic    uint32
	version  uint32
	pageSize uint32
	root     uint64 // the root bucket's page
	freelist uint64
	hwm      uint64 // pages [0, hwm) are the file's
	txid     uint64
	checksum uint64
	sum      uint64 // the checksum computed from the bytes read
}

// parseMeta reads a meta page from b, which holds at least metaPageBytes bytes.
func parseMeta(b []byte, page uint64) metaPage {
	m := b[pageHeaderSize:]
	h := fnv.New64a()
	h.Write(m[:metaChecksummed])
	return metaPage{
		page:     page,
		magic:    order.Uint32(m[0:]),
		version:  order.Uint32(m[4:]),
		pageSize: order.Uint32(m[8:]),
		root:     order.Uint64(m[16:]),
		freelist: order.Uint64(m[32:]),
		hwm:      order.Uint64(m[40:]),
		txid:     order.Uint64(m[48:]),
		checksum: order.Uint64(m[56:]),
		sum:      h.Sum64(),
	}
}

// problem says why bbolt would refuse this meta page (Meta.Validate), or "" if it is valid.
func (m metaPage) problem() string {
	switch {
	case m.magic != boltMagic:
		return "it lacks a store's marker"
	case m.version != boltVersion:
		return fmt.Sprintf("it is of format version %d, not %d", m.version, boltVersion)
	case m.checksum != m.sum:
		return "its checksum does not match its contents"
	case m.pageSize < minPageSize || m.pageSize > maxPageSize:
		return fmt.Sprintf("it gives a page size of %d bytes", m.pageSize)
	}
	return ""
}

// layout is what a store file's meta pages say about it.
type layout struct {
	size     int64    // the file's size in bytes
	pageSize int64    // from the meta page in use
	meta     metaPage // the meta page bbolt uses: valid, with the higher transaction id
}

// pages returns how many whole pages of the file can be read: the high-water mark, or
// fewer when the file is shorter than that.
func (l layout) pages() uint64 {
	return min(l.meta.hwm, uint64(l.size/l.pageSize))
}

// readMetas finds the meta pages as bbolt does and returns the one bbolt would use. When
// neither is valid it returns an error that says why; it does not look further.
func readMetas(r io.ReaderAt, size int64) (layout, error) {
	if size < metaPageBytes {
		return layout{}, fmt.Errorf("the file is only %d bytes long, too short for a store's header", size)
	}
	buf := make([]byte, metaPageBytes)
	if _, err := r.ReadAt(buf, 0); err != nil {
		return layout{}, fmt.Errorf("its first page cannot be read: %v", err)
	}
	m0 := parseMeta(buf, 0)
	var m1 metaPage
	p1 := "it was not found"
	if p0 := m0.problem(); p0 == "" {
		if m1, p1 = readMetaAt(r, size, int64(m0.pageSize)); p1 == "" {
			return layout{size: size, pageSize: int64(m0.pageSize), meta: newer(m0, m1)}, nil
		}
		return layout{size: size, pageSize: int64(m0.pageSize), meta: m0}, nil
	}
	for i := range 15 {
		at := int64(1024) << i
		if at >= size-1024 {
			break
		}
		if m, p := readMetaAt(r, size, at); p == "" {
			return layout{size: size, pageSize: at, meta: m}, nil
		}
	}
	if m0.magic != boltMagic {
		return layout{}, fmt.Errorf("its first page is not a store's header (%s): either the file is not a dipline store, or its start was overwritten", m0.problem())
	}
	return layout{}, fmt.Errorf("both copies of its header are unreadable: the first because %s, the second because %s", m0.problem(), p1)
}

// readMetaAt reads the second meta page at offset at, which must also be its page size.
func readMetaAt(r io.ReaderAt, size, at int64) (metaPage, string) {
	if at+metaPageBytes > size {
		return metaPage{}, "the file ends before it"
	}
	buf := make([]byte, metaPageBytes)
	if _, err := r.ReadAt(buf, at); err != nil {
		return metaPage{}, "it cannot be read: " + err.Error()
	}
	m := parseMeta(buf, 1)
	if p := m.problem(); p != "" {
		return m, p
	}
	if int64(m.pageSize) != at {
		return m, fmt.Sprintf("it gives a page size of %d bytes but lies at byte %d", m.pageSize, at)
	}
	return m, ""
}

func newer(a, b metaPage) metaPage {
	if b.txid > a.txid {
		return b
	}
	return a
}

// checkLayout reads a store file's meta pages and checks that the file is as long as the
// meta page in use says: bbolt maps the file into memory and trusts those numbers, so a
// file cut short would make it read beyond the end of the file and crash.
func checkLayout(r io.ReaderAt, size int64) (layout, error) {
	l, err := readMetas(r, size)
	if err != nil {
		return l, err
	}
	m := l.meta
	switch {
	case size < 2*l.pageSize:
		return l, fmt.Errorf("the file is %d bytes long, shorter than its own two header pages of %d bytes", size, l.pageSize)
	case m.hwm < 2:
		return l, fmt.Errorf("its header says it has %d pages, fewer than its two header pages", m.hwm)
	case m.hwm > uint64(size/l.pageSize):
		return l, fmt.Errorf("it is cut short: the file has %d bytes, but its header says its pages reach %s bytes (a copy that did not finish, or a disk that filled up)",
			size, pagesEnd(m.hwm, l.pageSize))
	case m.root < 2 || m.root >= m.hwm:
		return l, fmt.Errorf("its header gives page %d as the first page of its contents, outside its %d pages", m.root, m.hwm)
	case m.freelist != noFreelist && (m.freelist < 2 || m.freelist >= m.hwm):
		return l, fmt.Errorf("its header gives page %d as its list of free pages, outside its %d pages", m.freelist, m.hwm)
	}
	return l, nil
}

// pagesEnd writes n pages of size bytes each as a byte count, or "more than 2^63" when
// that overflows.
func pagesEnd(n uint64, size int64) string {
	if n > uint64(1<<63-1)/uint64(size) {
		return "more than 2^63"
	}
	return fmt.Sprint(n * uint64(size))
}
