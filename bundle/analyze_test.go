package bundle

import (
	"strings"
	"testing"
	"unicode/utf8"
)

// TestAnalyzeIdentifiers checks the terms kbcAnalyzer gives for qualified
// names: the whole identifier (as the tokenizer keeps it, or joined back
// across "::", "->" and "/") and its parts, stemmed like any word.
func TestAnalyzeIdentifiers(t *testing.T) {
	tests := []struct {
		in   string
		want string // terms in order, space-separated
	}{
		{"os.path.join", "os.path.join os path join"},
		{"pg_stat_activity", "pg_stat_act pg stat activ"},
		{"Foo::bar", "foo::bar foo bar"},
		{"ptr->next", "ptr->next ptr next"},
		{"refs/heads/main", "refs/heads/main ref head main"},
		{"fooBar", "foobar foo bar"},
		{"HTTPServer", "httpserver http server"},
		{"__init__", "__init__ init"},
		{"getHTTPResponse2", "gethttpresponse2 get http response2"},
		{"Python 3.11", "python 3.11"},
		{"the installing of a Package's files", "instal packag file"},
		{"a / b", "b"}, // a space: not a run; "a" is a stop word
	}
	a := theAnalyzer()
	for _, tt := range tests {
		var got []string
		for _, tok := range a.Analyze([]byte(tt.in)) {
			got = append(got, string(tok.Term))
		}
		if strings.Join(got, " ") != tt.want {
			t.Errorf("%q: got %q, want %q", tt.in, strings.Join(got, " "), tt.want)
		}
	}
}

// FuzzAnalyze checks kbcAnalyzer's invariants: no empty term, every term
// valid UTF-8, positions never fall, each token's offsets inside the input.
func FuzzAnalyze(f *testing.F) {
	for _, s := range []string{"os.path.join", "Foo::bar::baz", "a->b->", "//x//", "fooBAR9Baz", "ÉtéÀ_b", "\xff::\xfe", "::", "a::", "x/y z/w"} {
		f.Add(s)
	}
	a := theAnalyzer()
	f.Fuzz(func(t *testing.T, s string) {
		pos := 0
		for _, tok := range a.Analyze([]byte(s)) {
			if len(tok.Term) == 0 {
				t.Fatalf("%q: empty term", s)
			}
			if !utf8.Valid(tok.Term) && utf8.ValidString(s) {
				t.Fatalf("%q: term %q not UTF-8", s, tok.Term)
			}
			if tok.Position < pos {
				t.Fatalf("%q: position %d after %d", s, tok.Position, pos)
			}
			pos = tok.Position
			if tok.Start < 0 || tok.End > len(s) || tok.Start > tok.End {
				t.Fatalf("%q: offsets %d-%d", s, tok.Start, tok.End)
			}
		}
	})
}

// FuzzPlainWord: a term plainWord passes has no part but itself, so
// skipping identParts for it changes nothing.
func FuzzPlainWord(f *testing.F) {
	for _, s := range []string{"word", "Word", "abc123", "123abc", "A1", "", "fooBar", "os.path", "ÉtéÀ", "WORD"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		if !plainWord([]byte(s)) {
			return
		}
		if parts := identParts([]byte(s)); len(parts) > 1 || len(parts) == 1 && len(parts[0]) != len(s) {
			t.Fatalf("%q: plain, but parts %q", s, parts)
		}
	})
}
