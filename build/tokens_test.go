package build

import (
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"unicode/utf8"

	"github.com/dlclark/regexp2/v2"
	"github.com/tiktoken-go/tokenizer"
)

// cl100kPattern is the split pattern of the library's cl100k_base codec
// (codec/cl100k_base.go in github.com/tiktoken-go/tokenizer v0.10.0).
// Compiling the same text picks up the library's generated matcher, which
// the codec package registers for exactly this pattern, so the test oracle
// is the matcher the library itself runs.
const cl100kPattern = `(?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+`

func newTestTokenizer(t testing.TB) *Tokenizer {
	t.Helper()
	tok, err := NewTokenizer("cl100k_base")
	if err != nil {
		t.Fatal(err)
	}
	return tok
}

func libCount(t testing.TB, s string) int {
	t.Helper()
	c, err := tokenizer.Get(tokenizer.Cl100kBase)
	if err != nil {
		t.Fatal(err)
	}
	n, err := c.Count(s)
	if err != nil {
		t.Fatal(err)
	}
	return n
}

// TestTokenCountPublished checks counts against values published with the
// reference implementations.
func TestTokenCountPublished(t *testing.T) {
	tok := newTestTokenizer(t)
	tests := []struct {
		source string
		text   string
		ids    []int // as published
		// library is set where tiktoken-go v0.10.0 (and so Count, which
		// equals it by design) disagrees with the published tiktoken value.
		library int
	}{
		// openai/tiktoken tests/test_encoding.py, test_simple and test_basic_encode.
		{"tiktoken test_simple", "hello world", []int{15339, 1917}, 0},
		{"tiktoken test_basic_encode", " \u0085" + "0", []int{220, 126, 227, 15}, 0},
		// openai/tiktoken tests/test_encoding.py, test_simple_regex.
		{"tiktoken test_simple_regex", "rer", []int{38149}, 0},
		{"tiktoken test_simple_regex", "'rer", []int{2351, 81}, 0},
		{"tiktoken test_simple_regex", "today\n ", []int{31213, 198, 220}, 0},
		// The library's generated matcher backtracks \s*[\r\n]+ to the first
		// newline of a white space run instead of the last, so "\n \n" is cut
		// into "\n" and " \n": one token more.
		{"tiktoken test_simple_regex", "today\n \n", []int{31213, 27907}, 3},
		{"tiktoken test_simple_regex", "today\n  \n", []int{31213, 14211}, 3},
		// openai/tiktoken tests/test_encoding.py, test_encode_surrogate_pairs.
		{"tiktoken test_encode_surrogate_pairs", "👍", []int{9468, 239, 235}, 0},
		// github.com/tiktoken-go/tokenizer v0.10.0 tokenizer_test.go, TestCl100kBase.
		{"tiktoken-go TestCl100kBase", "'RE", []int{95253}, 0},
		{"tiktoken-go TestCl100kBase", "hello  world", []int{15339, 220, 1917}, 0},
		{"tiktoken-go TestCl100kBase", "hello   world", []int{15339, 256, 1917}, 0},
		{"tiktoken-go TestCl100kBase", "supercalifragilistic", []int{13066, 3035, 278, 333, 4193, 321, 4633}, 0},
		{"tiktoken-go TestCl100kBase", "We know what we are, but know not what we may be.", []int{1687, 1440, 1148, 584, 527, 11, 719, 1440, 539, 1148, 584, 1253, 387, 13}, 0},
	}
	for _, tt := range tests {
		t.Run(fmt.Sprintf("%s/%q", tt.source, tt.text), func(t *testing.T) {
			want := len(tt.ids)
			if tt.library != 0 {
				want = tt.library
			}
			if got := tok.Count(tt.text); got != want {
				t.Errorf("Count(%q) = %d, want %d", tt.text, got, want)
			}
			if got := libCount(t, tt.text); got != want {
				t.Errorf("library Count(%q) = %d, want %d; if the library was fixed, drop the deviation note", tt.text, got, want)
			}
		})
	}
}

func TestTokenCountEdges(t *testing.T) {
	tok := newTestTokenizer(t)
	for _, s := range []string{
		"", " ", "\n", "\x7f", "a\x7fb", "\xff", "a\xe2\x80b", "'", "'s", "'ſ", "'LL", "'Ll", "'lx",
		"x\n \n\ny", "a\n\n  b", "\u2028\n x", "  \t\n", "1234567", "١٢٣٤", "\u00a0word", "\tword",
		"foo  ", "foo \u3000bar", "<|endoftext|>", strings.Repeat("a", 5000), strings.Repeat(" ", 100) + "x",
		strings.Repeat("é", 300), "e\u0301\u0301\u0301", "{\n    \"a\": [1, 2, 3]\n}\n",
	} {
		if got, want := tok.Count(s), libCount(t, s); got != want {
			t.Errorf("Count(%q) = %d, library %d", s, got, want)
		}
	}
}

// scannerPieces cuts s with nextPiece.
func scannerPieces(s string) []string {
	var ps []string
	for i := 0; i < len(s); {
		j, skip := nextPiece(s, i)
		if !skip {
			ps = append(ps, s[i:j])
		}
		i = j
	}
	return ps
}

// regexpPieces cuts s with the library's own matcher.
func regexpPieces(t testing.TB, re *regexp2.Regexp, s string) []string {
	t.Helper()
	var ps []string
	m, err := re.FindStringMatch(s)
	for ; m != nil && err == nil; m, err = re.FindNextMatch(m) {
		ps = append(ps, m.String())
	}
	if err != nil {
		t.Fatal(err)
	}
	return ps
}

func samePieces(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestScannerAllRunes compares the scanner's pieces with the library's
// matcher for every Unicode scalar value in several contexts, which pins the
// character classes (\p{L}, \p{N}, \s and the two negated sets) rune by rune.
func TestScannerAllRunes(t *testing.T) {
	if testing.Short() {
		t.Skip("slow: runs the regexp engine over every rune")
	}
	re := regexp2.MustCompile(cl100kPattern, regexp2.None)
	var sb strings.Builder
	flush := func(from rune) {
		s := sb.String()
		sb.Reset()
		got, want := scannerPieces(s), regexpPieces(t, re, s)
		if samePieces(got, want) {
			return
		}
		for i := 0; i < min(len(got), len(want)); i++ {
			if got[i] != want[i] {
				t.Fatalf("runes from %U: piece %d: scanner %q, library %q", from, i, got[i], want[i])
			}
		}
		t.Fatalf("runes from %U: scanner %d pieces, library %d", from, len(got), len(want))
	}
	from := rune(0)
	for r := rune(0); r <= utf8.MaxRune; r++ {
		// Planes 4 to 13 are unassigned and 15 and 16 are private use (no
		// letters, numbers or spaces); a sample of them is enough.
		if !utf8.ValidRune(r) || (r >= 0x40000 && r < 0xE0000 || r >= 0xF0000) && r%61 != 0 {
			continue
		}
		c := string(r)
		// letter after, space before, doubled before a newline, after a
		// digit, after a quote, as a white space run before a letter.
		sb.WriteString("x" + c + "a " + c + "b" + c + c + "\n1" + c + "'" + c + " " + c + c + "y.")
		if r%2048 == 2047 {
			flush(from)
			from = r + 1
		}
	}
	flush(from)
}

func FuzzTokenCount(f *testing.F) {
	for _, s := range []string{"hello world", "today\n \n", "'RE", " \u00850", "a\x7fb", "\xff\xfe", "func f() {\n\treturn 1\n}\n", "Ünïcödé  text\u00a0here", "١٢٣ 4567"} {
		f.Add(s)
	}
	tok := newTestTokenizer(f)
	lib, err := tokenizer.Get(tokenizer.Cl100kBase)
	if err != nil {
		f.Fatal(err)
	}
	re := regexp2.MustCompile(cl100kPattern, regexp2.None)
	f.Fuzz(func(t *testing.T, s string) {
		want, err := lib.Count(s)
		if err != nil {
			t.Fatal(err)
		}
		if got := tok.Count(s); got != want {
			t.Fatalf("Count(%q) = %d, library %d", s, got, want)
		}
		if utf8.ValidString(s) {
			if got, want := scannerPieces(s), regexpPieces(t, re, s); !samePieces(got, want) {
				t.Fatalf("pieces of %q: scanner %q, library %q", s, got, want)
			}
		}
	})
}

func TestTokenCountConcurrent(t *testing.T) {
	tok := newTestTokenizer(t)
	text := benchText(1 << 16)
	want := libCount(t, text)
	var wg sync.WaitGroup
	errs := make(chan string, 8)
	for g := range 8 {
		wg.Go(func() {
			// Different goroutines cut the text differently, so they race on
			// different cache shards and pieces.
			parts := strings.SplitAfter(text, "\n")
			n := 0
			for i, p := range parts {
				if (i+g)%3 == 0 {
					n += tok.Count(p)
				}
			}
			if got := tok.Count(text); got != want {
				errs <- fmt.Sprintf("goroutine %d: Count = %d, want %d", g, got, want)
			}
			_ = n
		})
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Error(e)
	}
}

func TestNewTokenizerUnknown(t *testing.T) {
	if _, err := NewTokenizer("p50k_base"); err == nil || !strings.Contains(err.Error(), `tokenizer "p50k_base" not supported`) {
		t.Errorf("NewTokenizer(p50k_base) error = %v", err)
	}
}

// corporaDir returns the real corpora folder named by KBC_CORPORA, or skips.
func corporaDir(t testing.TB) string {
	t.Helper()
	dir := os.Getenv("KBC_CORPORA")
	if dir == "" {
		t.Skip("KBC_CORPORA not set: fetch corpora with shared/corpora/get-corpora.sh DIR and set KBC_CORPORA=DIR")
	}
	if fi, err := os.Stat(dir); err != nil || !fi.IsDir() {
		t.Skipf("KBC_CORPORA=%s is not a folder: fetch corpora with shared/corpora/get-corpora.sh", dir)
	}
	return dir
}

// corporaTexts returns every text file (.md, .mdx, .html, .htm, .txt) under
// dir, in walk order, keyed by path.
func corporaTexts(t testing.TB, dir string) (paths []string, texts []string) {
	t.Helper()
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if strings.HasPrefix(d.Name(), ".") && p != dir {
				return filepath.SkipDir
			}
			return nil
		}
		switch strings.ToLower(filepath.Ext(p)) {
		case ".md", ".mdx", ".html", ".htm", ".txt":
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			paths = append(paths, p)
			texts = append(texts, string(b))
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(texts) == 0 {
		t.Skipf("no text files under KBC_CORPORA=%s", dir)
	}
	return paths, texts
}

// TestTokenCountCorpora proves Count equal to the library's count on every
// text file of the real corpora.
func TestTokenCountCorpora(t *testing.T) {
	dir := corporaDir(t)
	paths, texts := corporaTexts(t, dir)
	tok := newTestTokenizer(t)
	lib, err := tokenizer.Get(tokenizer.Cl100kBase)
	if err != nil {
		t.Fatal(err)
	}
	var bytes, tokens int
	for i, s := range texts {
		want, err := lib.Count(s)
		if err != nil {
			t.Fatal(err)
		}
		if got := tok.Count(s); got != want {
			t.Errorf("%s: Count = %d, library %d", paths[i], got, want)
		}
		bytes += len(s)
		tokens += want
	}
	t.Logf("%d files, %d bytes, %d tokens: equal", len(texts), bytes, tokens)
}

// benchText returns about n bytes of documentation-like text (prose, code,
// a table), the same for every call.
func benchText(n int) string {
	words := strings.Fields(`the a to of and in is for you can with this that your
		configuration server request file build install option value default returns
		function package module error version command environment variable cluster
		deploy token passage index search query update release support using when
		must should may not which each from into than then also more Linux proxy`)
	rng := rand.New(rand.NewPCG(1, 2))
	var sb strings.Builder
	for sb.Len() < n {
		switch rng.IntN(6) {
		case 0:
			sb.WriteString("```go\nfunc handle(w http.ResponseWriter, r *http.Request) {\n\tif err := r.ParseForm(); err != nil {\n\t\thttp.Error(w, err.Error(), 400)\n\t\treturn\n\t}\n}\n```\n\n")
		case 1:
			sb.WriteString("| Option | Default | Meaning |\n| --timeout | 30s | how long to wait |\n| --retries | 3 | attempts before failing |\n\n")
		default:
			for s := rng.IntN(4) + 1; s > 0; s-- {
				w := rng.IntN(15) + 5
				for i := range w {
					word := words[rng.IntN(len(words))]
					if i == 0 {
						word = strings.ToUpper(word[:1]) + word[1:]
					} else {
						sb.WriteByte(' ')
					}
					sb.WriteString(word)
					if i < w-1 && rng.IntN(10) == 0 {
						sb.WriteByte(',')
					}
				}
				sb.WriteString(". ")
			}
			sb.WriteString("\n\n")
		}
	}
	return sb.String()
}

// benchCorpusText returns the real corpora's Markdown and text files joined,
// up to limit bytes, or generated text when KBC_CORPORA is not set.
func benchCorpusText(b *testing.B, limit int) string {
	b.Helper()
	dir := os.Getenv("KBC_CORPORA")
	if dir == "" {
		return benchText(limit)
	}
	if _, err := os.Stat(dir); err != nil {
		return benchText(limit)
	}
	_, texts := corporaTexts(b, dir)
	var sb strings.Builder
	for _, s := range texts {
		if sb.Len()+len(s) > limit {
			break
		}
		sb.WriteString(s)
	}
	return sb.String()
}

func BenchmarkTokenCount(b *testing.B) {
	text := benchCorpusText(b, 8<<20)
	b.Run("fast", func(b *testing.B) {
		tok := newTestTokenizer(b)
		tok.Count(text) // warm the cache, as a build does after its first documents
		b.SetBytes(int64(len(text)))
		for b.Loop() {
			tok.Count(text)
		}
	})
	b.Run("fast-cold", func(b *testing.B) {
		b.SetBytes(int64(len(text)))
		for b.Loop() {
			b.StopTimer()
			tok := newTestTokenizer(b)
			b.StartTimer()
			tok.Count(text)
		}
	})
	b.Run("fast-parallel", func(b *testing.B) {
		tok := newTestTokenizer(b)
		tok.Count(text)
		parts := strings.SplitAfter(text, "\n\n")
		b.SetBytes(int64(len(text)))
		b.RunParallel(func(pb *testing.PB) {
			for pb.Next() {
				for _, p := range parts {
					tok.Count(p)
				}
			}
		})
	})
	b.Run("library", func(b *testing.B) {
		lib, err := tokenizer.Get(tokenizer.Cl100kBase)
		if err != nil {
			b.Fatal(err)
		}
		small := text[:min(len(text), 1<<20)]
		b.SetBytes(int64(len(small)))
		for b.Loop() {
			if _, err := lib.Count(small); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func ExampleTokenizer_Count() {
	tok, err := NewTokenizer("cl100k_base")
	if err != nil {
		panic(err)
	}
	fmt.Println(tok.Count("hello world"))
	fmt.Println(tok.Count("We know what we are, but know not what we may be."))
	// Output:
	// 2
	// 14
}
