package qsets

import (
	"errors"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/eval"
)

// Cutoff is the rank cut of the measures: MRR@10 and R@10.
const Cutoff = 10

// Scores are a set's retrieval figures at one level.
type Scores struct {
	Queries int     // queries judged at this level (the means are over these)
	MRR     float64 // mean reciprocal rank of the first relevant docid in the top Cutoff
	Recall  float64 // mean share of a query's relevant docids found in the top Cutoff
}

// Measure runs every query of s on b (bundle.RunQueries: a docid is
// path#anchor at section level, path at page level, each counted once at
// its best rank) and scores the runs, at section and at page level.
func Measure(b *bundle.Bundle, s *Set) (section, page Scores, err error) {
	qs := make([]eval.Query, len(s.Queries))
	for i, q := range s.Queries {
		qs[i] = eval.Query{ID: q.ID, Text: q.Text}
	}
	for _, l := range []struct {
		level bundle.Level
		out   *Scores
	}{{bundle.LevelSection, &section}, {bundle.LevelPage, &page}} {
		run, err := b.RunQueries(qs, bundle.EvalOptions{Level: l.level})
		if err != nil {
			return section, page, err
		}
		if *l.out, err = ScoreRun(run, s.Qrels(l.level)); err != nil {
			return section, page, err
		}
	}
	return section, page, nil
}

// ScoreRun cuts each query's results at Cutoff and scores them with
// package eval (trec_eval's measures): MRR is recip_rank on the cut run,
// which is MRR@10, and Recall is recall_10. The means are over every
// judged query, a query with no results scoring 0 (trec_eval -c).
func ScoreRun(run eval.Run, qrels eval.Qrels) (Scores, error) {
	cut := make(eval.Run, len(run))
	for q, rs := range run {
		cut[q] = rs[:min(len(rs), Cutoff)]
	}
	rep, err := eval.Evaluate(qrels, cut, eval.Options{Complete: true})
	if errors.Is(err, eval.ErrNoQueries) {
		return Scores{}, nil
	}
	if err != nil {
		return Scores{}, err
	}
	return Scores{Queries: len(rep.PerQuery), MRR: rep.Mean["recip_rank"], Recall: rep.Mean["recall_10"]}, nil
}

// Qrels returns the set's judgements at level, grade 1.
func (s *Set) Qrels(level bundle.Level) eval.Qrels {
	q := eval.Qrels{}
	for _, x := range s.Queries {
		docs := x.Sections
		if level == bundle.LevelPage {
			docs = x.Pages
		}
		if len(docs) == 0 {
			continue
		}
		q[x.ID] = map[string]int{}
		for _, d := range docs {
			q[x.ID][d] = 1
		}
	}
	return q
}
