package build

import (
	"fmt"
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/kbc-project/kbc/sources"
)

// sitePages returns n pages, each with its own text, where the block text
// shared is on the first on pages.
func sitePages(n int, shared map[string]int, code map[string]int) []*sources.Document {
	docs := make([]*sources.Document, n)
	for i := range docs {
		d := &sources.Document{Path: fmt.Sprintf("page%02d.md", i)}
		d.Blocks = append(d.Blocks, sources.Block{Kind: sources.Paragraph, Text: fmt.Sprintf("Text only page %d has.", i), Heading: -1})
		for text, on := range shared {
			if i < on {
				d.Blocks = append(d.Blocks, sources.Block{Kind: sources.ListItem, Text: text, Heading: -1})
			}
		}
		for text, on := range code {
			if i < on {
				d.Blocks = append(d.Blocks, sources.Block{Kind: sources.Code, Text: text, Heading: -1})
				d.Blocks = append(d.Blocks, sources.Block{Kind: sources.Table, Text: text, Heading: -1})
			}
		}
		docs[i] = d
	}
	return docs
}

func TestFindBoilerplate(t *testing.T) {
	s := DefaultSettings() // more than 30% of pages, and at least 3
	tests := []struct {
		name   string
		pages  int
		shared map[string]int
		code   map[string]int
		want   []BoilerplateEntry
	}{
		{"4 of 10 dropped", 10, map[string]int{"Edit this page": 4}, nil,
			[]BoilerplateEntry{{Text: "Edit this page", Pages: 4, Example: "page00.md"}}},
		{"3 of 10 kept: not more than 30%", 10, map[string]int{"Edit this page": 3}, nil, nil},
		{"2 of 10 kept", 10, map[string]int{"Edit this page": 2}, nil, nil},
		{"2 of 2 kept: under 3 pages", 2, map[string]int{"Edit this page": 2}, nil, nil},
		{"3 of 3 dropped", 3, map[string]int{"Edit this page": 3}, nil,
			[]BoilerplateEntry{{Text: "Edit this page", Pages: 3, Example: "page00.md"}}},
		{"code and tables never dropped", 10, nil, map[string]int{"npm install kbc": 10}, nil},
		{"lead-ins never dropped", 10, map[string]int{"Reported:": 10, "Not reported：": 10}, nil, nil},
		{"sorted by pages then text", 10, map[string]int{"Next page": 10, "Docs home": 10, "Feedback": 6}, nil,
			[]BoilerplateEntry{
				{Text: "Docs home", Pages: 10, Example: "page00.md"},
				{Text: "Next page", Pages: 10, Example: "page00.md"},
				{Text: "Feedback", Pages: 6, Example: "page00.md"},
			}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			docs := sitePages(tt.pages, tt.shared, tt.code)
			b := FindBoilerplate(docs, s)
			got := b.Entries()
			if len(got) == 0 {
				got = nil
			}
			if !reflect.DeepEqual(got, tt.want) {
				t.Errorf("Entries() = %+v, want %+v", got, tt.want)
			}
			// Strip drops exactly the boilerplate, and never code or tables.
			for _, d := range docs {
				before := append([]sources.Block(nil), d.Blocks...)
				kept, dropped := b.Strip(d)
				if !reflect.DeepEqual(d.Blocks, before) {
					t.Fatalf("Strip changed its input %s", d.Path)
				}
				if len(kept.Blocks)+dropped != len(d.Blocks) {
					t.Errorf("%s: %d kept + %d dropped != %d", d.Path, len(kept.Blocks), dropped, len(d.Blocks))
				}
				for _, bl := range kept.Blocks {
					if counted(&bl) && b.Has(keyOf(bl.Text)) {
						t.Errorf("%s: boilerplate %q kept", d.Path, bl.Text)
					}
				}
				codes := 0
				for _, bl := range kept.Blocks {
					if !counted(&bl) {
						codes++
					}
				}
				for _, bl := range d.Blocks {
					if !counted(&bl) {
						codes--
					}
				}
				if codes != 0 {
					t.Errorf("%s: code or table dropped", d.Path)
				}
			}
		})
	}
}

func TestBoilerplateOrderIndependent(t *testing.T) {
	s := DefaultSettings()
	docs := sitePages(20, map[string]int{"On this page": 20, "Was this helpful?": 9, "Rare": 2}, nil)
	// The same block on two pages gets its example from the first path, even
	// when the pages come in another order.
	want := FindBoilerplate(docs, s).Entries()
	if len(want) != 2 || want[0].Example != "page00.md" {
		t.Fatalf("Entries() = %+v", want)
	}
	rng := rand.New(rand.NewPCG(7, 7))
	for range 20 {
		shuffled := append([]*sources.Document(nil), docs...)
		rng.Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
		if got := FindBoilerplate(shuffled, s).Entries(); !reflect.DeepEqual(got, want) {
			t.Fatalf("order changed the result: %+v, want %+v", got, want)
		}
	}
}

func TestBoilerplateFromCachedKeys(t *testing.T) {
	s := DefaultSettings()
	docs := sitePages(10, map[string]int{"Docs home": 10, "Feedback": 5, "Rare": 1}, nil)
	// A page with the same block twice still counts once.
	docs[9].Blocks = append(docs[9].Blocks, docs[9].Blocks...)
	counts := map[BlockKey]int{}
	for _, d := range docs {
		for _, k := range BlockKeys(d) {
			counts[k]++
		}
	}
	b := NewBoilerplate(counts, len(docs), s)
	if b.Len() != 2 {
		t.Fatalf("Len() = %d, want 2", b.Len())
	}
	if e := b.Entries(); e[0].Text != "" {
		t.Errorf("undescribed entry has text %q", e[0].Text)
	}
	b.Describe(docs)
	if got, want := b.Entries(), FindBoilerplate(docs, s).Entries(); !reflect.DeepEqual(got, want) {
		t.Errorf("from keys: %+v, want %+v", got, want)
	}
	if _, n := b.Strip(docs[9]); n != 2 {
		t.Errorf("Strip dropped %d blocks of the doubled page, want 2 (Docs home twice)", n)
	}
}

func TestBlockKeysDistinctSorted(t *testing.T) {
	d := &sources.Document{Blocks: []sources.Block{
		{Kind: sources.Paragraph, Text: "b"}, {Kind: sources.Quote, Text: "a"},
		{Kind: sources.ListItem, Text: "b"}, {Kind: sources.Code, Text: "c"},
	}}
	keys := BlockKeys(d)
	if len(keys) != 2 || keys[0] >= keys[1] {
		t.Errorf("BlockKeys = %v, want 2 sorted distinct keys", keys)
	}
	// FNV-1a 64 check values from Go's hash/fnv tests (fnv_test.go,
	// golden64a).
	for s, want := range map[string]BlockKey{"": 0xcbf29ce484222325, "a": 0xaf63dc4c8601ec8c, "ab": 0x089c4407b545986a, "abc": 0xe71fa2190541574b} {
		if got := keyOf(s); got != want {
			t.Errorf("keyOf(%q) = %#x, want %#x", s, got, want)
		}
	}
}

func BenchmarkFindBoilerplate(b *testing.B) {
	// 3000 pages with 160 blocks each (480k blocks), 10 shared by all.
	shared := map[string]int{}
	for i := range 10 {
		shared[fmt.Sprintf("Navigation link number %d of the site", i)] = 3000
	}
	docs := sitePages(3000, shared, nil)
	size := 0
	for i, d := range docs {
		for j := range 150 {
			d.Blocks = append(d.Blocks, sources.Block{Kind: sources.Paragraph, Text: fmt.Sprintf("Paragraph %d of page %d, with some more words to make it the length of a real one.", j, i)})
		}
		for _, bl := range d.Blocks {
			size += len(bl.Text)
		}
	}
	s := DefaultSettings()
	b.SetBytes(int64(size))
	for b.Loop() {
		FindBoilerplate(docs, s)
	}
}

func ExampleFindBoilerplate() {
	var docs []*sources.Document
	for _, p := range []string{"start.md", "install.md", "usage.md", "faq.md"} {
		docs = append(docs, &sources.Document{Path: p, Blocks: []sources.Block{
			{Kind: sources.Paragraph, Text: "Text of " + p, Heading: -1},
			{Kind: sources.Paragraph, Text: "Found a mistake? Edit this page.", Heading: -1},
		}})
	}
	b := FindBoilerplate(docs, DefaultSettings())
	for _, e := range b.Entries() {
		fmt.Printf("%q on %d pages, e.g. %s\n", e.Text, e.Pages, e.Example)
	}
	kept, dropped := b.Strip(docs[0])
	fmt.Println(len(kept.Blocks), "kept,", dropped, "dropped")
	// Output:
	// "Found a mistake? Edit this page." on 4 pages, e.g. faq.md
	// 1 kept, 1 dropped
}
