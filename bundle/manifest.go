package bundle

import (
	"bytes"
	"crypto/sha256"
	_ "embed"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"hash"
	"io"
	"maps"
	"os"
	"path/filepath"
	"slices"
	"time"
)

// FormatVersion is the bundle format Write produces and Open and Verify read.
const FormatVersion = 1

// The fixed files of a bundle, as slash paths inside it.
const (
	ManifestFile = "manifest.json"
	PassagesFile = "passages.jsonl"
	SchemaFile   = "passages.schema.json"
	IndexDir     = "index"
	StatsFile    = "index/stats.json"
)

// schema is the JSON Schema (draft 2020-12) of one line of passages.jsonl,
// written into every bundle as passages.schema.json. Never modified.
//
//go:embed passages.schema.json
var schema []byte

// Manifest mirrors manifest.json. Its fields are declared in key order, so
// that manifest.json comes out with sorted keys.
type Manifest struct {
	// BuiltAt is the build time, RFC 3339 in UTC to the second; the zero
	// time is left out.
	BuiltAt time.Time `json:"built_at,omitzero"`
	// BundleID is the SHA-256 (hex) of passages.jsonl's exact bytes: it
	// names the bundle's content, so two builds that yield the same
	// passages share it whatever else differs.
	BundleID string `json:"bundle_id"`
	// Counts are the caller's counts plus "passages" and "tokens" (the
	// sum of Passage.Tokens), which Write computes itself.
	Counts map[string]int `json:"counts"`
	// Files maps every file of the bundle except manifest.json (slash
	// path) to "sha256:" and the hex SHA-256 of its bytes.
	Files map[string]string `json:"files"`
	// FilesDigest is "sha256:" and the hex SHA-256 of the list of every
	// file in Files with its size and hash (see FilesDigest), so that one
	// value names every byte of the bundle, where BundleID names only its
	// passages. Verify checks it; a caller that pins it (kbc pull
	// --digest) knows no file can change under it. Empty in bundles
	// written before it existed.
	FilesDigest string `json:"files_digest,omitempty"`
	// Format is FormatVersion.
	Format int `json:"format"`
	// Settings are the caller's build settings as canonical JSON (object
	// keys sorted); nil when none were given.
	Settings json.RawMessage `json:"settings,omitempty"`
	// Sizes maps every file in Files to its length in bytes, so that a
	// reader of an untrusted copy reads no more than that. Empty in
	// bundles written before it existed; a reader accepts both.
	Sizes map[string]int64 `json:"sizes,omitempty"`
	// SourceCommit is the source repository's commit, when known.
	SourceCommit string `json:"source_commit,omitempty"`
	// SourceDirty is true when the work tree had uncommitted changes
	// under the source folder, so the commit alone does not name the input.
	SourceDirty bool `json:"source_dirty,omitempty"`
	// Tool names the program and version that wrote the bundle.
	Tool string `json:"tool,omitempty"`
}

// MaxManifestSize bounds manifest.json: ReadManifest refuses a larger one
// without reading it whole. A manifest lists a few dozen files, a few KB;
// the bound only stops a hostile copy from filling memory.
const MaxManifestSize = 8 << 20

// ReadManifest reads and checks dir/manifest.json. For a folder that has
// none it returns a *NotBundleError.
func ReadManifest(dir string) (*Manifest, error) {
	path := filepath.Join(dir, ManifestFile)
	f, err := os.Open(path)
	if err != nil {
		return nil, notBundle(dir, err)
	}
	defer f.Close()
	if fi, err := f.Stat(); err != nil {
		return nil, err
	} else if !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("%s: not a regular file", path)
	}
	data, err := io.ReadAll(io.LimitReader(f, MaxManifestSize+1))
	if err != nil {
		return nil, err
	}
	if len(data) > MaxManifestSize {
		return nil, fmt.Errorf("%s: larger than %d bytes, so not a manifest", path, MaxManifestSize)
	}
	return ParseManifest(path, data)
}

// ParseManifest decodes and checks the bytes of a manifest.json; name is
// used in errors.
func ParseManifest(name string, data []byte) (*Manifest, error) {
	path := name
	if len(data) > MaxManifestSize {
		return nil, fmt.Errorf("%s: larger than %d bytes, so not a manifest", path, MaxManifestSize)
	}
	var m Manifest
	if err := json.Unmarshal(data, &m); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if m.Format != FormatVersion {
		return nil, fmt.Errorf("%s: bundle format %d, this version reads %d", path, m.Format, FormatVersion)
	}
	if m.Files == nil {
		return nil, fmt.Errorf("%s: no files listed", path)
	}
	for name, n := range m.Sizes {
		if _, ok := m.Files[name]; !ok || n < 0 {
			return nil, fmt.Errorf("%s: size %d of %q, which is not a listed file", path, n, name)
		}
	}
	if len(m.Sizes) > 0 && len(m.Sizes) != len(m.Files) {
		return nil, fmt.Errorf("%s: %d sizes for %d files", path, len(m.Sizes), len(m.Files))
	}
	return &m, nil
}

// FilesDigest returns the digest Manifest.FilesDigest holds for files
// (path to "sha256:<hex>") and sizes (path to bytes): "sha256:" and the hex
// SHA-256 of one line per file, sorted by path, each the path, a NUL, the
// size in decimal, a NUL, the hash reference and a newline (a path cannot
// hold a NUL, so the lines cannot be forged by a crafted name).
func FilesDigest(files map[string]string, sizes map[string]int64) string {
	h := sha256.New()
	for _, name := range slices.Sorted(maps.Keys(files)) {
		fmt.Fprintf(h, "%s\x00%d\x00%s\n", name, sizes[name], files[name])
	}
	return hashRef(h)
}

// seal records the size of every listed file in dir and the files digest.
func (m *Manifest) seal(dir string) error {
	m.Sizes = make(map[string]int64, len(m.Files))
	for name := range m.Files {
		fi, err := os.Stat(filepath.Join(dir, filepath.FromSlash(name)))
		if err != nil {
			return err
		}
		m.Sizes[name] = fi.Size()
	}
	m.FilesDigest = FilesDigest(m.Files, m.Sizes)
	return nil
}

// marshal returns manifest.json's bytes: indented by two spaces, keys
// sorted, no HTML escaping, a final newline.
func (m *Manifest) marshal() ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(m); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// canonicalJSON marshals v with object keys sorted at every level (a Go
// struct's fields come out in declaration order; decoding into maps sorts
// them) and numbers kept as written.
func canonicalJSON(v any) (json.RawMessage, error) {
	if v == nil {
		return nil, nil
	}
	raw, err := json.Marshal(v)
	if err != nil {
		return nil, err
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	var x any
	if err := dec.Decode(&x); err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(x); err != nil {
		return nil, err
	}
	return bytes.TrimSuffix(buf.Bytes(), []byte("\n")), nil
}

// hashRef formats a finished SHA-256 as a manifest file reference.
func hashRef(h hash.Hash) string {
	return "sha256:" + hex.EncodeToString(h.Sum(nil))
}
