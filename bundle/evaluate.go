package bundle

import (
	"cmp"
	"fmt"
	"io"
	"slices"
	"strings"
	"sync/atomic"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle/eval"
	"github.com/kbc-project/kbc/internal/atomicfile"
	"github.com/kbc-project/kbc/internal/parallel"
)

// Level is what a hit counts as when it is judged: its section or its page.
type Level string

// The levels a question set can be judged at.
const (
	LevelSection Level = "section" // docid path#anchor, or path for a passage with no anchor
	LevelPage    Level = "page"    // docid path
)

// ParseLevel returns the Level named s ("" is LevelSection).
func ParseLevel(s string) (Level, error) {
	switch Level(s) {
	case "", LevelSection:
		return LevelSection, nil
	case LevelPage:
		return LevelPage, nil
	}
	return "", fmt.Errorf("level %q is neither section nor page", s)
}

// DocID returns the document id that p stands for at level, as a qrels
// file names it: path#anchor at section level (just path when p has no
// anchor), path at page level.
func DocID(p *build.Passage, level Level) string {
	if level == LevelPage {
		return p.Path
	}
	return p.Ref()
}

// DefaultEvalDepth is how many passages EvalOptions fetches per question
// when Depth is 0: enough that after several passages of one section are
// counted once, recall_20 and map still see a full ranking.
const DefaultEvalDepth = 100

// EvalOptions say how questions are run on a bundle. The zero value runs
// at section level, DefaultEvalDepth passages deep.
type EvalOptions struct {
	Level Level // LevelSection when ""
	Depth int   // passages fetched per question; DefaultEvalDepth when 0
	// Progress, when set, is called after each search with the number done
	// and the total, from several goroutines at once.
	Progress func(done, total int)
}

// searchAll runs each query on b, on several goroutines, and returns the
// documents its hits stand for (collapse), reporting progress.
func (b *Bundle) searchAll(queries []string, level Level, opt EvalOptions) ([][]eval.Result, error) {
	results := make([][]eval.Result, len(queries))
	errs := make([]error, len(queries))
	var done atomic.Int64
	parallel.For(len(queries), func(i int) {
		hits, err := b.Search(queries[i], opt.depth())
		if err != nil {
			errs[i] = err
			return
		}
		results[i] = collapse(hits, level)
		if opt.Progress != nil {
			opt.Progress(int(done.Add(1)), len(queries))
		}
	})
	for i, err := range errs {
		if err != nil {
			return nil, fmt.Errorf("searching %q: %w", queries[i], err)
		}
	}
	return results, nil
}

func (o EvalOptions) depth() int {
	if o.Depth > 0 {
		return o.Depth
	}
	return DefaultEvalDepth
}

// RunQueries searches b for each query, Depth passages deep, and returns
// the documents the hits stand for at Level: a document several passages
// stand for appears once, at its best passage's rank and score. Every query
// has an entry, empty when nothing matched. Queries run on several
// goroutines. Scoring ranks the results as trec_eval does (eval.Rank), so
// two documents with exactly equal scores are taken in descending docid
// order, whatever order Search gave them in.
func (b *Bundle) RunQueries(qs []eval.Query, opt EvalOptions) (eval.Run, error) {
	level, err := ParseLevel(string(opt.Level))
	if err != nil {
		return nil, err
	}
	texts := make([]string, len(qs))
	for i, q := range qs {
		texts[i] = q.Text
	}
	results, err := b.searchAll(texts, level, opt)
	if err != nil {
		return nil, err
	}
	run := make(eval.Run, len(qs))
	for i, q := range qs {
		run[q.ID] = results[i]
	}
	return run, nil
}

// collapse turns hits, best first, into one result per document: the
// first hit of each, which has its best score.
func collapse(hits []Hit, level Level) []eval.Result {
	out := []eval.Result{}
	seen := make(map[string]bool, len(hits))
	for i := range hits {
		id := DocID(&hits[i].Passage, level)
		if !seen[id] {
			seen[id] = true
			out = append(out, eval.Result{Doc: id, Score: hits[i].Score})
		}
	}
	return out
}

// Evaluate runs qs on b (see RunQueries) and scores the results against
// qrels with eval.Evaluate. Every question that has judgements is averaged,
// a question with no hit scoring 0; questions with no judgements are
// skipped and listed in the report's Unjudged; judged queries that are not
// among qs play no part. It returns the run too, for writing.
func (b *Bundle) Evaluate(qs []eval.Query, qrels eval.Qrels, opt EvalOptions) (*eval.Report, eval.Run, error) {
	run, err := b.RunQueries(qs, opt)
	if err != nil {
		return nil, nil, err
	}
	asked := make(eval.Qrels, len(qs))
	for _, q := range qs {
		if j, ok := qrels[q.ID]; ok {
			asked[q.ID] = j
		}
	}
	rep, err := eval.Evaluate(asked, run, eval.Options{})
	return rep, run, err
}

// Findability is how well each section of a bundle is found by its own
// heading trail, and each defined term by its own text (see
// Bundle.Findability).
type Findability struct {
	Level       Level `json:"level"`
	Sections    int   `json:"sections"`       // heading trails asked
	SectionsAt1 int   `json:"sections_at_1"`  // found at rank 1
	SectionsTop int   `json:"sections_top10"` // found in the top 10
	Terms       int   `json:"terms"`
	TermsAt1    int   `json:"terms_at_1"`
	TermsTop    int   `json:"terms_top10"`
	// Missed lists what was not found at rank 1, worst first: not found in
	// the top Depth, then by rank from the lowest, then by docid.
	Missed []Miss `json:"missed"`
}

// Miss is a section or term not found at rank 1 by its own words.
type Miss struct {
	Kind  string `json:"kind"`  // "section" or "term"
	DocID string `json:"docid"` // the section it should find
	Query string `json:"query"` // its heading trail or term
	Rank  int    `json:"rank"`  // its rank among documents; 0 when not in the top Depth passages
	Top   string `json:"top"`   // the document found at rank 1 instead; "" when nothing matched
}

// Share returns n/of, or 0 when of is 0.
func Share(n, of int) float64 {
	if of == 0 {
		return 0
	}
	return float64(n) / float64(of)
}

// Findability asks b for each section by its own heading trail (the
// page title, then the trail's headings, joined by spaces; see selfQuery), and
// for each defined term (build.Passage.Terms) by the term, and records the
// rank at which the section holding it comes back, at opt.Level (a term's
// target is the section of the passage it starts in). A section that its
// own title does not find is usually one with a vague heading ("Example",
// "Notes") or a copy of another.
func (b *Bundle) Findability(opt EvalOptions) (*Findability, error) {
	level, err := ParseLevel(string(opt.Level))
	if err != nil {
		return nil, err
	}
	ps, err := ReadPassages(b.dir)
	if err != nil {
		return nil, err
	}
	type ask struct {
		kind, doc, query string
	}
	var asks []ask
	seen := make(map[ask]bool)
	add := func(a ask) {
		if strings.TrimSpace(a.query) != "" && !seen[a] {
			seen[a] = true
			asks = append(asks, a)
		}
	}
	for i := range ps {
		p := &ps[i]
		trail := selfQuery(p)
		doc := DocID(p, level)
		add(ask{"section", doc, trail})
		for _, t := range p.Terms {
			add(ask{"term", doc, t.Text})
		}
	}
	texts := make([]string, len(asks))
	for i, a := range asks {
		texts[i] = a.query
	}
	results, err := b.searchAll(texts, level, opt)
	if err != nil {
		return nil, err
	}
	f := &Findability{Level: level, Missed: []Miss{}}
	for i, a := range asks {
		res := results[i]
		r := 1 + slices.IndexFunc(res, func(x eval.Result) bool { return x.Doc == a.doc })
		top := ""
		if len(res) > 0 {
			top = res[0].Doc
		}
		at1, inTop := r == 1, r >= 1 && r <= 10
		if a.kind == "section" {
			f.Sections++
			f.SectionsAt1 += b2i(at1)
			f.SectionsTop += b2i(inTop)
		} else {
			f.Terms++
			f.TermsAt1 += b2i(at1)
			f.TermsTop += b2i(inTop)
		}
		if !at1 {
			f.Missed = append(f.Missed, Miss{a.kind, a.doc, a.query, r, top})
		}
	}
	slices.SortFunc(f.Missed, func(x, y Miss) int {
		return cmp.Or(
			cmp.Compare(missOrder(x.Rank), missOrder(y.Rank)),
			cmp.Compare(x.DocID, y.DocID),
			cmp.Compare(x.Kind, y.Kind),
			cmp.Compare(x.Query, y.Query))
	})
	return f, nil
}

// selfQuery is the words a section is asked by: its heading trail, led by
// the page title unless the trail already starts with it (a page whose
// title comes from front matter has trails such as "Usage" alone, which
// say nothing of the page).
func selfQuery(p *build.Passage) string {
	words := p.Heading
	if p.Title != "" && (len(words) == 0 || words[0] != p.Title) {
		words = append([]string{p.Title}, words...)
	}
	return strings.Join(words, " ")
}

// missOrder sorts not found (rank 0) first, then the lowest ranks.
func missOrder(rank int) int {
	if rank == 0 {
		return -1 << 31
	}
	return -rank
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// WriteRunFile writes run to the file path in the TREC run format (see
// eval.WriteRun) with the tag "kbc", atomically: the file is written
// beside path under a temporary name, flushed and renamed.
func WriteRunFile(path string, run eval.Run) error {
	return atomicfile.Write(path, atomicfile.Flush, func(w io.Writer) error {
		if err := eval.WriteRun(w, run, "kbc"); err != nil {
			return fmt.Errorf("writing %s: %w", path, err)
		}
		return nil
	})
}
