package bundle

import (
	"os"
	"path/filepath"

	"github.com/kbc-project/kbc/internal/atomicfile"
)

// CacheDir returns the build cache folder of the bundle folder out: a
// sibling named OUT.cache, never inside the bundle, so the bundle's files
// and hashes do not depend on what was cached. It holds the build cache
// (build.LoadCache, build.Cache.Save), the record of the inputs of the
// last build (package bundle/compile) and the catalog of the bundle's
// passages (Input.Catalog).
func CacheDir(out string) string {
	return filepath.Clean(out) + ".cache"
}

// writeCacheFile replaces the file name in out's cache folder with data,
// atomically: a reader sees the old file or the new one, never a mix.
// The data is not flushed to disk first: what the cache folder holds only
// saves work, and every reader checks it (a bundle id, a checksum) before
// trusting it.
func writeCacheFile(out, name string, data []byte) error {
	dir := CacheDir(out)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	return atomicfile.WriteFile(filepath.Join(dir, name), data, atomicfile.NoFlush)
}
