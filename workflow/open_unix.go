//go:build unix

package workflow

import "syscall"

// openNoWait opens a named pipe without waiting for a writer, so that a pipe named as a data
// file is refused (it is not a regular file) rather than waited on for ever. It changes
// nothing for a regular file.
const openNoWait = syscall.O_NONBLOCK
