//go:build unix

package cache

import (
	"errors"
	"os"
	"syscall"
	"time"
)

// openNoFollow makes opening the lock file fail when it is a symbolic link.
const openNoFollow = syscall.O_NOFOLLOW

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

// lockDB takes bbolt's lock on its database file before bbolt does (bbolt then finds it
// held by the same open file and proceeds at once). bbolt itself polls every 50 ms, and a
// process committing in a loop re-takes the lock within microseconds of letting go, so a
// poller can wait for many seconds; a blocked flock is woken by the kernel the moment the
// lock is released. If the lock is not had within timeout, lockDB returns false and leaves
// f to a goroutine that closes it once the blocked call returns.
func lockDB(f *os.File, exclusive bool, timeout time.Duration) (bool, error) {
	how := syscall.LOCK_SH
	if exclusive {
		how = syscall.LOCK_EX
	}
	fd := int(f.Fd())
	err := flockRetry(fd, how|syscall.LOCK_NB)
	if err == nil {
		return true, nil
	}
	if !errors.Is(err, syscall.EWOULDBLOCK) {
		return false, err
	}
	done := make(chan error, 1)
	go func() { done <- flockRetry(fd, how) }()
	timer := time.NewTimer(timeout)
	defer timer.Stop()
	select {
	case err := <-done:
		return err == nil, err
	case <-timer.C:
		go func() {
			<-done
			f.Close()
		}()
		return false, nil
	}
}

func flockRetry(fd, how int) error {
	for {
		err := syscall.Flock(fd, how)
		if !errors.Is(err, syscall.EINTR) {
			return err
		}
	}
}
