//go:build unix

package workflow

import (
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/hashicorp/hcl/v2"
)

func TestANamedPipeIsRefusedNotWaitedOn(t *testing.T) {
	c := newConfined(t)
	if err := syscall.Mkfifo(filepath.Join(c.dir, "lc.txt"), 0o644); err != nil {
		t.Skip("cannot make a named pipe here:", err)
	}
	done := make(chan hcl.Diagnostics, 1)
	go func() {
		_, d := c.load(toyHead+"source \"a\" {\n  files = \"lc.txt\"\n}\n", Access{})
		done <- d
	}()
	select {
	case diags := <-done:
		if !diags.HasErrors() || !strings.Contains(Message(diags[0]), `"lc.txt" is not a regular file`) {
			t.Fatalf("diags %v", diags)
		}
	case <-time.After(time.Second):
		t.Fatal("loading waited on a named pipe")
	}
}
