package bundle

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"os"
	"path/filepath"
	"time"
)

// Stamp records, beside a bundle (in its cache folder), the inputs it was
// built from, so that a build with the same inputs can leave it as it is.
type Stamp struct {
	Inputs   string          `json:"inputs"` // build.InputsDigest of the build
	Read     time.Time       `json:"read"`   // when the inputs were looked at
	BundleID string          `json:"bundle_id"`
	Manifest string          `json:"manifest"`           // SHA-256 of manifest.json as written
	Summary  json.RawMessage `json:"summary"`            // the build's summary, for printing again
	Problems []string        `json:"problems,omitempty"` // its path:line lines, likewise
}

const stampFile = "stamp.json"

// ReadStamp reads the stamp of the bundle folder out; nil when there is
// none or it cannot be read.
func ReadStamp(out string) *Stamp {
	data, err := os.ReadFile(filepath.Join(CacheDir(out), stampFile))
	if err != nil {
		return nil
	}
	var s Stamp
	if json.Unmarshal(data, &s) != nil {
		return nil
	}
	return &s
}

// WriteStamp writes the stamp of the bundle folder out, atomically.
func WriteStamp(out string, s *Stamp) error {
	dir := CacheDir(out)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	tmp, err := os.CreateTemp(dir, ".stamp-*.tmp")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Sync(); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), filepath.Join(dir, stampFile))
}

// ManifestHash returns the SHA-256 (hex) of out's manifest.json, or "".
func ManifestHash(out string) string {
	data, err := os.ReadFile(filepath.Join(out, ManifestFile))
	if err != nil {
		return ""
	}
	sum := sha256.Sum256(data)
	return hex.EncodeToString(sum[:])
}
