package bundle

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
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
// text, and of its defined terms' texts when it has any: what the delta
// compares. Each string is prefixed with its length and a colon, and the
// trail and the terms with their number, so that no two different passages
// hash the same bytes.
func ContentHash(p *build.Passage) string {
	return hexSum(contentSum(p))
}

// Diff compares the passages of two bundles by id and content (title,
// heading trail and text; Change carries their ContentHash). The result is
// sorted by id.
func Diff(old, cur []build.Passage) *Delta {
	return diffCatalogs(catalogOf(old), catalogOf(cur))
}

// diffCatalogs is Diff on two bundles' catalogs.
func diffCatalogs(old, cur *catalog) *Delta {
	d := &Delta{Added: []string{}, Changed: []Change{}, Removed: []string{}}
	before := make(map[string]*catalogEntry, len(old.Entries))
	for i := range old.Entries {
		before[old.Entries[i].ID] = &old.Entries[i]
	}
	seen := make(map[string]bool, len(cur.Entries))
	for i := range cur.Entries {
		e := &cur.Entries[i]
		seen[e.ID] = true
		q, ok := before[e.ID]
		switch {
		case !ok:
			d.Added = append(d.Added, e.ID)
		case q.Content != e.Content:
			d.Changed = append(d.Changed, Change{ID: e.ID, OldHash: hexSum(q.Content), NewHash: hexSum(e.Content)})
		}
	}
	for _, e := range old.Entries {
		if !seen[e.ID] {
			d.Removed = append(d.Removed, e.ID)
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

	cat *catalog // from ReadPrior, when the bundle's catalog was saved
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

// catalog returns the prior bundle's catalog: the one saved beside it, or
// one made from its passages.
func (p *Prior) catalog() (*catalog, error) {
	if p.cat == nil {
		ps, err := p.All()
		if err != nil {
			return nil, err
		}
		p.cat = catalogOf(ps)
	}
	return p.cat, nil
}

// passages returns the prior passages at the indexes idx of its catalog,
// reading only their lines when the catalog knows where they are.
func (p *Prior) passages(idx []int) ([]build.Passage, error) {
	if p.Passages == nil && p.cat != nil && p.Dir != "" {
		return readCatalogLines(p.Dir, p.cat, idx)
	}
	ps, err := p.All()
	if err != nil {
		return nil, err
	}
	out := make([]build.Passage, len(idx))
	for j, i := range idx {
		out[j] = ps[i]
	}
	return out, nil
}

// ReadPrior reads the manifest of the bundle that a new build into dir
// will replace, and the catalog of its passages when one was saved for
// it (Input.Catalog); the passages themselves are read only when needed.
// A dir that holds no bundle yet gives nil and no error.
func ReadPrior(dir string) (*Prior, error) {
	m, err := ReadManifest(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	p := &Prior{ID: m.BundleID, Dir: dir, Manifest: m}
	if fi, err := os.Stat(filepath.Join(dir, PassagesFile)); err == nil {
		p.cat, _ = loadCatalog(dir, m, fi.Size()) // without one, passages.jsonl is read
	}
	return p, nil
}
