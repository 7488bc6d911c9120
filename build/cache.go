package build

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"sort"
	"sync"
	"time"

	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/sources"
)

// Cache holds the per-document results of earlier builds, so that a
// rebuild re-reads only what changed: a file whose content hash matches
// its entry is not parsed again, and its passages are not split again
// while the boilerplate found on it is the same. A Cache is valid only
// for the tool version and settings it was made with (its key); Run
// discards the entries of one made with others. Run may use a Cache from
// several goroutines; callers must not use it during a Run. LoadCache and
// Save keep it in a folder between processes.
type Cache struct {
	key     string // tool version and settings digest
	entries map[string]*CacheEntry
	// dedupe is the duplicate stage's last outcome, reused when its whole
	// input is the same.
	dedupe *DedupeMemo
	// git is what the last build read of the source's git history.
	git *fresh.GitHistory

	mu sync.Mutex
	// dirty holds the paths whose entries changed since the cache was
	// loaded or saved; all means every entry must be written.
	dirty map[string]bool
	all   bool
	// state is set when the duplicate stage's memos changed.
	state bool
	// memos keep the duplicate search's per-text hashing between builds:
	// in memory in watch mode, and saved with the cache.
	memos [3]*dedupe.Memo // real text, masked text, masked blocks
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
	c.state = true // Find updates it
	return c.memos[which]
}

// CacheEntry is what one build learned about one file.
type CacheEntry struct {
	Hash      string            // SHA-256 of the file's bytes
	Size      int64             // the file's size and modification time when
	ModTime   time.Time         // it was read: unchanged, they vouch for Hash
	Checked   time.Time         // when the bytes were read and hashed
	Doc       *sources.Document // normalised, without Blocks; Front travels in FrontJSON
	Blocks    int               // len(Doc.Blocks) before they were left out
	FrontJSON []byte            // the document's front matter as JSON
	Keys      []BlockKey        // BlockKeys(Doc)
	Fail      *sources.Error    // why the file was left out, instead of Doc
	SplitKey  string            // splitKey of the split settings and the page's boilerplate when Passages were made
	Passages  []Passage         // Split's result, before dates are stamped
	Dropped   int               // boilerplate blocks left out of Passages
}

// NewCache returns an empty cache for the given tool version. Settings do
// not key the whole cache: a page's parse does not depend on them, and its
// passages are keyed by the split settings they were made with (splitKey).
func NewCache(tool string) *Cache {
	return &Cache{key: cacheKey(tool), entries: map[string]*CacheEntry{}, dirty: map[string]bool{}, all: true}
}

func cacheKey(tool string) string {
	h := sha256.Sum256([]byte(tool))
	return hex.EncodeToString(h[:])
}

// Fits reports whether c was made by this tool version, so its entries
// can be trusted.
func (c *Cache) Fits(tool string) bool {
	return c != nil && c.key == cacheKey(tool) && c.entries != nil
}

// Changed reports whether a Run since the cache was loaded or saved
// added, replaced or dropped an entry or changed the duplicate stage's
// memos, that is whether the cache needs saving.
func (c *Cache) Changed() bool {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.all || c.state || len(c.dirty) > 0
}

// touch marks path's entry as changed; c.mu must be held.
func (c *Cache) touch(path string) { c.dirty[path] = true }

// FileHash returns the SHA-256 (hex) of the bytes of path that the last
// Run using c read, or "" when c holds no such file.
func (c *Cache) FileHash(path string) string {
	if c == nil {
		return ""
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if e := c.entries[path]; e != nil {
		return e.Hash
	}
	return ""
}

// lookup returns the entry for path when its content hash is hash.
func (c *Cache) lookup(path, hash string) *CacheEntry {
	if c == nil {
		return nil
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.entries[path]
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
	e := c.entries[f.Path]
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
	if e := c.entries[f.Path]; e != nil && (!e.ModTime.Equal(f.ModTime) || e.Size != f.Size || !e.ModTime.Before(e.Checked.Add(-racyWindow))) {
		e.Size, e.ModTime, e.Checked = f.Size, f.ModTime, time.Now()
		c.touch(f.Path)
	}
}

// document returns a fresh copy of the entry's document, with its front
// matter decoded and the file time of this build. Its Blocks are nil: the
// passages made from them are cached, and a build that needs the blocks
// again (the boilerplate on the page changed) reads the file again
// (withBlocks).
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
	c.entries[file.Path] = &CacheEntry{Hash: hash, Size: file.Size, ModTime: file.ModTime, Checked: time.Now(), Fail: &f}
	c.touch(file.Path)
	c.mu.Unlock()
}

// store records what a build made of path.
func (c *Cache) store(file sources.File, hash string, d *sources.Document, keys []BlockKey) {
	if c == nil {
		return
	}
	path := file.Path
	e := &CacheEntry{Hash: hash, Size: file.Size, ModTime: file.ModTime, Checked: time.Now(), Keys: keys, Blocks: len(d.Blocks)}
	doc := *d
	// The text is kept once, in the passages: blocks are as much text
	// again, and the cache is read whole by every build.
	doc.Blocks = nil
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
	c.entries[path] = e
	c.touch(path)
	c.mu.Unlock()
}

// passages returns the cached split of path, and the number of
// boilerplate blocks it left out, when it was made with the same split
// settings and the same boilerplate on the page (key, from splitKey).
func (c *Cache) passages(path, key string) ([]Passage, int, bool) {
	if c == nil {
		return nil, 0, false
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.entries[path]
	if e == nil || e.Passages == nil || e.SplitKey != key {
		return nil, 0, false
	}
	return append([]Passage(nil), e.Passages...), e.Dropped, true
}

func (c *Cache) storePassages(path, key string, ps []Passage, dropped int) {
	if c == nil {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if e := c.entries[path]; e != nil {
		e.SplitKey, e.Passages, e.Dropped = key, append([]Passage{}, ps...), dropped
		c.touch(path)
	}
}

// forget drops the entry of path.
func (c *Cache) forget(path string) {
	if c == nil {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.entries[path]; ok {
		delete(c.entries, path)
		c.touch(path)
	}
}

// keep drops the entries of files that are gone.
func (c *Cache) keep(paths map[string]bool) {
	if c == nil {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	for p := range c.entries {
		if !paths[p] {
			delete(c.entries, p)
			c.touch(p)
		}
	}
}

// splitSettings names the settings Split reads, for splitKey. The
// boilerplate thresholds are not among them: what they decide shows in
// which of a page's blocks are boilerplate, which splitKey hashes.
func splitSettings(s Settings) string {
	return fmt.Sprintf("%d %d %d %s", s.AimTokens, s.MaxTokens, s.MinTokens, s.Tokenizer)
}

// splitKey names everything a page's passages depend on beyond its bytes:
// the split settings and which of its block keys are boilerplate.
func splitKey(settings string, keys []BlockKey, b *Boilerplate) string {
	var on []BlockKey
	for _, k := range keys {
		if b.Has(k) {
			on = append(on, k)
		}
	}
	sort.Slice(on, func(i, j int) bool { return on[i] < on[j] })
	h := sha256.New()
	h.Write([]byte(settings + "\x00"))
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
	if c.dedupe != nil && c.dedupe.Digest == digest {
		return c.dedupe
	}
	return nil
}

func (c *Cache) gitHistory() *fresh.GitHistory {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.git
}

func (c *Cache) storeGitHistory(h *fresh.GitHistory) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if h != c.git {
		c.git, c.state = h, true
	}
}

func (c *Cache) storeDedupe(m *DedupeMemo) {
	if c == nil {
		return
	}
	c.mu.Lock()
	c.dedupe, c.state = m, true
	c.mu.Unlock()
}
