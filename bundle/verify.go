package bundle

import (
	"cmp"
	"crypto/sha256"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
)

// The problems a Mismatch reports.
const (
	Missing = "missing" // listed in the manifest, not in the folder
	Extra   = "extra"   // in the folder, not listed in the manifest
	Changed = "changed" // its bytes do not hash to what the manifest says
)

// Mismatch is one difference between a bundle folder and its manifest.
type Mismatch struct {
	File    string `json:"file"`           // slash path inside the bundle
	Want    string `json:"want,omitempty"` // hash the manifest lists ("sha256:<hex>")
	Got     string `json:"got,omitempty"`  // hash of the file, or what is there instead
	Problem string `json:"problem"`        // Missing, Extra or Changed
}

// Verify re-hashes every file of the bundle in dir against its manifest and
// returns the differences, sorted by file: files missing, files changed, and
// files present but not listed (manifest.json itself aside). It also checks
// that the manifest's bundle id is the hash of passages.jsonl it lists; if
// not, or the sizes and hashes it lists do not give its files digest, it
// reports manifest.json as changed. A file whose size differs from the one
// listed is reported changed without being read. An error means the
// manifest could not be read at all.
func Verify(dir string) ([]Mismatch, error) {
	m, err := ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	var out []Mismatch
	if want := "sha256:" + m.BundleID; m.Files[PassagesFile] != want {
		out = append(out, Mismatch{File: ManifestFile, Want: want, Got: m.Files[PassagesFile], Problem: Changed})
	}
	if m.FilesDigest != "" {
		if got := FilesDigest(m.Files, m.Sizes); got != m.FilesDigest {
			out = append(out, Mismatch{File: ManifestFile, Want: m.FilesDigest, Got: got, Problem: Changed})
		}
	}
	seen := make(map[string]bool, len(m.Files))
	err = filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, err := filepath.Rel(dir, p)
		if err != nil {
			return err
		}
		name := filepath.ToSlash(rel)
		if d.IsDir() || name == ManifestFile {
			return nil
		}
		want, listed := m.Files[name]
		seen[name] = listed
		got := "not a regular file"
		if d.Type().IsRegular() {
			size, sized := m.Sizes[name]
			fi, err := d.Info()
			if err != nil {
				return err
			}
			if listed && sized && fi.Size() != size {
				out = append(out, Mismatch{File: name, Want: fmt.Sprintf("%d bytes", size), Got: fmt.Sprintf("%d bytes", fi.Size()), Problem: Changed})
				return nil
			}
			if got, err = hashFile(p); err != nil {
				return err
			}
		}
		switch {
		case !listed:
			out = append(out, Mismatch{File: name, Got: got, Problem: Extra})
		case got != want:
			out = append(out, Mismatch{File: name, Want: want, Got: got, Problem: Changed})
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	for name, want := range m.Files {
		if !seen[name] {
			out = append(out, Mismatch{File: name, Want: want, Problem: Missing})
		}
	}
	slices.SortFunc(out, func(a, b Mismatch) int {
		return cmp.Or(cmp.Compare(a.File, b.File), cmp.Compare(a.Problem, b.Problem))
	})
	return out, nil
}

func hashFile(p string) (string, error) {
	f, err := os.Open(p)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hashRef(h), nil
}
