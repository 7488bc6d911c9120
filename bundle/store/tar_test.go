package store

import (
	"archive/tar"
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func TestTarDeterministic(t *testing.T) {
	dir, _ := mkBundle(t, 3, 10)
	var a, b bytes.Buffer
	if err := writeTar(&a, dir, "index"); err != nil {
		t.Fatal(err)
	}
	old := time.Date(1999, 1, 1, 0, 0, 0, 0, time.UTC)
	filepath.Walk(dir, func(p string, _ os.FileInfo, _ error) error {
		os.Chmod(p, 0o700)
		return os.Chtimes(p, old, old)
	})
	if err := writeTar(&b, dir, "index"); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Fatal("tar bytes depend on file times or modes")
	}
	// Names sorted, times and owners zero, modes fixed.
	tr := tar.NewReader(&a)
	prev := ""
	for {
		h, err := tr.Next()
		if err != nil {
			break
		}
		if h.Name <= prev || !h.ModTime.Equal(time.Unix(0, 0)) || h.Uid != 0 || h.Gid != 0 || (h.Mode != 0o644 && h.Mode != 0o755) {
			t.Errorf("entry %q after %q: time %v uid %d mode %o", h.Name, prev, h.ModTime, h.Uid, h.Mode)
		}
		prev = h.Name
	}
	out := t.TempDir()
	if err := readTar(&b, out, "index"); err != nil {
		t.Fatal(err)
	}
	want, got := treeHashes(t, filepath.Join(dir, "index")), treeHashes(t, filepath.Join(out, "index"))
	if len(want) != len(got) {
		t.Fatalf("%d files unpacked, want %d", len(got), len(want))
	}
}

func TestReadTarRefuses(t *testing.T) {
	tests := []struct {
		name string
		hdr  tar.Header
	}{
		{"parent", tar.Header{Name: "index/../../evil", Typeflag: tar.TypeReg}},
		{"absolute", tar.Header{Name: "/etc/passwd", Typeflag: tar.TypeReg}},
		{"outside", tar.Header{Name: "manifest.json", Typeflag: tar.TypeReg}},
		{"symlink", tar.Header{Name: "index/x", Typeflag: tar.TypeSymlink, Linkname: "/etc"}},
		{"hardlink", tar.Header{Name: "index/x", Typeflag: tar.TypeLink, Linkname: "index/y"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			tw := tar.NewWriter(&buf)
			tw.WriteHeader(&tc.hdr)
			tw.Close()
			err := readTar(&buf, t.TempDir(), "index")
			if err == nil || !strings.Contains(err.Error(), "tar entry") {
				t.Fatalf("readTar accepted %q: %v", tc.hdr.Name, err)
			}
		})
	}
}
