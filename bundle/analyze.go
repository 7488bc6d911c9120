package bundle

import (
	"bytes"
	"sync"
	"unicode"
	"unicode/utf8"

	"github.com/blevesearch/bleve/v2/analysis"
	"github.com/blevesearch/bleve/v2/analysis/lang/en"
	"github.com/blevesearch/bleve/v2/analysis/token/lowercase"
	"github.com/blevesearch/bleve/v2/analysis/token/porter"
	unicodetok "github.com/blevesearch/bleve/v2/analysis/tokenizer/unicode"
	"github.com/blevesearch/bleve/v2/registry"
)

// analyzerName names the analysis in index/stats.json. A bundle whose
// index was analysed otherwise is refused by Open (rebuild it).
const analyzerName = "kbc-en-2"

// kbcAnalyzer is the analysis of both the indexed fields and the query:
//
//  1. words at Unicode word boundaries (UAX #29, bleve's "unicode"
//     tokenizer), which keeps os.path.join, pg_stat_activity and fooBar
//     whole but cuts Foo::bar, a->b and a/b; those runs (words joined by
//     "::", "->" or "/" with no space) are put back together as one more
//     token, before them at the position of their first word;
//  2. the possessive 's removed;
//  3. every token that holds a separator (".", "_", "::", "->", "/") or a
//     lower-to-upper case change is followed by its parts at its own
//     position (os.path.join: os, path, join; fooBar: foo, bar;
//     HTTPServer: http, server); a token with no letter is left whole;
//  4. lower case; English stop words dropped (bleve's list); Porter stems.
//
// The parts count in a field's length like any token, in the index and in
// index/stats.json alike (both take the number of tokens analysis gives).
type kbcAnalyzer struct {
	tok        analysis.Tokenizer
	possessive analysis.TokenFilter
	lower      analysis.TokenFilter
	stop       analysis.TokenFilter // nil: stop words kept
	stem       analysis.TokenFilter
}

// theAnalyzer is built once: its parts are immutable and safe for
// concurrent use.
var theAnalyzer = sync.OnceValue(func() *kbcAnalyzer {
	c := registry.NewCache()
	must := func(f analysis.TokenFilter, err error) analysis.TokenFilter {
		if err != nil {
			panic(err) // bleve's own registrations; cannot fail
		}
		return f
	}
	tok, err := c.TokenizerNamed(unicodetok.Name)
	if err != nil {
		panic(err)
	}
	return &kbcAnalyzer{
		tok:        tok,
		possessive: must(c.TokenFilterNamed(en.PossessiveName)),
		lower:      must(c.TokenFilterNamed(lowercase.Name)),
		stop:       must(c.TokenFilterNamed(en.StopName)),
		stem:       must(c.TokenFilterNamed(porter.Name)),
	}
})

// Analyze implements analysis.Analyzer.
func (a *kbcAnalyzer) Analyze(input []byte) analysis.TokenStream {
	ts := joinRuns(input, a.tok.Tokenize(input))
	ts = a.possessive.Filter(ts)
	ts = splitParts(ts)
	ts = a.lower.Filter(ts)
	if a.stop != nil {
		ts = a.stop.Filter(ts)
	}
	return a.stem.Filter(ts)
}

// runSeps are the separators that join words into one identifier but that
// the tokenizer cuts at.
var runSeps = [][]byte{[]byte("::"), []byte("->"), []byte("/")}

// joinedRun is the type of the tokens joinRuns adds.
const joinedRun = analysis.Shingle

// joinRuns adds, before each run of tokens that input joins with a run
// separator and nothing else (Foo::bar::baz), one token for the whole run.
func joinRuns(input []byte, ts analysis.TokenStream) analysis.TokenStream {
	joined := func(i int) bool { // token i and i+1 form a run
		gap := input[ts[i].End:ts[i+1].Start]
		for _, s := range runSeps {
			if bytes.Equal(gap, s) {
				return true
			}
		}
		return false
	}
	out := make(analysis.TokenStream, 0, len(ts)+len(ts)/16)
	for i := 0; i < len(ts); {
		j := i
		for j+1 < len(ts) && joined(j) {
			j++
		}
		if j > i {
			out = append(out, &analysis.Token{
				Term:     bytes.Clone(input[ts[i].Start:ts[j].End]),
				Start:    ts[i].Start,
				End:      ts[j].End,
				Position: ts[i].Position,
				Type:     joinedRun, // its parts are the tokens after it
			})
		}
		out = append(out, ts[i:j+1]...)
		i = j + 1
	}
	return out
}

// splitParts follows each token that has parts (see kbcAnalyzer) by them.
func splitParts(ts analysis.TokenStream) analysis.TokenStream {
	out := make(analysis.TokenStream, 0, len(ts)+len(ts)/8)
	for _, t := range ts {
		out = append(out, t)
		if t.Type == joinedRun || plainWord(t.Term) {
			continue
		}
		parts := identParts(t.Term)
		if len(parts) == 0 || len(parts) == 1 && len(parts[0]) == len(t.Term) {
			continue
		}
		for _, p := range parts {
			out = append(out, &analysis.Token{
				Term: bytes.Clone(p), Start: t.Start, End: t.End, Position: t.Position, Type: t.Type,
			})
		}
	}
	return out
}

// plainWord reports, cheaply, whether term certainly has no parts: ASCII
// lower-case letters and digits, with at most its first letter a capital.
// Most words of prose are; identParts gives such a term no part other
// than itself.
func plainWord(term []byte) bool {
	for i, c := range term {
		switch {
		case c >= 'a' && c <= 'z', c >= '0' && c <= '9':
		case c >= 'A' && c <= 'Z' && i == 0:
		default:
			return false
		}
	}
	return true
}

// identParts returns the parts of an identifier: the runs of letters and
// digits between separators (any other character), cut again where a lower
// case letter or digit is followed by an upper case one (fooBar) and before
// the last capital of a run of capitals followed by a lower case letter
// (HTTPServer: HTTP, Server). A term with no letter has no parts.
func identParts(term []byte) [][]byte {
	hasLetter := false
	for _, r := range string(term) {
		if unicode.IsLetter(r) {
			hasLetter = true
			break
		}
	}
	if !hasLetter {
		return nil
	}
	var parts [][]byte
	start := -1
	var prev rune // previous rune inside the current part
	for i := 0; i < len(term); {
		r, n := utf8.DecodeRune(term[i:])
		word := unicode.IsLetter(r) || unicode.IsDigit(r)
		switch {
		case !word:
			if start >= 0 {
				parts = append(parts, term[start:i])
				start = -1
			}
		case start < 0:
			start = i
		case unicode.IsUpper(r) && (unicode.IsLower(prev) || unicode.IsDigit(prev)):
			parts = append(parts, term[start:i])
			start = i
		case unicode.IsLower(r) && unicode.IsUpper(prev) && i-utf8.RuneLen(prev) > start:
			// HTTPServer: the S starts the new part.
			k := i - utf8.RuneLen(prev)
			parts = append(parts, term[start:k])
			start = k
		}
		prev = r
		i += n
	}
	if start >= 0 {
		parts = append(parts, term[start:])
	}
	return parts
}
