//go:build unix

package bundle

import (
	"os"

	"golang.org/x/sys/unix"
)

// mapFile maps the file at path into memory read-only; unmap releases it
// (nil for an empty file, which is read instead).
func mapFile(path string) (data []byte, unmap func() error, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return nil, nil, err
	}
	if fi.Size() == 0 || fi.Size() != int64(int(fi.Size())) {
		return nil, nil, nil
	}
	data, err = unix.Mmap(int(f.Fd()), 0, int(fi.Size()), unix.PROT_READ, unix.MAP_SHARED)
	if err != nil {
		return nil, nil, err
	}
	return data, func() error { return unix.Munmap(data) }, nil
}
