package store

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/kbc-project/kbc/bundle"
)

// hostileFolder publishes a small bundle to a new folder store and returns
// the store, its folder, and the folder of the version's files.
func hostileFolder(t *testing.T) (*Store, string, string) {
	t.Helper()
	root := filepath.Join(t.TempDir(), "store")
	s := mustOpen(t, root)
	v, m := mkBundle(t, 3, 6)
	if _, err := s.Publish(context.Background(), v, PublishOptions{}); err != nil {
		t.Fatal(err)
	}
	return s, root, filepath.Join(root, "versions", m.BundleID, "files")
}

// pullWithin runs Pull into a new folder and fails the test when it has
// not returned within a bound (a pull that hangs is the defect).
func pullWithin(t *testing.T, s *Store) (string, error) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "serve")
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	done := make(chan error, 1)
	go func() { _, err := s.Pull(ctx, dir, Ref{}); done <- err }()
	select {
	case err := <-done:
		return dir, err
	case <-time.After(20 * time.Second):
		t.Fatal("Pull did not return within 20 s (and ignored its context)")
		return "", nil
	}
}

// TestHostileFolderStore is the regression test for a folder store whose
// version files are not regular files or are not what the manifest says:
// Pull must refuse them without reading past what the manifest lists,
// without hanging, and leave nothing behind.
func TestHostileFolderStore(t *testing.T) {
	const victim = "reports/note.json"
	t.Run("symlink to a file outside the store", func(t *testing.T) {
		s, _, files := hostileFolder(t)
		p := filepath.Join(files, filepath.FromSlash(victim))
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		outside := filepath.Join(t.TempDir(), "outside.json")
		// Even the very bytes the manifest wants are refused: the store
		// may not bring in a file from elsewhere.
		if err := os.WriteFile(outside, data, 0o644); err != nil {
			t.Fatal(err)
		}
		os.Remove(p)
		if err := os.Symlink(outside, p); err != nil {
			t.Fatal(err)
		}
		dir, err := pullWithin(t, s)
		if err == nil || !strings.Contains(err.Error(), "not a regular file") {
			t.Fatalf("Pull through a symlink: %v, want a not-a-regular-file error", err)
		}
		if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("DIR exists after a refused pull: %v", err)
		}
	})
	t.Run("FIFO with no writer", func(t *testing.T) {
		s, _, files := hostileFolder(t)
		p := filepath.Join(files, filepath.FromSlash(victim))
		os.Remove(p)
		if err := syscall.Mkfifo(p, 0o644); err != nil {
			t.Fatal(err)
		}
		// Unblocks a reader stuck in open(2), so a failing run ends.
		t.Cleanup(func() {
			if f, err := os.OpenFile(p, os.O_WRONLY|syscall.O_NONBLOCK, 0); err == nil {
				f.Close()
			}
		})
		if _, err := pullWithin(t, s); err == nil || !strings.Contains(err.Error(), "not a regular file") {
			t.Fatalf("Pull of a FIFO: %v, want a not-a-regular-file error", err)
		}
	})
	t.Run("endless FIFO", func(t *testing.T) {
		// A stand-in for a symlink to /dev/zero that cannot fill the
		// disk when the defect is there: a writer offers 8 MB and
		// counts what was taken.
		s, _, files := hostileFolder(t)
		p := filepath.Join(files, filepath.FromSlash(victim))
		os.Remove(p)
		if err := syscall.Mkfifo(p, 0o644); err != nil {
			t.Fatal(err)
		}
		w, err := os.OpenFile(p, os.O_RDWR, 0) // never blocks on Linux
		if err != nil {
			t.Fatal(err)
		}
		written := make(chan int, 1)
		go func() {
			buf := make([]byte, 64<<10)
			n := 0
			w.SetWriteDeadline(time.Now().Add(10 * time.Second))
			for n < 8<<20 {
				k, err := w.Write(buf)
				n += k
				if err != nil {
					break
				}
			}
			w.Close()
			written <- n
		}()
		_, err = pullWithin(t, s)
		if err == nil {
			t.Fatal("Pull of a FIFO succeeded")
		}
		w.SetWriteDeadline(time.Now()) // ends a writer the pull left blocked
		if n := <-written; n > 1<<20 {
			t.Errorf("the pull read %d bytes from a FIFO; want none (a pipe buffer at most)", n)
		}
	})
	t.Run("oversized manifest", func(t *testing.T) {
		s, _, files := hostileFolder(t)
		p := filepath.Join(files, "manifest.json")
		// Sparse: 300 MB that take no disk.
		if err := os.Truncate(p, 300<<20); err != nil {
			t.Fatal(err)
		}
		if _, err := pullWithin(t, s); err == nil || !strings.Contains(err.Error(), "larger than") {
			t.Fatalf("Pull of a 300 MB manifest: %v, want a larger-than error", err)
		}
	})
	t.Run("file longer than the manifest says", func(t *testing.T) {
		s, _, files := hostileFolder(t)
		p := filepath.Join(files, filepath.FromSlash(victim))
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, append(data, make([]byte, 1<<20)...), 0o644); err != nil {
			t.Fatal(err)
		}
		dir, err := pullWithin(t, s)
		if err == nil || !strings.Contains(err.Error(), victim) {
			t.Fatalf("Pull of a long file: %v, want an error naming %s", err, victim)
		}
		if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("DIR exists after a refused pull: %v", err)
		}
	})
}

// TestPointerRevisionLimit is the regression test for a pointer revision at
// the integer limit: the next move must fail, not wrap to a negative
// number that nobody reads (a move silently lost).
func TestPointerRevisionLimit(t *testing.T) {
	s, root, _ := hostileFolder(t)
	p, _, err := s.b.pointer(context.Background(), DefaultPointer)
	if err != nil {
		t.Fatal(err)
	}
	p.Revision = math.MaxInt64
	data := []byte(`{"name":"latest","bundle_id":"` + p.BundleID + `","revision":9223372036854775807}`)
	if err := os.WriteFile(filepath.Join(root, "pointers", DefaultPointer, revisionName(math.MaxInt64)), data, 0o644); err != nil {
		t.Fatal(err)
	}
	v, _ := mkBundle(t, 4, 3)
	_, err = s.Publish(context.Background(), v, PublishOptions{})
	if err == nil || !strings.Contains(err.Error(), "revision") {
		t.Fatalf("Publish past revision MaxInt64: %v, want an error", err)
	}
	names, _ := filepath.Glob(filepath.Join(root, "pointers", DefaultPointer, "-*"))
	if len(names) > 0 {
		t.Errorf("a wrapped revision was written: %v", names)
	}
}

// TestDigestPin is the regression test for files that change under a
// pinned id: the bundle id names passages.jsonl only, so a store may swap
// a report and rewrite the manifest's hashes (and its files digest) to
// match; a pull pinned by files digest must refuse it.
func TestDigestPin(t *testing.T) {
	s, _, files := hostileFolder(t)
	mdata, err := os.ReadFile(filepath.Join(files, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	m, err := bundle.ParseManifest("manifest.json", mdata)
	if err != nil {
		t.Fatal(err)
	}
	pin := m.FilesDigest
	forged := []byte(`{"seed":666}` + "\n")
	sum := sha256.Sum256(forged)
	m.Files["reports/note.json"] = "sha256:" + hex.EncodeToString(sum[:])
	m.Sizes["reports/note.json"] = int64(len(forged))
	m.FilesDigest = bundle.FilesDigest(m.Files, m.Sizes)
	out, _ := json.MarshalIndent(m, "", "  ")
	os.WriteFile(filepath.Join(files, "manifest.json"), out, 0o644)
	os.WriteFile(filepath.Join(files, "reports", "note.json"), forged, 0o644)

	ctx := context.Background()
	if _, err := s.Pull(ctx, filepath.Join(t.TempDir(), "a"), Ref{ID: m.BundleID}); err != nil {
		t.Fatalf("unpinned pull of a consistent (forged) version: %v", err)
	}
	_, err = s.Pull(ctx, filepath.Join(t.TempDir(), "b"), Ref{ID: m.BundleID, Digest: pin})
	var mm *MismatchError
	if !errors.As(err, &mm) || mm.Mismatches[0].File != "manifest.json" {
		t.Fatalf("pull pinned by files digest: %v, want a manifest.json mismatch", err)
	}
}

// TestPullSweepsStaleTemp is the regression test for temporary folders a
// killed pull leaves behind: the next pull removes those no process holds,
// and leaves one in use.
func TestPullSweepsStaleTemp(t *testing.T) {
	s, _, _ := hostileFolder(t)
	parent := t.TempDir()
	stale := filepath.Join(parent, ".serve.pull-111")
	busy := filepath.Join(parent, ".serve.pull-222")
	other := filepath.Join(parent, ".other.pull-333")
	old := time.Now().Add(-time.Hour)
	for _, d := range []string{stale, busy, other} {
		if err := os.MkdirAll(filepath.Join(d, "index"), 0o755); err != nil {
			t.Fatal(err)
		}
		os.Chtimes(d, old, old)
	}
	// Another pull's folder: held with flock(2), as bundle.TempDir does.
	f, err := os.Open(busy)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Pull(context.Background(), filepath.Join(parent, "serve"), Ref{}); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(stale); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("stale temporary folder still there: %v", err)
	}
	for _, d := range []string{busy, other} {
		if _, err := os.Stat(d); err != nil {
			t.Errorf("%s: %v", filepath.Base(d), err)
		}
	}
}

// TestPublishSweepsHalfWritten is the regression test for the temporary
// objects a killed publish leaves in a folder store (fileblob's
// NAME.<hex>.tmp, our .new-* before link(2)): the next publish removes
// those not written to for a while and leaves fresh ones, which may be
// another publisher's.
func TestPublishSweepsHalfWritten(t *testing.T) {
	s, root, files := hostileFolder(t)
	old := time.Now().Add(-time.Hour)
	staleTmp := filepath.Join(files, "passages.jsonl.18a2b3c4d5e6f708.tmp")
	staleNew := filepath.Join(root, "pointers", DefaultPointer, ".new-123456")
	freshTmp := filepath.Join(files, "index", "x.18a2b3c4d5e6f709.tmp")
	for _, p := range []string{staleTmp, staleNew, freshTmp} {
		if err := os.WriteFile(p, []byte("half"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	os.Chtimes(staleTmp, old, old)
	os.Chtimes(staleNew, old, old)
	v, _ := mkBundle(t, 5, 2)
	if _, err := s.Publish(context.Background(), v, PublishOptions{}); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{staleTmp, staleNew} {
		if _, err := os.Stat(p); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s still there: %v", filepath.Base(p), err)
		}
	}
	if _, err := os.Stat(freshTmp); err != nil {
		t.Errorf("a fresh temporary object was removed: %v", err)
	}
}
