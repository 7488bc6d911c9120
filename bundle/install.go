package bundle

import (
	"fmt"
	"path/filepath"
)

// Install puts the complete bundle folder tmp in place of the folder dir, the
// way Write puts a new bundle in place: tmp's files and folders are flushed to
// stable storage, then tmp and dir swap names in one step on Linux (two
// renames elsewhere) and the old bundle is removed. tmp should lie beside dir
// (same parent, so on the same file system) and should have been checked with
// Verify. dir must not exist, or be an empty folder, or hold a bundle; on any
// failure dir is left as it was and tmp stays for the caller to remove.
//
// Install is what a download uses: fill a temporary folder, verify it, then
// Install it.
func Install(tmp, dir string) error {
	dir = filepath.Clean(dir)
	if err := checkTarget(dir); err != nil {
		return fmt.Errorf("installing bundle %s: %w", dir, err)
	}
	if err := syncDirs(tmp); err != nil {
		return fmt.Errorf("installing bundle %s: %w", dir, err)
	}
	if err := place(tmp, dir, exchange); err != nil {
		return fmt.Errorf("installing bundle %s: %w", dir, err)
	}
	return nil
}
