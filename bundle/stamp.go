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
	// Racy holds the SHA-256 (hex) of the bytes the build read of each
	// file changed within a second of Read, by path: their size and time
	// do not vouch for them, their bytes must match.
	Racy map[string]string `json:"racy,omitempty"`
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
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	return writeCacheFile(out, stampFile, data)
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
