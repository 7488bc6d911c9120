package qsets

import (
	"math"
	"testing"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/eval"
)

// TestScoreRun checks the figures against values worked out by hand from
// the TREC evaluation tool's definitions (trec_eval's m_recip_rank.c: 1
// over the rank of the first relevant retrieved document, 0 if none;
// m_recall.c at cutoff 10: relevant retrieved in the top 10 over the
// number relevant; the mean over all judged queries as with its -c
// option).
func TestScoreRun(t *testing.T) {
	s := &Set{Queries: []Query{
		{ID: "q1", Text: "one", Sections: []string{"b.html#y"}, Pages: []string{"b.html"}},
		// Two relevant sections, one in the top ten: recall 1/2.
		{ID: "q2", Text: "two", Sections: []string{"a.html#x", "c.html#z"}, Pages: []string{"a.html", "c.html"}},
		// Relevant section at rank 11: out of the cut, so 0 and 0, though
		// its page is at rank 1.
		{ID: "q3", Text: "three", Sections: []string{"d.html#w"}, Pages: []string{"d.html"}},
		// Judged at page level only: left out of the section-level mean.
		{ID: "q4", Text: "four", Pages: []string{"e.html"}},
		// Judged, nothing found: counts 0.
		{ID: "q5", Text: "five", Sections: []string{"f.html#v"}, Pages: []string{"f.html"}},
	}}
	docs := func(ids ...string) []eval.Result {
		var rs []eval.Result
		for i, d := range ids {
			rs = append(rs, eval.Result{Doc: d, Score: float64(100 - i)})
		}
		return rs
	}
	sec := eval.Run{
		"q1": docs("a.html#x", "b.html#y"),
		"q2": docs("a.html#x", "b.html#y"),
		"q3": docs("d.html#1", "d.html#2", "d.html#3", "d.html#4", "d.html#5", "d.html#6",
			"d.html#7", "d.html#8", "d.html#9", "d.html#10", "d.html#w"),
		"q4": docs("x.html", "e.html#top"),
		"q5": docs(),
	}
	page := eval.Run{
		"q1": docs("a.html", "b.html"),
		"q2": docs("a.html", "b.html"),
		"q3": docs("d.html"),
		"q4": docs("x.html", "e.html"),
	}
	check := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-12 {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	ss, err := ScoreRun(sec, s.Qrels(bundle.LevelSection))
	if err != nil {
		t.Fatal(err)
	}
	ps, err := ScoreRun(page, s.Qrels(bundle.LevelPage))
	if err != nil {
		t.Fatal(err)
	}
	if ss.Queries != 4 || ps.Queries != 5 {
		t.Errorf("judged %d sections, %d pages; want 4, 5", ss.Queries, ps.Queries)
	}
	check("section MRR@10", ss.MRR, (1.0/2+1+0+0)/4)
	check("section R@10", ss.Recall, (1+0.5+0+0)/4)
	// Pages: q1 at 2; q2 a.html at 1, c.html missing; q3 at 1; q4 at 2;
	// q5 not run.
	check("page MRR@10", ps.MRR, (1.0/2+1+1+1.0/2+0)/5)
	check("page R@10", ps.Recall, (1+0.5+1+1+0)/5)
}
