//go:build !unix

package cache

import (
	"errors"
	"os"
)

// The run lock uses flock(2); other systems are not supported yet.
var errNoFlock = errors.New("run locks need a Unix system")

func tryLock(f *os.File) (bool, error) { return false, errNoFlock }

func unlock(f *os.File) error { return errNoFlock }
