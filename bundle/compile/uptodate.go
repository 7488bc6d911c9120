package compile

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/internal/atomicfile"
	"github.com/kbc-project/kbc/sources"
)

// inputsRecord records, beside a bundle (in its cache folder), the inputs
// it was built from, so that a build with the same inputs can leave it as
// it is (upToDate).
type inputsRecord struct {
	Inputs   string          `json:"inputs"` // build.InputsDigest of the build
	Read     time.Time       `json:"read"`   // when the inputs were looked at
	BundleID string          `json:"bundle_id"`
	Manifest string          `json:"manifest"`           // SHA-256 of manifest.json as written
	Summary  json.RawMessage `json:"summary"`            // the build's Summary, for the result again
	Problems []string        `json:"problems,omitempty"` // its path:line lines, likewise
	// Racy holds the SHA-256 (hex) of the bytes the build read of each
	// file changed within a second of Read, by path: their size and time
	// do not vouch for them, their bytes must match.
	Racy map[string]string `json:"racy,omitempty"`
}

// recordFile is the name of the inputs record in bundle.CacheDir(out).
const recordFile = "inputs.json"

// readRecord reads the inputs record of the bundle folder out; nil when
// there is none or it cannot be read.
func readRecord(out string) *inputsRecord {
	data, err := os.ReadFile(filepath.Join(bundle.CacheDir(out), recordFile))
	if err != nil {
		return nil
	}
	var r inputsRecord
	if json.Unmarshal(data, &r) != nil {
		return nil
	}
	return &r
}

// writeRecord writes the inputs record of the bundle folder out,
// atomically (not flushed: it only saves work, and is checked against the
// manifest before it is trusted).
func writeRecord(out string, r *inputsRecord) error {
	data, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return err
	}
	dir := bundle.CacheDir(out)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	return atomicfile.WriteFile(filepath.Join(dir, recordFile), data, atomicfile.NoFlush)
}

// manifestHash returns the SHA-256 (hex) of out's manifest.json, or "".
func manifestHash(out string) string {
	data, err := os.ReadFile(filepath.Join(out, bundle.ManifestFile))
	if err != nil {
		return ""
	}
	sum := sha256.Sum256(data)
	return hex.EncodeToString(sum[:])
}

// record writes, beside the bundle, the inputs it was built from
// (inputsRecord), for the next build's up-to-date check.
func record(out, inputs string, looked time.Time, m *bundle.Manifest, r *Result, walked *build.Walked, cache *build.Cache) error {
	data, err := json.Marshal(r.Summary)
	if err != nil {
		return err
	}
	st := &inputsRecord{Inputs: inputs, Read: looked, BundleID: m.BundleID, Manifest: manifestHash(out), Summary: data, Problems: r.Problems}
	for _, f := range build.Racy(walked.Files, looked) {
		if h := cache.FileHash(f.Path); h != "" {
			if st.Racy == nil {
				st.Racy = map[string]string{}
			}
			st.Racy[f.Path] = h
		}
	}
	return writeRecord(out, st)
}

// upToDate returns the result for a bundle in job.Out built from exactly
// these inputs that still matches its manifest: the earlier build's
// summary and problems, no passage added, changed or removed, and the
// checks run on the bundle's reports judged at now. Files changed within
// a second of the last look are not trusted by their size and time alone:
// their bytes must be those the last build read (inputsRecord.Racy), or the
// build runs.
func upToDate(job Job, cfg *Config, dir *sources.Dir, inputs string, walked *build.Walked, now time.Time) (*Result, bool) {
	out := job.Out
	st := readRecord(out)
	if st == nil || st.Inputs != inputs || manifestHash(out) != st.Manifest {
		return nil, false
	}
	for _, f := range build.Racy(walked.Files, st.Read) {
		data, err := fs.ReadFile(dir, f.Target)
		sum := sha256.Sum256(data)
		if err != nil || st.Racy[f.Path] != hex.EncodeToString(sum[:]) {
			return nil, false
		}
	}
	if bad, err := bundle.Verify(out); err != nil || len(bad) > 0 {
		return nil, false
	}
	r := &Result{UpToDate: true, BundleID: st.BundleID, Problems: st.Problems}
	if json.Unmarshal(st.Summary, &r.Summary) != nil {
		return nil, false
	}
	reps, err := ReadReports(out)
	if err != nil {
		return nil, false
	}
	reps.Staleness = reps.Staleness.At(now)
	r.Summary.Staleness = reps.Staleness.Counts
	r.Failures = cfg.Checks.Evaluate(reps.CheckInput())
	return r, true
}
