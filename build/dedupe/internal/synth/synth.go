// Package synth generates a deterministic synthetic corpus of passages for
// testing and measuring near-duplicate detection at scale: words drawn from
// a Zipf-distributed invented vocabulary, with injected copies (light edits,
// heavy edits, exact copies) whose sources are known. Passages are made on
// demand from their index, so a million of them need no memory beyond the
// plan.
package synth

import (
	"math"
	"slices"
	"strings"
	"sync"
)

// Kind says how a passage was made.
type Kind uint8

// Kinds of passage.
const (
	Original Kind = iota // fresh words
	Light                // a copy of another passage with 1 or 2 words replaced
	Heavy                // a copy with 5% of its words replaced at random places
	Block                // a copy with 5% of its words replaced in one run
	Exact                // an identical copy
)

func (k Kind) String() string {
	return [...]string{"original", "light", "heavy", "block", "exact"}[k]
}

// Config describes a corpus. Zero fields take the defaults named.
type Config struct {
	N           int     // passages
	MeanWords   int     // mean words per passage (default 200); lengths are uniform in ±25%
	Vocab       int     // vocabulary size (default 200000)
	Zipf        float64 // exponent of the word-rank distribution (default 1.0)
	Light       float64 // fraction of passages that are Light copies
	Heavy       float64 // fraction of passages that are Heavy copies
	Block       float64 // fraction of passages that are Block copies
	ExactGroups int     // groups of identical passages
	ExactSize   int     // passages per exact group, its source included
	Seed        uint64
}

// Injection is one injected copy and the passage it copies.
type Injection struct {
	Src, Copy int
	Kind      Kind
}

// Corpus is a generated corpus. Its methods are safe for concurrent use.
type Corpus struct {
	cfg   Config
	chars []byte      // the vocabulary's words, one after another
	offs  []uint32    // word r is chars[offs[r]:offs[r+1]]
	alias []aliasSlot // Walker's alias table over the ranks
	src   []int32     // source of each passage, -1 for originals
	kind  []Kind
	inj   []Injection
	pool  sync.Pool
}

// New plans a corpus: vocabulary, word distribution and which passages are
// copies of which. Copies are spread over the index range at random.
func New(cfg Config) *Corpus {
	if cfg.MeanWords == 0 {
		cfg.MeanWords = 200
	}
	if cfg.Vocab == 0 {
		cfg.Vocab = 200000
	}
	if cfg.Zipf == 0 {
		cfg.Zipf = 1.0
	}
	c := &Corpus{cfg: cfg}
	c.pool.New = func() any { return new([]int32) }
	c.makeVocab()
	c.makeAlias()
	c.plan()
	return c
}

// N is the number of passages.
func (c *Corpus) N() int { return c.cfg.N }

// Injected lists the injected copies, by copy index.
func (c *Corpus) Injected() []Injection { return c.inj }

// Kind tells how passage i was made.
func (c *Corpus) Kind(i int) Kind { return c.kind[i] }

// splitmix is a SplitMix64 generator (Steele, Lea and Flood, "Fast
// splittable pseudorandom number generators", OOPSLA 2014).
type splitmix uint64

func (s *splitmix) next() uint64 {
	*s += 0x9E3779B97F4A7C15
	z := uint64(*s)
	z = (z ^ z>>30) * 0xBF58476D1CE4E5B9
	z = (z ^ z>>27) * 0x94D049BB133111EB
	return z ^ z>>31
}

func (s *splitmix) intn(n int) int { return int((s.next() >> 1) % uint64(n)) }

func seeded(seed uint64, i int, salt uint64) splitmix {
	s := splitmix(seed ^ uint64(i)*0xD1B54A32D192ED03 ^ salt*0x8CB92BA72F3D8DD7)
	s.next()
	return s
}

func (c *Corpus) makeVocab() {
	const letters = "etaoinshrdlcumwfgypbvkjxqz"
	seen := make(map[string]bool, c.cfg.Vocab)
	c.offs = make([]uint32, 1, c.cfg.Vocab+1)
	rng := seeded(c.cfg.Seed, 0, 1)
	var b []byte
	for len(c.offs) <= c.cfg.Vocab {
		r := len(c.offs) - 1
		n := 2 + int(math.Log2(float64(r+2))/3) + rng.intn(2)
		b = b[:0]
		for range n {
			b = append(b, letters[rng.intn(len(letters))])
		}
		if w := string(b); !seen[w] {
			seen[w] = true
			c.chars = append(c.chars, b...)
			c.offs = append(c.offs, uint32(len(c.chars)))
		}
	}
}

// aliasSlot is one column of an alias table: keep the column's own rank when
// the draw's low 32 bits are below keep, else take alias.
type aliasSlot struct {
	keep  uint32
	alias int32
}

// makeAlias builds the Zipf distribution over ranks as an alias table
// (Walker 1977, in Vose's stable form, "A linear algorithm for generating
// random numbers with a given distribution", IEEE TSE 1991): one draw picks a
// column and a threshold, so sampling costs one table read.
func (c *Corpus) makeAlias() {
	v := c.cfg.Vocab
	p := make([]float64, v)
	sum := 0.0
	for r := range v {
		p[r] = math.Pow(float64(r+1), -c.cfg.Zipf)
		sum += p[r]
	}
	var small, large []int32
	for r := range p {
		p[r] *= float64(v) / sum
		if p[r] < 1 {
			small = append(small, int32(r))
		} else {
			large = append(large, int32(r))
		}
	}
	c.alias = make([]aliasSlot, v)
	for len(small) > 0 && len(large) > 0 {
		s, l := small[len(small)-1], large[len(large)-1]
		small = small[:len(small)-1]
		c.alias[s] = aliasSlot{keep: uint32(p[s] * (1 << 32)), alias: l}
		p[l] -= 1 - p[s]
		if p[l] < 1 {
			large = large[:len(large)-1]
			small = append(small, l)
		}
	}
	for _, r := range append(small, large...) {
		c.alias[r] = aliasSlot{keep: math.MaxUint32, alias: r}
	}
}

func (c *Corpus) word(rng *splitmix) int32 {
	x := rng.next()
	col := int32((x >> 32) * uint64(len(c.alias)) >> 32)
	if a := c.alias[col]; uint32(x) >= a.keep {
		return a.alias
	}
	return col
}

// plan decides which passages are copies.
func (c *Corpus) plan() {
	n := c.cfg.N
	c.src = make([]int32, n)
	c.kind = make([]Kind, n)
	for i := range c.src {
		c.src[i] = -1
	}
	// A random order of the indexes; copies take them from the front,
	// sources are drawn among the indexes left as originals.
	order := make([]int32, n)
	for i := range order {
		order[i] = int32(i)
	}
	rng := seeded(c.cfg.Seed, 0, 2)
	for i := n - 1; i > 0; i-- {
		j := rng.intn(i + 1)
		order[i], order[j] = order[j], order[i]
	}
	counts := []struct {
		kind Kind
		n    int
	}{
		{Light, int(c.cfg.Light * float64(n))},
		{Heavy, int(c.cfg.Heavy * float64(n))},
		{Block, int(c.cfg.Block * float64(n))},
	}
	copies := 0
	for _, k := range counts {
		copies += k.n
	}
	copies += c.cfg.ExactGroups * max(c.cfg.ExactSize-1, 0)
	if copies >= n {
		copies = 0
		counts = counts[:0]
		c.cfg.ExactGroups = 0
	}
	next := 0
	pick := func() int32 { // a source among the originals
		return order[copies+rng.intn(n-copies)]
	}
	for _, k := range counts {
		for range k.n {
			i, s := order[next], pick()
			next++
			c.src[i], c.kind[i] = s, k.kind
		}
	}
	for range c.cfg.ExactGroups {
		s := pick()
		for range c.cfg.ExactSize - 1 {
			i := order[next]
			next++
			c.src[i], c.kind[i] = s, Exact
		}
	}
	for i, s := range c.src {
		if s >= 0 {
			c.inj = append(c.inj, Injection{Src: int(s), Copy: i, Kind: c.kind[i]})
		}
	}
}

// words appends the word ranks of passage i to dst.
func (c *Corpus) words(i int, dst []int32) []int32 {
	s := c.src[i]
	if s < 0 {
		rng := seeded(c.cfg.Seed, i, 3)
		m := c.cfg.MeanWords
		n := m - m/4 + rng.intn(m/2+1)
		for range n {
			dst = append(dst, c.word(&rng))
		}
		return dst
	}
	start := len(dst)
	dst = c.words(int(s), dst)
	w := dst[start:]
	rng := seeded(c.cfg.Seed, i, 4)
	switch c.kind[i] {
	case Light:
		for range 1 + rng.intn(2) {
			w[rng.intn(len(w))] = c.word(&rng)
		}
	case Heavy:
		edits := max(1, int(math.Round(0.05*float64(len(w)))))
		for _, p := range distinct(&rng, len(w), edits) {
			w[p] = c.word(&rng)
		}
	case Block:
		edits := max(1, int(math.Round(0.05*float64(len(w)))))
		at := rng.intn(len(w) - edits + 1)
		for p := at; p < at+edits; p++ {
			w[p] = c.word(&rng)
		}
	}
	return dst
}

// distinct draws k distinct positions below n.
func distinct(rng *splitmix, n, k int) []int {
	var ps []int
	for len(ps) < k {
		p := rng.intn(n)
		if !slices.Contains(ps, p) {
			ps = append(ps, p)
		}
	}
	return ps
}

// Text returns passage i: its words, sentences of twelve words, each
// starting with a capital and ending with a full stop.
func (c *Corpus) Text(i int) string {
	bp := c.pool.Get().(*[]int32)
	ws := c.words(i, (*bp)[:0])
	size := 1
	for j, r := range ws {
		size += int(c.offs[r+1]-c.offs[r]) + 1
		if j%12 == 0 && j > 0 {
			size++
		}
	}
	var b strings.Builder
	b.Grow(size)
	for j, r := range ws {
		w := c.chars[c.offs[r]:c.offs[r+1]]
		if j%12 == 0 {
			if j > 0 {
				b.WriteString(". ")
			}
			b.WriteByte(w[0] - ('a' - 'A'))
			b.Write(w[1:])
			continue
		}
		b.WriteByte(' ')
		b.Write(w)
	}
	b.WriteByte('.')
	*bp = ws
	c.pool.Put(bp)
	return b.String()
}
