//go:build !unix

package cache

import (
	"errors"
	"os"
	"time"
)

// The run lock uses flock(2); other systems are not supported yet.
var errNoFlock = errors.New("run locks need a Unix system")

// openNoFollow is 0 where the flag does not exist.
const openNoFollow = 0

func tryLock(f *os.File) (bool, error) { return false, errNoFlock }

func unlock(f *os.File) error { return errNoFlock }

// lockDB leaves the database lock to bbolt.
func lockDB(f *os.File, exclusive bool, timeout time.Duration) (bool, error) { return true, nil }
