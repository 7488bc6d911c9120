package bundle

import (
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func TestMatchSpans(t *testing.T) {
	tests := []struct {
		text, query string
		want        []string
	}{
		{"Night crossings leave the north pier.", "crossing", []string{"crossings"}},
		{"Night crossings leave the north pier.", "the pier", []string{"pier"}}, // "the" is a stop word: search ignores it
		{"Call os.path.join here, then path.", "path", []string{"os.path.join", "path"}},
		{"Use Foo::bar to open it.", "bar", []string{"bar"}}, // the tokenizer cuts at "::" itself
		{"Use Foo::bar to open it.", "Foo::bar", []string{"Foo::bar"}},
		{"The HTTPServer starts.", "server", []string{"HTTPServer"}},
		{"Lifejackets and a lifejacket.", "LIFEJACKET", []string{"Lifejackets", "lifejacket"}}, // one stem
		{"nothing here", "zebra", nil},
		{"", "zebra", nil},
		{"text", "", nil},
		{"Kaffee in der Kombüse: Kombüse", "kombüse", []string{"Kombüse", "Kombüse"}},
	}
	for _, tt := range tests {
		var got []string
		for _, s := range MatchSpans(tt.text, tt.query) {
			got = append(got, tt.text[s.Start:s.End])
		}
		if !reflect.DeepEqual(got, tt.want) {
			t.Errorf("MatchSpans(%q, %q) marks %q, want %q", tt.text, tt.query, got, tt.want)
		}
	}
}

// TestMatchSpansAgreeWithSearch: every passage Search returns for a query
// has a marked word in its title, heading field or text, and a passage
// with a marked word in its text is found by a query of that word alone,
// since both use one analysis.
func TestMatchSpansAgreeWithSearch(t *testing.T) {
	ps := genPassages(300, 7)
	dir := filepath.Join(t.TempDir(), "b")
	mustWrite(t, dir, &Input{Passages: ps})
	b := mustOpen(t, dir)
	for i := 0; i < 40; i++ {
		words := strings.Fields(ps[i*7].Text)
		q := words[i%len(words)] + " " + words[(i*13)%len(words)]
		hits, err := b.Search(q, 10)
		if err != nil {
			t.Fatal(err)
		}
		if len(hits) == 0 {
			t.Fatalf("%q: no hit", q)
		}
		for _, h := range hits {
			if MatchSpans(h.Title+"\n"+headingText(&h.Passage)+"\n"+h.Text, q) == nil {
				t.Errorf("%q: hit %s has no marked word", q, h.Ref())
			}
		}
	}
}
