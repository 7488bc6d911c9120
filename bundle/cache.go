package bundle

import (
	"bufio"
	"encoding/gob"
	"fmt"
	"os"
	"path/filepath"

	"github.com/kbc-project/kbc/build"
)

// CacheDir returns the build cache folder of the bundle folder out: a
// sibling named OUT.cache, never inside the bundle, so the bundle's files
// and hashes do not depend on what was cached.
func CacheDir(out string) string {
	return filepath.Clean(out) + ".cache"
}

const cacheFile = "documents.gob"

// ReadCache reads the build cache kept for the bundle folder out. A
// missing cache gives (nil, nil); one that cannot be decoded gives an
// error, and the caller starts a new one.
func ReadCache(out string) (*build.Cache, error) {
	f, err := os.Open(filepath.Join(CacheDir(out), cacheFile))
	if os.IsNotExist(err) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var c build.Cache
	if err := gob.NewDecoder(bufio.NewReaderSize(f, 1<<20)).Decode(&c); err != nil {
		return nil, fmt.Errorf("%s: %v", f.Name(), err)
	}
	return &c, nil
}

// WriteCache writes the build cache for the bundle folder out, atomically:
// a reader sees the old cache or the new one, never half of one.
func WriteCache(out string, c *build.Cache) error {
	dir := CacheDir(out)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(dir, ".documents-*.tmp")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	w := bufio.NewWriterSize(tmp, 1<<20)
	if err := gob.NewEncoder(w).Encode(c); err != nil {
		tmp.Close()
		return fmt.Errorf("encoding the build cache: %v", err)
	}
	if err := w.Flush(); err != nil {
		tmp.Close()
		return err
	}
	// As for the bundle: the data must be on disk before the name points
	// at it, or a crash could leave a named but empty cache.
	if err := tmp.Sync(); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), filepath.Join(dir, cacheFile))
}
