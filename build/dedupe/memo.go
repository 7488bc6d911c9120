package dedupe

import (
	"encoding/binary"
	"errors"
	"fmt"
	"slices"
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

// fits reports whether e has a band key for each of the bands, and only
// if it was MinHashed: an entry decoded from bad data may not.
func (e *memoEntry) fits(bands int) bool {
	if e.kind == kindFull {
		return len(e.keys) == bands
	}
	return len(e.keys) == 0
}

// begin starts a Find with these parameters, forgetting everything if
// they differ from the last.
func (m *Memo) begin(o Options, r int) {
	m.mu.Lock()
	defer m.mu.Unlock()
	p := fmt.Sprintf("%d %d %d %d %t", o.Hashes, o.Shingle, o.MinShingles, r, o.Key != nil)
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

// memoMagic starts an encoded Memo; the digit is the layout's version.
const memoMagic = "kbc-memo-1\n"

// MarshalBinary encodes the memo, so that a later process can start from
// it: a rebuild in a new process then hashes only the texts that changed.
// It implements encoding.BinaryMarshaler.
func (m *Memo) MarshalBinary() ([]byte, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	size := len(memoMagic) + 2*binary.MaxVarintLen64 + len(m.params)
	for _, e := range m.m {
		size += 8 + 8 + 4 + 1 + binary.MaxVarintLen64 + 8*len(e.keys)
	}
	b := make([]byte, 0, size)
	b = append(b, memoMagic...)
	b = binary.AppendUvarint(b, uint64(len(m.params)))
	b = append(b, m.params...)
	b = binary.AppendUvarint(b, uint64(len(m.m)))
	// In key order, so that equal memos encode to equal bytes.
	hs := make([]uint64, 0, len(m.m))
	for h := range m.m {
		hs = append(hs, h)
	}
	slices.Sort(hs)
	for _, h := range hs {
		e := m.m[h]
		b = binary.LittleEndian.AppendUint64(b, h)
		b = binary.LittleEndian.AppendUint64(b, e.exact)
		b = binary.LittleEndian.AppendUint32(b, e.count)
		b = append(b, e.kind)
		b = binary.AppendUvarint(b, uint64(len(e.keys)))
		for _, k := range e.keys {
			b = binary.LittleEndian.AppendUint64(b, k)
		}
	}
	return b, nil
}

// maxMemoKeys bounds the band keys of one decoded entry: Bands never gives
// more bands than hashes, and Options caps Hashes far below this.
const maxMemoKeys = 1 << 12

// UnmarshalBinary replaces the memo's contents with those encoded by
// MarshalBinary. Malformed data gives an error and leaves the memo empty;
// it implements encoding.BinaryUnmarshaler.
func (m *Memo) UnmarshalBinary(data []byte) error {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.m, m.params, m.gen = nil, "", 0
	r := memoReader{b: data}
	if !r.prefix(memoMagic) {
		return errors.New("dedupe: not an encoded memo")
	}
	params := string(r.bytes(r.uvarint()))
	n := r.uvarint()
	if r.err != nil || n > uint64(len(r.b))/21 { // 21: the smallest entry
		return errors.New("dedupe: encoded memo is truncated")
	}
	mm := make(map[uint64]*memoEntry, n)
	for range n {
		h := r.uint64()
		e := &memoEntry{exact: r.uint64(), count: r.uint32(), kind: r.byte()}
		nk := r.uvarint()
		if r.err != nil || e.kind > kindFull || nk > maxMemoKeys || (nk > 0) != (e.kind == kindFull) {
			return errors.New("dedupe: encoded memo is malformed")
		}
		if nk > 0 {
			e.keys = make([]uint64, nk)
			for i := range e.keys {
				e.keys[i] = r.uint64()
			}
		}
		if _, dup := mm[h]; dup {
			return errors.New("dedupe: encoded memo holds a text twice")
		}
		mm[h] = e
	}
	if r.err != nil || len(r.b) > 0 {
		return errors.New("dedupe: encoded memo is malformed")
	}
	m.m, m.params = mm, params
	return nil
}

// Len returns the number of texts the memo holds.
func (m *Memo) Len() int {
	m.mu.Lock()
	defer m.mu.Unlock()
	return len(m.m)
}

// memoReader reads the encoding of a Memo; after the first short read it
// returns zeros and keeps the error.
type memoReader struct {
	b   []byte
	err error
}

func (r *memoReader) take(n uint64) []byte {
	if r.err != nil || n > uint64(len(r.b)) {
		r.err = errors.New("short")
		return nil
	}
	out := r.b[:n]
	r.b = r.b[n:]
	return out
}

func (r *memoReader) prefix(p string) bool  { return string(r.take(uint64(len(p)))) == p }
func (r *memoReader) bytes(n uint64) []byte { return r.take(n) }

func (r *memoReader) byte() uint8 {
	if b := r.take(1); b != nil {
		return b[0]
	}
	return 0
}

func (r *memoReader) uint32() uint32 {
	if b := r.take(4); b != nil {
		return binary.LittleEndian.Uint32(b)
	}
	return 0
}

func (r *memoReader) uint64() uint64 {
	if b := r.take(8); b != nil {
		return binary.LittleEndian.Uint64(b)
	}
	return 0
}

func (r *memoReader) uvarint() uint64 {
	if r.err != nil {
		return 0
	}
	v, n := binary.Uvarint(r.b)
	if n <= 0 {
		r.err = errors.New("bad varint")
		return 0
	}
	r.b = r.b[n:]
	return v
}
