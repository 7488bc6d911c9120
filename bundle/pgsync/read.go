package pgsync

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// record is one passage of the bundle and the hash of its whole line in
// passages.jsonl: two records with equal hashes are equal in every field,
// so a row whose record_hash matches needs no write.
type record struct {
	p    build.Passage
	hash string // SHA-256 (hex) of the passages.jsonl line, newline excluded
}

// loc names a passage the way every kbc message does: path#anchor.
func (r *record) loc() string {
	if r.p.Anchor == "" {
		return r.p.Path
	}
	return r.p.Path + "#" + r.p.Anchor
}

// source is the bundle a sync brings the database to.
type source struct {
	manifest *bundle.Manifest
	delta    *bundle.Delta // nil when the bundle has none
	records  []record
}

// readBundle reads the manifest, the delta and every passage of the
// bundle in dir, checking that passages.jsonl is the file the manifest
// names (its SHA-256 is the bundle id).
func readBundle(dir string) (*source, error) {
	m, err := bundle.ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	path := filepath.Join(dir, bundle.PassagesFile)
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	src := &source{manifest: m}
	whole := sha256.New()
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<28)
	seen := make(map[string]int)
	for line := 1; sc.Scan(); line++ {
		b := sc.Bytes()
		whole.Write(b)
		whole.Write([]byte{'\n'})
		var r record
		if err := json.Unmarshal(b, &r.p); err != nil {
			return nil, fmt.Errorf("%s:%d: %v", path, line, err)
		}
		if r.p.ID == "" {
			return nil, fmt.Errorf("%s:%d: passage without an id", path, line)
		}
		if prev, dup := seen[r.p.ID]; dup {
			return nil, fmt.Errorf("%s:%d: passage id %s repeats line %d", path, line, r.p.ID, prev)
		}
		seen[r.p.ID] = line
		sum := sha256.Sum256(b)
		r.hash = hex.EncodeToString(sum[:])
		src.records = append(src.records, r)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if got := hex.EncodeToString(whole.Sum(nil)); got != m.BundleID {
		return nil, fmt.Errorf("%s: SHA-256 %s does not match the manifest's bundle id %s (run kbc verify)", path, got[:12], m.BundleID[:min(12, len(m.BundleID))])
	}
	data, err := os.ReadFile(filepath.Join(dir, bundle.DeltaFile))
	switch {
	case errors.Is(err, fs.ErrNotExist):
	case err != nil:
		return nil, err
	default:
		var d bundle.Delta
		if err := json.Unmarshal(data, &d); err != nil {
			return nil, fmt.Errorf("%s: %v", filepath.Join(dir, bundle.DeltaFile), err)
		}
		if d.To == m.BundleID {
			src.delta = &d
		}
	}
	return src, nil
}
