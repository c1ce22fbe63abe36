//go:build !unix

package workflow

// openNoWait is 0 where opening does not wait for a pipe's writer.
const openNoWait = 0
