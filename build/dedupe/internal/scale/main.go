// Command scale measures dedupe.Find on a large synthetic corpus: by
// default 1,000,000 passages of about 200 words drawn from a Zipf
// vocabulary, generated on demand from a fixed seed, with injected copies of
// known sources: light edits (1 or 2 words replaced, Jaccard about 0.9),
// heavy edits (5% of the words replaced at random places, Jaccard about
// 0.65) and groups of identical copies. It prints the time of each stage,
// the peak resident memory (VmHWM), the candidate count and the recall of
// each kind of injected copy.
//
// Usage:
//
//	go run ./build/dedupe/internal/scale [-n 1000000] [-workers 0] [-gen]
package main

import (
	"bufio"
	"flag"
	"fmt"
	"os"
	"runtime"
	"strings"
	"sync"
	"time"

	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/dedupe/internal/synth"
)

func main() {
	var (
		n         = flag.Int("n", 1000000, "passages")
		words     = flag.Int("words", 200, "mean words per passage")
		light     = flag.Float64("light", 0.025, "fraction of passages that are light-edit copies")
		heavy     = flag.Float64("heavy", 0.025, "fraction of passages that are 5%-edit copies")
		groups    = flag.Int("groups", 10, "groups of identical copies")
		groupSize = flag.Int("groupsize", 300, "passages per identical group")
		workers   = flag.Int("workers", 0, "workers (0: GOMAXPROCS)")
		threshold = flag.Float64("threshold", 0.8, "Jaccard threshold")
		seed      = flag.Uint64("seed", 1, "corpus seed")
		gen       = flag.Bool("gen", false, "first time generating every text once, without Find")
	)
	flag.Parse()
	if flag.NArg() > 0 {
		fmt.Fprintln(os.Stderr, "usage: scale [flags]")
		os.Exit(2)
	}

	t := time.Now()
	c := synth.New(synth.Config{
		N: *n, MeanWords: *words, Light: *light, Heavy: *heavy,
		ExactGroups: *groups, ExactSize: *groupSize, Seed: *seed,
	})
	fmt.Printf("corpus: %d passages, ~%d words, light %.3f, heavy %.3f, %d exact groups of %d; planned in %.2fs\n",
		*n, *words, *light, *heavy, *groups, *groupSize, time.Since(t).Seconds())

	w := *workers
	if w == 0 {
		w = runtime.GOMAXPROCS(0)
	}
	if *gen {
		t = time.Now()
		size := generateAll(c, w)
		d := time.Since(t)
		fmt.Printf("generation alone (%d workers): %.2fs, %.0f MB text, %.0f MB/s\n",
			w, d.Seconds(), float64(size)/1e6, float64(size)/1e6/d.Seconds())
	}

	t = time.Now()
	res, err := dedupe.Find(c.N(), c.Text, dedupe.Options{Workers: w, Threshold: *threshold})
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	d := time.Since(t)
	tm := res.Timings
	fmt.Printf("find (%d workers): %.2fs, %.0f MB text, %.0f MB/s, %.0f passages/s\n",
		w, d.Seconds(), float64(res.Bytes)/1e6, float64(res.Bytes)/1e6/d.Seconds(), float64(*n)/d.Seconds())
	fmt.Printf("  stages: hash %.2fs, exact %.2fs, lsh %.2fs, verify %.2fs (%d rounds), cluster %.2fs\n",
		tm.Hash.Seconds(), tm.Exact.Seconds(), tm.LSH.Seconds(), tm.Verify.Seconds(), res.Rounds, tm.Cluster.Seconds())
	fmt.Printf("  bands %d x rows %d; candidates %d; near pairs %d; exact groups %d; clusters %d; largest bucket %d; large buckets %d\n",
		res.Bands, res.Rows, res.Candidates, res.NearPairs, res.ExactGroups, len(res.Clusters), res.LargestBucket, res.LargeBuckets)
	fmt.Printf("  peak RSS (VmHWM) %s\n", peakRSS())

	report(c, res, *threshold)
}

// generateAll calls Text for every passage once, on w goroutines, and
// returns the bytes made.
func generateAll(c *synth.Corpus, w int) int64 {
	var wg sync.WaitGroup
	sizes := make([]int64, w)
	for g := range w {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := g; i < c.N(); i += w {
				sizes[g] += int64(len(c.Text(i)))
			}
		}()
	}
	wg.Wait()
	var total int64
	for _, s := range sizes {
		total += s
	}
	return total
}

// report prints, per kind of injected copy, how many share a cluster with
// their source, and for edited copies how many are at or above the
// threshold by exact Jaccard and how many of those were found.
func report(c *synth.Corpus, res *dedupe.Result, threshold float64) {
	cluster := make([]int32, c.N())
	for i, cl := range res.Clusters {
		for _, m := range cl.Members {
			cluster[m] = int32(i + 1)
		}
	}
	type tally struct {
		all, found, above, aboveFound int
		jsum                          float64
	}
	kinds := map[synth.Kind]*tally{}
	for _, in := range c.Injected() {
		k := kinds[in.Kind]
		if k == nil {
			k = &tally{}
			kinds[in.Kind] = k
		}
		found := cluster[in.Src] != 0 && cluster[in.Src] == cluster[in.Copy]
		k.all++
		if found {
			k.found++
		}
		if in.Kind == synth.Exact {
			continue
		}
		j := dedupe.Similarity(c.Text(in.Src), c.Text(in.Copy), 0)
		k.jsum += j
		if j >= threshold {
			k.above++
			if found {
				k.aboveFound++
			}
		}
	}
	for _, kind := range []synth.Kind{synth.Light, synth.Heavy, synth.Exact} {
		k := kinds[kind]
		if k == nil {
			continue
		}
		line := fmt.Sprintf("  %-6s copies %6d: found %6d (recall %.4f)", kind, k.all, k.found, float64(k.found)/float64(k.all))
		if kind != synth.Exact {
			line += fmt.Sprintf("; mean Jaccard %.3f; %d at or above %.2f, of which found %d (recall %.4f)",
				k.jsum/float64(k.all), k.above, threshold, k.aboveFound, float64(k.aboveFound)/float64(max(k.above, 1)))
		}
		fmt.Println(line)
	}
}

// peakRSS reads the peak resident set size from /proc/self/status.
func peakRSS() string {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		return "unknown: " + err.Error()
	}
	defer f.Close()
	s := bufio.NewScanner(f)
	for s.Scan() {
		if v, ok := strings.CutPrefix(s.Text(), "VmHWM:"); ok {
			return strings.TrimSpace(v)
		}
	}
	return "unknown"
}
