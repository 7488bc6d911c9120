//go:build unix

package sources

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// TestReadFileFIFO: a named pipe put in place of a listed file must not
// hang the build (opening a pipe for reading waits for a writer).
func TestReadFileFIFO(t *testing.T) {
	root := t.TempDir()
	if err := syscall.Mkfifo(filepath.Join(root, "pipe.md"), 0o644); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	dir, err := OpenDir(root)
	if err != nil {
		t.Fatal(err)
	}
	defer dir.Close()
	files, errs := Walk(dir, WalkOptions{})
	if len(files) != 0 || len(errs) != 1 || !strings.Contains(errs[0].Error(), "pipe.md: a named pipe") {
		t.Errorf("files %v, errors %v", paths(files), errStrings(errs))
	}
	_, rerr := ReadFile(dir, File{Path: "pipe.md", Target: "pipe.md"}, 0)
	if rerr == nil || !strings.Contains(rerr.Error(), "not a regular file") {
		t.Errorf("ReadFile of a pipe: %v", rerr)
	}
	_ = os.Remove(filepath.Join(root, "pipe.md"))
}
