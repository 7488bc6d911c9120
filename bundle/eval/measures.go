package eval

import (
	"errors"
	"math"
	"slices"
	"strconv"
)

// measures lists the measures in the order reports show them.
var measures = [...]string{
	"map", "recip_rank",
	"P_1", "P_3", "P_5", "P_10",
	"recall_5", "recall_10", "recall_20",
	"ndcg_cut_5", "ndcg_cut_10", "ndcg_cut_20",
}

// Cutoffs of the measures at a rank.
var (
	precisionCuts = [...]int{1, 3, 5, 10}
	recallCuts    = [...]int{5, 10, 20}
	ndcgCuts      = [...]int{5, 10, 20}
)

// Measures returns the names of the measures Score computes, in the order
// reports show them, as trec_eval names them.
func Measures() []string { return slices.Clone(measures[:]) }

// IsMeasure reports whether name is one of Measures.
func IsMeasure(name string) bool { return slices.Contains(measures[:], name) }

// Scores maps a measure name to its value.
type Scores map[string]float64

// Relevant reports whether a grade counts as relevant: trec_eval's default
// relevance level is 1 (trec_eval.c, epi.relevance_level = 1).
func Relevant(grade int) bool { return grade >= 1 }

// Score computes every measure for one query: judged maps document id to
// grade, results are the retrieved documents in any order (Score ranks them
// with Rank). Documents retrieved but not judged are not relevant.
func Score(judged map[string]int, results []Result) Scores {
	ranked := Rank(results)
	s := make(Scores, len(measures))
	numRel := 0
	var ideal []int // grades above 0, best first
	for _, g := range judged {
		if Relevant(g) {
			numRel++
		}
		if g > 0 {
			ideal = append(ideal, g)
		}
	}
	slices.SortFunc(ideal, func(a, b int) int { return b - a })

	// One pass down the ranking: relevant so far, average precision, the
	// first relevant rank, and the discounted gain so far.
	relSoFar := 0
	sumPrec := 0.0
	dcg := 0.0
	relAt := make([]int, len(ranked)+1) // relevant in the top i
	dcgAt := make([]float64, len(ranked)+1)
	s["recip_rank"] = 0
	for i, r := range ranked {
		g := judged[r.Doc] // absent: not judged, not relevant
		if Relevant(g) {
			relSoFar++
			sumPrec += float64(relSoFar) / float64(i+1)
			if relSoFar == 1 {
				s["recip_rank"] = 1 / float64(i+1)
			}
		}
		if g > 0 {
			dcg += float64(g) / math.Log2(float64(i+2))
		}
		relAt[i+1] = relSoFar
		dcgAt[i+1] = dcg
	}
	at := func(k int) (int, float64) { // relevant and gain in the top k
		k = min(k, len(ranked))
		return relAt[k], dcgAt[k]
	}

	s["map"] = 0
	if numRel > 0 {
		s["map"] = sumPrec / float64(numRel)
	}
	for _, k := range precisionCuts {
		rel, _ := at(k)
		s[pName(k)] = float64(rel) / float64(k)
	}
	for _, k := range recallCuts {
		rel, _ := at(k)
		v := 0.0
		if numRel > 0 {
			v = float64(rel) / float64(numRel)
		}
		s[rName(k)] = v
	}
	for _, k := range ndcgCuts {
		_, d := at(k)
		idcg := 0.0
		for i, g := range ideal[:min(k, len(ideal))] {
			idcg += float64(g) / math.Log2(float64(i+2))
		}
		if idcg > 0 { // trec_eval leaves the plain DCG (then 0) otherwise
			d /= idcg
		}
		s[nName(k)] = d
	}
	return s
}

func pName(k int) string { return "P_" + strconv.Itoa(k) }
func rName(k int) string { return "recall_" + strconv.Itoa(k) }
func nName(k int) string { return "ndcg_cut_" + strconv.Itoa(k) }

// Options change which queries Evaluate averages over. The zero value is
// trec_eval's default.
type Options struct {
	// Complete averages over every judged query, as trec_eval -c does: a
	// judged query with no results scores 0 on every measure.
	Complete bool
}

// Report is the outcome of Evaluate. Only Mean and PerQuery are in its
// JSON form.
type Report struct {
	// Mean is each measure averaged over the queries in PerQuery.
	Mean Scores `json:"mean"`
	// PerQuery holds the scores of each query that was averaged.
	PerQuery map[string]Scores `json:"per_query"`
	// Unjudged lists, sorted, the queries of the run with no judgements:
	// they are skipped.
	Unjudged []string `json:"-"`
	// NotRun lists, sorted, the judged queries with no results: skipped
	// unless Options.Complete, when they score 0.
	NotRun []string `json:"-"`
	// NoRelevant lists, sorted, the averaged queries none of whose judged
	// documents is relevant; they score 0 on every measure.
	NoRelevant []string `json:"-"`
}

// ErrNoQueries is returned by Evaluate when no query has both judgements
// and results (trec_eval stops too).
var ErrNoQueries = errors.New("no query has both judgements and results")

// Evaluate scores every query of run that is judged in qrels and averages
// the scores (see the package doc for which queries count).
func Evaluate(qrels Qrels, run Run, opt Options) (*Report, error) {
	rep := &Report{Mean: make(Scores), PerQuery: make(map[string]Scores)}
	for qid, results := range run {
		judged, ok := qrels[qid]
		if !ok {
			rep.Unjudged = append(rep.Unjudged, qid)
			continue
		}
		rep.PerQuery[qid] = Score(judged, results)
	}
	for qid, judged := range qrels {
		if _, ok := run[qid]; !ok {
			rep.NotRun = append(rep.NotRun, qid)
			if !opt.Complete {
				continue
			}
			rep.PerQuery[qid] = Score(judged, nil)
		}
		if !slices.ContainsFunc(valuesOf(judged), Relevant) {
			rep.NoRelevant = append(rep.NoRelevant, qid)
		}
	}
	slices.Sort(rep.Unjudged)
	slices.Sort(rep.NotRun)
	slices.Sort(rep.NoRelevant)
	if len(rep.PerQuery) == 0 {
		return rep, ErrNoQueries
	}
	// Sum in query order so that the mean does not depend on map order
	// in its last bits.
	qids := make([]string, 0, len(rep.PerQuery))
	for qid := range rep.PerQuery {
		qids = append(qids, qid)
	}
	slices.Sort(qids)
	for _, m := range measures {
		sum := 0.0
		for _, qid := range qids {
			sum += rep.PerQuery[qid][m]
		}
		rep.Mean[m] = sum / float64(len(qids))
	}
	return rep, nil
}

func valuesOf(m map[string]int) []int {
	v := make([]int, 0, len(m))
	for _, g := range m {
		v = append(v, g)
	}
	return v
}

// Drop is a measure whose mean fell from Old to New.
type Drop struct {
	Measure  string
	Old, New float64
}

// Drops compares the means of a baseline (old) and a new evaluation (cur)
// on the named measures, and returns, in the order of names, those that
// fell by more than tolerance. A measure missing from either is skipped.
func Drops(old, cur Scores, names []string, tolerance float64) []Drop {
	var out []Drop
	for _, m := range names {
		o, ok1 := old[m]
		c, ok2 := cur[m]
		if ok1 && ok2 && o-c > tolerance {
			out = append(out, Drop{m, o, c})
		}
	}
	return out
}
