package build

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"sort"
	"sync"
	"time"

	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/sources"
)

// CacheFormat is the version of the Cache layout; a cache of another
// format is discarded.
const CacheFormat = 1

// Cache holds the per-document results of earlier builds, so that a
// rebuild re-reads only what changed: a file whose content hash matches
// its entry is not parsed again, and its passages are not split again
// while the boilerplate found on it is the same. A Cache is valid only
// for the tool version and settings it was made with (Key); Run discards
// the entries of one made with others. Run may use a Cache from several
// goroutines; callers must not use it during a Run.
type Cache struct {
	Format  int
	Key     string // tool version and settings digest
	Entries map[string]*CacheEntry
	// Dedupe is the duplicate stage's last outcome, reused when its whole
	// input is the same.
	Dedupe *DedupeMemo

	mu      sync.Mutex
	changed bool
	// memos keep the duplicate search's per-text hashing between builds
	// that share this Cache in memory (watch mode); they are not saved.
	memos [2]*dedupe.Memo   // real text, masked text
	masks map[string]string // passage text hash -> masked text, same lifetime
}

// masked returns maskFigures of each passage's text, remembering the
// results in memory for the next build that shares this Cache.
func (c *Cache) masked(ps []Passage) []string {
	out := make([]string, len(ps))
	if c == nil {
		for i := range ps {
			out[i] = maskFigures(ps[i].Text)
		}
		return out
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	next := make(map[string]string, len(ps))
	for i := range ps {
		m, ok := c.masks[ps[i].Hash]
		if !ok {
			m = maskFigures(ps[i].Text)
		}
		out[i], next[ps[i].Hash] = m, m
	}
	c.masks = next
	return out
}

// memo returns the hashing memo for the real (0) or masked (1) texts.
func (c *Cache) memo(which int) *dedupe.Memo {
	if c == nil {
		return nil
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.memos[which] == nil {
		c.memos[which] = &dedupe.Memo{}
	}
	return c.memos[which]
}

// CacheEntry is what one build learned about one file.
type CacheEntry struct {
	Hash      string            // SHA-256 of the file's bytes
	Size      int64             // the file's size and modification time when
	ModTime   time.Time         // it was read: unchanged, they vouch for Hash
	Checked   time.Time         // when the bytes were read and hashed
	Doc       *sources.Document // normalised; Front travels in FrontJSON
	FrontJSON []byte            // the document's front matter as JSON
	Keys      []BlockKey        // BlockKeys(Doc)
	Fail      *sources.Error    // why the file was left out, instead of Doc
	Boiler    string            // digest of the Keys that were boilerplate when Passages were made
	Passages  []Passage         // Split's result, before dates are stamped
}

// NewCache returns an empty cache for the given tool version and settings.
func NewCache(tool string, s Settings) *Cache {
	return &Cache{Format: CacheFormat, Key: cacheKey(tool, s), Entries: map[string]*CacheEntry{}}
}

func cacheKey(tool string, s Settings) string {
	data, _ := json.Marshal(s)
	h := sha256.Sum256(append([]byte(tool+"\x00"), data...))
	return hex.EncodeToString(h[:])
}

// Fits reports whether c was made by this tool version with these
// settings, so its entries can be trusted.
func (c *Cache) Fits(tool string, s Settings) bool {
	return c != nil && c.Format == CacheFormat && c.Key == cacheKey(tool, s) && c.Entries != nil
}

// Changed reports whether the last Run added, replaced or dropped an
// entry, that is whether the cache needs writing back.
func (c *Cache) Changed() bool {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.changed
}

// lookup returns the entry for path when its content hash is hash.
func (c *Cache) lookup(path, hash string) *CacheEntry {
	if c == nil {
		return nil
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.Entries[path]
	if e == nil || e.Hash != hash || (e.Doc == nil && e.Fail == nil) {
		return nil
	}
	return e
}

// racyWindow is how long a file must have been left alone before it was
// read for its size and time to vouch for its content later: file times
// are coarse (a kernel tick), so a file changed again within the same tick
// as the read would keep both. git handles its "racy" entries the same
// way (from memory of git's racy-git notes, not checked here).
const racyWindow = time.Second

// unchanged returns the entry for the walked file f when its size and
// modification time are those recorded and the file had been left alone
// for racyWindow when it was read, without reading the file: the check make
// and git rely on. An edit that keeps both (a tool that restores the old
// time on a file of the same size) goes unseen until the file changes
// again; delete OUT.cache to force a full read.
func (c *Cache) unchanged(f sources.File) *CacheEntry {
	if c == nil || f.ModTime.IsZero() {
		return nil
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.Entries[f.Path]
	if e == nil || (e.Doc == nil && e.Fail == nil) || e.Size != f.Size || !e.ModTime.Equal(f.ModTime) ||
		!e.ModTime.Before(e.Checked.Add(-racyWindow)) {
		return nil
	}
	return e
}

// seen records that the file f, read again, still has the cached bytes, so
// that its new size and time vouch for them from now on.
func (c *Cache) seen(f sources.File) {
	if c == nil {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if e := c.Entries[f.Path]; e != nil && (!e.ModTime.Equal(f.ModTime) || e.Size != f.Size || !e.ModTime.Before(e.Checked.Add(-racyWindow))) {
		e.Size, e.ModTime, e.Checked = f.Size, f.ModTime, time.Now()
		c.changed = true
	}
}

// document returns a fresh copy of the entry's document, with its front
// matter decoded and the file time of this build.
func (e *CacheEntry) document(f sources.File) (*sources.Document, bool) {
	d := *e.Doc
	d.Front = nil
	if len(e.FrontJSON) > 0 && json.Unmarshal(e.FrontJSON, &d.Front) != nil {
		return nil, false
	}
	d.ModTime = f.ModTime.UTC()
	return &d, true
}

// storeFail records that path, with these bytes, was left out and why, so
// an unchanged bad file is not parsed again just to fail again.
func (c *Cache) storeFail(file sources.File, hash string, fail *sources.Error) {
	if c == nil || hash == "" {
		return
	}
	f := *fail
	f.Err = nil
	c.mu.Lock()
	c.Entries[file.Path] = &CacheEntry{Hash: hash, Size: file.Size, ModTime: file.ModTime, Checked: time.Now(), Fail: &f}
	c.changed = true
	c.mu.Unlock()
}

// store records what a build made of path.
func (c *Cache) store(file sources.File, hash string, d *sources.Document, keys []BlockKey) {
	if c == nil {
		return
	}
	path := file.Path
	e := &CacheEntry{Hash: hash, Size: file.Size, ModTime: file.ModTime, Checked: time.Now(), Keys: keys}
	doc := *d
	if len(doc.Front) > 0 {
		e.FrontJSON, _ = json.Marshal(doc.Front)
	}
	doc.Front = nil
	// The causes behind warnings are not kept: only their text is needed
	// again, and an arbitrary error value cannot be encoded.
	if len(doc.Warnings) > 0 {
		ws := make([]*sources.Error, len(doc.Warnings))
		for i, w := range doc.Warnings {
			c := *w
			c.Err = nil
			ws[i] = &c
		}
		doc.Warnings = ws
	}
	e.Doc = &doc
	c.mu.Lock()
	c.Entries[path] = e
	c.changed = true
	c.mu.Unlock()
}

// passages returns the cached split of path when the boilerplate on it is
// the same as when it was made.
func (c *Cache) passages(path, boiler string) ([]Passage, bool) {
	if c == nil {
		return nil, false
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.Entries[path]
	if e == nil || e.Passages == nil || e.Boiler != boiler {
		return nil, false
	}
	return append([]Passage(nil), e.Passages...), true
}

func (c *Cache) storePassages(path, boiler string, ps []Passage) {
	if c == nil {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if e := c.Entries[path]; e != nil {
		e.Boiler, e.Passages = boiler, append([]Passage{}, ps...)
		c.changed = true
	}
}

// keep drops the entries of files that are gone.
func (c *Cache) keep(paths map[string]bool) {
	if c == nil {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	for p := range c.Entries {
		if !paths[p] {
			delete(c.Entries, p)
			c.changed = true
		}
	}
}

// boilerDigest names which of a document's block keys are boilerplate.
func boilerDigest(keys []BlockKey, b *Boilerplate) string {
	var on []BlockKey
	for _, k := range keys {
		if b.Has(k) {
			on = append(on, k)
		}
	}
	sort.Slice(on, func(i, j int) bool { return on[i] < on[j] })
	h := sha256.New()
	var buf [8]byte
	for _, k := range on {
		binary.LittleEndian.PutUint64(buf[:], uint64(k))
		h.Write(buf[:])
	}
	return hex.EncodeToString(h.Sum(nil)[:16])
}

// DedupeMemo is the outcome of the duplicate stage for one exact input:
// the digest of every passage's id, place, text hash, date and canonical
// mark, and of the options.
type DedupeMemo struct {
	Digest string
	Drop   []string            // ids of the copies left out
	AlsoAt map[string][]string // id of a kept passage -> its also_at
	Report *DuplicateReport
}

func (c *Cache) dedupeMemo(digest string) *DedupeMemo {
	if c == nil {
		return nil
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.Dedupe != nil && c.Dedupe.Digest == digest {
		return c.Dedupe
	}
	return nil
}

func (c *Cache) storeDedupe(m *DedupeMemo) {
	if c == nil {
		return
	}
	c.mu.Lock()
	c.Dedupe, c.changed = m, true
	c.mu.Unlock()
}
