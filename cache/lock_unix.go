//go:build unix

package cache

import (
	"errors"
	"os"
	"syscall"
)

// tryLock takes an exclusive flock on f without blocking; false means someone else holds it.
// flock locks belong to the open file description, so two opens in one process exclude
// each other just as two processes do.
func tryLock(f *os.File) (bool, error) {
	for {
		err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		switch {
		case err == nil:
			return true, nil
		case errors.Is(err, syscall.EINTR):
			continue
		case errors.Is(err, syscall.EWOULDBLOCK):
			return false, nil
		}
		return false, err
	}
}

func unlock(f *os.File) error { return syscall.Flock(int(f.Fd()), syscall.LOCK_UN) }
