package store

import (
	"archive/tar"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"
)

// writeTar writes the folder root/sub as a tar stream whose bytes depend on
// the names and contents only: entries sorted by name, folders 0755 and
// files 0644, times, owners and groups zeroed, no extended attributes.
// Names are slash paths starting with sub ("index/..."). Only folders and
// regular files are allowed.
func writeTar(w io.Writer, root, sub string) error {
	var names []string
	err := filepath.WalkDir(filepath.Join(root, filepath.FromSlash(sub)), func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if !d.IsDir() && !d.Type().IsRegular() {
			return fmt.Errorf("%s: not a regular file", p)
		}
		rel, err := filepath.Rel(root, p)
		if err != nil {
			return err
		}
		name := filepath.ToSlash(rel)
		if d.IsDir() {
			name += "/"
		}
		names = append(names, name)
		return nil
	})
	if err != nil {
		return err
	}
	slices.Sort(names)
	tw := tar.NewWriter(w)
	for _, name := range names {
		// Header fields per the POSIX ustar format (pax when a name is
		// long): Go's archive/tar writes ModTime zero as 0.
		hdr := &tar.Header{Name: name, Mode: 0o644, Typeflag: tar.TypeReg, Format: tar.FormatPAX}
		var f *os.File
		if strings.HasSuffix(name, "/") {
			hdr.Mode, hdr.Typeflag = 0o755, tar.TypeDir
		} else {
			if f, err = os.Open(filepath.Join(root, filepath.FromSlash(name))); err != nil {
				return err
			}
			fi, err := f.Stat()
			if err != nil {
				f.Close()
				return err
			}
			hdr.Size = fi.Size()
		}
		err := tw.WriteHeader(hdr)
		if err == nil && f != nil {
			_, err = io.Copy(tw, f)
		}
		if f != nil {
			f.Close()
		}
		if err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
	}
	return tw.Close()
}

// readTar unpacks a stream made by writeTar into root. Every name must be a
// valid slash path under sub ("index/..."), each entry a folder or a regular
// file, each file new: anything else (a link, "..", an absolute path) is an
// error, so a crafted layer cannot write outside root; a sparse file is
// refused too, so that no file holds more bytes than the layer brought.
func readTar(r io.Reader, root, sub string) error {
	tr := tar.NewReader(r)
	for {
		hdr, err := tr.Next()
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return err
		}
		name := strings.TrimSuffix(hdr.Name, "/")
		if !fs.ValidPath(name) || strings.Contains(name, `\`) || (name != sub && !strings.HasPrefix(name, sub+"/")) {
			return fmt.Errorf("tar entry %q lies outside %s/", hdr.Name, sub)
		}
		for k := range hdr.PAXRecords {
			if strings.HasPrefix(k, "GNU.sparse.") {
				// archive/tar would expand a few bytes into a file of
				// any size (holes read as zeros); writeTar never makes one.
				return fmt.Errorf("tar entry %q is a sparse file", hdr.Name)
			}
		}
		p := filepath.Join(root, filepath.FromSlash(name))
		switch hdr.Typeflag {
		case tar.TypeDir:
			if err := os.MkdirAll(p, 0o755); err != nil {
				return err
			}
		case tar.TypeReg:
			if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
				return err
			}
			f, err := os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
			if err != nil {
				return err
			}
			_, err = io.Copy(f, tr)
			if err == nil {
				err = f.Sync()
			}
			if cerr := f.Close(); err == nil {
				err = cerr
			}
			if err != nil {
				return fmt.Errorf("%s: %w", path.Clean(name), err)
			}
		default:
			return fmt.Errorf("tar entry %q is not a file or folder", hdr.Name)
		}
	}
}
