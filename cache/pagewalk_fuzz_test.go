package cache

import (
	"bytes"
	"os"
	"testing"
)

// FuzzReadStoreFile feeds arbitrary bytes, seeded with a small real store file, to
// dipline's own reader of store files: whatever the bytes, it must return problems, never
// panic, loop or read outside what it was given. Run it with
// go test ./cache -run '^$' -fuzz FuzzReadStoreFile -fuzzminimizetime 10s
// (the seed is 32 KiB: minimising an input that large takes the default minute each).
func FuzzReadStoreFile(f *testing.F) {
	s := newStore(f)
	for i := range 12 {
		mustCommit(f, s, entry(string(rune('a'+i)), blob(uint64(i), 64+300*i)))
	}
	if err := s.PutRun(Run{ID: "r1", Started: t0, State: RunEnded}); err != nil {
		f.Fatal(err)
	}
	b, err := os.ReadFile(s.Path())
	if err != nil {
		f.Fatal(err)
	}
	f.Add(b)
	f.Add(b[:len(b)/3])
	f.Add([]byte("not a store"))
	f.Fuzz(func(t *testing.T, data []byte) {
		r := bytes.NewReader(data)
		inv := readInventory(r, int64(len(data)), true)
		for _, e := range append(inv.results, inv.orphans...) {
			e.key()
			e.value()
		}
		if l, err := checkLayout(r, int64(len(data))); err == nil {
			checkStructure(r, l)
		}
	})
}
