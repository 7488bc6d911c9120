package sources

import (
	"errors"
	"io"
	"io/fs"
	"os"
)

// errNotRegular is the error for a path that names a named pipe, a socket
// or a device: reading one may block forever or never end.
var errNotRegular = errors.New("not a regular file")

// Dir is a source folder opened so that nothing read through it can lie
// outside it, whatever its symlinks say: every path is resolved by the
// kernel under the folder (os.Root), and a symlink or ".." that would
// leave it is an error. Opening a named pipe, socket or device is refused
// without waiting on it. Dir implements fs.FS, fs.ReadDirFS, fs.StatFS
// and fs.ReadLinkFS, so Walk resolves its symlinks itself too.
type Dir struct {
	root *os.Root
	fsys fs.FS
}

// OpenDir opens the folder at path for reading as a Dir. The caller
// closes it.
func OpenDir(path string) (*Dir, error) {
	r, err := os.OpenRoot(path)
	if err != nil {
		return nil, err
	}
	return &Dir{root: r, fsys: r.FS()}, nil
}

// Close releases the folder.
func (d *Dir) Close() error { return d.root.Close() }

// Name returns the path the Dir was opened with.
func (d *Dir) Name() string { return d.root.Name() }

// Open opens a file or folder for reading. It refuses anything else
// (errNotRegular) without blocking on it: the file is opened
// non-blocking (where the system has the flag) and checked once open.
func (d *Dir) Open(name string) (fs.File, error) {
	if !fs.ValidPath(name) {
		return nil, &fs.PathError{Op: "open", Path: name, Err: fs.ErrInvalid}
	}
	f, err := d.root.OpenFile(name, os.O_RDONLY|openNonBlock, 0)
	if err != nil {
		return nil, err
	}
	fi, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, err
	}
	if !fi.Mode().IsRegular() && !fi.IsDir() {
		f.Close()
		return nil, &fs.PathError{Op: "open", Path: name, Err: errNotRegular}
	}
	return f, nil
}

// ReadDir lists a folder, sorted by name.
func (d *Dir) ReadDir(name string) ([]fs.DirEntry, error) { return fs.ReadDir(d.fsys, name) }

// Stat describes a path, following symlinks that stay inside.
func (d *Dir) Stat(name string) (fs.FileInfo, error) { return fs.Stat(d.fsys, name) }

// Lstat describes a path without following its last element.
func (d *Dir) Lstat(name string) (fs.FileInfo, error) { return fs.Lstat(d.fsys, name) }

// ReadLink returns a symlink's target text.
func (d *Dir) ReadLink(name string) (string, error) { return fs.ReadLink(d.fsys, name) }

// ReadFile reads a whole file (used for the config file).
func (d *Dir) ReadFile(name string) ([]byte, error) {
	f, err := d.Open(name)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return nil, err
	}
	if fi.IsDir() {
		return nil, &fs.PathError{Op: "read", Path: name, Err: errors.New("is a folder")}
	}
	return io.ReadAll(f)
}
