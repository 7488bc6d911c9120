package bundle

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
	"slices"
	"sort"

	"github.com/kbc-project/kbc/build"
)

// DeltaFile is the name of the delta inside a bundle.
const DeltaFile = "delta.json"

// Change is one passage whose content changed between two bundles; the
// hashes are ContentHash values.
type Change struct {
	ID      string `json:"id"`
	OldHash string `json:"old_hash"`
	NewHash string `json:"new_hash"`
}

// Delta is what changed between two bundles, passage by passage: what a
// vector store downstream must embed again (added and changed) or forget
// (removed). A passage changes when its text, title or heading trail
// changes (what an embedding is usually made from); one whose lines or
// dates merely moved is not a change.
type Delta struct {
	From    string   `json:"from,omitempty"` // bundle id of the older bundle; empty for the first build
	To      string   `json:"to"`             // bundle id of the newer bundle
	Added   []string `json:"added"`          // passage ids
	Changed []Change `json:"changed"`
	Removed []string `json:"removed"` // passage ids
}

// Empty reports whether nothing was added, changed or removed.
func (d *Delta) Empty() bool {
	return len(d.Added) == 0 && len(d.Changed) == 0 && len(d.Removed) == 0
}

// ContentHash is the SHA-256 (hex) of a passage's title, heading trail and
// text: what the delta compares.
func ContentHash(p *build.Passage) string {
	h := sha256.New()
	fmt.Fprintf(h, "%d:%s%d:", len(p.Title), p.Title, len(p.Heading))
	for _, s := range p.Heading {
		fmt.Fprintf(h, "%d:%s", len(s), s)
	}
	fmt.Fprintf(h, "%d:%s", len(p.Text), p.Text)
	return hex.EncodeToString(h.Sum(nil))
}

// Diff compares the passages of two bundles by id and content (title,
// heading trail and text; Change carries their ContentHash). The result is
// sorted by id.
func Diff(old, cur []build.Passage) *Delta {
	d := &Delta{Added: []string{}, Changed: []Change{}, Removed: []string{}}
	before := make(map[string]*build.Passage, len(old))
	for i := range old {
		before[old[i].ID] = &old[i]
	}
	seen := make(map[string]bool, len(cur))
	for i := range cur {
		p := &cur[i]
		seen[p.ID] = true
		q, ok := before[p.ID]
		if !ok {
			d.Added = append(d.Added, p.ID)
			continue
		}
		if q.Text != p.Text || q.Title != p.Title || !slices.Equal(q.Heading, p.Heading) {
			d.Changed = append(d.Changed, Change{ID: p.ID, OldHash: ContentHash(q), NewHash: ContentHash(p)})
		}
	}
	for _, p := range old {
		if !seen[p.ID] {
			d.Removed = append(d.Removed, p.ID)
		}
	}
	sort.Strings(d.Added)
	sort.Strings(d.Removed)
	sort.Slice(d.Changed, func(i, j int) bool { return d.Changed[i].ID < d.Changed[j].ID })
	return d
}

// ReadPassages reads every passage of the bundle in dir.
func ReadPassages(dir string) ([]build.Passage, error) {
	f, err := os.Open(filepath.Join(dir, PassagesFile))
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var out []build.Passage
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<28)
	for line := 1; sc.Scan(); line++ {
		var p build.Passage
		if err := json.Unmarshal(sc.Bytes(), &p); err != nil {
			return nil, fmt.Errorf("%s:%d: %v", filepath.Join(dir, PassagesFile), line, err)
		}
		out = append(out, p)
	}
	return out, sc.Err()
}

// Prior is the bundle a new build replaces, which its delta is against.
type Prior struct {
	ID string
	// Passages are the prior bundle's passages; when nil, All reads them
	// from Dir on first use (a rebuild that changes nothing never does).
	Passages []build.Passage
	// Dir and Manifest, when set, let Write reuse the prior bundle's index
	// files when the new bundle indexes exactly the same content.
	Dir      string
	Manifest *Manifest
}

// All returns the prior bundle's passages, reading them from Dir when
// they were not given.
func (p *Prior) All() ([]build.Passage, error) {
	if p.Passages == nil && p.Dir != "" {
		ps, err := ReadPassages(p.Dir)
		if err != nil {
			return nil, err
		}
		p.Passages = ps
	}
	return p.Passages, nil
}

// ReadPrior reads the manifest of the bundle that a new build into dir
// will replace; its passages are read when first needed (Prior.All). A
// dir that holds no bundle yet gives nil and no error.
func ReadPrior(dir string) (*Prior, error) {
	m, err := ReadManifest(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	return &Prior{ID: m.BundleID, Dir: dir, Manifest: m}, nil
}
