package bundle

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"testing"
)

func TestNotBundleError(t *testing.T) {
	src := t.TempDir()
	if err := os.MkdirAll(filepath.Join(src, "guides", "yard"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(src, "guides", "yard", "ramps.md"), []byte("# Ramps\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	other := t.TempDir()
	if err := os.WriteFile(filepath.Join(other, "notes.txt"), []byte("tea"), 0o644); err != nil {
		t.Fatal(err)
	}
	hidden := t.TempDir() // pages only in a hidden folder, which builds skip
	os.Mkdir(filepath.Join(hidden, ".git"), 0o755)
	os.WriteFile(filepath.Join(hidden, ".git", "README.md"), []byte("# x\n"), 0o644)
	for _, tc := range []struct {
		dir    string
		source bool
	}{{src, true}, {other, false}, {hidden, false}} {
		_, err := Open(tc.dir)
		var nb *NotBundleError
		if !errors.As(err, &nb) || nb.Source != tc.source || !errors.Is(err, fs.ErrNotExist) {
			t.Errorf("Open(%s) = %v, want a NotBundleError with Source %v", tc.dir, err, tc.source)
		}
	}
	// A folder that is not there is not a NotBundleError.
	var nb *NotBundleError
	if _, err := ReadManifest(filepath.Join(src, "missing")); errors.As(err, &nb) || !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("ReadManifest(missing) = %v", err)
	}
}
