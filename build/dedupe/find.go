package dedupe

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sync/atomic"
	"time"
)

// Pair is two passages found to be near duplicates: A < B are indexes into
// Find's input and Jaccard is the exact Jaccard similarity of their shingle
// sets (1 for passages with identical normalised text).
type Pair struct {
	A, B    int
	Jaccard float64
}

// Cluster is a group of two or more passages joined by near-duplicate pairs.
// Members is ascending. Pairs are the pairs that joined them, ordered by A,
// then B: for each group of identical texts a star from its first member
// (Jaccard 1), and each verified pair between the first members of such
// groups (or single passages) at or above the threshold. Clusters are
// connected components, so two members need not be similar themselves when a
// chain of pairs joins them. Exact reports whether all members have the same
// normalised text (no near pair was needed).
type Cluster struct {
	Members []int
	Pairs   []Pair
	Exact   bool
}

// Result is what Find found, with counters of the work done.
type Result struct {
	// Clusters are the clusters of two or more passages, ordered by their
	// first member.
	Clusters []Cluster
	// Bands and Rows are the LSH banding used (see Bands).
	Bands, Rows int
	// Candidates is the number of distinct candidate pairs whose Jaccard
	// was computed.
	Candidates int
	// ExactGroups is the number of groups of two or more passages with
	// identical normalised text, each collapsed to its first member before
	// MinHash.
	ExactGroups int

	Passages      int   // n
	Bytes         int64 // text bytes read in the hashing pass (not those a Memo knew by Key)
	NoWords       int   // passages without a word: never clustered
	ExactOnly     int   // passages under MinShingles shingles: compared by exact hash only
	Hashed        int   // passages that entered LSH (first members of exact groups and single passages)
	NearPairs     int   // candidate pairs at or above the threshold
	LargeBuckets  int   // LSH buckets over MaxBucket, compared as star and chain
	LargestBucket int   // size of the largest LSH bucket
	Rounds        int   // verification rounds (more than one when SetMemory was short)
	Timings       Timings
}

// Timings is the wall time of each stage of Find.
type Timings struct {
	Hash    time.Duration // reading, hashing, MinHash and band keys
	Exact   time.Duration // grouping identical texts
	LSH     time.Duration // sorting band keys into buckets, listing candidates
	Verify  time.Duration // rebuilding shingle sets, exact Jaccard
	Cluster time.Duration // union-find, building clusters
}

// Kinds of passage after hashing.
const (
	kindNone  = iota // no words
	kindShort        // fewer than MinShingles shingles: exact hash only
	kindFull         // MinHashed
)

// finder holds the state of one Find call.
type finder struct {
	o    Options
	n    int
	text func(int) string
	b, r int

	exact []uint64   // hash of the normalised word sequence
	count []uint32   // shingle positions, an upper bound on distinct shingles
	kind  []uint8    // kindNone, kindShort, kindFull
	keys  [][]uint64 // keys[band][i]: LSH band keys of kindFull passages
	bytes atomic.Int64

	groups   []uint32 // members of exact groups, group after group
	groupEnd []int    // end of each group in groups
	lshIDs   []uint32 // passages that enter LSH
}

// Find finds exact and near-duplicate passages among n texts; text(i)
// returns passage i. text may be called more than once for the same i and,
// when Workers > 1, from several goroutines at once; it must return the same
// text each time. A panic in text is raised again in Find's caller.
//
// # Method
//
// Texts are compared as sequences of normalised words: lower-cased runs of
// letters and digits, with inner '.', ',', '-', ':' kept (1.2.3,
// 2026-01-04, 10:30, 2,500); punctuation, markup and case do not count, so
// code that differs only in operators ("a + b" against "a - b") compares as
// identical. A text without words is never clustered.
//
// Identical texts come first: each text's word sequence is hashed (64 bits;
// two different texts share a hash with probability 2^-64, so among a
// million passages a false exact group is a one in 10^7 event) and each
// group of equal hashes becomes a cluster (Exact), represented from then on
// by its first member alone, so a hundred copies of a page footer cost one
// passage, not five thousand pairs.
//
// A text's shingles are its Shingle-word windows, hashed to 64 bits, as a
// set. A text under MinShingles distinct shingles joins exact groups only.
// Each other first member gets a one-permutation MinHash signature of Hashes
// values (Li, Owen and Zhang 2012) with optimal densification (Shrivastava
// 2017), from which only its band keys are kept: Bands(Hashes, Threshold) bands of r rows, each band hashed
// to 64 bits. Two passages whose key agrees in any band are a candidate
// pair. Band keys are grouped by sorting (key, passage) per band. A bucket
// of at most MaxBucket passages gives all its pairs; a larger one, which
// real corpora produce from page boilerplate, gives a star and a chain
// instead: each member with the bucket's first member, and each member with
// its neighbour when the bucket is ordered by the members' keys in the next
// two bands (so members that agree elsewhere too sit side by side). That is
// at most twice the bucket's size in pairs rather than its square; the cost
// is that two members of a big bucket that are similar to each other but
// not to its first member, and that no other band brings together, are
// missed.
//
// Every candidate pair is verified by the exact Jaccard similarity of its
// shingle sets, rebuilt from text within SetMemory, and kept at or above
// Threshold. Clusters are the connected components of exact groups and kept
// pairs (union-find). The result depends only on the texts and opts, not on
// Workers or timing (apart from Result.Timings).
//
// Find returns an error only for options out of range or n out of range
// (0..2^31-1).
func Find(n int, text func(i int) string, opts Options) (*Result, error) {
	o, err := opts.withDefaults()
	if err != nil {
		return nil, err
	}
	if n < 0 || n > math.MaxInt32 {
		return nil, fmt.Errorf("dedupe: %d passages out of range 0..%d", n, math.MaxInt32)
	}
	b, r := Bands(o.Hashes, o.Threshold)
	f := &finder{o: o, n: n, text: text, b: b, r: r}
	res := &Result{Bands: b, Rows: r, Passages: n}

	t := time.Now()
	if o.Memo != nil {
		o.Memo.begin(o, r)
		defer o.Memo.end()
	}
	f.hash()
	res.Bytes = f.bytes.Load()
	res.Timings.Hash = time.Since(t)

	t = time.Now()
	f.groupExact()
	res.ExactGroups = len(f.groupEnd)
	for _, k := range f.kind {
		switch k {
		case kindNone:
			res.NoWords++
		case kindShort:
			res.ExactOnly++
		}
	}
	res.Hashed = len(f.lshIDs)
	res.Timings.Exact = time.Since(t)

	t = time.Now()
	cands := f.lsh(res)
	f.keys = nil // the band keys are done with; let the sets have the room
	res.Candidates = len(cands)
	res.Timings.LSH = time.Since(t)

	t = time.Now()
	near := f.verify(cands, res)
	res.NearPairs = len(near)
	res.Timings.Verify = time.Since(t)

	t = time.Now()
	res.Clusters = f.cluster(near)
	res.Timings.Cluster = time.Since(t)
	return res, nil
}

// hashScratch is one worker's buffers for hashing.
type hashScratch struct {
	sc     scanner
	words  []uint64
	sh     []uint64
	tmp    []uint64
	sig    []uint64
	filled []bool
	keys   []uint64
}

// hash reads every text once: exact hash, shingle count, kind, band keys.
func (f *finder) hash() {
	o, n := f.o, f.n
	f.exact = make([]uint64, n)
	f.count = make([]uint32, n)
	f.kind = make([]uint8, n)
	f.keys = make([][]uint64, f.b)
	for band := range f.keys {
		f.keys[band] = make([]uint64, n)
	}
	dens := newDensifier(o.Hashes)
	scratch := make([]hashScratch, o.Workers)
	for w := range scratch {
		scratch[w].sig = make([]uint64, o.Hashes)
		scratch[w].filled = make([]bool, o.Hashes)
		scratch[w].keys = make([]uint64, f.b)
	}
	parallel(o.Workers, n, 256, func(w, lo, hi int) {
		s := &scratch[w]
		var bytes int64
		for i := lo; i < hi; i++ {
			var text string
			read := false
			var tk uint64
			if o.Memo != nil {
				if o.Key != nil {
					tk = o.Key(i)
				} else {
					text, read = f.text(i), true
					tk = textKey(text)
				}
				if e := o.Memo.get(tk); e != nil && e.fits(f.b) {
					f.exact[i], f.count[i], f.kind[i] = e.exact, e.count, e.kind
					for band, k := range e.keys {
						f.keys[band][i] = k
					}
					continue
				}
			}
			if !read {
				text = f.text(i)
			}
			bytes += int64(len(text))
			f.hashOne(i, text, s, dens)
			if o.Memo != nil {
				e := &memoEntry{exact: f.exact[i], count: f.count[i], kind: f.kind[i]}
				if e.kind == kindFull {
					e.keys = make([]uint64, f.b)
					for band := range e.keys {
						e.keys[band] = f.keys[band][i]
					}
				}
				o.Memo.put(tk, e)
			}
		}
		f.bytes.Add(bytes)
	})
}

// hashOne does the hashing stage's work for passage i.
func (f *finder) hashOne(i int, text string, s *hashScratch, dens *densifier) {
	o := f.o
	s.words = hashWords(&s.sc, text, s.words[:0])
	if len(s.words) == 0 {
		return
	}
	f.exact[i] = seqHash(s.words)
	s.sh = shingles(s.words, o.Shingle, s.sh[:0])
	f.count[i] = uint32(len(s.sh)) // a text under 4 GB has fewer shingles than 2^32
	f.kind[i] = kindShort
	if len(s.sh) < o.MinShingles {
		return
	}
	if dens.oph(s.sh, s.sig, s.filled) < o.MinShingles {
		// Fewer filled bins than MinShingles may still be enough
		// distinct shingles sharing bins: count them.
		s.tmp = append(s.tmp[:0], s.sh...)
		if len(sortedSet(s.tmp)) < o.MinShingles {
			return
		}
	}
	f.kind[i] = kindFull
	bandKeys(s.sig, f.r, s.keys)
	for band, k := range s.keys {
		f.keys[band][i] = k
	}
}

// groupExact groups passages with equal word-sequence hashes and lists the
// passages that enter LSH: the first member of each group and every single
// passage, when MinHashed.
func (f *finder) groupExact() {
	ents := make([]entry, 0, f.n)
	for i, k := range f.kind {
		if k != kindNone {
			ents = append(ents, entry{f.exact[i], uint32(i)})
		}
	}
	var tmp []entry
	if len(ents) >= radixMin {
		tmp = make([]entry, len(ents))
	}
	ents = sortEntries(ents, tmp)
	rep := make([]bool, f.n)
	for i := 0; i < len(ents); {
		j := i + 1
		for j < len(ents) && ents[j].key == ents[i].key {
			j++
		}
		rep[ents[i].id] = true
		if j-i >= 2 {
			for _, e := range ents[i:j] {
				f.groups = append(f.groups, e.id)
			}
			f.groupEnd = append(f.groupEnd, len(f.groups))
		}
		i = j
	}
	for i, k := range f.kind {
		if k == kindFull && rep[i] {
			f.lshIDs = append(f.lshIDs, uint32(i))
		}
	}
}

// lshScratch is one worker's buffers for banding.
type lshScratch struct {
	ents, tmp []entry
	order     []uint32
	pairs     []uint64
	large     int
	maxBucket int
}

// pack puts a pair of passages a < b into one sortable word.
func pack(a, b uint32) uint64 { return uint64(a)<<32 | uint64(b) }

func unpack(p uint64) (a, b int) { return int(p >> 32), int(uint32(p)) }

// lsh lists the distinct candidate pairs, sorted.
func (f *finder) lsh(res *Result) []uint64 {
	if len(f.lshIDs) < 2 {
		return nil
	}
	scratch := make([]lshScratch, f.o.Workers)
	parallel(f.o.Workers, f.b, 1, func(w, lo, hi int) {
		s := &scratch[w]
		for band := lo; band < hi; band++ {
			f.band(band, s)
		}
	})
	var cands []uint64
	for w := range scratch {
		cands = append(cands, scratch[w].pairs...)
		scratch[w].pairs = nil
		res.LargeBuckets += scratch[w].large
		res.LargestBucket = max(res.LargestBucket, scratch[w].maxBucket)
	}
	slices.Sort(cands)
	return slices.Clip(slices.Compact(cands))
}

// band buckets the LSH passages by their key in one band and appends the
// bucket pairs to s.pairs.
func (f *finder) band(band int, s *lshScratch) {
	keys := f.keys[band]
	s.ents = s.ents[:0]
	for _, id := range f.lshIDs {
		s.ents = append(s.ents, entry{keys[id], id})
	}
	if len(s.ents) >= radixMin && len(s.tmp) < len(s.ents) {
		s.tmp = make([]entry, len(s.ents))
	}
	ents := sortEntries(s.ents, s.tmp)
	for i := 0; i < len(ents); {
		j := i + 1
		for j < len(ents) && ents[j].key == ents[i].key {
			j++
		}
		bucket := ents[i:j]
		i = j
		if len(bucket) < 2 {
			continue
		}
		s.maxBucket = max(s.maxBucket, len(bucket))
		if len(bucket) <= f.o.MaxBucket {
			for x, a := range bucket {
				for _, b := range bucket[x+1:] {
					s.pairs = append(s.pairs, pack(a.id, b.id))
				}
			}
			continue
		}
		s.large++
		f.largeBucket(band, bucket, s)
	}
}

// largeBucket lists the pairs of a bucket over MaxBucket: a star from its
// first member, and a chain through the members ordered by their keys in the
// next two bands (then by index). bucket is sorted by index.
func (f *finder) largeBucket(band int, bucket []entry, s *lshScratch) {
	first := bucket[0].id
	s.order = s.order[:0]
	for _, e := range bucket[1:] {
		s.pairs = append(s.pairs, pack(first, e.id))
		s.order = append(s.order, e.id)
	}
	k1 := f.keys[(band+1)%f.b]
	k2 := f.keys[(band+2)%f.b]
	slices.SortFunc(s.order, func(x, y uint32) int {
		if c := cmp.Compare(k1[x], k1[y]); c != 0 {
			return c
		}
		if c := cmp.Compare(k2[x], k2[y]); c != 0 {
			return c
		}
		return cmp.Compare(x, y)
	})
	for x := 1; x < len(s.order); x++ {
		a, b := s.order[x-1], s.order[x]
		s.pairs = append(s.pairs, pack(min(a, b), max(a, b)))
	}
}

// verifyScratch is one worker's buffers for rebuilding shingle sets.
type verifyScratch struct {
	sc    scanner
	words []uint64
}

// verify computes the exact Jaccard of every candidate pair and returns the
// pairs at or above the threshold, in candidate order. Pairs are taken in
// rounds whose shingle sets fit SetMemory (at least one pair a round).
func (f *finder) verify(cands []uint64, res *Result) []Pair {
	if len(cands) == 0 {
		return nil
	}
	o := f.o
	budget := o.SetMemory / 8 // in set elements
	stamp := make([]int32, f.n)
	slot := make([]int32, f.n)
	scratch := make([]verifyScratch, o.Workers)
	var (
		ids    []uint32
		offs   []int64 // offs[slot]: start of the set in arena; offs[len(ids)]: end
		lens   []int32 // length of each set once deduplicated
		arena  []uint64
		jac    []float64
		near   []Pair
		round  int32
		thresh = o.Threshold
	)
	for pos := 0; pos < len(cands); {
		round++
		ids, offs = ids[:0], offs[:0]
		var size int64
		end := pos
		for ; end < len(cands); end++ {
			a, b := unpack(cands[end])
			var need int64
			if stamp[a] != round {
				need += int64(f.count[a])
			}
			if stamp[b] != round && b != a {
				need += int64(f.count[b])
			}
			if size+need > budget && end > pos {
				break
			}
			for _, id := range [2]int{a, b} {
				if stamp[id] != round {
					stamp[id] = round
					slot[id] = int32(len(ids))
					ids = append(ids, uint32(id))
					offs = append(offs, size)
					size += int64(f.count[id])
				}
			}
		}
		offs = append(offs, size)
		if int64(cap(arena)) < size {
			arena = make([]uint64, size)
		}
		arena = arena[:size]
		lens = slices.Grow(lens[:0], len(ids))[:len(ids)]
		parallel(o.Workers, len(ids), 64, func(w, lo, hi int) {
			s := &scratch[w]
			for x := lo; x < hi; x++ {
				id := int(ids[x])
				s.words = hashWords(&s.sc, f.text(id), s.words[:0])
				set := shingles(s.words, o.Shingle, arena[offs[x]:offs[x]:offs[x+1]])
				lens[x] = int32(len(sortedSet(set)))
			}
		})
		pairs := cands[pos:end]
		jac = slices.Grow(jac[:0], len(pairs))[:len(pairs)]
		set := func(id int) []uint64 {
			x := slot[id]
			return arena[offs[x] : offs[x]+int64(lens[x])]
		}
		parallel(o.Workers, len(pairs), 1024, func(_, lo, hi int) {
			for x := lo; x < hi; x++ {
				a, b := unpack(pairs[x])
				jac[x] = jaccard(set(a), set(b))
			}
		})
		for x, p := range pairs {
			if jac[x] >= thresh {
				a, b := unpack(p)
				near = append(near, Pair{A: a, B: b, Jaccard: jac[x]})
			}
		}
		res.Rounds++
		pos = end
	}
	return near
}

// cluster joins exact groups and near pairs into connected components.
func (f *finder) cluster(near []Pair) []Cluster {
	parent := make([]int32, f.n)
	for i := range parent {
		parent[i] = int32(i)
	}
	find := func(x int32) int32 {
		for parent[x] != x {
			parent[x] = parent[parent[x]]
			x = parent[x]
		}
		return x
	}
	// union keeps the smaller index as the root, so a component's root is
	// its first member.
	union := func(a, b int32) {
		ra, rb := find(a), find(b)
		if ra == rb {
			return
		}
		if rb < ra {
			ra, rb = rb, ra
		}
		parent[rb] = ra
	}
	start := 0
	for _, end := range f.groupEnd {
		g := f.groups[start:end]
		for _, m := range g[1:] {
			union(int32(g[0]), int32(m))
		}
		start = end
	}
	for _, p := range near {
		union(int32(p.A), int32(p.B))
	}

	size := make([]int32, f.n)
	for i := range parent {
		size[find(int32(i))]++
	}
	index := make([]int32, f.n) // cluster index of each root, valid where size >= 2
	var clusters []Cluster
	for i := range parent {
		r := find(int32(i))
		if size[r] < 2 {
			continue
		}
		if r == int32(i) {
			index[r] = int32(len(clusters))
			clusters = append(clusters, Cluster{Members: make([]int, 0, size[r]), Exact: true})
		}
		c := &clusters[index[r]]
		c.Members = append(c.Members, i)
	}
	start = 0
	for _, end := range f.groupEnd {
		g := f.groups[start:end]
		c := &clusters[index[find(int32(g[0]))]]
		for _, m := range g[1:] {
			c.Pairs = append(c.Pairs, Pair{A: int(g[0]), B: int(m), Jaccard: 1})
		}
		start = end
	}
	for _, p := range near {
		c := &clusters[index[find(int32(p.A))]]
		c.Pairs = append(c.Pairs, p)
		c.Exact = false
	}
	for i := range clusters {
		slices.SortFunc(clusters[i].Pairs, func(x, y Pair) int {
			if c := cmp.Compare(x.A, y.A); c != 0 {
				return c
			}
			return cmp.Compare(x.B, y.B)
		})
	}
	return clusters
}
