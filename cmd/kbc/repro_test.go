package main

import (
	"bytes"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// TestManifestSameOnAnyCoreCount: the same input gives the same
// manifest.json, byte for byte, whatever the machine's core count (the
// worker count used to be recorded in the settings).
func TestManifestSameOnAnyCoreCount(t *testing.T) {
	src := copyTree(t, "../../examples/handbook", time.Date(2026, 11, 20, 9, 0, 0, 0, time.UTC))
	t.Setenv("SOURCE_DATE_EPOCH", "1796083200")
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var manifests [][]byte
	for _, procs := range []int{1, 3} {
		runtime.GOMAXPROCS(procs)
		out := filepath.Join(t.TempDir(), "b")
		mustBuild(t, src, out)
		manifests = append(manifests, mustRead(t, filepath.Join(out, bundle.ManifestFile)))
	}
	if !bytes.Equal(manifests[0], manifests[1]) {
		t.Errorf("manifest.json differs between 1 and 3 cores:\n%s\n---\n%s", manifests[0], manifests[1])
	}
}

// TestCacheKeyedOnBinary: a build cache made by a different kbc binary
// that carries the same version string (a changed normaliser, no version
// bump) is not trusted, and neither is its record of inputs.
func TestCacheKeyedOnBinary(t *testing.T) {
	if build.BinaryID() == "" {
		t.Fatalf("no binary ID: the cache key would be the version string alone")
	}
	src := t.TempDir()
	os.WriteFile(filepath.Join(src, "a.md"), []byte("# A\n\nThe loading bay opens at six.\n"), 0o644)
	out := filepath.Join(t.TempDir(), "b")
	mustBuild(t, src, out)
	// What another binary with the same version would leave: a cache
	// under the key "kbc 0.1.0".
	if err := build.NewCache("kbc " + version).Save(bundle.CacheDir(out)); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(src, "b.md"), []byte("# B\n"), 0o644)
	_, stderr := mustBuild(t, src, out)
	if !strings.Contains(stderr, "was made by another kbc binary; rebuilding it") {
		t.Errorf("a cache of another binary was trusted; stderr:\n%s", stderr)
	}
}
