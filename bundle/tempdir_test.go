package bundle

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// TestWriteSweepsStaleTemp is the regression test for the ".OUT.tmp-*"
// folders a killed build leaves beside OUT: the next Write removes those no
// process holds, and leaves one in use.
func TestWriteSweepsStaleTemp(t *testing.T) {
	parent := t.TempDir()
	out := filepath.Join(parent, "out")
	stale := filepath.Join(parent, ".out.tmp-111")
	if err := os.MkdirAll(filepath.Join(stale, "index"), 0o755); err != nil {
		t.Fatal(err)
	}
	old := time.Now().Add(-time.Hour)
	os.Chtimes(stale, old, old)
	busy, release, err := TempDir(parent, ".out.tmp-")
	if err != nil {
		t.Fatal(err)
	}
	defer release()
	os.Chtimes(busy, old, old)
	mustWrite(t, out, toyInput())
	if _, err := os.Stat(stale); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("stale temporary folder still there: %v", err)
	}
	if _, err := os.Stat(busy); err != nil {
		t.Errorf("a folder in use was removed: %v", err)
	}
}
