package cache

import (
	"encoding/json"
	"os"
	"strings"
)

// Liveness says whether a process holds the store's run lock now, and which one: what
// tells a run under way from one that was killed.
type Liveness struct {
	Held bool
	PID  int    // the holder's process id, 0 when its record cannot be read
	Host string // the holder's host name
}

// Liveness looks at the store's run lock without waiting for it. It never takes the lock
// for more than an instant, and only in shared mode: a run starting at that instant retries
// (LockRun polls), and so does a prune.
func (s *Store) Liveness() Liveness {
	f, err := os.Open(s.path + ".lock")
	if err != nil {
		return Liveness{} // no lock file: no run has ever held the lock
	}
	defer f.Close()
	if !heldElsewhere(f) {
		return Liveness{}
	}
	l := Liveness{Held: true}
	buf := make([]byte, 512)
	n, _ := f.ReadAt(buf, 0)
	var h holder
	if json.Unmarshal([]byte(strings.TrimSpace(string(buf[:n]))), &h) == nil {
		l.PID, l.Host = h.PID, h.Host
	}
	return l
}

// StateOf says what a run record's state means now: RunEnded; RunUnderWay when the
// record's process holds the run lock (or the holder is unknown); else RunInterrupted.
func (l Liveness) StateOf(r Run) string {
	switch {
	case r.HasEnded():
		return RunEnded
	case l.Held && (l.PID == 0 || (l.PID == r.PID && l.Host == r.Host)):
		return RunUnderWay
	}
	return RunInterrupted
}
