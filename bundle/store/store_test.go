package store

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/kbc-project/kbc/bundle"
)

// kinds are the stores every behaviour test runs against: a folder always,
// the real S3 server and registry when .ci/servers.sh started them.
var kinds = []struct {
	name string
	loc  func(t testing.TB) string
}{
	{"folder", func(t testing.TB) string { return filepath.Join(t.TempDir(), "store") }},
	{"file-url", func(t testing.TB) string { return "file://" + filepath.Join(t.TempDir(), "store") }},
	{"s3", s3Shared},
	{"oci", ociLoc},
}

func TestRoundTrip(t *testing.T) {
	ctx := context.Background()
	for _, k := range kinds {
		t.Run(k.name, func(t *testing.T) {
			loc := k.loc(t)
			s := mustOpen(t, loc)
			v1, m1 := mkBundle(t, 1, 12)
			v2, m2 := mkBundle(t, 2, 9)

			res, err := s.Publish(ctx, v1, PublishOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if res.Uploaded == 0 || res.BundleID != m1.BundleID {
				t.Fatalf("first publish: %+v", res)
			}
			// The same bundle again uploads nothing new.
			res, err = s.Publish(ctx, v1, PublishOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if res.Uploaded != 0 || res.UploadedBytes != 0 || res.Skipped == 0 {
				t.Fatalf("second publish of the same bundle uploaded %d objects (%d bytes)", res.Uploaded, res.UploadedBytes)
			}
			if _, err := s.Publish(ctx, v2, PublishOptions{Pointers: []string{"stable", "stable"}}); err != nil {
				t.Fatal(err)
			}

			// Pull latest, byte for byte; then pull v1 by id over it.
			dir := filepath.Join(t.TempDir(), "serve")
			m, err := s.Pull(ctx, dir, Ref{})
			if err != nil {
				t.Fatal(err)
			}
			if m.BundleID != m2.BundleID {
				t.Fatalf("latest pulled %s, want %s", m.BundleID, m2.BundleID)
			}
			sameTree(t, v2, dir)
			if _, err := s.Pull(ctx, dir, Ref{ID: m1.BundleID[:12]}); err != nil {
				t.Fatal(err)
			}
			sameTree(t, v1, dir)
			if bad, err := bundle.Verify(dir); err != nil || len(bad) > 0 {
				t.Fatalf("pulled bundle does not verify: %v %v", bad, err)
			}

			vs, err := s.Versions(ctx)
			if err != nil {
				t.Fatal(err)
			}
			if len(vs) != 2 {
				t.Fatalf("versions: %+v", vs)
			}
			byID := map[string]Version{}
			for _, v := range vs {
				byID[v.ID] = v
			}
			if got := strings.Join(byID[m2.BundleID].Pointers, ","); got != "latest,stable" {
				t.Errorf("v2 pointers %q, want latest,stable", got)
			}
			if v := byID[m1.BundleID]; !v.Complete || len(v.Pointers) != 0 || v.SourceCommit != m1.SourceCommit ||
				!v.BuiltAt.Equal(m1.BuiltAt) || v.Counts["passages"] != 12 {
				t.Errorf("v1 listed as %+v", v)
			}

			// Roll back: latest names v1 again; stable still v2.
			if _, err := s.Point(ctx, "", m1.BundleID); err != nil {
				t.Fatal(err)
			}
			if m, err = s.Pull(ctx, dir, Ref{}); err != nil || m.BundleID != m1.BundleID {
				t.Fatalf("after rollback latest = %v, %v", m, err)
			}
			// Prune keeps what a pointer names, whatever keep says.
			removed, err := s.Prune(ctx, 0)
			if err != nil || len(removed) != 0 {
				t.Fatalf("prune removed %v, %v", removed, err)
			}
			if _, err := s.Point(ctx, "stable", m1.BundleID); err != nil {
				t.Fatal(err)
			}
			removed, err = s.Prune(ctx, 0)
			if err != nil || len(removed) != 1 || removed[0] != m2.BundleID {
				t.Fatalf("prune removed %v, %v; want %s", removed, err, m2.BundleID)
			}
			if _, err := s.Pull(ctx, dir, Ref{ID: m2.BundleID}); !errors.Is(err, ErrNotFound) {
				t.Fatalf("pull of a pruned version: %v", err)
			}
			sameTree(t, v1, dir) // a failed pull leaves dir as it was
		})
	}
}

// tamper changes one byte of the stored passages.jsonl of version id,
// behind the store's back, the way a disk fault or an attacker would.
func tamper(t *testing.T, kind, loc, id string) {
	t.Helper()
	switch kind {
	case "folder", "file-url":
		p := filepath.Join(strings.TrimPrefix(loc, "file://"), "versions", id, "files", bundle.PassagesFile)
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		data[5] ^= 0x20
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
	case "s3":
		s := mustOpen(t, loc).b.(*blobStore)
		key := s.versionKey(id) + "files/" + bundle.PassagesFile
		data, err := s.bucket.ReadAll(context.Background(), key)
		if err != nil {
			t.Fatal(err)
		}
		data[5] ^= 0x20
		if err := s.bucket.WriteAll(context.Background(), key, data, nil); err != nil {
			t.Fatal(err)
		}
	default:
		t.Fatalf("no tamper for %s", kind)
	}
}

func TestTamperedBlob(t *testing.T) {
	ctx := context.Background()
	for _, k := range kinds[:3] {
		t.Run(k.name, func(t *testing.T) {
			loc := k.loc(t)
			s := mustOpen(t, loc)
			v1, m1 := mkBundle(t, 1, 6)
			v2, _ := mkBundle(t, 2, 6)
			dir := filepath.Join(t.TempDir(), "serve")
			if _, err := s.Publish(ctx, v1, PublishOptions{}); err != nil {
				t.Fatal(err)
			}
			if _, err := s.Pull(ctx, dir, Ref{}); err != nil {
				t.Fatal(err)
			}
			if _, err := s.Publish(ctx, v2, PublishOptions{}); err != nil {
				t.Fatal(err)
			}
			m2, _ := bundle.ReadManifest(v2)
			tamper(t, k.name, loc, m2.BundleID)
			_, err := s.Pull(ctx, dir, Ref{})
			var me *MismatchError
			if !errors.As(err, &me) || !strings.Contains(err.Error(), "passages.jsonl: changed") {
				t.Fatalf("pull of a tampered version: %v", err)
			}
			sameTree(t, v1, dir)
			if m, _ := bundle.ReadManifest(dir); m.BundleID != m1.BundleID {
				t.Fatal("dir changed")
			}
			leftovers, _ := filepath.Glob(filepath.Join(filepath.Dir(dir), ".serve.pull-*"))
			if len(leftovers) > 0 {
				t.Fatalf("temporary folders left: %v", leftovers)
			}
		})
	}
}

// TestTamperedLayer alters a blob inside the registry's storage folder:
// the registry serves it, and pull must refuse it naming the file.
func TestTamperedLayer(t *testing.T) {
	ctx := context.Background()
	srv, loc := privateRegistry(t)
	s := mustOpen(t, loc)
	v1, m1 := mkBundle(t, 1, 6)
	if _, err := s.Publish(ctx, v1, PublishOptions{}); err != nil {
		t.Fatal(err)
	}
	ref := m1.Files[bundle.PassagesFile] // sha256:<hex>, the layer's digest
	hex := strings.TrimPrefix(ref, "sha256:")
	blobPath := filepath.Join(filepath.Dir(srv.args[2]), "data", "docker", "registry", "v2", "blobs", "sha256", hex[:2], hex, "data")
	data, err := os.ReadFile(blobPath)
	if err != nil {
		t.Fatal(err)
	}
	data[5] ^= 0x20
	if err := os.WriteFile(blobPath, data, 0o644); err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "serve")
	_, err = s.Pull(ctx, dir, Ref{})
	if err == nil || !strings.Contains(err.Error(), "passages.jsonl: ") {
		t.Fatalf("pull of a tampered layer: %v", err)
	}
	if _, err := os.Stat(dir); !os.IsNotExist(err) {
		t.Fatalf("dir was created: %v", err)
	}
}

// TestRace runs two publishers of different bundles that both read latest
// before either moves it: one wins, the other gets ErrConflict, and latest
// names the winner.
func TestRace(t *testing.T) {
	ctx := context.Background()
	for _, k := range kinds {
		t.Run(k.name, func(t *testing.T) {
			loc := k.loc(t)
			a, b := mustOpen(t, loc), mustOpen(t, loc)
			if k.name == "oci" {
				// Registries have no conditional tag update: our
				// check-then-tag catches a move made while the
				// other uploads, tested here sequentially.
				va, _ := mkBundle(t, 3, 5)
				vb, mb := mkBundle(t, 4, 5)
				a.beforePointers = func() {
					if _, err := b.Publish(ctx, vb, PublishOptions{}); err != nil {
						t.Error(err)
					}
				}
				_, err := a.Publish(ctx, va, PublishOptions{})
				if !errors.Is(err, ErrConflict) {
					t.Fatalf("want a conflict, got %v", err)
				}
				checkLatest(t, b, mb.BundleID)
				return
			}
			var wg sync.WaitGroup
			wg.Add(2)
			arrived := sync.WaitGroup{}
			arrived.Add(2)
			barrier := func() { arrived.Done(); arrived.Wait() }
			a.beforePointers, b.beforePointers = barrier, barrier
			va, ma := mkBundle(t, 3, 5)
			vb, mb := mkBundle(t, 4, 5)
			var errA, errB error
			go func() { defer wg.Done(); _, errA = a.Publish(ctx, va, PublishOptions{}) }()
			go func() { defer wg.Done(); _, errB = b.Publish(ctx, vb, PublishOptions{}) }()
			wg.Wait()
			if (errA == nil) == (errB == nil) {
				t.Fatalf("want one winner: a: %v; b: %v", errA, errB)
			}
			winner, loser := ma.BundleID, errB
			if errA != nil {
				winner, loser = mb.BundleID, errA
			}
			if !errors.Is(loser, ErrConflict) || !strings.Contains(loser.Error(), "another publisher") {
				t.Fatalf("loser's error: %v", loser)
			}
			checkLatest(t, a, winner)
		})
	}
}

func checkLatest(t *testing.T, s *Store, want string) {
	t.Helper()
	ps, err := s.Pointers(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range ps {
		if p.Name == DefaultPointer {
			if p.BundleID != want {
				t.Fatalf("latest names %s, want %s", p.BundleID, want)
			}
			return
		}
	}
	t.Fatal("no latest pointer")
}

// TestSameBytes: while publisher a uploads, b publishes the very same
// bundle at the very same clock time, so the pointer it writes holds what
// a's would (revision aside). a must still find out.
func TestSameBytes(t *testing.T) {
	ctx := context.Background()
	for _, k := range kinds[:3] {
		t.Run(k.name, func(t *testing.T) {
			loc := k.loc(t)
			a, b := mustOpen(t, loc), mustOpen(t, loc)
			clock := func() time.Time { return time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC) }
			a.now, b.now = clock, clock
			v0, _ := mkBundle(t, 5, 4)
			v1, _ := mkBundle(t, 6, 4)
			if _, err := a.Publish(ctx, v0, PublishOptions{}); err != nil {
				t.Fatal(err)
			}
			a.beforePointers = func() {
				if _, err := b.Publish(ctx, v1, PublishOptions{}); err != nil {
					t.Error(err)
				}
			}
			_, err := a.Publish(ctx, v1, PublishOptions{})
			if !errors.Is(err, ErrConflict) {
				t.Fatalf("a rewrite with the same content went unnoticed: %v", err)
			}
		})
	}
}

// TestKilledServer kills the server in the middle of a publish: the publish
// fails with a clear error, latest still names the previous version, the
// partial version is not pullable, and publishing again completes it.
func TestKilledServer(t *testing.T) {
	ctx := context.Background()
	for _, kind := range []string{"s3", "oci"} {
		t.Run(kind, func(t *testing.T) {
			var srv *server
			var loc string
			if kind == "s3" {
				srv, loc = privateS3(t)
			} else {
				srv, loc = privateRegistry(t)
			}
			s := mustOpen(t, loc)
			v1, m1 := mkBundle(t, 7, 8)
			v2, m2 := mkBundle(t, 8, 8)
			if _, err := s.Publish(ctx, v1, PublishOptions{}); err != nil {
				t.Fatal(err)
			}
			s.afterObject = func(n int) {
				if n == 2 {
					srv.kill()
				}
			}
			_, err := s.Publish(ctx, v2, PublishOptions{})
			if err == nil || !strings.Contains(err.Error(), "no pointer was moved") {
				t.Fatalf("publish against a killed server: %v", err)
			}
			t.Logf("error as the user sees it: %v", err)
			s.afterObject = nil
			srv.start()
			checkLatest(t, s, m1.BundleID)
			if _, err := s.Pull(ctx, filepath.Join(t.TempDir(), "x"), Ref{ID: m2.BundleID}); err == nil {
				t.Fatal("pulled a partial version")
			}
			res, err := s.Publish(ctx, v2, PublishOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if res.Skipped == 0 {
				t.Errorf("the second run uploaded everything again: %+v", res)
			}
			checkLatest(t, s, m2.BundleID)
			dir := filepath.Join(t.TempDir(), "serve")
			if _, err := s.Pull(ctx, dir, Ref{}); err != nil {
				t.Fatal(err)
			}
			sameTree(t, v2, dir)
		})
	}
}

// TestOCIManifestReproducible: the same bundle gives the same manifest
// bytes, whatever the clock or the files' times say.
func TestOCIManifestReproducible(t *testing.T) {
	dir, m := mkBundle(t, 9, 6)
	_, a, err := manifestFor(dir, m, t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	old := time.Date(2001, 1, 1, 0, 0, 0, 0, time.UTC)
	filepath.Walk(dir, func(p string, _ os.FileInfo, _ error) error { return os.Chtimes(p, old, old) })
	layers, b, err := manifestFor(dir, m, t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a, b) {
		t.Fatalf("manifest changed:\n%s\n%s", a, b)
	}
	for _, want := range []string{`"artifactType":"application/vnd.kbc.bundle.v1"`, `"org.opencontainers.image.created":"2026-03-01T12:09:00Z"`, `"vnd.kbc.bundle.id":"` + m.BundleID} {
		if !bytes.Contains(a, []byte(want)) {
			t.Errorf("manifest lacks %s:\n%s", want, a)
		}
	}
	var titles []string
	for _, l := range layers {
		titles = append(titles, l.desc.Annotations["org.opencontainers.image.title"])
	}
	// One layer per file, the index folder as one, sorted by title.
	want := []string{"index/", "manifest.json"}
	for name := range m.Files {
		if !strings.HasPrefix(name, "index/") {
			want = append(want, name)
		}
	}
	slices.Sort(want)
	if got, want := strings.Join(titles, " "), strings.Join(want, " "); got != want {
		t.Errorf("layers %s, want %s", got, want)
	}
}

func TestPointerNames(t *testing.T) {
	for _, tc := range []struct {
		name string
		ok   bool
	}{
		{"latest", true}, {"v1.2-rc_3", true}, {"_x", true}, {"", false}, {".x", false}, {"-x", false},
		{"a/b", false}, {"bundle-abc", false}, {strings.Repeat("a", 128), true}, {strings.Repeat("a", 129), false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := checkPointerName(tc.name); (err == nil) != tc.ok {
				t.Errorf("checkPointerName(%q) = %v", tc.name, err)
			}
		})
	}
}

func TestPublishRefusesBadBundle(t *testing.T) {
	dir, _ := mkBundle(t, 1, 3)
	os.WriteFile(filepath.Join(dir, bundle.PassagesFile), []byte("{}\n"), 0o644)
	s := mustOpen(t, filepath.Join(t.TempDir(), "store"))
	_, err := s.Publish(context.Background(), dir, PublishOptions{})
	if err == nil || !strings.Contains(err.Error(), "passages.jsonl: changed") {
		t.Fatalf("publish of a changed bundle: %v", err)
	}
}

// TestOpenExisting tells a store that is not there from one with no
// versions yet, on every kind of store, and creates nothing while it looks.
func TestOpenExisting(t *testing.T) {
	ctx := context.Background()
	for _, k := range kinds {
		t.Run(k.name, func(t *testing.T) {
			loc := k.loc(t)
			missing := loc
			switch k.name {
			case "s3": // a bucket nobody made, beside the one s3Shared made
				b, rest, _ := strings.Cut(strings.TrimPrefix(loc, "s3://"), "/")
				missing = "s3://" + b + "-none/" + rest
			case "folder", "file-url":
				defer func() {
					if _, err := os.Stat(strings.TrimPrefix(loc, "file://")); !errors.Is(err, os.ErrNotExist) {
						t.Errorf("OpenExisting made the folder %s", loc)
					}
				}()
			}
			if s, err := OpenExisting(ctx, missing); !errors.Is(err, ErrNoStore) {
				if s != nil {
					s.Close()
				}
				t.Fatalf("OpenExisting(missing store) = %v, want ErrNoStore", err)
			}
			if k.name == "oci" {
				// A registry repository exists once something is pushed.
				s := mustOpen(t, loc)
				v1, _ := mkBundle(t, 1, 3)
				if _, err := s.Publish(ctx, v1, PublishOptions{}); err != nil {
					t.Fatal(err)
				}
			} else if k.name != "s3" {
				return // the deferred check wants the folder left unmade
			}
			s, err := OpenExisting(ctx, loc)
			if err != nil {
				t.Fatalf("OpenExisting(existing store): %v", err)
			}
			s.Close()
		})
	}
	// An empty folder is a store with no versions yet.
	dir := t.TempDir()
	s, err := OpenExisting(ctx, dir)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if vs, err := s.Versions(ctx); err != nil || len(vs) != 0 {
		t.Errorf("Versions of an empty folder = %v, %v", vs, err)
	}
}
