package qsets

import (
	"math"
	"strings"
	"testing"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// fixedHits answers each query with a fixed list of passages (path#anchor).
type fixedHits map[string][]string

func (f fixedHits) Search(q string, k int) ([]bundle.Hit, error) {
	var hits []bundle.Hit
	for _, d := range f[q] {
		var p build.Passage
		p.Path, p.Anchor = d, ""
		if i := strings.IndexByte(d, '#'); i >= 0 {
			p.Path, p.Anchor = d[:i], d[i+1:]
		}
		hits = append(hits, bundle.Hit{Passage: p})
	}
	if len(hits) > k {
		hits = hits[:k]
	}
	return hits, nil
}

// TestScore checks the measures against values worked out by hand from
// the TREC evaluation tool's definitions (trec_eval's m_recip_rank.c: 1
// over the rank of the first relevant retrieved document, 0 if none;
// m_recall.c with cutoff 10: relevant retrieved in the top 10 over the
// number relevant; the mean over all judged queries as with its -c
// option). Repeated docids (two passages of one section) count once, at
// the better rank, as the tool needs a run without duplicates.
func TestScore(t *testing.T) {
	s := &Set{Queries: []Query{
		// Relevant section at passage rank 3, but rank 2 among distinct
		// sections: a.html#x appears twice.
		{ID: "q1", Text: "one", Sections: []string{"b.html#y"}, Pages: []string{"b.html"}},
		// Two relevant sections, one in the top ten: recall 1/2.
		{ID: "q2", Text: "two", Sections: []string{"a.html#x", "c.html#z"}, Pages: []string{"a.html", "c.html"}},
		// Nothing found: 0 and 0.
		{ID: "q3", Text: "three", Sections: []string{"d.html#w"}, Pages: []string{"d.html"}},
		// Judged at page level only: left out of the section-level mean.
		{ID: "q4", Text: "four", Pages: []string{"e.html"}},
	}}
	ranks := fixedHits{
		"one": {"a.html#x", "a.html#x", "b.html#y"},
		"two": {"a.html#x", "b.html#y"},
		// Eleven distinct sections of one page, then the relevant one: out
		// of the top ten sections, but the page is at rank 1.
		"three": {"d.html#1", "d.html#2", "d.html#3", "d.html#4", "d.html#5", "d.html#6",
			"d.html#7", "d.html#8", "d.html#9", "d.html#10", "d.html#w"},
		"four": {"x.html", "e.html#top"},
	}
	sec, page, err := Score(ranks, s)
	if err != nil {
		t.Fatal(err)
	}
	check := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-12 {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	if sec.Queries != 3 || page.Queries != 4 {
		t.Errorf("judged %d sections, %d pages; want 3, 4", sec.Queries, page.Queries)
	}
	check("section MRR", sec.MRR, (1.0/2+1.0/1+0)/3)
	check("section R@10", sec.Recall, (1+0.5+0)/3)
	// Pages: q1 b.html at 2; q2 a.html at 1 (c.html missing); q3 d.html at
	// 1; q4 e.html at 2.
	check("page MRR", page.MRR, (1.0/2+1+1+1.0/2)/4)
	check("page R@10", page.Recall, (1+0.5+1+1)/4)
}
