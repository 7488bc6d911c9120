package dedupe

import (
	"fmt"
	"sync"

	"github.com/cespare/xxhash/v2"
)

// Memo remembers, per text, what Find's hashing stage computed from it:
// the word-sequence hash, the shingle count, whether it was MinHashed and
// its band keys. Texts are known by their 64-bit xxhash; two different
// texts with the same hash (odds about n²/2^65) would share an entry. A
// Memo serves one Find at a time; its zero value is ready. Entries of
// texts a Find did not see are dropped at its end, so it holds about one
// corpus.
type Memo struct {
	mu     sync.Mutex
	params string
	gen    uint32
	m      map[uint64]*memoEntry
}

type memoEntry struct {
	exact uint64
	count uint32
	kind  uint8
	keys  []uint64
	gen   uint32
}

// begin starts a Find with these parameters, forgetting everything if
// they differ from the last.
func (m *Memo) begin(o Options, r int) {
	m.mu.Lock()
	defer m.mu.Unlock()
	p := fmt.Sprintf("%d %d %d %d", o.Hashes, o.Shingle, o.MinShingles, r)
	if m.m == nil || m.params != p {
		m.m, m.params = map[uint64]*memoEntry{}, p
	}
	m.gen++
}

func (m *Memo) get(h uint64) *memoEntry {
	m.mu.Lock()
	defer m.mu.Unlock()
	e := m.m[h]
	if e != nil {
		e.gen = m.gen
	}
	return e
}

func (m *Memo) put(h uint64, e *memoEntry) {
	m.mu.Lock()
	e.gen = m.gen
	m.m[h] = e
	m.mu.Unlock()
}

// end drops the entries of texts the last Find did not see.
func (m *Memo) end() {
	m.mu.Lock()
	defer m.mu.Unlock()
	for h, e := range m.m {
		if e.gen != m.gen {
			delete(m.m, h)
		}
	}
}

func textKey(s string) uint64 { return xxhash.Sum64String(s) }
