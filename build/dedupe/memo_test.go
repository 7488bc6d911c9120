package dedupe

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"reflect"
	"strings"
	"sync/atomic"
	"testing"
)

// TestMemoRoundTrip: a memo saved by one process and loaded by the next
// gives the same result as hashing afresh, and the loaded memo spares the
// hashing of every text it already knew.
func TestMemoRoundTrip(t *testing.T) {
	var texts []string
	for i := 0; i < 40; i++ {
		texts = append(texts, fmt.Sprintf("seal check %d: the reefer door seal on trailer %d is checked every thirty days by the depot workshop and logged", i%10, i))
	}
	texts = append(texts, "short text", "")
	memo := &Memo{}
	find := func(m *Memo) *Result {
		t.Helper()
		res, err := Find(len(texts), func(i int) string { return texts[i] }, Options{Workers: 2, Memo: m})
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	want := find(memo)
	data, err := memo.MarshalBinary()
	if err != nil {
		t.Fatal(err)
	}
	again, _ := memo.MarshalBinary()
	if !bytes.Equal(data, again) {
		t.Error("two encodings of one memo differ")
	}
	loaded := &Memo{}
	if err := loaded.UnmarshalBinary(data); err != nil {
		t.Fatal(err)
	}
	if loaded.Len() != memo.Len() || loaded.Len() == 0 {
		t.Fatalf("loaded %d texts, saved %d", loaded.Len(), memo.Len())
	}
	// Every text is known, so Find reads each once, only for its key.
	got := find(loaded)
	if !reflect.DeepEqual(got.Clusters, want.Clusters) {
		t.Errorf("clusters with a loaded memo differ:\n got %+v\nwant %+v", got.Clusters, want.Clusters)
	}
	for _, bad := range [][]byte{nil, []byte("kbc-memo-1\n"), data[:len(data)-3], append(append([]byte{}, data...), 0)} {
		m := &Memo{}
		if err := m.UnmarshalBinary(bad); err == nil {
			t.Errorf("%d bytes: no error", len(bad))
		}
		if m.Len() != 0 {
			t.Errorf("%d bytes: a failed decode left %d texts", len(bad), m.Len())
		}
	}
}

// FuzzMemoUnmarshal: any bytes either decode into a memo that encodes and
// decodes again to the same texts, or give an error; never a panic.
func FuzzMemoUnmarshal(f *testing.F) {
	memo := &Memo{}
	texts := []string{"one two three four five six seven eight nine ten eleven twelve", "tiny", ""}
	if _, err := Find(len(texts), func(i int) string { return texts[i] }, Options{Workers: 1, Memo: memo}); err != nil {
		f.Fatal(err)
	}
	data, _ := memo.MarshalBinary()
	f.Add(data)
	f.Add([]byte(memoMagic))
	f.Fuzz(func(t *testing.T, data []byte) {
		m := &Memo{}
		if m.UnmarshalBinary(data) != nil {
			return
		}
		out, err := m.MarshalBinary()
		if err != nil {
			t.Fatal(err)
		}
		m2 := &Memo{}
		if err := m2.UnmarshalBinary(out); err != nil || m2.Len() != m.Len() {
			t.Fatalf("re-encoded memo: %v, %d texts, want %d", err, m2.Len(), m.Len())
		}
	})
}

// TestMemoKey: with Key, a text the memo knows is not read at all, and
// the result is the one Find gives without a memo.
func TestMemoKey(t *testing.T) {
	// Unrelated texts, so that no pair is a candidate whose texts the
	// verification must read; and one exact copy.
	words := strings.Fields("bay dock reefer trailer seal alarm depot driver ramp door chill log shift yard gate fuel tyre cab route load")
	r := rand.New(rand.NewPCG(7, 8))
	var texts []string
	for range 30 {
		var b strings.Builder
		for range 40 {
			b.WriteString(words[r.IntN(len(words))] + " ")
		}
		texts = append(texts, b.String())
	}
	texts = append(texts, texts[3])
	var reads atomic.Int64
	opts := Options{Workers: 2, Memo: &Memo{}, Key: func(i int) uint64 { return textKey(texts[i]) ^ 0x5bd1e995 }}
	text := func(i int) string { reads.Add(1); return texts[i] }
	want, err := Find(len(texts), func(i int) string { return texts[i] }, Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	for round := range 2 {
		reads.Store(0)
		got, err := Find(len(texts), text, opts)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got.Clusters, want.Clusters) {
			t.Errorf("round %d: clusters %+v, want %+v", round, got.Clusters, want.Clusters)
		}
		if round == 1 && reads.Load() != 0 {
			t.Errorf("second round read %d texts, want none", reads.Load())
		}
	}
}
