//go:build unix

package cache

import (
	"errors"
	"os"
	"syscall"
)

// heldElsewhere reports whether another open of the lock file holds its flock: it tries a
// shared lock without blocking and lets go of it at once.
func heldElsewhere(f *os.File) bool {
	fd := int(f.Fd())
	err := flockRetry(fd, syscall.LOCK_SH|syscall.LOCK_NB)
	if err == nil {
		syscall.Flock(fd, syscall.LOCK_UN)
		return false
	}
	return errors.Is(err, syscall.EWOULDBLOCK)
}
