package build

import (
	"slices"
	"sort"
	"strings"

	"github.com/kbc-project/kbc/sources"
)

// BlockKey identifies the text of a prose block for boilerplate counting:
// the 64-bit FNV-1a hash of the normalised text. Keys are the same in every
// run and on every machine, so they can be cached per document.
type BlockKey uint64

// keyOf returns the 64-bit FNV-1a hash of s, written out rather than taken
// from hash/fnv to hash a string without copying it; the tests check it
// against hash/fnv's own test vectors. With 64 bits, a million distinct
// blocks collide with a chance near 3e-8 (n*n/2^65).
func keyOf(s string) BlockKey {
	h := uint64(14695981039346656037)
	for i := 0; i < len(s); i++ {
		h ^= uint64(s[i])
		h *= 1099511628211
	}
	return BlockKey(h)
}

// counted reports whether block b can be boilerplate: prose only. Code and
// tables repeat across pages for good reasons (the same install command on
// every platform page) and are never dropped. Nor is a lead-in, a paragraph
// ending with a colon: it names what follows ("Reported:", "Not reported:"
// before the two examples on each of 1,000 lint-rule pages of a real
// corpus), so dropping it would change the meaning of the next block.
func counted(b *sources.Block) bool {
	switch b.Kind {
	case sources.Paragraph, sources.ListItem, sources.Quote:
		return !strings.HasSuffix(b.Text, ":") && !strings.HasSuffix(b.Text, "：")
	}
	return false
}

// BlockKeys returns the distinct keys of the prose blocks of doc
// (paragraphs, list items, quotes; not lead-ins ending with a colon),
// sorted. A block repeated on one page counts once for it. doc should be
// normalised first, so that spacing differences do not hide a repeat. The
// keys depend on doc alone: a build can cache them by the document's
// content hash and count pages from the cache.
func BlockKeys(doc *sources.Document) []BlockKey {
	keys := make([]BlockKey, 0, len(doc.Blocks))
	for i := range doc.Blocks {
		if b := &doc.Blocks[i]; counted(b) {
			keys = append(keys, keyOf(b.Text))
		}
	}
	slices.Sort(keys)
	return slices.Compact(keys)
}

// BoilerplateEntry is one block of text found to be site boilerplate.
type BoilerplateEntry struct {
	Text    string `json:"text"`
	Pages   int    `json:"pages"`   // pages it is on
	Example string `json:"example"` // first of those pages in path order
}

// Boilerplate is the set of prose blocks that repeat across so many pages
// of a site that they are navigation, banners or footers rather than
// content. Once described (FindBoilerplate does it), its methods are safe
// for concurrent use.
type Boilerplate struct {
	pages   map[BlockKey]int // boilerplate keys and the pages each is on
	entries map[BlockKey]*BoilerplateEntry
}

// FindBoilerplate counts, for each distinct prose block text, the pages of
// docs it is on, and returns those on more than s.BoilerplateShare of the
// pages and on at least s.BoilerplateMinPages of them. The result does not
// depend on the order of docs.
func FindBoilerplate(docs []*sources.Document, s Settings) *Boilerplate {
	counts := make(map[BlockKey]int)
	for _, d := range docs {
		for _, k := range BlockKeys(d) {
			counts[k]++
		}
	}
	b := NewBoilerplate(counts, len(docs), s)
	b.Describe(docs)
	return b
}

// NewBoilerplate returns the boilerplate found in counts, the number of
// pages (out of pages in all) each block key is on, as summed from
// BlockKeys. Its entries have no text until Describe is called; Strip works
// at once.
func NewBoilerplate(counts map[BlockKey]int, pages int, s Settings) *Boilerplate {
	b := &Boilerplate{pages: make(map[BlockKey]int), entries: make(map[BlockKey]*BoilerplateEntry)}
	// The small margin keeps "more than 30% of 10 pages" from meaning 3
	// pages when 0.3*10 rounds below 3.
	limit := s.BoilerplateShare*float64(pages) + 1e-9
	for k, n := range counts {
		if float64(n) > limit && n >= s.BoilerplateMinPages {
			b.pages[k] = n
			b.entries[k] = &BoilerplateEntry{Pages: n}
		}
	}
	return b
}

// Describe fills in the text and example page of each entry from docs: the
// first document in path order that holds the block. Documents without
// boilerplate may be left out, and docs may come in several calls in path
// order, the earliest first. Describe changes b, so it must finish before
// b is shared between goroutines.
func (b *Boilerplate) Describe(docs []*sources.Document) {
	if len(b.pages) == 0 {
		return
	}
	// In path order, a document can only describe entries no earlier one
	// did, and the walk stops once all are described: usually after a page
	// or two, instead of hashing every block of every page.
	docs = slices.Clone(docs)
	sortByPath(docs)
	left := 0
	for _, e := range b.entries {
		if e.Example == "" {
			left++
		}
	}
	for _, d := range docs {
		if left == 0 {
			break
		}
		for i := range d.Blocks {
			bl := &d.Blocks[i]
			if !counted(bl) {
				continue
			}
			if e := b.entries[keyOf(bl.Text)]; e != nil && e.Example == "" {
				e.Example, e.Text = d.Path, bl.Text
				left--
			}
		}
	}
}

// Described reports whether every entry has its text and example page, so
// that Describe has nothing left to do.
func (b *Boilerplate) Described() bool {
	for _, e := range b.entries {
		if e.Example == "" {
			return false
		}
	}
	return true
}

func sortByPath(docs []*sources.Document) {
	slices.SortFunc(docs, func(a, b *sources.Document) int { return strings.Compare(a.Path, b.Path) })
}

// Has reports whether blocks with key k are boilerplate. A cached split of
// a document stays valid while Has gives the same answers for its
// BlockKeys.
func (b *Boilerplate) Has(k BlockKey) bool { return b.pages[k] > 0 }

// Len returns the number of boilerplate blocks.
func (b *Boilerplate) Len() int { return len(b.pages) }

// Entries returns the boilerplate blocks, most pages first, then by text.
func (b *Boilerplate) Entries() []BoilerplateEntry {
	out := make([]BoilerplateEntry, 0, len(b.entries))
	for _, e := range b.entries {
		out = append(out, *e)
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].Pages != out[j].Pages {
			return out[i].Pages > out[j].Pages
		}
		if out[i].Text != out[j].Text {
			return out[i].Text < out[j].Text
		}
		return out[i].Example < out[j].Example
	})
	return out
}

// Strip returns doc without its boilerplate blocks, and how many blocks it
// dropped. doc itself is never changed: the result is a shallow copy with a
// new Blocks slice, or doc itself when nothing was dropped. Headings keep
// their indexes.
func (b *Boilerplate) Strip(doc *sources.Document) (kept *sources.Document, dropped int) {
	if len(b.pages) == 0 {
		return doc, 0
	}
	var blocks []sources.Block
	for i, bl := range doc.Blocks {
		if counted(&bl) && b.pages[keyOf(bl.Text)] > 0 {
			if blocks == nil {
				blocks = make([]sources.Block, i, len(doc.Blocks)-1)
				copy(blocks, doc.Blocks[:i])
			}
			dropped++
			continue
		}
		if blocks != nil {
			blocks = append(blocks, bl)
		}
	}
	if dropped == 0 {
		return doc, 0
	}
	cp := *doc
	cp.Blocks = blocks
	return &cp, dropped
}
