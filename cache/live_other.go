//go:build !unix

package cache

import "os"

// heldElsewhere cannot tell without flock; run locks need a Unix system (lock_other.go).
func heldElsewhere(f *os.File) bool { return false }
