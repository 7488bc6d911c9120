package build

import (
	"fmt"
	"hash/maphash"
	"strings"

	"sync/atomic"
	"unicode"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build/bpe"
)

// Tokenizer counts BPE tokens the way an embedding model will see them, so
// that passages can be held to a token budget. It is safe for concurrent use
// by several goroutines; each Tokenizer owns its cache, nothing is shared
// between them.
//
// Counting with a tokenizer library alone runs its regular expression
// engine over every byte (about 9 MB/s here) and first loads its
// vocabulary into a map (35 to 47 ms). Count instead cuts the text into
// the same pre-tokenisation pieces as the cl100k_base pattern with a
// hand-written scanner and counts only pieces it has not seen, caching
// their counts, by byte-pair merges over the rank table compiled into
// package bpe, which needs no loading. BPE never merges across pieces, so
// the sum of the piece counts is the count of the whole text;
// TestTokenCountCorpora and FuzzTokenCount check that the result equals
// the count of the reference library, github.com/tiktoken-go/tokenizer.
//
// That library (v0.10.0) matches OpenAI's tiktoken except in two rare
// cases, and Count follows the library: a run
// of white space with spaces between newlines ("\n  \n", as in code with
// indented blank lines), one piece for tiktoken, is cut at its first
// newline (in tiktoken's own test, "today\n \n" counts 3 instead of 2), and
// DEL (U+007F) counts no token. Normalised prose holds neither; in code
// they change a count by a token here and there.
type Tokenizer struct {
	name  string
	ranks *bpe.Ranks
	cache pieceCache
}

// NewTokenizer returns the tokenizer called name. Only "cl100k_base" (the
// encoding of OpenAI's text-embedding-ada-002 and text-embedding-3 models)
// is known; its vocabulary is compiled into the program, nothing is
// downloaded.
func NewTokenizer(name string) (*Tokenizer, error) {
	if name != cl100kBase {
		return nil, fmt.Errorf("tokenizer %q not supported (known: %s)", name, cl100kBase)
	}
	t := &Tokenizer{name: name, ranks: bpe.Cl100kBase()}
	t.cache.init()
	return t, nil
}

const cl100kBase = "cl100k_base"

// Name returns the encoding name the tokenizer was made with.
func (t *Tokenizer) Name() string { return t.name }

// Count returns the number of tokens in s. Special tokens such as
// "<|endoftext|>" get no special treatment: they count as the ordinary text
// they are.
//
// Text that is not valid UTF-8 is counted as the reference library counts
// it: with each byte that is not part of a valid sequence read as U+FFFD
// (its pattern matcher works on runes). Passages are valid UTF-8 (the
// normaliser makes them so); this keeps the two counts equal on any input.
func (t *Tokenizer) Count(s string) int {
	s = asRunes(s)
	n := 0
	for i := 0; i < len(s); {
		j, skip := nextPiece(s, i)
		if !skip {
			n += t.countPiece(s[i:j])
		}
		i = j
	}
	return n
}

// measured is a text with its exact token count, and the tokens that a
// blank line ("\n\n") after it adds when the text is joined to another.
type measured struct {
	text   string
	tokens int
	sep    int
}

// measure counts s, which must neither start nor end with white space, for
// joining with others by blank lines. When texts a and b are joined as
// a + "\n\n" + b, the pre-tokenisation pieces of a stay the same except its
// last one, which may take in the newlines (a run of punctuation does:
// ".\n\n" is one piece); "\n\n" is otherwise a piece of its own, since b
// starts with a character that is not white space; and b's pieces stay the
// same, as no piece reaches back over newlines. So the joined count is
// count(a) + sep(a) + count(b), with sep(a) = count(last+"\n\n") -
// count(last) for the last piece of a, exactly; FuzzSplit checks it on
// every passage.
func (t *Tokenizer) measure(s string) measured {
	s = asRunes(s)
	n, last, lastEnd := 0, 0, 0
	for i := 0; i < len(s); {
		j, skip := nextPiece(s, i)
		if !skip {
			n += t.countPiece(s[i:j])
			last, lastEnd = i, j
		}
		i = j
	}
	if lastEnd != len(s) || lastEnd == 0 {
		// Nothing, or a skipped character, between the last piece and the
		// newlines: they make a piece of their own.
		return measured{s, n, t.Count("\n\n")}
	}
	p := s[last:]
	return measured{s, n, t.Count(p+"\n\n") - t.countPiece(p)}
}

// asRunes returns s with each byte of an invalid UTF-8 sequence replaced
// by U+FFFD, as a conversion to []rune does; valid text is returned as is.
func asRunes(s string) string {
	if utf8.ValidString(s) {
		return s
	}
	return string([]rune(s))
}

// countPiece returns the tokens of one pre-tokenisation piece.
func (t *Tokenizer) countPiece(p string) int {
	if len(p) == 1 {
		// Every single byte is a token of a byte-level BPE vocabulary.
		return 1
	}
	if len(p) <= maxPackedPiece {
		return t.countShort(p)
	}
	if len(p) > maxCachedPiece {
		return t.ranks.Count(p)
	}
	h := maphash.String(t.cache.seed, p)
	bucket := t.cache.slots[h&(cacheSlots-1)&^(cacheWays-1):][:cacheWays]
	for i := range bucket {
		if e := bucket[i].Load(); e != nil && e.text == p {
			return int(e.n)
		}
	}
	n := t.ranks.Count(p)
	e := &cachedPiece{text: strings.Clone(p), n: int32(n)}
	for i := range bucket {
		if bucket[i].Load() == nil {
			bucket[i].Store(e)
			return n
		}
	}
	bucket[(h>>32)%cacheWays].Store(e) // a full bucket: evict one at random
	return n
}

// countShort counts a piece of at most 7 bytes, most of them, through a
// table of packed words: the piece's bytes, its length and its count share
// one 64-bit word, so a lookup is one atomic load and one compare, with no
// string to hash or compare and no pointer to follow.
func (t *Tokenizer) countShort(p string) int {
	key := uint64(len(p)) << 56
	for i := 0; i < len(p); i++ {
		key |= uint64(p[i]) << (8 * i)
	}
	// Fibonacci hashing (Knuth, TAOCP vol. 3, 6.4) of the packed key.
	h := (key * 0x9E3779B97F4A7C15) >> (64 - shortBits)
	bucket := t.cache.short[h&^(cacheWays-1):][:cacheWays]
	for i := range bucket {
		if e := bucket[i].Load(); e&keyMask == key {
			return int(e >> countShift)
		}
	}
	n := t.ranks.Count(p)
	// A piece has at most one token per byte, so n fits in 3 bits.
	e := key | uint64(n)<<countShift
	for i := range bucket {
		if bucket[i].Load() == 0 {
			bucket[i].Store(e)
			return n
		}
	}
	bucket[h%cacheWays].Store(e)
	return n
}

// The piece cache is a fixed table of slots, each holding one piece and its
// count, found by a hash of the piece: a piece may sit in any of the four
// slots of its bucket, and a new piece evicts an old one from a full
// bucket. Readers and writers only load and store whole slots atomically,
// so the cache needs no lock: goroutines never wait for each other, and its
// size never grows (262144 slots: 2 MB of slots, and pieces of at most 256
// bytes). Pieces are short (a word with its leading space, a run of
// punctuation), and a documentation site uses some tens of thousands of
// distinct ones (41,000 in 8 MB of the real corpora), so the working set
// fits with room to spare.
const (
	cacheSlots     = 1 << 18
	cacheWays      = 4
	maxCachedPiece = 256 // bytes: long runs of spaces or rules repeat; longer pieces are counted anew
)

type pieceCache struct {
	seed  maphash.Seed
	slots []atomic.Pointer[cachedPiece]
	// short holds pieces of at most maxPackedPiece bytes, packed: bytes
	// 0-6 the piece, bits 56-58 its length, bits 59-61 its count. An empty
	// slot is 0, which no piece packs to (its length is at least 2).
	short []atomic.Uint64
}

const (
	maxPackedPiece = 7
	shortBits      = 17 // 131072 packed slots: 1 MB
	keyMask        = 1<<59 - 1
	countShift     = 59
)

type cachedPiece struct {
	text string
	n    int32
}

func (c *pieceCache) init() {
	c.seed = maphash.MakeSeed()
	c.slots = make([]atomic.Pointer[cachedPiece], cacheSlots)
	c.short = make([]atomic.Uint64, 1<<shortBits)
}

// ASCII classes for the scanner. The two negated sets of the cl100k pattern,
// [^\r\n\p{L}\p{N}] and [^\s\p{L}\p{N}], are built by the library's regexp
// engine as ASCII bitmaps that leave out DEL (0x7f); the scanner follows the
// library, so DEL matches no branch and, like there, yields no token.
const (
	clsPunct   = iota // in both negated sets
	clsLetter         // \p{L}
	clsDigit          // \p{N}
	clsSpace          // \s but not \r or \n: also in [^\r\n\p{L}\p{N}]
	clsNewline        // \r, \n
	clsDel            // in neither set
)

var asciiClass = func() (t [utf8.RuneSelf]uint8) {
	for c := range t {
		switch {
		case 'a' <= c && c <= 'z', 'A' <= c && c <= 'Z':
			t[c] = clsLetter
		case '0' <= c && c <= '9':
			t[c] = clsDigit
		case c == '\r' || c == '\n':
			t[c] = clsNewline
		case c == '\t' || c == '\v' || c == '\f' || c == ' ':
			t[c] = clsSpace
		case c == 0x7f:
			t[c] = clsDel
		default:
			t[c] = clsPunct
		}
	}
	return t
}()

// runeAt decodes the rune at s[i]. An invalid byte decodes as U+FFFD of
// width 1, which is also what the library's []rune conversion makes of it.
func runeAt(s string, i int) (rune, int) {
	if c := s[i]; c < utf8.RuneSelf {
		return rune(c), 1
	}
	return utf8.DecodeRuneInString(s[i:])
}

func isLetter(r rune) bool {
	if r < utf8.RuneSelf {
		return asciiClass[r] == clsLetter
	}
	return unicode.IsLetter(r)
}

func isNumber(r rune) bool {
	if r < utf8.RuneSelf {
		return asciiClass[r] == clsDigit
	}
	return unicode.IsNumber(r)
}

func isSpace(r rune) bool {
	if r < utf8.RuneSelf {
		c := asciiClass[r]
		return c == clsSpace || c == clsNewline
	}
	return unicode.IsSpace(r)
}

// inNotNLN reports whether r is in [^\r\n\p{L}\p{N}].
func inNotNLN(r rune) bool {
	if r < utf8.RuneSelf {
		c := asciiClass[r]
		return c == clsPunct || c == clsSpace
	}
	return !unicode.IsLetter(r) && !unicode.IsNumber(r)
}

// inNotSLN reports whether r is in [^\s\p{L}\p{N}].
func inNotSLN(r rune) bool {
	if r < utf8.RuneSelf {
		return asciiClass[r] == clsPunct
	}
	return !unicode.IsSpace(r) && !unicode.IsLetter(r) && !unicode.IsNumber(r)
}

// nextPiece returns the end of the pre-tokenisation piece that starts at
// s[i], i < len(s). It reproduces the cl100k_base split pattern
//
//	(?i:'s|'t|'re|'ve|'m|'ll|'d)|[^\r\n\p{L}\p{N}]?\p{L}+|\p{N}{1,3}| ?[^\s\p{L}\p{N}]+[\r\n]*|\s*[\r\n]+|\s+(?!\S)|\s+
//
// as the library's generated matcher runs it, one alternative after the
// other. skip reports a character no alternative matches (DEL); the matcher
// steps over it without a token.
func nextPiece(s string, i int) (end int, skip bool) {
	r0, n0 := runeAt(s, i)

	// 'ſ' is in the set because (?i) folds it to 's'; the library's matcher
	// lists it beside S, T, s and t.
	if r0 == '\'' && i+1 < len(s) {
		r1, n1 := runeAt(s, i+1)
		switch r1 {
		case 'S', 'T', 's', 't', 'ſ', 'M', 'm', 'D', 'd':
			return i + 1 + n1, false
		case 'R', 'r', 'V', 'v':
			if i+2 < len(s) && s[i+2]|0x20 == 'e' {
				return i + 3, false
			}
		case 'L', 'l':
			if i+2 < len(s) && s[i+2]|0x20 == 'l' {
				return i + 3, false
			}
		}
	}

	// [^\r\n\p{L}\p{N}]?\p{L}+
	if isLetter(r0) {
		return letterRun(s, i+n0), false
	}
	if inNotNLN(r0) && i+n0 < len(s) {
		if r1, n1 := runeAt(s, i+n0); isLetter(r1) {
			return letterRun(s, i+n0+n1), false
		}
	}

	// \p{N}{1,3}
	if isNumber(r0) {
		j := i + n0
		for k := 1; k < 3 && j < len(s); k++ {
			r, n := runeAt(s, j)
			if !isNumber(r) {
				break
			}
			j += n
		}
		return j, false
	}

	// ' ?[^\s\p{L}\p{N}]+[\r\n]*' (the optional space is atomic: once taken
	// it is not given back)
	j := i
	if r0 == ' ' {
		j++
	}
	k := j
	for k < len(s) {
		r, n := runeAt(s, k)
		if !inNotSLN(r) {
			break
		}
		k += n
	}
	if k > j {
		for k < len(s) && (s[k] == '\n' || s[k] == '\r') {
			k++
		}
		return k, false
	}

	if !isSpace(r0) {
		return i + n0, true
	}
	e, last := i+n0, i // end of the white space run, start of its last rune
	for e < len(s) {
		r, n := runeAt(s, e)
		if !isSpace(r) {
			break
		}
		last = e
		e += n
	}
	// \s*[\r\n]+: the library's matcher backtracks the greedy \s* to the
	// first \r or \n of the run (a backtracking engine would stop at the
	// last), then takes the newlines that follow it.
	if f := strings.IndexAny(s[i:e], "\r\n"); f >= 0 {
		f += i
		for f < e && (s[f] == '\n' || s[f] == '\r') {
			f++
		}
		return f, false
	}
	// \s+(?!\S): all of the run at the end of the text, else all but its
	// last character, which then leads the next piece.
	if e == len(s) || last == i {
		return e, false // at the end, or a single character: \s+
	}
	return last, false
}

// letterRun returns the end of the run of letters starting at i.
func letterRun(s string, i int) int {
	for i < len(s) {
		if c := s[i]; c < utf8.RuneSelf {
			if asciiClass[c] != clsLetter {
				return i
			}
			i++
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		if !unicode.IsLetter(r) {
			return i
		}
		i += n
	}
	return i
}
