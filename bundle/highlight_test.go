package bundle

import (
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"unicode/utf8"
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

// FuzzMatchSpans checks the spans' invariants on any text and query: in
// order, apart, inside the text, on rune boundaries, never empty.
func FuzzMatchSpans(f *testing.F) {
	f.Add("Night crossings leave the north pier.", "crossing")
	f.Add("Call os.path.join, Foo::bar or HTTPServer.", "path bar server")
	f.Add("Kombüse\u00a0und Kombüsen", "kombüse")
	f.Add("a\xffb crossing", "crossing \xff")
	f.Fuzz(func(t *testing.T, text, query string) {
		prev := -1
		for _, s := range MatchSpans(text, query) {
			if s.Start <= prev || s.End <= s.Start || s.End > len(text) {
				t.Fatalf("span %v after %d in %q", s, prev, text)
			}
			// Passages are valid UTF-8 (the build repairs it); in other
			// text a stray byte is no rune to cut.
			if utf8.ValidString(text) && (!utf8.RuneStart(text[s.Start]) || s.End < len(text) && !utf8.RuneStart(text[s.End])) {
				t.Fatalf("span %v cuts a rune in %q", s, text)
			}
			prev = s.End
		}
	})
}
