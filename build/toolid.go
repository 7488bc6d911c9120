package build

import (
	"crypto/sha256"
	"debug/elf"
	"encoding/hex"
	"io"
	"os"
	"strings"
	"sync"
)

// BinaryID names the running program's own code, so that a build cache
// or an up-to-date stamp made by one kbc binary is never trusted by
// another, even when both carry the same version string (a changed
// normaliser without a version bump). Version strings and VCS stamps
// cannot do this: they are set by hand, and `go build -buildvcs=false`
// and test binaries carry no VCS revision.
//
// On ELF systems it is the Go build ID the go command writes into every
// binary (the .note.go.buildid section: hashes of the build's inputs and
// of the linked output), read in microseconds. Elsewhere, or when a
// binary was linked without one (-ldflags=-buildid=), it is the SHA-256
// of the executable file, computed once per process (about 0.2 s for a
// 60 MB binary). "unknown" when neither can be read; such a binary
// trusts only caches made by another such binary.
var BinaryID = sync.OnceValue(func() string {
	exe, err := os.Executable()
	if err != nil {
		return "unknown"
	}
	return binaryIDOf(exe)
})

func binaryIDOf(exe string) string {
	if id := goBuildID(exe); id != "" {
		return "go:" + id
	}
	f, err := os.Open(exe)
	if err != nil {
		return "unknown"
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "unknown"
	}
	return "sha256:" + hex.EncodeToString(h.Sum(nil))
}

// goBuildID reads the Go build ID note of an ELF executable: a 4-byte
// name size, a 4-byte description size, a 4-byte type, the name "Go"
// padded to 4 bytes, then the ID (the ELF note layout, System V ABI
// "Note Section"; the section name from the go command's
// cmd/internal/buildid, from memory). It returns "" when there is none.
func goBuildID(exe string) string {
	f, err := elf.Open(exe)
	if err != nil {
		return ""
	}
	defer f.Close()
	s := f.Section(".note.go.buildid")
	if s == nil {
		return ""
	}
	data, err := s.Data()
	if err != nil || len(data) < 16 {
		return ""
	}
	bo := f.ByteOrder
	nameSize, descSize := bo.Uint32(data[0:4]), bo.Uint32(data[4:8])
	start := 12 + (uint64(nameSize)+3)&^3
	end := start + uint64(descSize)
	if nameSize != 4 || end > uint64(len(data)) || string(data[12:14]) != "Go" {
		return ""
	}
	id := strings.TrimSpace(string(data[start:end]))
	if id == "" || strings.ContainsAny(id, "\x00\n") {
		return ""
	}
	return id
}
