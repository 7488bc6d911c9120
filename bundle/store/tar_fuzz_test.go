package store

import (
	"archive/tar"
	"bytes"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// FuzzReadTar feeds readTar arbitrary layer bytes (a registry is not
// trusted): it must never panic, never create anything outside
// root/index, whatever the entries' names and types, and never write a
// file larger than the layer.
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
	f.Add(sparseTar(f, 1<<20))
	// Each input unpacks into folders of its own: in memory (/dev/shm)
	// where there is such a file system, since creating folders on a busy
	// disk, not readTar, otherwise bounds the inputs tried per second.
	base := f.TempDir()
	if shm, err := os.MkdirTemp("/dev/shm", "kbc-fuzz-"); err == nil {
		base = shm
		f.Cleanup(func() { os.RemoveAll(shm) })
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		parent, err := os.MkdirTemp(base, "in-")
		if err != nil {
			t.Fatal(err)
		}
		defer os.RemoveAll(parent)
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
			if fi, err := os.Stat(p); err == nil && fi.Mode().IsRegular() && fi.Size() > int64(len(data)) {
				t.Fatalf("readTar made %s of %d bytes from a layer of %d", rel, fi.Size(), len(data))
			}
			return nil
		})
	})
}

// sparseTar returns a layer whose one file is a GNU sparse file (PAX
// format 1.0, as GNU tar writes it): a few bytes of input that
// archive/tar expands to realSize bytes, nearly all of them a hole.
func sparseTar(t testing.TB, realSize int64) []byte {
	t.Helper()
	rec := func(k, v string) string {
		s := " " + k + "=" + v + "\n"
		n := len(s)
		for len(strconv.Itoa(n))+len(s) != n {
			n = len(strconv.Itoa(n)) + len(s)
		}
		return strconv.Itoa(n) + s
	}
	pax := rec("GNU.sparse.major", "1") + rec("GNU.sparse.minor", "0") +
		rec("GNU.sparse.name", "index/big") + rec("GNU.sparse.realsize", strconv.FormatInt(realSize, 10))
	var buf bytes.Buffer
	tw := tar.NewWriter(&buf)
	must := func(err error) {
		if err != nil {
			t.Fatal(err)
		}
	}
	must(tw.WriteHeader(&tar.Header{Name: "index/", Typeflag: tar.TypeDir, Mode: 0o755, Format: tar.FormatUSTAR}))
	// archive/tar will not write a PAX header by hand: write it as a
	// file, then make its block a PAX header ('x') with the checksum of
	// the POSIX ustar header (the sum of the block's bytes, the checksum
	// field counted as spaces).
	xAt := buf.Len() // after the folder's header
	must(tw.WriteHeader(&tar.Header{Name: "index/PaxHeaders/big", Typeflag: tar.TypeReg, Size: int64(len(pax)), Format: tar.FormatUSTAR}))
	_, err := tw.Write([]byte(pax))
	must(err)
	must(tw.Flush())
	blk := buf.Bytes()[xAt : xAt+512]
	blk[156] = tar.TypeXHeader
	copy(blk[148:156], "        ")
	sum := 0
	for _, c := range blk {
		sum += int(c)
	}
	copy(blk[148:156], fmt.Sprintf("%06o\x00 ", sum))
	// The data: the sparse map (one region of 1 byte at the end) padded
	// to a block, then that byte.
	sparseMap := []byte("1\n" + strconv.FormatInt(realSize-1, 10) + "\n1\n")
	data := append(sparseMap, make([]byte, 512-len(sparseMap))...)
	data = append(data, 'x')
	must(tw.WriteHeader(&tar.Header{Name: "index/GNUSparseFile.0/big", Typeflag: tar.TypeReg, Mode: 0o644, Size: int64(len(data)), Format: tar.FormatUSTAR}))
	_, err = tw.Write(data)
	must(err)
	must(tw.Close())
	return buf.Bytes()
}

// A sparse entry would expand a small layer into a file of any size (a
// registry is not trusted): it is refused before anything is written.
func TestReadTarRefusesSparse(t *testing.T) {
	layer := sparseTar(t, 64<<20)
	// The reference: archive/tar itself reads it as a 64 MiB file.
	tr := tar.NewReader(bytes.NewReader(layer))
	for {
		h, err := tr.Next()
		if err != nil {
			t.Fatalf("archive/tar does not read the crafted layer as sparse: %v", err)
		}
		if h.Typeflag == tar.TypeReg {
			if h.Size != 64<<20 || h.Name != "index/big" {
				t.Fatalf("archive/tar reads %s of %d bytes", h.Name, h.Size)
			}
			break
		}
	}
	root := t.TempDir()
	err := readTar(bytes.NewReader(layer), root, "index")
	if err == nil || !strings.Contains(err.Error(), "sparse") {
		t.Fatalf("readTar: %v, want a sparse-entry error", err)
	}
	if _, err := os.Stat(filepath.Join(root, "index", "big")); err == nil {
		t.Error("readTar wrote the sparse file")
	}
}
