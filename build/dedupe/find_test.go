package dedupe

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/kbc-project/kbc/build/dedupe/internal/synth"
)

var update = flag.Bool("update", false, "rewrite golden files in testdata")

// find runs Find over texts in memory and fails the test on an error.
func find(t testing.TB, texts []string, opts Options) *Result {
	t.Helper()
	res, err := Find(len(texts), func(i int) string { return texts[i] }, opts)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// words20 returns n words of a fixed pseudo-random text.
func randomWords(rng *rand.Rand, n int) []string {
	w := make([]string, n)
	for i := range w {
		w[i] = fmt.Sprintf("w%d", rng.IntN(100000))
	}
	return w
}

func TestFindExactDuplicates(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	base := strings.Join(randomWords(rng, 60), " ")
	texts := []string{
		base,
		strings.Join(randomWords(rng, 60), " "),
		strings.ToUpper(base) + "!!!",            // case and punctuation do not count
		strings.ReplaceAll(base, " ", "\n\n * "), // nor white space and list marks
		"see also",                               // short: exact only
		"See also.",                              // same words
		strings.Join(randomWords(rng, 60), " ") + " ok", // unrelated
	}
	res := find(t, texts, Options{})
	want := []Cluster{
		{Members: []int{0, 2, 3}, Pairs: []Pair{{0, 2, 1}, {0, 3, 1}}, Exact: true},
		{Members: []int{4, 5}, Pairs: []Pair{{4, 5, 1}}, Exact: true},
	}
	if !reflect.DeepEqual(res.Clusters, want) {
		t.Errorf("clusters = %+v, want %+v", res.Clusters, want)
	}
	if res.ExactGroups != 2 || res.Candidates != 0 || res.ExactOnly != 2 {
		t.Errorf("ExactGroups %d, Candidates %d, ExactOnly %d; want 2, 0, 2", res.ExactGroups, res.Candidates, res.ExactOnly)
	}
}

func TestFindNearCopy(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	base := randomWords(rng, 200)
	edited := append([]string(nil), base...)
	copy(edited[90:100], randomWords(rng, 10)) // 5% of the words, one sentence rewritten
	scattered := append([]string(nil), base...)
	for _, p := range rng.Perm(200)[:10] { // 5% of the words, here and there
		scattered[p] = "z" + scattered[p]
	}
	texts := []string{strings.Join(base, " "), strings.Join(edited, " "), strings.Join(scattered, " ")}
	jEdited := jaccard(shingleSet(texts[0]), shingleSet(texts[1]))
	jScattered := jaccard(shingleSet(texts[0]), shingleSet(texts[2]))
	t.Logf("Jaccard: one run of 10 words edited %.3f, 10 scattered words edited %.3f", jEdited, jScattered)
	if jEdited < 0.8 || jScattered >= 0.8 {
		t.Fatalf("test texts: Jaccard %.3f and %.3f, want >= 0.8 and < 0.8", jEdited, jScattered)
	}
	res := find(t, texts, Options{})
	want := []Cluster{{Members: []int{0, 1}, Pairs: []Pair{{0, 1, jEdited}}}}
	if !reflect.DeepEqual(res.Clusters, want) {
		t.Errorf("clusters = %+v, want %+v", res.Clusters, want)
	}
	// At a threshold below its Jaccard, the scattered copy joins too.
	res = find(t, texts, Options{Threshold: 0.5})
	if len(res.Clusters) != 1 || len(res.Clusters[0].Members) != 3 {
		t.Errorf("threshold 0.5: clusters = %+v, want one of 3", res.Clusters)
	}
}

func TestFindUnrelated(t *testing.T) {
	c := synth.New(synth.Config{N: 3000, Seed: 3})
	res, err := Find(c.N(), c.Text, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Clusters) != 0 {
		t.Errorf("%d clusters among unrelated texts, first %+v", len(res.Clusters), res.Clusters[0])
	}
	t.Logf("%d unrelated passages: %d candidates", c.N(), res.Candidates)
}

func TestFindShortPassages(t *testing.T) {
	texts := []string{
		"Returns None.",
		"Returns None.",
		"Returns an int.",
		"one two three four five six seven eight nine ten eleven", // 7 shingles
		"one two three four five six seven eight nine ten twelve", // 7 shingles, 1 differs
		"", "!!!", "", // no words: never clustered, not even with each other
	}
	res := find(t, texts, Options{Threshold: 0.5})
	want := []Cluster{{Members: []int{0, 1}, Pairs: []Pair{{0, 1, 1}}, Exact: true}}
	if !reflect.DeepEqual(res.Clusters, want) {
		t.Errorf("clusters = %+v, want %+v", res.Clusters, want)
	}
	if res.NoWords != 3 || res.ExactOnly != 5 || res.Hashed != 0 {
		t.Errorf("NoWords %d, ExactOnly %d, Hashed %d; want 3, 5, 0", res.NoWords, res.ExactOnly, res.Hashed)
	}
	// With MinShingles lowered, the two counting texts are compared:
	// Jaccard 6/8 = 0.75.
	res = find(t, texts, Options{Threshold: 0.5, MinShingles: 2})
	if len(res.Clusters) != 2 || res.Clusters[1].Pairs[0].Jaccard != 0.75 {
		t.Errorf("MinShingles 2: clusters = %+v, want the pair 3, 4 at 0.75", res.Clusters)
	}
}

// TestFindLargeExactGroup checks that 500 identical passages collapse before
// MinHash: no candidate pairs, 499 star pairs.
func TestFindLargeExactGroup(t *testing.T) {
	c := synth.New(synth.Config{N: 1000, ExactGroups: 1, ExactSize: 500, Seed: 4})
	res, err := Find(c.N(), c.Text, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Clusters) != 1 || len(res.Clusters[0].Members) != 500 || !res.Clusters[0].Exact {
		t.Fatalf("got %d clusters, want one exact cluster of 500", len(res.Clusters))
	}
	if got := len(res.Clusters[0].Pairs); got != 499 {
		t.Errorf("%d pairs, want 499 (a star)", got)
	}
	if res.Candidates != 0 || res.ExactGroups != 1 || res.Hashed != 501 {
		t.Errorf("Candidates %d, ExactGroups %d, Hashed %d; want 0, 1, 501", res.Candidates, res.ExactGroups, res.Hashed)
	}
}

// TestFindLargeNearBucket checks that 300 near copies of one passage, which
// share LSH buckets of 301 members in most bands, cost a number of candidate
// pairs linear in the bucket size, not the 45150 pairs of the bucket.
func TestFindLargeNearBucket(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	base := randomWords(rng, 200)
	texts := []string{strings.Join(base, " ")}
	for i := range 300 {
		w := append([]string(nil), base...)
		w[rng.IntN(len(w))] = fmt.Sprintf("edit%d", i)
		texts = append(texts, strings.Join(w, " "))
	}
	for range 200 {
		texts = append(texts, strings.Join(randomWords(rng, 200), " "))
	}
	res := find(t, texts, Options{})
	t.Logf("301 near copies: %d candidates, %d large buckets, largest %d, %d near pairs",
		res.Candidates, res.LargeBuckets, res.LargestBucket, res.NearPairs)
	if len(res.Clusters) != 1 || len(res.Clusters[0].Members) != 301 {
		t.Fatalf("clusters: %d, want one of 301", len(res.Clusters))
	}
	if res.LargeBuckets == 0 || res.LargestBucket <= DefaultOptions().MaxBucket {
		t.Errorf("LargeBuckets %d, LargestBucket %d: the test made no large bucket", res.LargeBuckets, res.LargestBucket)
	}
	// A star and a chain per band: at most 2 x 300 pairs per band.
	if limit := 2 * 300 * res.Bands; res.Candidates > limit {
		t.Errorf("%d candidates, want at most %d", res.Candidates, limit)
	}
}

// TestFindDeterministic checks that the result does not depend on the
// number of workers, nor on how many verification rounds SetMemory forces.
func TestFindDeterministic(t *testing.T) {
	c := synth.New(synth.Config{N: 20000, Light: 0.03, Heavy: 0.02, Block: 0.02, ExactGroups: 3, ExactSize: 40, Seed: 6})
	var first *Result
	for _, o := range []Options{
		{Workers: 1},
		{Workers: 2},
		{Workers: 3},
		{Workers: 2, SetMemory: 64 << 10},
		{Workers: 2, MaxBucket: 2},
	} {
		t.Run(fmt.Sprintf("workers=%d,memory=%d,bucket=%d", o.Workers, o.SetMemory, o.MaxBucket), func(t *testing.T) {
			res, err := Find(c.N(), c.Text, o)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%d clusters, %d candidates, %d rounds", len(res.Clusters), res.Candidates, res.Rounds)
			if first == nil {
				first = res
				return
			}
			if o.MaxBucket == 0 && res.Candidates != first.Candidates {
				t.Errorf("%d candidates, want %d", res.Candidates, first.Candidates)
			}
			if o.MaxBucket == 0 && !reflect.DeepEqual(res.Clusters, first.Clusters) {
				t.Error("clusters differ from those with one worker")
			}
			if o.MaxBucket != 0 && len(res.Clusters) != len(first.Clusters) {
				t.Errorf("MaxBucket 2: %d clusters, want %d", len(res.Clusters), len(first.Clusters))
			}
		})
	}
}

// TestFindRecallSynthetic checks the injected copies: light edits (1 or 2
// words, Jaccard about 0.9) must all be found, and a copy with 5% of its
// words replaced in one run (Jaccard about 0.85) nearly all.
func TestFindRecallSynthetic(t *testing.T) {
	c := synth.New(synth.Config{N: 20000, Light: 0.02, Block: 0.02, Heavy: 0.01, Seed: 8})
	res, err := Find(c.N(), c.Text, Options{})
	if err != nil {
		t.Fatal(err)
	}
	recall := injectedRecall(res, c)
	for _, k := range []synth.Kind{synth.Light, synth.Block, synth.Heavy} {
		t.Logf("%v copies: %d of %d found", k, recall[k][0], recall[k][1])
	}
	if r := recall[synth.Light]; r[0] != r[1] {
		t.Errorf("light copies: found %d of %d", r[0], r[1])
	}
	if r := recall[synth.Block]; float64(r[0]) < 0.98*float64(r[1]) {
		t.Errorf("block copies: found %d of %d", r[0], r[1])
	}
}

// injectedRecall counts, per kind of injected copy, how many share a cluster
// with their source, and how many there are.
func injectedRecall(res *Result, c *synth.Corpus) map[synth.Kind][2]int {
	cluster := make([]int32, c.N())
	for i, cl := range res.Clusters {
		for _, m := range cl.Members {
			cluster[m] = int32(i + 1)
		}
	}
	out := map[synth.Kind][2]int{}
	for _, in := range c.Injected() {
		r := out[in.Kind]
		r[1]++
		if cluster[in.Src] != 0 && cluster[in.Src] == cluster[in.Copy] {
			r[0]++
		}
		out[in.Kind] = r
	}
	return out
}

func TestFindPanicInText(t *testing.T) {
	for _, workers := range []int{1, 2} {
		t.Run(fmt.Sprint(workers), func(t *testing.T) {
			defer func() {
				if r := recover(); r != "bad passage" {
					t.Errorf("recovered %v, want the text function's panic", r)
				}
			}()
			_, _ = Find(5000, func(i int) string {
				if i == 4321 {
					panic("bad passage")
				}
				return "text"
			}, Options{Workers: workers})
			t.Error("Find returned")
		})
	}
}

// goldenCluster is a cluster as the golden file shows it: members, pairs
// with their Jaccard, and the Divergent differences of each near pair.
type goldenCluster struct {
	Members []int
	Exact   bool
	Pairs   []goldenPair
}

type goldenPair struct {
	A, B        int
	Jaccard     string
	Differences []Difference `json:",omitempty"`
	Divergent   bool         `json:",omitempty"`
}

// TestFindGolden runs Find and Divergent over testdata/passages.txt
// (passages separated by lines "---") and compares with
// testdata/passages.golden.json; -update rewrites it.
func TestFindGolden(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("testdata", "passages.txt"))
	if err != nil {
		t.Fatal(err)
	}
	texts := strings.Split(strings.TrimSpace(string(data)), "\n---\n")
	res := find(t, texts, Options{})
	var got []goldenCluster
	for _, c := range res.Clusters {
		g := goldenCluster{Members: c.Members, Exact: c.Exact}
		for _, p := range c.Pairs {
			gp := goldenPair{A: p.A, B: p.B, Jaccard: fmt.Sprintf("%.4f", p.Jaccard)}
			if p.Jaccard < 1 {
				gp.Differences, gp.Divergent = Divergent(texts[p.A], texts[p.B])
			}
			g.Pairs = append(g.Pairs, gp)
		}
		got = append(got, g)
	}
	out, err := json.MarshalIndent(got, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	out = append(out, '\n')
	golden := filepath.Join("testdata", "passages.golden.json")
	if *update {
		if err := os.WriteFile(golden, out, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(out, want) {
		t.Errorf("result differs from %s (run with -update to rewrite):\n%s", golden, out)
	}
}

func TestFindEmpty(t *testing.T) {
	for _, texts := range [][]string{nil, {"only one passage here"}} {
		res := find(t, texts, Options{})
		if len(res.Clusters) != 0 || res.Passages != len(texts) {
			t.Errorf("%d texts: %+v", len(texts), res)
		}
	}
}

// TestFindMemo: a Memo changes nothing in the result, across calls whose
// texts partly change.
func TestFindMemo(t *testing.T) {
	base := []string{}
	for i := 0; i < 60; i++ {
		base = append(base, fmt.Sprintf("passage %d says the reefer door seal is checked every thirty days by the depot workshop team and logged in the fleet system under trailer %d", i%20, i))
	}
	memo := &Memo{}
	for round := 0; round < 3; round++ {
		texts := append([]string(nil), base...)
		texts[round*7] = "a brand new text about dry ice handling in the north depot freezer hall with gloves and a face shield"
		plain, err := Find(len(texts), func(i int) string { return texts[i] }, Options{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		memoed, err := Find(len(texts), func(i int) string { return texts[i] }, Options{Workers: 2, Memo: memo})
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(plain.Clusters, memoed.Clusters) {
			t.Fatalf("round %d: clusters differ with a memo", round)
		}
	}
	if n := len(memo.m); n > 61 {
		t.Errorf("memo holds %d entries after three rounds of 60 texts; stale entries are not dropped", n)
	}
}
