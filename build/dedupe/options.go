package dedupe

import (
	"fmt"
	"math"
	"runtime"
)

// Options tunes Find. The zero value of each field means its default, so
// Options{} behaves like DefaultOptions(). A bundle manifest records the
// options under their snake_case JSON names, as it does every setting.
type Options struct {
	// Hashes is the number of MinHash values per passage (default 128).
	Hashes int `json:"hashes"`
	// Shingle is the number of words per shingle (default 5).
	Shingle int `json:"shingle"`
	// Threshold is the Jaccard similarity of shingle sets at or above which
	// two passages are near duplicates (default 0.8). It must lie in (0, 1].
	// One changed word alters up to Shingle shingles, so with n shingles
	// the Jaccard is (n-Shingle)/(n+Shingle) at best: at the defaults a
	// passage needs about 45 shingles (49 words) before a one-word change
	// keeps it at 0.8, and 5% of the words changed at random places gives
	// about 0.65, below it.
	Threshold float64 `json:"threshold"`
	// MinShingles is the number of distinct shingles below which a passage
	// is compared by exact hash only (default 8). A judgement call, not a
	// published value: below about 8 shingles (12 words at Shingle 5) a
	// single changed word moves the Jaccard by more than 0.2, so the
	// threshold says little, and such snippets ("See also", "Returns None")
	// are the ones that recur by chance across unrelated pages.
	MinShingles int `json:"min_shingles"`
	// MaxBucket is the largest LSH bucket whose members are all compared
	// pairwise (default 64, a judgement call: 2016 pairs). A bigger bucket
	// is compared as a star and a chain (see Find), which keeps the pair
	// count linear in its size.
	MaxBucket int `json:"max_bucket"`
	// Workers is the number of goroutines hashing and verifying passages;
	// 0 means runtime.GOMAXPROCS(0). The result does not depend on it,
	// so it is not recorded with the settings (a manifest must not depend
	// on the machine's core count).
	Workers int `json:"-"`
	// SetMemory bounds the bytes of shingle sets held at once while
	// candidate pairs are verified (default 256 MiB). When the sets of all
	// candidates do not fit, pairs are verified in rounds and a set may be
	// rebuilt from its text in more than one round.
	SetMemory int64 `json:"set_memory"`
	// Memo, when set, remembers each text's hashing work between calls,
	// so that a Find over mostly the same texts (a rebuild after one page
	// changed) hashes only the new ones. It is not an option of the
	// result: the result is the same with or without it.
	Memo *Memo `json:"-"`
	// Key, when set with Memo, names text i for the memo in place of a
	// hash of the text itself, so that a text the memo knows is not even
	// read (the caller may make texts on demand). Equal keys must mean
	// equal texts. A Memo keeps keys of one kind: used with and without
	// Key, it starts afresh.
	Key func(i int) uint64 `json:"-"`
}

// DefaultOptions returns the defaults: 128 hashes, 5-word shingles,
// threshold 0.8, MinShingles 8, MaxBucket 64, GOMAXPROCS workers and 256 MiB
// of shingle sets.
func DefaultOptions() Options {
	return Options{
		Hashes:      128,
		Shingle:     5,
		Threshold:   0.8,
		MinShingles: 8,
		MaxBucket:   64,
		Workers:     runtime.GOMAXPROCS(0),
		SetMemory:   256 << 20,
	}
}

// Resolved returns o with its zero fields filled from DefaultOptions, and
// an error when a field is out of range: the options Find really uses.
func (o Options) Resolved() (Options, error) { return o.withDefaults() }

// withDefaults fills zero fields from DefaultOptions and checks the rest.
func (o Options) withDefaults() (Options, error) {
	d := DefaultOptions()
	if o.Hashes == 0 {
		o.Hashes = d.Hashes
	}
	if o.Shingle == 0 {
		o.Shingle = d.Shingle
	}
	if o.Threshold == 0 {
		o.Threshold = d.Threshold
	}
	if o.MinShingles == 0 {
		o.MinShingles = d.MinShingles
	}
	if o.MaxBucket == 0 {
		o.MaxBucket = d.MaxBucket
	}
	if o.Workers == 0 {
		o.Workers = d.Workers
	}
	if o.SetMemory == 0 {
		o.SetMemory = d.SetMemory
	}
	switch {
	case o.Hashes < 1 || o.Hashes > 1<<16:
		return o, fmt.Errorf("dedupe: hashes %d out of range 1..65536", o.Hashes)
	case o.Shingle < 1:
		return o, fmt.Errorf("dedupe: shingle %d must be at least 1", o.Shingle)
	case !(o.Threshold > 0 && o.Threshold <= 1):
		return o, fmt.Errorf("dedupe: threshold %v out of range (0, 1]", o.Threshold)
	case o.MinShingles < 1:
		return o, fmt.Errorf("dedupe: min shingles %d must be at least 1", o.MinShingles)
	case o.MaxBucket < 2:
		return o, fmt.Errorf("dedupe: max bucket %d must be at least 2", o.MaxBucket)
	case o.Workers < 1:
		return o, fmt.Errorf("dedupe: workers %d must be at least 1", o.Workers)
	case o.SetMemory < 1:
		return o, fmt.Errorf("dedupe: set memory %d must be positive", o.SetMemory)
	}
	return o, nil
}

// minCatch is the probability with which Bands wants a pair at the threshold
// to share at least one band.
const minCatch = 0.99

// Bands picks the LSH banding for hashes MinHash values and a Jaccard
// threshold: b bands of r rows each, b*r <= hashes. The rule: r is the
// largest row count for which a pair exactly at the threshold shares at
// least one band with probability at least 0.99, CatchProbability(threshold,
// hashes/r, r) >= 0.99, and b = hashes/r (the hashes/r*r-th and later values
// are unused). More rows make each band stricter, so the largest r that
// still catches 99% of threshold pairs gives the fewest candidates below the
// threshold. When not even r = 1 reaches 0.99 Bands returns (hashes, 1).
// For 128 hashes and threshold 0.8 that is 21 bands of 6 rows.
func Bands(hashes int, threshold float64) (b, r int) {
	if hashes < 1 {
		return 0, 0
	}
	for r = hashes; r > 1; r-- {
		if CatchProbability(threshold, hashes/r, r) >= minCatch {
			return hashes / r, r
		}
	}
	return hashes, 1
}

// CatchProbability is the probability 1-(1-s^r)^b that two sets of Jaccard
// similarity s share at least one of b bands of r MinHash rows each
// (Leskovec, Rajaraman and Ullman, Mining of Massive Datasets, section 3.4).
// It assumes independent rows, which one-permutation hashing only
// approximates.
func CatchProbability(s float64, b, r int) float64 {
	if s <= 0 || b <= 0 || r <= 0 {
		return 0
	}
	if s >= 1 {
		return 1
	}
	// 1-(1-x)^b computed as -expm1(b*log1p(-x)) keeps digits when x is tiny.
	x := math.Pow(s, float64(r))
	return -math.Expm1(float64(b) * math.Log1p(-x))
}
