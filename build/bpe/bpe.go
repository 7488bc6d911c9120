// Package bpe counts the tokens of a byte-level BPE encoding from a rank
// table compiled into the program in a form that needs no set-up: a
// lookup reads the embedded bytes directly, so the first count costs what
// any other does, with no vocabulary to load into a map first (loading
// the tokenizer library's map of cl100k_base took 35 to 47 ms of every
// process that counted a token).
//
// Count implements the merge rule of OpenAI's tiktoken (byte_pair_merge in
// its src/lib.rs): a piece that is itself a token counts one; otherwise the
// piece starts as single bytes and the adjacent pair whose concatenation
// has the lowest rank is merged, the leftmost of equal ranks first, until
// no adjacent pair is a token. The tests hold every count to the one of
// github.com/tiktoken-go/tokenizer, the reference, and the embedded table
// to the one generated from it.
package bpe

import (
	"container/heap"
	_ "embed"
	"errors"
	"fmt"
)

//go:generate go run gen.go

// The table file, little-endian throughout:
//
//	magic     "kbc-bpe1"
//	n         uint32: number of tokens
//	slotBits  uint32: the hash table has 1<<slotBits slots
//	offset    (n+1) × uint32: token i is bytes[offset[i]:offset[i+1]]
//	slots     (1<<slotBits) × uint32: i+1 for token i, 0 for an empty slot
//	bytes     the tokens' bytes, one after another
//
// Token i's rank is i. A token sits in the slot its FNV-1a hash names, or the next free one
// after it (linear probing, wrapping at the end).
//
//go:embed cl100k_base.bin
var cl100kBase string

const magic = "kbc-bpe1"

// Ranks is a rank table: each token of the vocabulary with its merge rank.
// It is read-only and safe for concurrent use.
type Ranks struct {
	data     string
	n        int
	slotMask uint32
	offOff   int // start of offset
	slotOff  int // start of slots
	bytesOff int // start of bytes
}

// Cl100kBase returns the ranks of OpenAI's cl100k_base encoding (the
// encoding of the text-embedding-ada-002 and text-embedding-3 models).
func Cl100kBase() *Ranks {
	r, err := parse(cl100kBase)
	if err != nil {
		panic("bpe: embedded cl100k_base table: " + err.Error()) // go generate writes it; its test reads it
	}
	return r
}

// parse checks the table's header and sizes; it copies nothing.
func parse(data string) (*Ranks, error) {
	if len(data) < len(magic)+8 || data[:len(magic)] != magic {
		return nil, errors.New("not a kbc-bpe1 table")
	}
	n := int(u32(data, len(magic)))
	bits := u32(data, len(magic)+4)
	if n <= 0 || bits > 30 || n >= 1<<bits {
		return nil, fmt.Errorf("bad sizes: %d tokens, %d slot bits", n, bits)
	}
	r := &Ranks{data: data, n: n, slotMask: 1<<bits - 1}
	r.offOff = len(magic) + 8
	r.slotOff = r.offOff + 4*(n+1)
	r.bytesOff = r.slotOff + 4*(1<<bits)
	if r.bytesOff > len(data) || r.bytesOff+int(u32(data, r.offOff+4*n)) != len(data) {
		return nil, errors.New("table size does not match its header")
	}
	return r, nil
}

// Len returns the number of tokens in the table.
func (r *Ranks) Len() int { return r.n }

// Token returns token i's bytes and rank, 0 <= i < Len().
func (r *Ranks) Token(i int) (string, uint32) {
	lo, hi := u32(r.data, r.offOff+4*i), u32(r.data, r.offOff+4*i+4)
	return r.data[r.bytesOff+int(lo) : r.bytesOff+int(hi)], uint32(i)
}

// Rank returns the rank of token t, and whether t is a token.
func (r *Ranks) Rank(t string) (uint32, bool) {
	for s := fnv1a(t) & r.slotMask; ; s = (s + 1) & r.slotMask {
		v := u32(r.data, r.slotOff+4*int(s))
		if v == 0 {
			return 0, false
		}
		if tok, rank := r.Token(int(v - 1)); tok == t {
			return rank, true
		}
	}
}

// noRank marks a pair that is not a token.
const noRank = ^uint32(0)

// Count returns the number of tokens piece encodes to. piece is one
// pre-tokenisation piece: BPE never merges across pieces, so the count of
// a text is the sum of its pieces' counts. Every single byte is a token of
// a byte-level vocabulary; a byte that is not (no such vocabulary is
// embedded) still counts one.
func (r *Ranks) Count(piece string) int {
	if len(piece) <= 1 {
		return len(piece)
	}
	if _, ok := r.Rank(piece); ok {
		return 1
	}
	if len(piece) < heapFrom {
		return r.countScan(piece)
	}
	return r.countHeap(piece)
}

// heapFrom is the piece length from which Count merges through a heap
// (O(n log n)) instead of scanning for the lowest rank at each merge
// (O(n²), faster for the short pieces that are nearly all of them).
const heapFrom = 64

// countScan is Count by repeated scans, as tiktoken does it.
func (r *Ranks) countScan(piece string) int {
	var buf [heapFrom + 1]struct {
		off  int
		rank uint32
	}
	parts := buf[:len(piece)+1]
	for i := range parts {
		parts[i].off, parts[i].rank = i, noRank
	}
	pairRank := func(i, skip int) uint32 {
		if i+skip+2 < len(parts) {
			if rank, ok := r.Rank(piece[parts[i].off:parts[i+skip+2].off]); ok {
				return rank
			}
		}
		return noRank
	}
	for i := 0; i+2 < len(parts); i++ {
		parts[i].rank = pairRank(i, 0)
	}
	for len(parts) > 1 {
		min, at := noRank, 0
		for i := range parts[:len(parts)-1] {
			if parts[i].rank < min {
				min, at = parts[i].rank, i
			}
		}
		if min == noRank {
			break
		}
		parts[at].rank = pairRank(at, 1)
		if at > 0 {
			parts[at-1].rank = pairRank(at-1, 1)
		}
		parts = append(parts[:at+1], parts[at+2:]...)
	}
	return len(parts) - 1
}

// countHeap is Count with the parts in a linked list and the candidate
// merges in a min-heap ordered by rank, then position; an entry whose part
// was merged away or whose pair changed rank is skipped when it surfaces.
func (r *Ranks) countHeap(piece string) int {
	n := len(piece)
	// Part i starts at byte i while alive; next[i] is the next part's
	// start (n for the last), prev[i] the previous one's (-1 for the first).
	next := make([]int32, n)
	prev := make([]int32, n)
	rank := make([]uint32, n) // rank of part i merged with its next
	alive := make([]bool, n)
	h := make(mergeHeap, 0, n)
	pairRank := func(i int32) uint32 {
		j := next[i]
		if j >= int32(n) {
			return noRank
		}
		if rank, ok := r.Rank(piece[i:next[j]]); ok {
			return rank
		}
		return noRank
	}
	for i := range n {
		next[i], prev[i], alive[i] = int32(i+1), int32(i-1), true
	}
	for i := range n {
		rank[i] = pairRank(int32(i))
		if rank[i] != noRank {
			h = append(h, mergeEntry{rank[i], int32(i)})
		}
	}
	heap.Init(&h)
	parts := n
	for h.Len() > 0 {
		e := heap.Pop(&h).(mergeEntry)
		i := e.at
		if !alive[i] || rank[i] != e.rank {
			continue
		}
		j := next[i] // merged into i
		alive[j] = false
		next[i] = next[j]
		if next[j] < int32(n) {
			prev[next[j]] = i
		}
		parts--
		if rank[i] = pairRank(i); rank[i] != noRank {
			heap.Push(&h, mergeEntry{rank[i], i})
		}
		if p := prev[i]; p >= 0 {
			if rank[p] = pairRank(p); rank[p] != noRank {
				heap.Push(&h, mergeEntry{rank[p], p})
			}
		}
	}
	return parts
}

type mergeEntry struct {
	rank uint32
	at   int32
}

type mergeHeap []mergeEntry

func (h mergeHeap) Len() int { return len(h) }
func (h mergeHeap) Less(i, j int) bool {
	return h[i].rank < h[j].rank || h[i].rank == h[j].rank && h[i].at < h[j].at
}
func (h mergeHeap) Swap(i, j int) { h[i], h[j] = h[j], h[i] }
func (h *mergeHeap) Push(x any)   { *h = append(*h, x.(mergeEntry)) }
func (h *mergeHeap) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}

// fnv1a is the 32-bit FNV-1a hash (Fowler, Noll and Vo; the offset basis
// and prime of draft-eastlake-fnv, section 2).
func fnv1a(s string) uint32 {
	h := uint32(2166136261)
	for i := 0; i < len(s); i++ {
		h ^= uint32(s[i])
		h *= 16777619
	}
	return h
}

func u32(s string, at int) uint32 {
	_ = s[at+3]
	return uint32(s[at]) | uint32(s[at+1])<<8 | uint32(s[at+2])<<16 | uint32(s[at+3])<<24
}
