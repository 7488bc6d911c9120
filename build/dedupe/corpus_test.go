package dedupe

import (
	"html"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/kbc-project/kbc/build/dedupe/internal/synth"
)

// pythonDocs returns the python-3.11-html corpus folder under KBC_CORPORA,
// or skips the test.
func pythonDocs(t testing.TB) string {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		t.Skip("KBC_CORPORA is not set; fetch the corpora with shared/corpora/get-corpora.sh DIR and set KBC_CORPORA=DIR")
	}
	dir := filepath.Join(root, "python-3.11-html")
	if _, err := os.Stat(filepath.Join(dir, "_sources")); err != nil {
		t.Skipf("KBC_CORPORA=%s has no python-3.11-html/_sources: %v", root, err)
	}
	return dir
}

// minParagraphWords drops paragraphs too short to be compared as near
// duplicates anyway.
const minParagraphWords = 10

// rstParagraphs splits reStructuredText crudely at blank lines.
func rstParagraphs(src string) []string {
	var out []string
	for _, p := range strings.Split(strings.ReplaceAll(src, "\r\n", "\n"), "\n\n") {
		if p = strings.TrimSpace(p); len(strings.Fields(p)) >= minParagraphWords {
			out = append(out, p)
		}
	}
	return out
}

// htmlParagraphs takes the text of each <p> element, tags stripped and
// entities decoded: crude, but enough to put the HTML rendering of a page
// beside its reStructuredText source.
func htmlParagraphs(src string) []string {
	var out []string
	for {
		i := strings.Index(src, "<p")
		if i < 0 {
			return out
		}
		src = src[i+2:]
		if src == "" || (src[0] != '>' && src[0] != ' ') {
			continue
		}
		end := strings.Index(src, "</p>")
		if end < 0 {
			return out
		}
		gt := strings.IndexByte(src, '>')
		body := src[min(gt+1, end):end]
		src = src[end:]
		var b strings.Builder
		inTag := false
		for _, r := range body {
			switch {
			case r == '<':
				inTag = true
			case r == '>':
				inTag = false
			case !inTag:
				b.WriteRune(r)
			}
		}
		p := strings.Join(strings.Fields(html.UnescapeString(b.String())), " ")
		if len(strings.Fields(p)) >= minParagraphWords {
			out = append(out, p)
		}
	}
}

// corpusParagraphs returns paragraphs of the pages of dir in path order, the
// source's paragraphs followed by the HTML page's, until there are limit
// (all when limit is 0).
func corpusParagraphs(t testing.TB, dir string, limit int) []string {
	var sources []string
	err := filepath.WalkDir(filepath.Join(dir, "_sources"), func(path string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() && strings.HasSuffix(path, ".rst.txt") {
			sources = append(sources, path)
		}
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	slices.Sort(sources)
	var out []string
	for _, src := range sources {
		rel, _ := filepath.Rel(filepath.Join(dir, "_sources"), src)
		page := filepath.Join(dir, strings.TrimSuffix(rel, ".rst.txt")+".html")
		rst, err := os.ReadFile(src)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, rstParagraphs(string(rst))...)
		if h, err := os.ReadFile(page); err == nil {
			out = append(out, htmlParagraphs(string(h))...)
		}
		if limit > 0 && len(out) >= limit {
			return out[:limit]
		}
	}
	return out
}

// exactPairs lists every pair of texts with shingle-set Jaccard at least
// min, by an inverted index from shingle to texts, counting shared shingles:
// the all-pairs ground truth. Only texts with at least minShingles distinct
// shingles take part, as in Find.
func exactPairs(texts []string, min float64, minShingles int) map[[2]int]float64 {
	sets := make([][]uint64, len(texts))
	index := map[uint64][]int32{}
	for i, text := range texts {
		sets[i] = shingleSet(text)
		if len(sets[i]) < minShingles {
			continue
		}
		for _, h := range sets[i] {
			index[h] = append(index[h], int32(i))
		}
	}
	out := map[[2]int]float64{}
	shared := make([]int, len(texts))
	var touched []int
	for i, set := range sets {
		if len(set) < minShingles {
			continue
		}
		touched = touched[:0]
		for _, h := range set {
			for _, j := range index[h] {
				if int(j) > i {
					if shared[j] == 0 {
						touched = append(touched, int(j))
					}
					shared[j]++
				}
			}
		}
		for _, j := range touched {
			inter := shared[j]
			shared[j] = 0
			if jac := float64(inter) / float64(len(set)+len(sets[j])-inter); jac >= min {
				out[[2]int{i, j}] = jac
			}
		}
	}
	return out
}

// TestRecallCorpus checks LSH recall on real documentation: 20000 paragraphs
// of the Python 3.11 documentation, each page's reStructuredText source
// beside its HTML rendering (natural near duplicates: the same paragraph
// with and without markup). Every pair with exact Jaccard >= 0.9 (found by
// comparing all pairs) must share a cluster in at least 99% of cases.
func TestRecallCorpus(t *testing.T) {
	dir := pythonDocs(t)
	texts := corpusParagraphs(t, dir, 20000)
	opts := DefaultOptions()
	truth := exactPairs(texts, opts.Threshold, opts.MinShingles)
	res := find(t, texts, opts)
	cluster := make([]int, len(texts))
	for i, c := range res.Clusters {
		for _, m := range c.Members {
			cluster[m] = i + 1
		}
	}
	// found[band] counts pairs found and all pairs, for J = 1, 0.9 <= J < 1
	// and threshold <= J < 0.9.
	var found [3][2]int
	for p, jac := range truth {
		band := 2
		switch {
		case jac == 1:
			band = 0
		case jac >= 0.9:
			band = 1
		}
		found[band][1]++
		if cluster[p[0]] != 0 && cluster[p[0]] == cluster[p[1]] {
			found[band][0]++
		}
	}
	t.Logf("%d paragraphs: %d clusters, %d candidates, %d exact groups, largest bucket %d",
		len(texts), len(res.Clusters), res.Candidates, res.ExactGroups, res.LargestBucket)
	t.Logf("pairs found of all pairs: J=1: %d of %d; 0.9<=J<1: %d of %d; 0.8<=J<0.9: %d of %d",
		found[0][0], found[0][1], found[1][0], found[1][1], found[2][0], found[2][1])
	high, highFound := found[0][1]+found[1][1], found[0][0]+found[1][0]
	if found[1][1] < 20 {
		t.Fatalf("the sample holds %d pairs with 0.9 <= Jaccard < 1, too few to measure", found[1][1])
	}
	if r := float64(highFound) / float64(high); r < 0.99 {
		t.Errorf("recall of pairs with Jaccard >= 0.9: %.4f, want >= 0.99", r)
	}
	if r := float64(found[1][0]) / float64(found[1][1]); r < 0.99 {
		t.Errorf("recall of pairs with 0.9 <= Jaccard < 1: %.4f, want >= 0.99", r)
	}
	// Every pair Find reports was verified: its Jaccard is the exact one.
	for _, c := range res.Clusters {
		for _, p := range c.Pairs {
			if want, ok := truth[[2]int{p.A, p.B}]; ok && want != p.Jaccard {
				t.Errorf("pair %d, %d: Jaccard %v, all-pairs %v", p.A, p.B, p.Jaccard, want)
			}
		}
	}
}

// BenchmarkFind runs Find over every paragraph of the Python 3.11
// documentation (sources and HTML).
func BenchmarkFind(b *testing.B) {
	texts := corpusParagraphs(b, pythonDocs(b), 0)
	var size int64
	for _, t := range texts {
		size += int64(len(t))
	}
	b.SetBytes(size)
	var res *Result
	for b.Loop() {
		res = find(b, texts, Options{})
	}
	b.ReportMetric(float64(len(texts)), "passages")
	b.ReportMetric(float64(res.Candidates), "candidates")
	b.ReportMetric(float64(len(res.Clusters)), "clusters")
}

// BenchmarkFindSynthetic runs Find over 100000 generated passages of about
// 200 words with 5% near copies; the texts are made on demand, so the time
// includes generating them (about a fifth of it).
func BenchmarkFindSynthetic(b *testing.B) {
	c := synth.New(synth.Config{N: 100000, Light: 0.025, Heavy: 0.025, ExactGroups: 10, ExactSize: 100, Seed: 1})
	var res *Result
	for b.Loop() {
		var err error
		if res, err = Find(c.N(), c.Text, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.SetBytes(res.Bytes)
	b.ReportMetric(float64(res.Candidates), "candidates")
}

// BenchmarkDivergent compares near-duplicate paragraph pairs.
func BenchmarkDivergent(b *testing.B) {
	c := synth.New(synth.Config{N: 2000, Light: 0.5, Seed: 2})
	var pairs [][2]string
	var size int64
	for _, in := range c.Injected() {
		a, x := c.Text(in.Src), c.Text(in.Copy)
		pairs = append(pairs, [2]string{a, x})
		size += int64(len(a) + len(x))
	}
	b.SetBytes(size)
	for b.Loop() {
		for _, p := range pairs {
			Divergent(p[0], p[1])
		}
	}
}
