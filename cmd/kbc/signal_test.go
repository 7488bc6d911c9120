package main

import (
	"syscall"
	"testing"
	"time"
)

// TestStoreContextSIGTERM is the regression test for store commands that
// stopped cleanly on Ctrl-C only: SIGTERM (what a service manager or a CI
// runner sends) killed them outright, leaving temporary folders behind. It
// must cancel the context as SIGINT does (without the fix, the signal ends
// this test binary).
func TestStoreContextSIGTERM(t *testing.T) {
	ctx, cancel := storeContext()
	defer cancel()
	if err := syscall.Kill(syscall.Getpid(), syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	select {
	case <-ctx.Done():
	case <-time.After(10 * time.Second):
		t.Fatal("SIGTERM did not cancel the store context")
	}
}
