package build

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestBinaryID: the running test binary has an ID; two files that are
// not Go binaries are told apart by their bytes, equal bytes agree.
func TestBinaryID(t *testing.T) {
	if id := BinaryID(); id == "unknown" || id == "" {
		t.Fatalf("BinaryID() = %q", id)
	} else {
		t.Logf("BinaryID() = %s", id)
	}
	dir := t.TempDir()
	for name, data := range map[string]string{"a": "one program", "b": "another program", "c": "one program"} {
		os.WriteFile(filepath.Join(dir, name), []byte(data), 0o755)
	}
	a, b, c := binaryIDOf(filepath.Join(dir, "a")), binaryIDOf(filepath.Join(dir, "b")), binaryIDOf(filepath.Join(dir, "c"))
	if a == b || a != c || !strings.HasPrefix(a, "sha256:") {
		t.Errorf("ids a=%s b=%s c=%s", a, b, c)
	}
	if got := binaryIDOf(filepath.Join(dir, "missing")); got != "unknown" {
		t.Errorf("missing file: %s", got)
	}
}

// BenchmarkBinaryID measures what a no-change rebuild pays to name its
// binary: reading the build ID note of the test binary.
func BenchmarkBinaryID(b *testing.B) {
	exe, err := os.Executable()
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		binaryIDOf(exe)
	}
}
