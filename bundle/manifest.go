package bundle

import (
	"bytes"
	_ "embed"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"hash"
	"os"
	"path/filepath"
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
	// Format is FormatVersion.
	Format int `json:"format"`
	// Settings are the caller's build settings as canonical JSON (object
	// keys sorted); nil when none were given.
	Settings json.RawMessage `json:"settings,omitempty"`
	// SourceCommit is the source repository's commit, when known.
	SourceCommit string `json:"source_commit,omitempty"`
	// SourceDirty is true when the work tree had uncommitted changes
	// under the source folder, so the commit alone does not name the input.
	SourceDirty bool `json:"source_dirty,omitempty"`
	// Tool names the program and version that wrote the bundle.
	Tool string `json:"tool,omitempty"`
}

// ReadManifest reads and checks dir/manifest.json.
func ReadManifest(dir string) (*Manifest, error) {
	path := filepath.Join(dir, ManifestFile)
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
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
	return &m, nil
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
