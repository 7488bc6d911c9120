package store

import (
	"archive/tar"
	"bytes"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzReadTar feeds readTar arbitrary layer bytes (a registry is not
// trusted): it must never panic and never create anything outside
// root/index, whatever the entries' names and types.
func FuzzReadTar(f *testing.F) {
	add := func(hdrs ...tar.Header) {
		var buf bytes.Buffer
		tw := tar.NewWriter(&buf)
		for _, h := range hdrs {
			tw.WriteHeader(&h)
			if h.Typeflag == tar.TypeReg {
				tw.Write(bytes.Repeat([]byte("x"), int(h.Size)))
			}
		}
		tw.Close()
		f.Add(buf.Bytes())
	}
	add(tar.Header{Name: "index/", Typeflag: tar.TypeDir, Mode: 0o755},
		tar.Header{Name: "index/store/a.zap", Typeflag: tar.TypeReg, Mode: 0o644, Size: 3})
	add(tar.Header{Name: "index/../../evil", Typeflag: tar.TypeReg, Size: 1})
	add(tar.Header{Name: "index/x", Typeflag: tar.TypeSymlink, Linkname: "/etc"})
	add(tar.Header{Name: "index/a", Typeflag: tar.TypeReg, Size: 1}, tar.Header{Name: "index/a", Typeflag: tar.TypeReg, Size: 1})
	add(tar.Header{Name: "index/a", Typeflag: tar.TypeReg, Size: 1}, tar.Header{Name: "index/a/b", Typeflag: tar.TypeReg, Size: 1})
	add(tar.Header{Name: `index\..\x`, Typeflag: tar.TypeReg, Size: 1})
	f.Add([]byte{})
	f.Add([]byte("not a tar"))
	f.Fuzz(func(t *testing.T, data []byte) {
		parent := t.TempDir()
		root := filepath.Join(parent, "root")
		if err := os.Mkdir(root, 0o755); err != nil {
			t.Fatal(err)
		}
		_ = readTar(bytes.NewReader(data), root, "index")
		entries, _ := os.ReadDir(parent)
		if len(entries) != 1 || entries[0].Name() != "root" {
			t.Fatalf("readTar wrote beside root: %v", entries)
		}
		filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
			rel, _ := filepath.Rel(root, p)
			rel = filepath.ToSlash(rel)
			if rel != "." && rel != "index" && !strings.HasPrefix(rel, "index/") {
				t.Fatalf("readTar wrote %s, outside index/", rel)
			}
			if d != nil && !d.IsDir() && !d.Type().IsRegular() {
				t.Fatalf("readTar made %s, a %v", rel, d.Type())
			}
			return nil
		})
	})
}
