// Package atomicfile replaces a file in one step: the new content is
// written beside it under a temporary name and renamed over it, so a
// reader sees the old file or the new one, never a mix. It is the one
// temp-and-rename writer of kbc's single files (the build cache, the
// record of a build's inputs, the catalog, run files); a bundle folder
// is swapped in whole by bundle.Write instead.
package atomicfile

import (
	"io"
	"os"
	"path/filepath"
)

// Durability says whether the new file is flushed to stable storage
// before it replaces the old one.
type Durability bool

const (
	// Flush makes the file survive a crash once Write returns.
	Flush Durability = true
	// NoFlush is for files that only save work and are checked before
	// they are trusted (a checksum, an id): after a crash such a file may
	// be torn, and its reader rejects it.
	NoFlush Durability = false
)

// Write replaces the file name with what fill writes, atomically. The
// temporary file, ".<base>.tmp-*" in the same folder, is removed on any
// failure. The new file is created 0600 by os.CreateTemp and then made
// 0644, readable as a file written by os.WriteFile would be.
func Write(name string, d Durability, fill func(io.Writer) error) error {
	tmp, err := os.CreateTemp(filepath.Dir(name), "."+filepath.Base(name)+".tmp-*")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	err = fill(tmp)
	if err == nil {
		err = tmp.Chmod(0o644)
	}
	if err == nil && d == Flush {
		err = tmp.Sync()
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return err
	}
	return os.Rename(tmp.Name(), name)
}

// WriteFile replaces the file name with data, atomically (see Write).
func WriteFile(name string, data []byte, d Durability) error {
	return Write(name, d, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}
