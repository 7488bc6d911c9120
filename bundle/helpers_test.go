package bundle

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kbc-project/kbc/build"
)

// mkPassage makes a passage whose hash and token count follow from text
// (tokens: a word count, good enough for tests).
func mkPassage(id, path string, line int, title string, heading []string, text string) build.Passage {
	sum := sha256.Sum256([]byte(text))
	return build.Passage{
		ID: id, Path: path, Title: title, Heading: heading, Text: text,
		Line: line, EndLine: line + strings.Count(text, "\n"),
		Tokens: len(strings.Fields(text)), Hash: hex.EncodeToString(sum[:]),
	}
}

// toyPassages is the hand-computed corpus of TestBM25HandComputed. Every
// word is left as it is by the "en" analyzer (checked in
// TestToyWordsUnchanged) and none is a stop word.
func toyPassages() []build.Passage {
	return []build.Passage{
		mkPassage("a", "yard.md", 1, "Yard", nil, "truck truck seal"),
		mkPassage("b", "yard.md", 5, "Yard", []string{"Cargo"}, "truck seal door lamp rope"),
		mkPassage("c", "depot.md", 3, "Depot", []string{"Cargo", "Door"}, "door cargo"),
		mkPassage("d", "depot.md", 9, "Depot", []string{"Crew"}, "truck"),
		mkPassage("e", "dock.md", 1, "Dock", nil, "lamp rope crew van map fuel"),
	}
}

// genPassages makes n passages of 100-350 words drawn with a skewed
// distribution from a vocabulary of made-up words, with titles and heading
// trails shared the way pages share them.
func genPassages(n int, seed uint64) []build.Passage {
	r := rand.New(rand.NewPCG(seed, 1))
	syll := []string{"ka", "lo", "mi", "ne", "ru", "sa", "ti", "vo", "ze", "pa", "gu", "do"}
	vocab := make([]string, 5000)
	for i := range vocab {
		var sb strings.Builder
		for j, x := 0, i; j < 2+i%3; j++ {
			sb.WriteString(syll[x%len(syll)])
			x = x/len(syll) + j*7
		}
		vocab[i] = fmt.Sprintf("%s%d", sb.String(), i%97)
	}
	word := func() string {
		f := r.Float64()
		return vocab[int(float64(len(vocab))*f*f*f)]
	}
	ps := make([]build.Passage, n)
	for i := range ps {
		var sb strings.Builder
		for j, nw := 0, 100+r.IntN(250); j < nw; j++ {
			if j > 0 {
				sb.WriteByte(' ')
			}
			sb.WriteString(word())
		}
		doc := i / 8
		ps[i] = mkPassage(fmt.Sprintf("p%06d", i), fmt.Sprintf("docs/page%04d.md", doc), 1+(i%8)*20,
			vocab[doc%1000]+" guide", []string{vocab[doc%40], vocab[i%300]}, sb.String())
	}
	return ps
}

// treeHashes maps every file under dir (slash path) to its SHA-256.
func treeHashes(t testing.TB, dir string) map[string]string {
	t.Helper()
	m := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		sum := sha256.Sum256(data)
		m[filepath.ToSlash(rel)] = hex.EncodeToString(sum[:])
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func mustWrite(t testing.TB, out string, in *Input) *Manifest {
	t.Helper()
	m, err := Write(out, in)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func mustOpen(t testing.TB, dir string) *Bundle {
	t.Helper()
	b, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { b.Close() })
	return b
}
