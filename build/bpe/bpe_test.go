package bpe

import (
	"bytes"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/tiktoken-go/tokenizer"
)

// The reference for every check here is github.com/tiktoken-go/tokenizer
// (v0.10.0, from the Go module proxy), a port of OpenAI's tiktoken.
func library(t testing.TB) tokenizer.Codec {
	t.Helper()
	lib, err := tokenizer.Get(tokenizer.Cl100kBase)
	if err != nil {
		t.Fatal(err)
	}
	return lib
}

// The embedded table is what gen.go makes from the library today: a
// library upgrade that changes the vocabulary fails here until
// `go generate ./build/bpe` is run.
func TestTableIsGenerated(t *testing.T) {
	lib := library(t)
	var tokens []string
	for id := uint(0); id < 100256; id++ {
		tok, err := lib.Decode([]uint{id})
		if err != nil || tok == "" {
			t.Fatalf("library id %d: %q %v", id, tok, err)
		}
		tokens = append(tokens, tok)
	}
	want, err := Encode(tokens)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal([]byte(cl100kBase), want) {
		t.Fatal("cl100k_base.bin differs from the library's vocabulary: run go generate ./build/bpe")
	}
	r := Cl100kBase()
	for i, tok := range tokens {
		if rank, ok := r.Rank(tok); !ok || rank != uint32(i) {
			t.Fatalf("Rank(%q) = %d, %v; want %d", tok, rank, ok, i)
		}
		if r.Count(tok) != 1 {
			t.Fatalf("Count(%q) = %d, want 1", tok, r.Count(tok))
		}
	}
}

// Published: tiktoken's README and tests encode "hello world" with
// cl100k_base as [15339, 1917] (from memory; the library agrees, below).
func TestPublishedRanks(t *testing.T) {
	r := Cl100kBase()
	for tok, want := range map[string]uint32{"hello": 15339, " world": 1917} {
		if got, ok := r.Rank(tok); !ok || got != want {
			t.Errorf("Rank(%q) = %d, %v; want %d", tok, got, ok, want)
		}
	}
	if _, ok := r.Rank("hello world"); ok {
		t.Error(`"hello world" is one token, want two`)
	}
}

// Pieces the library's pre-tokenisation keeps whole (a run of letters
// after one other character, a run of punctuation, a run of spaces), of
// every length up to 300 bytes so that both merge orders run, count as the
// library counts them.
func TestCountMatchesLibrary(t *testing.T) {
	lib, r := library(t), Cl100kBase()
	rng := rand.New(rand.NewPCG(1, 2))
	alphabets := []string{
		"etaoinshrdlucmfwypvbgkjqxz",
		"ETAOINSHRDLU",
		"абвгдежзийклмнопрстуфхцчшщъыьэюя",
		"αβγδεζηθικλμνξοπρστυφχψω",
		"日本語の文書を読む検索索引",
		"äöüßéèàçñøå",
	}
	puncts := "!\"#$%&'()*+,-./:;<=>?@[\\]^_`{|}~"
	for n := 0; n < 3000; n++ {
		var b strings.Builder
		size := 1 + rng.IntN(300)
		switch n % 3 {
		case 0:
			b.WriteString(" ")
			a := []rune(alphabets[rng.IntN(len(alphabets))])
			for b.Len() < size {
				b.WriteRune(a[rng.IntN(len(a))])
			}
		case 1:
			for b.Len() < size {
				b.WriteByte(puncts[rng.IntN(len(puncts))])
			}
		case 2:
			b.WriteString(strings.Repeat(" ", size))
			b.WriteString("x") // spaces before a word: all but the last are one piece
		}
		p := b.String()
		if n%3 == 2 {
			p = p[:len(p)-2]
		}
		want, err := lib.Count(p)
		if err != nil {
			t.Fatal(err)
		}
		if got := r.Count(p); got != want {
			t.Fatalf("Count(%q) = %d, library %d", p, got, want)
		}
	}
}

// Both merge orders give the same count on any bytes.
func FuzzMergeOrders(f *testing.F) {
	for _, s := range []string{"", "a", " hello", "!!!!!!!!", "\xff\xfe\x00", " интервал", strings.Repeat("ab", 20)} {
		f.Add(s)
	}
	r := Cl100kBase()
	f.Fuzz(func(t *testing.T, s string) {
		if len(s) < 2 || len(s) >= heapFrom {
			return
		}
		if a, b := r.countScan(s), r.countHeap(s); a != b {
			t.Fatalf("%q: scan %d, heap %d", s, a, b)
		}
	})
}

// A table that is not one is refused, not read out of bounds.
func TestParseRefuses(t *testing.T) {
	good, err := Encode([]string{"a", "b", "ab"})
	if err != nil {
		t.Fatal(err)
	}
	r, err := Parse(string(good))
	if err != nil {
		t.Fatal(err)
	}
	if r.Count("ab") != 1 || r.Count("ba") != 2 || r.Len() != 3 {
		t.Fatalf("small table: Count(ab)=%d Count(ba)=%d Len=%d", r.Count("ab"), r.Count("ba"), r.Len())
	}
	for _, bad := range []string{"", "kbc-bpe1", string(good[:len(good)-1]), "kbc-bpe2" + string(good[8:])} {
		if _, err := Parse(bad); err == nil {
			t.Errorf("Parse(%d bytes) accepted", len(bad))
		}
	}
	if _, err := Encode([]string{"a", "a"}); err == nil {
		t.Error("Encode accepted a repeated token")
	}
}

func BenchmarkCount(b *testing.B) {
	r := Cl100kBase()
	pieces := []string{" documentation", " retrieval", "Configuration", " überprüfen", "))->", strings.Repeat(" ", 80)}
	for b.Loop() {
		for _, p := range pieces {
			r.Count(p)
		}
	}
}
