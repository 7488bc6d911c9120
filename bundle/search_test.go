package bundle

import (
	"bytes"
	"cmp"
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/blevesearch/bleve/v2"
	"github.com/blevesearch/bleve/v2/analysis/lang/en"
	"github.com/blevesearch/bleve/v2/registry"
	"github.com/blevesearch/bleve/v2/search/query"
	index "github.com/blevesearch/bleve_index_api"

	"github.com/kbc-project/kbc/build"
)

// TestToyWordsUnchanged checks the premise of the hand computation below:
// the "en" analyzer keeps every word of the toy corpus as it is.
func TestToyWordsUnchanged(t *testing.T) {
	a, err := registry.NewCache().AnalyzerNamed(en.AnalyzerName)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range strings.Fields("truck seal door lamp rope cargo crew van map fuel yard depot dock") {
		toks := a.Analyze([]byte(w))
		if len(toks) != 1 || string(toks[0].Term) != w {
			t.Errorf("%q analyses to %v", w, toks)
		}
	}
}

// TestBM25HandComputed checks Search's scores against BM25F computed by
// hand (with a calculator, from the formula) for the toy corpus
// (toyPassages).
//
// Formula: BM25F as Robertson, Zaragoza and Taylor give it ("Simple BM25
// Extension to Multiple Weighted Fields", CIKM 2004) and Robertson and
// Zaragoza restate it ("The Probabilistic Relevance Framework: BM25 and
// Beyond", 2009, section 3.3): per passage and term,
// tf~ = Σ_f w_f · tf_f / ((1 − b) + b · dl_f/avgdl_f), and the term adds
// idf · tf~ / (k1 + tf~), with one idf per term over passages, here
// Lucene's ln(1 + (N − n + 0.5)/(n + 0.5)), n the passages with the term in
// any field. k1 = 1.2, b = 0.75; w = 2.0 title, 1.5 heading, 1.0 text.
//
// Field statistics (avgdl: tokens over all N = 5 passages):
//
//	field    passages: tokens                    tokens  avgdl
//	title    a1 b1 c1 d1 e1                        5     1
//	heading  b1 ("cargo") c2 ("cargo door") d1     4     0.8
//	text     a3 b5 c2 d1 e6                       17     3.4
//
// Per field, w · tf / B with B = 0.25 + 0.75 · dl/avgdl; per passage the sum
// tf~ and the contribution idf · tf~/(1.2 + tf~):
//
//	query "truck" (n = 3, idf = ln(1 + 2.5/3.5) = 0.538996501)
//	a  text tf 2 dl 3: B 0.911764706, 2.193548387   tf~ 2.193548387  0.348400780
//	b  text tf 1 dl 5: B 1.352941176, 0.739130435   tf~ 0.739130435  0.205447097
//	d  text tf 1 dl 1: B 0.470588235, 2.125000000   tf~ 2.125000000  0.344471448
//	ranking a 0.348400780, d 0.344471448, b 0.205447097 (one field:
//	BM25F is BM25, and these equal the per-field scores)
//
//	query "the doors and seals" (terms door, seal; "the", "and" are stop
//	words; both n = 2, idf = ln(1 + 3.5/2.5) = 0.875468737)
//	door b  text 0.739130435                        tf~ 0.739130435  0.333698846
//	door c  heading tf 1 dl 2: B 2.125, 1.5/2.125 = 0.705882353
//	        text tf 1 dl 2: B 0.691176471, 1.446808511
//	                                                tf~ 2.152690864  0.562119691
//	seal a  text tf 1 dl 3: 1.096774194             tf~ 1.096774194  0.418060914
//	seal b  text 0.739130435                        tf~ 0.739130435  0.333698846
//	ranking b 0.667397692, c 0.562119691, a 0.418060914
//
//	query "cargo depot" (both n = 2, idf 0.875468737)
//	cargo b heading tf 1 dl 1: B 1.1875, 1.263157895 tf~ 1.263157895 0.448958327
//	cargo c heading 0.705882353 + text 1.446808511   tf~ 2.152690864 0.562119691
//	depot c title tf 1 dl 1: B 1, 2.0                tf~ 2.0         0.547167961
//	depot d title 2.0                                tf~ 2.0         0.547167961
//	ranking c 1.109287652, d 0.547167961, b 0.448958327
//
// The second query shows the saturation BM25F adds: with per-field sums, c's
// "door" in heading and text scored 0.555 + 0.479 = 1.034 and beat b; now
// the two occurrences saturate together (0.562) and b, which holds both
// words, ranks first.
//
// One line worked through: "door" in c: heading B = 0.25 + 0.75·2/0.8 =
// 2.125, 1.5·1/2.125 = 0.7058824; text B = 0.25 + 0.75·2/3.4 = 0.6911765,
// 1/0.6911765 = 1.4468085; tf~ = 2.1526909; 2.1526909/3.3526909 = 0.6420777;
// · 0.8754687 = 0.5621197.
func TestBM25HandComputed(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "toy")
	mustWrite(t, dir, &Input{Passages: toyPassages()})
	b := mustOpen(t, dir)
	type hit struct {
		id    string
		score float64
	}
	tests := []struct {
		query string
		want  []hit
	}{
		{"truck", []hit{{"a", 0.348400780}, {"d", 0.344471448}, {"b", 0.205447097}}},
		{"the doors and seals", []hit{{"b", 0.667397692}, {"c", 0.562119691}, {"a", 0.418060914}}},
		{"cargo depot", []hit{{"c", 1.109287652}, {"d", 0.547167961}, {"b", 0.448958327}}},
	}
	for _, tt := range tests {
		t.Run(tt.query, func(t *testing.T) {
			hits, err := b.Search(tt.query, 10)
			if err != nil {
				t.Fatal(err)
			}
			if len(hits) != len(tt.want) {
				t.Fatalf("got %d hits, want %d: %+v", len(hits), len(tt.want), hits)
			}
			for i, h := range hits {
				w := tt.want[i]
				// The table's 9 decimals are its precision.
				if h.ID != w.id || math.Abs(h.Score-w.score) > 1e-9 {
					t.Errorf("hit %d: got %s %.9f, want %s %.9f", i, h.ID, h.Score, w.id, w.score)
				}
			}
		})
	}
}

// TestAverageLengthMatters shows, on the toy corpus, that bleve's own
// average field length would change the ranking: for the text field bleve
// v2.6.3 takes ceil(distinct terms / documents) = ceil(10/5) = 2 instead of
// the true 3.4 tokens, and with it the one-word passage d outranks a, which
// holds "truck" twice in three words:
//
//	avgdl 2:  a = idf · 2/(2 + 1.2·(0.25 + 0.75·3/2)) = idf · 0.547945
//	          d = idf · 1/(1 + 1.2·(0.25 + 0.75·1/2)) = idf · 0.571429
func TestAverageLengthMatters(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "toy")
	mustWrite(t, dir, &Input{Passages: toyPassages()})
	b := mustOpen(t, dir)
	adv, err := b.idx.Advanced()
	if err != nil {
		t.Fatal(err)
	}
	r, err := adv.Reader()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	card, err := r.(index.BM25Reader).FieldCardinality(fieldText)
	if err != nil {
		t.Fatal(err)
	}
	// search/searcher/search_term.go, bm25ScoreMetrics.
	bleveAvg := math.Ceil(float64(card) / float64(b.params.docs))
	if card != 10 || bleveAvg != 2 {
		t.Fatalf("text field: %d distinct terms, bleve's avgdl %v; want 10 and 2", card, bleveAvg)
	}
	ids := func(p bm25Params) []string {
		acc := make([]float64, 10)
		top, err := p.rank(r, [][]byte{[]byte("truck")}, 3, &acc)
		if err != nil {
			t.Fatal(err)
		}
		var out []string
		for _, s := range top {
			id, err := r.ExternalID(index.NewIndexInternalID(nil, s.doc))
			if err != nil {
				t.Fatal(err)
			}
			out = append(out, id)
		}
		return out
	}
	ours := ids(b.params)
	unfixed := b.params
	unfixed.fields = slices.Clone(b.params.fields)
	unfixed.fields[2].avgdl = bleveAvg
	theirs := ids(unfixed)
	if want := []string{"a", "d", "b"}; !slices.Equal(ours, want) {
		t.Errorf("true avgdl ranks %v, want %v", ours, want)
	}
	if want := []string{"d", "a", "b"}; !slices.Equal(theirs, want) {
		t.Errorf("bleve's avgdl ranks %v, want %v", theirs, want)
	}
}

// TestBleveNativeDiffers documents that bleve's own BM25 scoring of the same
// index ranks differently: it puts d first for "truck" (√tf and its average
// length both favour the short passage).
func TestBleveNativeDiffers(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "toy")
	mustWrite(t, dir, &Input{Passages: toyPassages()})
	b := mustOpen(t, dir)
	q := query.NewMatchQuery("truck")
	q.SetField(fieldText)
	res, err := b.idx.SearchInContext(context.Background(), bleve.NewSearchRequest(q))
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, h := range res.Hits {
		got = append(got, h.ID)
	}
	if want := []string{"d", "a", "b"}; !slices.Equal(got, want) {
		t.Errorf("bleve ranks %v, want %v", got, want)
	}
	ours, err := b.Search("truck", 3)
	if err != nil {
		t.Fatal(err)
	}
	if ours[0].ID != "a" {
		t.Errorf("Search ranks %s first, want a", ours[0].ID)
	}
}

// TestStatsMatchPostings checks index/stats.json, counted from the analysed
// fields at build time, against the index itself: the sum of the term
// frequencies of every posting of a field is its token count, and the
// passages seen in any posting are those with the field.
func TestStatsMatchPostings(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "gen")
	ps := genPassages(1200, 7) // two segments, merged
	mustWrite(t, dir, &Input{Passages: ps})
	st, err := readStats(filepath.Join(dir, filepath.FromSlash(StatsFile)))
	if err != nil {
		t.Fatal(err)
	}
	b := mustOpen(t, dir)
	adv, _ := b.idx.Advanced()
	r, err := adv.Reader()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	ctx := context.Background()
	for _, f := range searchFields {
		t.Run(f, func(t *testing.T) {
			dict, err := r.FieldDict(f)
			if err != nil {
				t.Fatal(err)
			}
			defer dict.Close()
			var got fieldStats
			seen := map[uint64]bool{}
			lens := map[uint64]uint64{}     // sum of term frequencies
			normLen := map[uint64]float64{} // length from the norm
			var tfd index.TermFieldDoc
			for {
				e, err := dict.Next()
				if err != nil {
					t.Fatal(err)
				}
				if e == nil {
					break
				}
				tfr, err := r.TermFieldReader(ctx, []byte(e.Term), f, true, true, false)
				if err != nil {
					t.Fatal(err)
				}
				for {
					d, err := tfr.Next(&tfd)
					if err != nil {
						t.Fatal(err)
					}
					if d == nil {
						break
					}
					got.Tokens += int(d.Freq)
					doc := d.ID.Value()
					lens[doc] += d.Freq
					normLen[doc] = fieldLength(d.Norm)
					if !seen[doc] {
						seen[doc] = true
						got.Docs++
					}
				}
				tfr.Close()
			}
			if got != st.Fields[f] {
				t.Errorf("postings give %+v, stats.json %+v", got, st.Fields[f])
			}
			for doc, n := range lens {
				if normLen[doc] != float64(n) {
					t.Errorf("passage %d: norm gives length %v, its postings %d", doc, normLen[doc], n)
				}
			}
		})
	}
}

// TestFieldLength checks that rounding 1/norm² gives back every length below
// 2²¹ from the norm zap reports, float64(float32(1/√len)) (zapx v15
// posting.go, Posting.Norm).
func TestFieldLength(t *testing.T) {
	for n := 1; n < 1<<21; n++ {
		norm := float64(float32(1.0 / math.Sqrt(float64(n))))
		if got := fieldLength(norm); got != float64(n) {
			t.Fatalf("length %d comes back as %v", n, got)
		}
	}
}

func TestSearchEdges(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "toy")
	mustWrite(t, dir, &Input{Passages: toyPassages()})
	b := mustOpen(t, dir)
	tests := []struct {
		name  string
		query string
		k     int
		want  []string
	}{
		{"k zero", "truck", 0, nil},
		{"k cuts", "truck", 2, []string{"a", "d"}},
		{"stop words only", "the and of", 5, nil},
		{"unknown word", "zeppelin", 5, nil},
		{"empty", "", 5, nil},
		{"case and plural", "TRUCKS", 1, []string{"a"}},
		{"punctuation", "truck, (seal)!", 1, []string{"a"}},
		{"repeated term counts once", "truck truck truck", 3, []string{"a", "d", "b"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			hits, err := b.Search(tt.query, tt.k)
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, h := range hits {
				got = append(got, h.ID)
			}
			if !slices.Equal(got, tt.want) {
				t.Errorf("got %v, want %v", got, tt.want)
			}
		})
	}
	// Repeating a term does not change its score.
	one, _ := b.Search("truck", 1)
	three, _ := b.Search("truck truck truck", 1)
	if one[0].Score != three[0].Score {
		t.Errorf("repeated term: %v != %v", three[0].Score, one[0].Score)
	}
	if err := b.Close(); err != nil {
		t.Fatal(err)
	}
	if _, err := b.Search("truck", 1); err == nil {
		t.Error("search on a closed bundle did not fail")
	}
}

func TestSearchStemming(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "b")
	mustWrite(t, dir, &Input{Passages: []build.Passage{
		mkPassage("install", "install.md", 1, "Setup", []string{"Install the agent"}, "Run the installer on each depot computer."),
		mkPassage("other", "other.md", 1, "Other", nil, "Nothing to see."),
	}})
	b := mustOpen(t, dir)
	hits, err := b.Search("installing", 5)
	if err != nil {
		t.Fatal(err)
	}
	if len(hits) != 1 || hits[0].ID != "install" {
		t.Errorf("got %+v", hits)
	}
}

func TestSearchEmptyBundle(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "empty")
	m := mustWrite(t, dir, &Input{})
	if m.Counts["passages"] != 0 {
		t.Errorf("counts %v", m.Counts)
	}
	b := mustOpen(t, dir)
	hits, err := b.Search("anything", 5)
	if err != nil || hits != nil {
		t.Errorf("got %v, %v", hits, err)
	}
}

// FuzzSearch checks Search's invariants on the toy corpus for any query:
// no error, at most k hits, scores positive and falling, ties in
// passages.jsonl order, each hit holding at least one of the query's terms.
func FuzzSearch(f *testing.F) {
	for _, s := range []string{"truck", "the doors and seals", "cargo depot", "", "TRUCKS!", "ünïcödé 日本語", "a\x00b", "door door"} {
		f.Add(s, 3)
	}
	dir := filepath.Join(f.TempDir(), "toy")
	mustWrite(f, dir, &Input{Passages: toyPassages()})
	b := mustOpen(f, dir)
	order := map[string]int{}
	for i, id := range []string{"c", "d", "e", "a", "b"} { // path, line order
		order[id] = i
	}
	f.Fuzz(func(t *testing.T, q string, k int) {
		k = k%8 + 1
		if k < 1 {
			k += 8
		}
		hits, err := b.Search(q, k)
		if err != nil {
			t.Fatal(err)
		}
		if len(hits) > k {
			t.Fatalf("%d hits for k=%d", len(hits), k)
		}
		terms := queryTerms(b.analyzer, q)
		for i, h := range hits {
			if !(h.Score > 0) {
				t.Errorf("hit %s scores %v", h.ID, h.Score)
			}
			if i > 0 {
				prev := hits[i-1]
				if h.Score > prev.Score || h.Score == prev.Score && order[h.ID] < order[prev.ID] {
					t.Errorf("hits out of order: %s %v after %s %v", h.ID, h.Score, prev.ID, prev.Score)
				}
			}
			fields := queryTerms(b.analyzer, h.Title+" "+strings.Join(h.Heading, " ")+" "+h.Text)
			if !slices.ContainsFunc(terms, func(t []byte) bool {
				return slices.ContainsFunc(fields, func(u []byte) bool { return string(t) == string(u) })
			}) {
				t.Errorf("hit %s holds none of %q", h.ID, terms)
			}
		}
	})
}

// TestBM25Oracle compares Search with a plain implementation of the formula
// in its doc comment, written from the passages themselves (each field run
// through the analyzer, statistics counted here), on a generated corpus of
// several segments: the same passages, in the same order, with scores equal
// to 1e-12 relative.
func TestBM25Oracle(t *testing.T) {
	ps := genPassages(2300, 3)
	ps[5].Terms = []build.Term{{Text: "zz_defined.termName", Anchor: "zz"}}
	dir := filepath.Join(t.TempDir(), "gen")
	mustWrite(t, dir, &Input{Passages: ps})
	b := mustOpen(t, dir)
	a := b.analyzer
	slices.SortFunc(ps, func(x, y build.Passage) int { // passages.jsonl order
		return cmp.Or(strings.Compare(x.Path, y.Path), x.Line-y.Line, strings.Compare(x.ID, y.ID))
	})
	weights := map[string]float64{"title": 2, "heading": 1.5, "text": 1}
	tf := map[string][]map[string]int{} // field -> passage -> term -> tf
	dl := map[string][]int{}
	avg := map[string]float64{}
	for _, f := range searchFields {
		for _, p := range ps {
			heading := strings.Join(p.Heading, " > ")
			for _, term := range p.Terms {
				heading += "\n" + term.Text
			}
			v := map[string]string{"title": p.Title, "heading": heading, "text": p.Text}[f]
			m := map[string]int{}
			toks := a.Analyze([]byte(v))
			for _, tok := range toks {
				m[string(tok.Term)]++
			}
			tf[f] = append(tf[f], m)
			dl[f] = append(dl[f], len(toks))
			avg[f] += float64(len(toks)) / float64(len(ps))
		}
	}
	type scored struct {
		id    string
		score float64
	}
	oracle := func(q string) []scored {
		score := make([]float64, len(ps))
		for _, term := range queryTerms(a, q) {
			x := make([]float64, len(ps))
			n := 0
			for i := range ps {
				for _, f := range searchFields {
					if c := float64(tf[f][i][string(term)]); c > 0 {
						x[i] += weights[f] * c / (1 - 0.75 + 0.75*float64(dl[f][i])/avg[f])
					}
				}
				if x[i] > 0 {
					n++
				}
			}
			idf := math.Log(1 + (float64(len(ps))-float64(n)+0.5)/(float64(n)+0.5))
			for i := range ps {
				if x[i] > 0 {
					score[i] += idf * x[i] / (1.2 + x[i])
				}
			}
		}
		idx := make([]int, 0, len(ps))
		for i, s := range score {
			if s > 0 {
				idx = append(idx, i)
			}
		}
		slices.SortStableFunc(idx, func(x, y int) int { return cmp.Compare(score[y], score[x]) })
		var out []scored
		for _, i := range idx[:min(10, len(idx))] {
			out = append(out, scored{ps[i].ID, score[i]})
		}
		return out
	}
	// Queries: words of some passages' titles, headings and texts.
	total := 0
	defer func() {
		if total < 200 {
			t.Errorf("only %d hits in all: the queries test little", total)
		}
	}()
	for i := 0; i < 41; i++ {
		if i == 40 {
			q := "termName zz defined" // parts of the defined term
			hits, err := b.Search(q, 10)
			if err != nil || len(hits) == 0 || hits[0].ID != "p000005" {
				t.Errorf("query %q: %v %v, want p000005 first", q, hits, err)
			}
			continue
		}
		p := ps[(i*977)%len(ps)]
		words := strings.Fields(p.Text)
		q := words[i%len(words)] + " " + p.Heading[1] + " " + words[(i*7)%len(words)]
		if i%5 == 0 {
			q = strings.Fields(p.Title)[0]
		}
		hits, err := b.search(q, 10, false) // the nearness bonus: TestNearness
		if err != nil {
			t.Fatal(err)
		}
		want := oracle(q)
		total += len(want)
		var got []scored
		for _, h := range hits {
			got = append(got, scored{h.ID, h.Score})
		}
		if !slices.EqualFunc(got, want, func(x, y scored) bool {
			return x.id == y.id && math.Abs(x.score-y.score) <= 1e-12*y.score
		}) {
			t.Errorf("query %q:\n got %v\nwant %v", q, got, want)
		}
	}
}

// TestSearchConcurrent runs searches from several goroutines (run it with
// -race) and expects what one goroutine gets.
func TestSearchConcurrent(t *testing.T) {
	ps := genPassages(600, 4)
	dir := filepath.Join(t.TempDir(), "gen")
	mustWrite(t, dir, &Input{Passages: ps})
	b := mustOpen(t, dir)
	var queries []string
	for i := 0; i < 20; i++ {
		w := strings.Fields(ps[i*29].Text)
		queries = append(queries, w[0]+" "+w[len(w)/2]+" "+ps[i].Title)
	}
	want := make([][]Hit, len(queries))
	for i, q := range queries {
		var err error
		if want[i], err = b.Search(q, 7); err != nil {
			t.Fatal(err)
		}
	}
	var wg sync.WaitGroup
	for g := 0; g < 4; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range queries {
				j := (i + g*5) % len(queries)
				got, err := b.Search(queries[j], 7)
				if err != nil {
					t.Error(err)
					return
				}
				if !slices.EqualFunc(got, want[j], func(a, b Hit) bool { return a.ID == b.ID && a.Score == b.Score }) {
					t.Errorf("query %q: got %v, want %v", queries[j], got, want[j])
				}
			}
		}()
	}
	wg.Wait()
}

func TestOpenErrors(t *testing.T) {
	src := filepath.Join(t.TempDir(), "src")
	mustWrite(t, src, &Input{Passages: toyPassages()})
	tests := []struct {
		name   string
		change func(dir string) error
		want   string // part of the error
	}{
		{"no manifest", func(dir string) error { return os.Remove(filepath.Join(dir, ManifestFile)) }, "is not a kbc bundle (it has no manifest.json)"},
		{"newer format", func(dir string) error {
			p := filepath.Join(dir, ManifestFile)
			data, _ := os.ReadFile(p)
			return os.WriteFile(p, bytes.Replace(data, []byte(`"format": 1`), []byte(`"format": 2`), 1), 0o644)
		}, "bundle format 2, this version reads 1"},
		{"no stats", func(dir string) error { return os.Remove(filepath.Join(dir, "index", "stats.json")) }, "no such file"},
		{"no index", func(dir string) error { return os.RemoveAll(filepath.Join(dir, "index", "store")) }, "opening index"},
		{"passage added", func(dir string) error {
			f, err := os.OpenFile(filepath.Join(dir, PassagesFile), os.O_APPEND|os.O_WRONLY, 0)
			if err != nil {
				return err
			}
			defer f.Close()
			_, err = f.WriteString(`{"id":"z","path":"z.md"}` + "\n")
			return err
		}, "index holds 5 passages, index/stats.json 5, passages.jsonl 6"},
		{"line not JSON", func(dir string) error {
			return os.WriteFile(filepath.Join(dir, PassagesFile), []byte("{\"id\":\"a\\u0022\nnope\n"), 0o644)
		}, "passages.jsonl: line 1: "},
		{"id twice", func(dir string) error {
			return os.WriteFile(filepath.Join(dir, PassagesFile), []byte("{\"id\":\"a\"}\n{\"id\":\"a\"}\n"), 0o644)
		}, "passages.jsonl: line 2: passage id a is used twice"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "b")
			if err := os.CopyFS(dir, os.DirFS(src)); err != nil {
				t.Fatal(err)
			}
			if err := tt.change(dir); err != nil {
				t.Fatal(err)
			}
			b, err := Open(dir)
			if err == nil {
				b.Close()
				t.Fatal("Open did not fail")
			}
			if !strings.Contains(err.Error(), tt.want) {
				t.Errorf("got %v, want %q in it", err, tt.want)
			}
		})
	}
}

// TestOddIDs covers ids that JSON escapes, which Open reads the slow way.
func TestOddIDs(t *testing.T) {
	ids := []string{`quote"d`, `back\slash`, "tab\tbed", "line\u2028sep", "<html&>", "ünï"}
	var ps []build.Passage
	for i, id := range ids {
		ps = append(ps, mkPassage(id, "odd.md", i+1, "Odd", nil, "truck number "+id))
	}
	dir := filepath.Join(t.TempDir(), "b")
	mustWrite(t, dir, &Input{Passages: ps})
	b := mustOpen(t, dir)
	if b.Manifest().Counts["passages"] != len(ids) {
		t.Errorf("manifest counts %v", b.Manifest().Counts)
	}
	hits, err := b.Search("truck", 10)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, h := range hits {
		got = append(got, h.ID)
	}
	slices.Sort(got)
	want := slices.Sorted(slices.Values(ids))
	if !slices.Equal(got, want) {
		t.Errorf("got %q, want %q", got, want)
	}
}

// TestOpenWithoutLinesFile checks that a bundle whose passages.lines is
// missing or does not match passages.jsonl (made before the file existed,
// or damaged) opens by reading passages.jsonl and finds the same passages.
func TestOpenWithoutLinesFile(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "gen")
	mustWrite(t, dir, &Input{Passages: genPassages(300, 5)})
	want := func() []Hit {
		b := mustOpen(t, dir)
		hits, err := b.Search("guide", 20)
		if err != nil || len(hits) == 0 {
			t.Fatalf("%v, %v", hits, err)
		}
		return hits
	}()
	lines := filepath.Join(dir, LinesFile)
	data, err := os.ReadFile(lines)
	if err != nil {
		t.Fatal(err)
	}
	for name, damage := range map[string]func() error{
		"missing":   func() error { return os.Remove(lines) },
		"cut short": func() error { return os.WriteFile(lines, data[:len(data)/2], 0o644) },
		"other size": func() error {
			d := slices.Clone(data)
			d[len(linesMagic)]++
			return os.WriteFile(lines, d, 0o644)
		},
	} {
		t.Run(name, func(t *testing.T) {
			if err := damage(); err != nil {
				t.Fatal(err)
			}
			b := mustOpen(t, dir)
			got, err := b.Search("guide", 20)
			if err != nil || !slices.EqualFunc(got, want, func(x, y Hit) bool { return x.ID == y.ID && x.Score == y.Score && x.Text == y.Text }) {
				t.Errorf("got %d hits (%v), want %d", len(got), err, len(want))
			}
		})
	}
}

// TestNearness checks the nearness bonus of Search's doc comment on values
// worked out by hand (our own measure: no published source).
func TestNearness(t *testing.T) {
	a := theAnalyzer()
	terms := func(q string) [][]byte { return queryTerms(a, q) }
	tests := []struct {
		heading, query string
		want           float64
	}{
		// m = 2 of |Q| = 2, side by side (s = 2): 2/2 · 2/2.
		{"Cargo > Door", "cargo door", 1},
		// m = 2 of 3 ("van" missing), s = 2: 2/3 · 2/2.
		{"Cargo > Door", "cargo door van", 2.0 / 3},
		// m = 2 of 2, s = 4 (cargo at 1, door at 4): 1 · 2/4.
		{"Cargo > Yard > Depot > Door", "door cargo", 0.5},
		// The smallest window: cargo 1, door 2, cargo 5: s = 2.
		{"cargo door crew van cargo", "cargo door", 1},
		// One term only: no bonus; nor for a one-term query.
		{"Cargo > Depot", "cargo door", 0},
		{"Cargo > Door", "cargo", 0},
		// An identifier's parts share its position: os.path.join holds
		// "path" and "join" at one position, s = 1 < m, taken as m.
		{"os.path.join", "path join", 1},
	}
	for _, tt := range tests {
		if got := nearness(a, tt.heading, terms(tt.query)); math.Abs(got-tt.want) > 1e-12 {
			t.Errorf("heading %q, query %q: %v, want %v", tt.heading, tt.query, got, tt.want)
		}
	}
}
