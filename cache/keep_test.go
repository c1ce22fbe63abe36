package cache

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestAKeptStoreRefusesAFileRemovedOrReplaced(t *testing.T) {
	a, b := entry("a", []byte("result a")), entry("b", []byte("result b"))
	t.Run("a file removed: calls fail and no new file is made", func(t *testing.T) {
		s := newStore(t)
		mustCommit(t, s, a)
		if err := s.Keep(); err != nil {
			t.Fatal(err)
		}
		if err := os.Remove(s.Path()); err != nil {
			t.Fatal(err)
		}
		if _, _, err := s.Lookup(a.Step); !errors.Is(err, ErrReplaced) {
			t.Errorf("Lookup after the removal: %v, want ErrReplaced", err)
		}
		if err := s.Commit(b); !errors.Is(err, ErrReplaced) || !strings.Contains(err.Error(), "was removed") {
			t.Errorf("Commit after the removal: %v, want ErrReplaced saying the file was removed", err)
		}
		if err := s.PutRun(Run{ID: "r"}); !errors.Is(err, ErrReplaced) {
			t.Errorf("PutRun after the removal: %v, want ErrReplaced", err)
		}
		if _, err := os.Stat(s.Path()); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("a new store file was made in the removed one's place (%v)", err)
		}
	})
	t.Run("a file replaced by another store: calls fail and the other is untouched", func(t *testing.T) {
		s := newStore(t)
		mustCommit(t, s, a)
		if err := s.Keep(); err != nil {
			t.Fatal(err)
		}
		other, err := Open(filepath.Join(t.TempDir(), "other.db"))
		if err != nil {
			t.Fatal(err)
		}
		mustCommit(t, other, a)
		if err := os.Rename(other.Path(), s.Path()); err != nil {
			t.Fatal(err)
		}
		before := fileDigest(t, s.Path())
		if _, _, err := s.Lookup(a.Step); !errors.Is(err, ErrReplaced) {
			t.Errorf("Lookup after the swap: %v, want ErrReplaced", err)
		}
		if err := s.Commit(b); !errors.Is(err, ErrReplaced) || !strings.Contains(err.Error(), "replaced by another file") {
			t.Errorf("Commit after the swap: %v, want ErrReplaced", err)
		}
		if fileDigest(t, s.Path()) != before {
			t.Error("the file swapped in was written to")
		}
	})
	t.Run("a store made by its first write is kept from then on", func(t *testing.T) {
		s := newStore(t) // no file yet
		if err := s.Keep(); err != nil {
			t.Fatal(err)
		}
		mustCommit(t, s, a) // makes the file
		if _, ok, err := s.Lookup(a.Step); err != nil || !ok {
			t.Fatalf("Lookup in the kept store: %v, %v", ok, err)
		}
		if err := os.Remove(s.Path()); err != nil {
			t.Fatal(err)
		}
		if err := s.Commit(b); !errors.Is(err, ErrReplaced) {
			t.Errorf("Commit after the removal: %v, want ErrReplaced", err)
		}
		if _, err := os.Stat(s.Path()); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("a new store file was made (%v)", err)
		}
	})
	t.Run("a store not kept makes a new file, as before", func(t *testing.T) {
		s := newStore(t)
		mustCommit(t, s, a)
		if err := os.Remove(s.Path()); err != nil {
			t.Fatal(err)
		}
		mustCommit(t, s, b)
	})
}

func TestAFileThatIsNotAStoreIsToldFromADamagedStore(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "lc.csv")
	if err := os.WriteFile(csv, []byte(strings.Repeat("time,flux,flux_err\n0.1,1.0001,0.0003\n", 400)), 0o644); err != nil {
		t.Fatal(err)
	}
	short := filepath.Join(dir, "hostname")
	if err := os.WriteFile(short, []byte("fw\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, path := range []string{csv, short} {
		var ne *NotAStoreError
		if err := CheckIsStore(path); !errors.As(err, &ne) || ne.Path != path {
			t.Errorf("CheckIsStore(%s) = %v, want a *NotAStoreError", filepath.Base(path), err)
		}
		s, _ := Open(path)
		before := fileDigest(t, path)
		for what, err := range map[string]error{"CheckFile": s.CheckFile(), "CheckPages": s.CheckPages(), "Commit": s.Commit(entry("x", []byte("x")))} {
			if !errors.Is(err, ErrNotAStore) || errors.Is(err, ErrDamaged) || strings.Contains(err.Error(), "salvage") {
				t.Errorf("%s on %s: %v, want an error wrapping ErrNotAStore alone", what, filepath.Base(path), err)
			}
		}
		if fileDigest(t, path) != before {
			t.Errorf("%s was changed", filepath.Base(path))
		}
	}
	// A store whose header pages, or its whole start, are spoilt is a damaged store, which
	// salvage can read: it is never called "not a store".
	for _, d := range damages {
		s, _ := fixtureStore(t)
		d.apply(t, s.Path())
		if err := CheckIsStore(s.Path()); err != nil {
			t.Errorf("%s: CheckIsStore = %v, want nil", d.name, err)
		}
		if err := s.CheckPages(); !errors.Is(err, ErrDamaged) || errors.Is(err, ErrNotAStore) {
			t.Errorf("%s: CheckPages = %v, want an error wrapping ErrDamaged", d.name, err)
		}
	}
	if err := CheckIsStore(filepath.Join(dir, "none.db")); err != nil {
		t.Errorf("an absent store: %v", err)
	}
}

func TestCheckPagesFindsDamageCheckFileDoesNot(t *testing.T) {
	// A page of the provenance tree spoilt: the header pages are sound, so CheckFile passes,
	// and a look-up that does not pass through the page succeeds; CheckPages names it.
	s, es := fixtureStore(t)
	page, err := DamagePageForTest(s.Path(), "provenance", DamageKind)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.CheckFile(); err != nil {
		t.Errorf("CheckFile = %v, want nil (it reads the header pages only)", err)
	}
	if _, ok, err := s.Lookup(es[0].Step); err != nil || !ok {
		t.Errorf("Lookup = %v, %v; want the mapping (the step keys' tree is sound)", ok, err)
	}
	var de *DamagedError
	if err := s.CheckPages(); !errors.As(err, &de) || !strings.Contains(err.Error(), "(provenance)") ||
		!strings.Contains(err.Error(), "its kind is unknown") || !strings.Contains(err.Error(), fmt.Sprintf("page %d ", page)) {
		t.Errorf("CheckPages = %v, want a *DamagedError naming page %d of the provenance tree", err, page)
	}
	if err := newStore(t).CheckPages(); err != nil {
		t.Errorf("CheckPages of a store not written yet: %v", err)
	}
}
