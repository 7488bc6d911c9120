package bundle

import (
	"bytes"
	"cmp"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sync"

	"github.com/blevesearch/bleve/v2"
	"github.com/blevesearch/bleve/v2/analysis"
	index "github.com/blevesearch/bleve_index_api"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
)

// Bundle is a bundle opened for searching. Its methods are safe for
// concurrent use until Close.
type Bundle struct {
	dir      string
	manifest *Manifest
	idx      bleve.Index
	analyzer analysis.Analyzer
	params   bm25Params
	passages *os.File
	lines    *lineTable // passage id -> its line in passages.jsonl
	scratch  sync.Pool  // *[]float64, one score per passage, all zero

	// The divergent copies of reports/duplicates.json, read on first use
	// by Query (see conflicts).
	conflictsOnce sync.Once
	conflictMap   conflictSet
	canonical     map[string]bool // ids of the canonical sides of divergent pairs
	conflictErr   error

	// The manifest's settings that Query and Context use, read once.
	settingsOnce sync.Once
	serving      servingSettings

	// The tokenizer Context counts with, made on first use.
	tokOnce sync.Once
	tok     *build.Tokenizer
	tokErr  error
}

// span is a line of passages.jsonl without its newline.
type span struct {
	off int64
	n   int
}

// next returns the offset of the line after s.
func (s span) next() int64 { return s.off + int64(s.n) + 1 }

// Hit is one search result: the passage and its score. Query also sets
// its freshness status at query time and the copies that disagree with it.
type Hit struct {
	build.Passage
	Score    float64      `json:"score"`
	Status   fresh.Status `json:"status,omitempty"`
	Conflict []Conflict   `json:"conflict,omitempty"`

	canonical bool // the canonical side of a divergent pair (Query)
}

// Open opens the bundle in dir for searching: it reads the manifest, the
// index statistics and the table of passages.jsonl's lines (LinesFile),
// and opens the index read-only; hits are read from passages.jsonl by id.
// A bundle without a usable table (made before LinesFile existed) is
// opened by reading passages.jsonl once to make it. Open does not verify
// hashes (see Verify).
func Open(dir string) (_ *Bundle, err error) {
	m, err := ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	st, err := readStats(filepath.Join(dir, filepath.FromSlash(StatsFile)))
	if err != nil {
		return nil, err
	}
	b := &Bundle{dir: dir, manifest: m, params: st.params(), analyzer: theAnalyzer()}
	defer func() {
		if err != nil {
			b.Close()
		}
	}()
	idx, err := bleve.OpenUsing(filepath.Join(dir, IndexDir), map[string]any{"read_only": true})
	if err != nil {
		return nil, fmt.Errorf("opening index of %s: %w", dir, err)
	}
	b.idx = idx
	f, err := os.Open(filepath.Join(dir, PassagesFile))
	if err != nil {
		return nil, err
	}
	b.passages = f
	fi, err := f.Stat()
	if err != nil {
		return nil, err
	}
	b.lines, _ = openLineTable(filepath.Join(dir, LinesFile), fi.Size())
	if b.lines == nil {
		if b.lines, _, err = scanLines(f); err != nil {
			return nil, fmt.Errorf("%s: %w", f.Name(), err)
		}
	}
	n, err := b.idx.DocCount()
	if err != nil {
		return nil, err
	}
	if int(n) != b.lines.len() || n != uint64(st.Docs) {
		return nil, fmt.Errorf("%s: index holds %d passages, index/stats.json %d, passages.jsonl %d", dir, n, st.Docs, b.lines.len())
	}
	return b, nil
}

// Manifest returns the bundle's manifest.
func (b *Bundle) Manifest() *Manifest { return b.manifest }

// Passage reads the passage with the given id from passages.jsonl.
func (b *Bundle) Passage(id string) (build.Passage, error) {
	var p build.Passage
	s, ok := b.lines.find(id)
	if !ok {
		return p, fmt.Errorf("%s: no passage %s", b.dir, id)
	}
	buf := make([]byte, s.n)
	if _, err := b.passages.ReadAt(buf, s.off); err != nil {
		return p, err
	}
	if err := json.Unmarshal(buf, &p); err != nil {
		return p, fmt.Errorf("%s: passage %s: %w", b.passages.Name(), id, err)
	}
	if p.ID != id {
		return p, fmt.Errorf("%s: passage %s: %s %v", b.dir, id, LinesFile, errLinesStale)
	}
	return p, nil
}

// Close releases the index and the passages file.
func (b *Bundle) Close() error {
	var errs []error
	if b.idx != nil {
		errs = append(errs, b.idx.Close())
		b.idx = nil
	}
	if b.passages != nil {
		errs = append(errs, b.passages.Close())
		b.passages = nil
	}
	if b.lines != nil {
		errs = append(errs, b.lines.close())
	}
	return errors.Join(errs...)
}

// Search returns the k passages that best match query, best first, ranked
// by BM25F over three fields. Passages that match none of the query's terms
// are not returned; a query with no terms left after analysis returns none.
//
// The query goes through the same analysis as the passages (kbcAnalyzer:
// words split at Unicode word boundaries, identifiers such as os.path.join,
// pg_stat_activity, Foo::bar or fooBar kept whole and also split into their
// parts, possessive 's removed, lower-cased, English stop words dropped,
// Porter-stemmed), so "installing" finds "install" and "path join" finds
// os.path.join. Each distinct resulting term t counts once. The score of
// passage d is
//
//	score(d) = Σ_t idf(t) · tf~(t, d) / (k1 + tf~(t, d))
//	tf~(t, d) = Σ_f w_f · tf_f(t, d) / ((1 − b) + b · dl_f(d) / avgdl_f)
//	idf(t) = ln(1 + (N − n(t) + 0.5) / (n(t) + 0.5))
//
// over the fields f = title (w = 2.0), heading (w = 1.5: the heading trail,
// headings joined, and the passage's defined terms, build.Passage.Terms)
// and text (w = 1.0), where tf_f(t, d) is how often t occurs in field f of
// d, dl_f(d) the number of tokens in that field of d (after analysis: stop
// words do not count, an identifier's parts do), avgdl_f the mean of dl_f
// over all N passages, n(t) the number of passages with t in any field,
// k1 = 1.2 and b = 0.75. That is BM25F as Robertson, Zaragoza and Taylor
// published it ("Simple BM25 Extension to Multiple Weighted Fields", 2004;
// restated in Robertson and Zaragoza, "The Probabilistic Relevance
// Framework: BM25 and Beyond", 2009, section 3.3): the fields' frequencies
// are weighted, length-normalised and summed before the one saturation,
// so a word in the title and again in the text does not count as two rare
// words; with Lucene's IDF, which stays positive for terms in over half the
// passages. Equal scores keep passages.jsonl order (path, line, id).
//
// Then the best max(k, 50) passages by that score are re-scored for
// nearness in the heading field: when a query has two or more distinct
// terms and a passage's heading field holds m ≥ 2 of them, the smallest
// window of that field's tokens that holds m of them spans s positions
// (s ≥ m), and the score is multiplied by 1 + 0.3 · (m/|Q|) · (m/s),
// |Q| the query's distinct terms. So a heading that holds all the
// question's words side by side gains 30%, one that scatters them less.
// The weight 0.3 is our judgement, measured on our question sets (every
// set's MRR@10 rose; the same bonus on the text field helped less and
// hurt some), not from a source.
//
// bleve computes the terms' postings; the arithmetic is ours, because
// bleve v2.6.3's own BM25 differs from the formula above (it scores
// √tf, takes the average field length from the number of distinct terms,
// rounded up, and multiplies a disjunction by boost·idf·query norm and a
// coordination factor); the package documentation has the details.
func (b *Bundle) Search(query string, k int) ([]Hit, error) {
	return b.search(query, k, true)
}

// Nearness re-scoring (see Search): the depth of the candidates re-scored
// and the weight of the bonus.
const (
	rescoreDepth = 50
	nearWeight   = 0.3
)

// search is Search, with the nearness re-scoring when near is set.
func (b *Bundle) search(query string, k int, near bool) ([]Hit, error) {
	if b.idx == nil {
		return nil, errors.New("search: bundle is closed")
	}
	terms := queryTerms(b.analyzer, query)
	if k <= 0 || len(terms) == 0 {
		return nil, nil
	}
	adv, err := b.idx.Advanced()
	if err != nil {
		return nil, err
	}
	r, err := adv.Reader()
	if err != nil {
		return nil, err
	}
	defer r.Close()
	acc, _ := b.scratch.Get().(*[]float64)
	if acc == nil || len(*acc) < 2*b.lines.len() {
		a := make([]float64, 2*b.lines.len())
		acc = &a
	}
	depth := k
	near = near && len(terms) >= 2
	if near {
		depth = max(k, rescoreDepth)
	}
	top, err := b.params.rank(r, terms, depth, acc)
	b.scratch.Put(acc)
	if err != nil {
		return nil, fmt.Errorf("search: %w", err)
	}
	if len(top) == 0 {
		return nil, nil
	}
	hits := make([]Hit, len(top))
	for i, s := range top {
		id, err := r.ExternalID(index.NewIndexInternalID(nil, s.doc))
		if err != nil {
			return nil, fmt.Errorf("search: %w", err)
		}
		if hits[i].Passage, err = b.Passage(id); err != nil {
			return nil, fmt.Errorf("search: %w", err)
		}
		hits[i].Score = s.score
	}
	if near {
		for i := range hits {
			hits[i].Score *= 1 + nearWeight*nearness(b.analyzer, headingText(&hits[i].Passage), terms)
		}
		// Stable: equal scores keep their order (passages.jsonl order).
		slices.SortStableFunc(hits, func(x, y Hit) int { return cmp.Compare(y.Score, x.Score) })
		hits = hits[:min(k, len(hits))]
	}
	return hits, nil
}

// nearness returns (m/|terms|)·(m/s) for the smallest window of text's
// analysed tokens that holds the most distinct terms, m of them, over s
// positions; 0 when m < 2. terms are distinct.
func nearness(a analysis.Analyzer, text string, terms [][]byte) float64 {
	type occ struct{ pos, term int }
	var occs []occ
	for _, tok := range a.Analyze([]byte(text)) {
		if i := slices.IndexFunc(terms, func(t []byte) bool { return bytes.Equal(t, tok.Term) }); i >= 0 {
			occs = append(occs, occ{tok.Position, i})
		}
	}
	slices.SortStableFunc(occs, func(x, y occ) int { return cmp.Compare(x.pos, y.pos) })
	count := make([]int, len(terms))
	m, s, distinct, l := 0, 0, 0, 0
	for r := range occs {
		if count[occs[r].term] == 0 {
			distinct++
		}
		count[occs[r].term]++
		for l < r && count[occs[l].term] > 1 { // drop repeats on the left
			count[occs[l].term]--
			l++
		}
		span := occs[r].pos - occs[l].pos + 1
		if distinct > m || distinct == m && span < s {
			m, s = distinct, span
		}
	}
	if m < 2 {
		return 0
	}
	return float64(m) / float64(len(terms)) * float64(m) / float64(max(s, m))
}

// queryTerms analyses query and returns its distinct terms in byte order
// (a fixed order keeps the floating-point sums, and so the scores, the same
// from run to run).
func queryTerms(a analysis.Analyzer, query string) [][]byte {
	var terms [][]byte
	for _, tok := range a.Analyze([]byte(query)) {
		terms = append(terms, tok.Term)
	}
	slices.SortFunc(terms, bytes.Compare)
	return slices.CompactFunc(terms, bytes.Equal)
}

// bm25Params are the collection statistics and parameters of the ranking.
type bm25Params struct {
	k1, b  float64
	docs   int // N: passages
	fields []fieldParams
}

type fieldParams struct {
	name   string
	weight float64 // w_f
	avgdl  float64 // avgdl_f
}

func (s *indexStats) params() bm25Params {
	p := bm25Params{k1: s.K1, b: s.B, docs: s.Docs}
	for _, f := range searchFields {
		p.fields = append(p.fields, fieldParams{name: f, weight: s.Boosts[f], avgdl: s.avgdl(f)})
	}
	return p
}

// halves splits scratch space into its two equal halves.
func halves(s []float64) (a, b []float64) {
	n := len(s) / 2
	return s[:n:n], s[n:]
}

type scoredDoc struct {
	doc   uint64 // internal document number: position in passages.jsonl
	score float64
}

// rank scores every passage that holds any of terms and returns the best k,
// best first; equal scores in document order. *accp is scratch space of at
// least two float64 per passage, all zero, grown when the index numbers its
// documents further, and left all zero: the first half holds the scores,
// the second one term's weighted frequency (tf~ of Search's formula).
func (p *bm25Params) rank(r index.IndexReader, terms [][]byte, k int, accp *[]float64) ([]scoredDoc, error) {
	acc, wtf := halves(*accp)
	var touched, termDocs []uint64
	ctx := context.Background()
	var tfd index.TermFieldDoc
	defer func() {
		for _, d := range touched {
			acc[d] = 0
		}
		for _, d := range termDocs {
			wtf[d] = 0
		}
	}()
	for _, t := range terms {
		termDocs = termDocs[:0]
		for _, f := range p.fields {
			if f.weight == 0 || f.avgdl == 0 {
				continue
			}
			// w_f · tf / (1 − b + b · dl/avgdl_f), with the denominator
			// split.
			norm := 1 - p.b
			perLen := p.b / f.avgdl
			tfr, err := r.TermFieldReader(ctx, t, f.name, true, true, false)
			if err != nil {
				return nil, err
			}
			for {
				d, err := tfr.Next(&tfd)
				if err != nil {
					tfr.Close()
					return nil, err
				}
				if d == nil {
					break
				}
				doc := d.ID.Value()
				if doc >= uint64(len(acc)) {
					// An index updated in place numbers its documents
					// past the passage count (deleted ones keep theirs).
					grown := make([]float64, 2*(doc+1+doc/4))
					na, nw := halves(grown)
					copy(na, acc)
					copy(nw, wtf)
					acc, wtf = na, nw
					*accp = grown
				}
				if wtf[doc] == 0 {
					termDocs = append(termDocs, doc)
				}
				wtf[doc] += f.weight * float64(d.Freq) / (norm + perLen*fieldLength(d.Norm))
			}
			tfr.Close()
		}
		// n(t): the passages with t in any field.
		n := float64(len(termDocs))
		idf := math.Log(1 + (float64(p.docs)-n+0.5)/(n+0.5))
		for _, doc := range termDocs {
			x := wtf[doc]
			wtf[doc] = 0
			if acc[doc] == 0 {
				touched = append(touched, doc)
			}
			acc[doc] += idf * x / (p.k1 + x)
		}
		termDocs = termDocs[:0]
	}
	// The best k in a min-heap whose root is the worst kept so far.
	worse := func(a, b scoredDoc) bool { return a.score < b.score || a.score == b.score && a.doc > b.doc }
	top := make([]scoredDoc, 0, min(k, len(touched)))
	for _, d := range touched {
		s := scoredDoc{d, acc[d]}
		if len(top) < k {
			top = append(top, s)
			for i := len(top) - 1; i > 0; { // sift up
				parent := (i - 1) / 2
				if !worse(top[i], top[parent]) {
					break
				}
				top[i], top[parent] = top[parent], top[i]
				i = parent
			}
			continue
		}
		if !worse(top[0], s) {
			continue
		}
		top[0] = s
		for i := 0; ; { // sift down
			l, m := 2*i+1, i
			if l < len(top) && worse(top[l], top[m]) {
				m = l
			}
			if l+1 < len(top) && worse(top[l+1], top[m]) {
				m = l + 1
			}
			if m == i {
				break
			}
			top[i], top[m] = top[m], top[i]
			i = m
		}
	}
	slices.SortFunc(top, func(a, b scoredDoc) int {
		return cmp.Or(cmp.Compare(b.score, a.score), cmp.Compare(a.doc, b.doc))
	})
	return top, nil
}

// fieldLength recovers a field's length in tokens from the norm bleve
// reports. zap stores the exact length; its Posting.Norm returns
// float64(float32(1/√len)) (zapx v15 posting.go), whose relative error of at
// most 2⁻²⁴ puts 1/norm² within 0.5 of the length for any length below 2²¹,
// so rounding gives it back exactly.
func fieldLength(norm float64) float64 {
	return math.Round(1 / (norm * norm))
}
