package qsets

import (
	"fmt"

	"github.com/kbc-project/kbc/bundle"
)

// Cutoff is the rank cut of the measures: MRR@10 and R@10.
const Cutoff = 10

// Scores are a set's retrieval figures at one level.
type Scores struct {
	Queries int     // queries judged at this level (the mean is over these)
	MRR     float64 // mean reciprocal rank of the first relevant docid in the top Cutoff
	Recall  float64 // mean share of a query's relevant docids found in the top Cutoff
}

// Searcher is what Score needs of a bundle.
type Searcher interface {
	Search(query string, k int) ([]bundle.Hit, error)
}

// Score runs every query of s against b and returns section-level and
// page-level scores. A hit's docid is path#anchor at section level (path
// alone when the passage has no anchor) and path at page level; each docid
// counts once, at its best rank, so the top Cutoff are the first Cutoff
// distinct docids. Per query, reciprocal rank is 1/r for the rank r of the
// first relevant docid (0 when none is in the top Cutoff) and recall is the
// number of relevant docids in the top Cutoff over the number judged: the
// TREC evaluation tool's recip_rank on a run cut at Cutoff, and its
// recall_10. The means are over every judged query, as that tool gives
// them with -c (a query with no hit counts 0).
func Score(b Searcher, s *Set) (section, page Scores, err error) {
	// Search deeper than Cutoff passages: several passages of one section
	// or page fold into one docid.
	const depth = 100
	for _, q := range s.Queries {
		hits, err := b.Search(q.Text, depth)
		if err != nil {
			return section, page, fmt.Errorf("%s: %w", q.ID, err)
		}
		var secRun, pageRun []string
		for _, h := range hits {
			d := h.Path
			if h.Anchor != "" {
				d += "#" + h.Anchor
			}
			secRun = appendNew(secRun, d)
			pageRun = appendNew(pageRun, h.Path)
		}
		section.add(secRun, q.Sections)
		page.add(pageRun, q.Pages)
	}
	section.mean()
	page.mean()
	return section, page, nil
}

func appendNew(run []string, d string) []string {
	if len(run) == Cutoff {
		return run
	}
	for _, x := range run {
		if x == d {
			return run
		}
	}
	return append(run, d)
}

// add adds one query's reciprocal rank and recall to the sums.
func (s *Scores) add(run, rel []string) {
	if len(rel) == 0 {
		return
	}
	s.Queries++
	found := 0
	for i, d := range run {
		for _, r := range rel {
			if d == r {
				if found == 0 {
					s.MRR += 1 / float64(i+1)
				}
				found++
				break
			}
		}
	}
	s.Recall += float64(found) / float64(len(rel))
}

func (s *Scores) mean() {
	if s.Queries > 0 {
		s.MRR /= float64(s.Queries)
		s.Recall /= float64(s.Queries)
	}
}
