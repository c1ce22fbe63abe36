package workflow

import (
	"crypto/sha256"
	"sync"

	"dipline/cache"
)

// stepParts is a running step's steps.Parts: its pieces in the store, each under the hash
// of the step's parts base (partsBase) and the key the kind gives the piece.
type stepParts struct {
	store *cache.Store
	base  [32]byte
	notef func(format string, args ...any)
	once  sync.Once
}

func (p *stepParts) key(k []byte) cache.PartKey {
	h := sha256.New()
	h.Write(p.base[:])
	h.Write(k)
	return cache.PartKey(h.Sum(nil))
}

func (p *stepParts) Get(k []byte) ([]byte, bool) {
	b, ok, err := p.store.Part(p.key(k))
	if err != nil {
		p.lost(err)
		return nil, false
	}
	return b, ok
}

func (p *stepParts) Put(k, piece []byte) {
	if err := p.store.PutPart(p.key(k), piece); err != nil {
		p.lost(err)
	}
}

// lost notes, once, that the store could not keep or give the step's pieces: they are
// computed, and the result is the same.
func (p *stepParts) lost(err error) {
	p.once.Do(func() { p.notef("finished pieces could not be kept in the store for the next run (%v)", err) })
}
