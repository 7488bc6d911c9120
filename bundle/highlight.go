package bundle

import (
	"bytes"
	"slices"
)

// Span is a byte range [Start, End) of a text.
type Span struct {
	Start, End int
}

// MatchSpans returns the byte ranges of text whose words match a term of
// query, by the analysis search ranks with (see Search): lower case,
// English stop words dropped, Porter stems, identifiers matched by their
// parts. So "crossings" in a text matches the query "crossing", and
// "os.path.join" matches "path" (the whole identifier is marked, since its
// parts have no offsets of their own). A word that search ignores (a stop
// word) is never marked. The spans are in order, merged where they touch
// or overlap; nil when nothing matches. MatchSpans is safe for concurrent
// use.
func MatchSpans(text, query string) []Span {
	a := theAnalyzer()
	terms := queryTerms(a, query)
	if len(terms) == 0 || text == "" {
		return nil
	}
	var spans []Span
	for _, tok := range a.Analyze([]byte(text)) {
		if _, ok := slices.BinarySearchFunc(terms, tok.Term, bytes.Compare); ok {
			spans = append(spans, Span{tok.Start, tok.End})
		}
	}
	if len(spans) == 0 {
		return nil
	}
	// A joined run (a::b) comes before its parts: sort by start, then
	// merge.
	slices.SortFunc(spans, func(x, y Span) int { return x.Start - y.Start })
	out := spans[:1]
	for _, s := range spans[1:] {
		if last := &out[len(out)-1]; s.Start <= last.End {
			last.End = max(last.End, s.End)
			continue
		}
		out = append(out, s)
	}
	return out
}

// Visible reports whether a passage with this audience label (its
// Passage.Audience) may be shown to a caller cleared for audiences, by the
// rule of Query: a passage without a label is public, a labelled one is
// shown when the caller names one of its audiences (or one is "public").
func Visible(label string, audiences []string) bool { return visible(label, audiences) }
