package dedupe

import (
	"github.com/cespare/xxhash/v2"
	"unicode"
	"unicode/utf8"
)

// Character classes of ASCII bytes for the word scanner.
const (
	cOther = iota // ends a word
	cLower        // a-z, 0-9: part of a word as it is
	cUpper        // A-Z: part of a word, lower-cased
	cInner        // . , - : part of a word between two word characters
)

// asciiClass maps each ASCII byte to its class.
var asciiClass = func() (t [utf8.RuneSelf]uint8) {
	for c := 'a'; c <= 'z'; c++ {
		t[c] = cLower
	}
	for c := '0'; c <= '9'; c++ {
		t[c] = cLower
	}
	for c := 'A'; c <= 'Z'; c++ {
		t[c] = cUpper
	}
	for _, c := range ".,-:" {
		t[c] = cInner
	}
	return t
}()

// isWordRune reports whether a non-ASCII rune belongs to a word: a letter, a
// digit or a combining mark (so Devanagari vowel signs stay in their word).
func isWordRune(r rune) bool {
	return unicode.IsLetter(r) || unicode.IsDigit(r) || unicode.IsMark(r)
}

// isSolo reports whether r is written without spaces between words (Han,
// Hiragana, Katakana); each such rune is a word of its own, so that a
// Chinese or Japanese paragraph has shingles at all.
func isSolo(r rune) bool {
	return r >= 0x2E80 && unicode.In(r, unicode.Han, unicode.Hiragana, unicode.Katakana)
}

// scanner walks the words of a text: runs of letters and digits, lower-cased
// (Unicode simple case mapping), with an inner '.', ',', '-' or ':' kept
// when a word character follows it, so that 1.2.3, 2026-01-04, 10:30, 2,500
// and v1.2 stay one word each. The zero value is not ready; use reset.
type scanner struct {
	s          string
	i          int
	start, end int    // byte offsets of the current word in s
	copied     bool   // the word differs from s[start:end] and is in buf
	buf        []byte // the lower-cased word when copied
}

func (sc *scanner) reset(s string) {
	sc.s, sc.i = s, 0
}

// hash returns the xxHash64 of the current word.
func (sc *scanner) hash() uint64 {
	if sc.copied {
		return xxhash.Sum64(sc.buf)
	}
	return xxhash.Sum64String(sc.s[sc.start:sc.end])
}

// text returns the current word.
func (sc *scanner) text() string {
	if sc.copied {
		return string(sc.buf)
	}
	return sc.s[sc.start:sc.end]
}

// wordAt reports whether a word can go on at byte i of sc.s: a word
// character that is not a solo rune.
func (sc *scanner) wordAt(i int) bool {
	if i >= len(sc.s) {
		return false
	}
	c := sc.s[i]
	if c < utf8.RuneSelf {
		return asciiClass[c] == cLower || asciiClass[c] == cUpper
	}
	r, _ := utf8.DecodeRuneInString(sc.s[i:])
	return isWordRune(r) && !isSolo(r)
}

// next moves to the next word and reports whether there was one. Words of
// lower-case ASCII, the most common, are left in place; others are copied
// to buf as they are lower-cased.
func (sc *scanner) next() bool {
	s, i := sc.s, sc.i
	for i < len(s) {
		c := s[i]
		if c < utf8.RuneSelf {
			if k := asciiClass[c]; k == cLower || k == cUpper {
				break
			}
			i++
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if isWordRune(r) {
			break
		}
		i += size
	}
	if i >= len(s) {
		sc.i = i
		return false
	}
	sc.start = i
fast:
	for i < len(s) {
		c := s[i]
		if c >= utf8.RuneSelf {
			return sc.slow(i)
		}
		switch asciiClass[c] {
		case cLower:
			i++
			continue
		case cUpper:
			return sc.slow(i)
		case cInner:
			if sc.wordAt(i + 1) {
				i++
				continue
			}
		}
		break fast
	}
	sc.end, sc.i, sc.copied = i, i, false
	return true
}

// slow finishes a word from byte i on, where it first needs lower-casing or
// holds a non-ASCII rune, copying it to buf.
func (sc *scanner) slow(i int) bool {
	s := sc.s
	w := append(sc.buf[:0], s[sc.start:i]...)
scan:
	for i < len(s) {
		c := s[i]
		if c < utf8.RuneSelf {
			switch asciiClass[c] {
			case cLower:
				w = append(w, c)
				i++
				continue
			case cUpper:
				w = append(w, c+('a'-'A'))
				i++
				continue
			case cInner:
				if sc.wordAt(i + 1) {
					w = append(w, c)
					i++
					continue
				}
			}
			break scan
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case isSolo(r):
			if len(w) == 0 {
				w = utf8.AppendRune(w, unicode.ToLower(r))
				i += size
			}
			break scan
		case !isWordRune(r):
			break scan
		}
		w = utf8.AppendRune(w, unicode.ToLower(r))
		i += size
	}
	sc.end, sc.i, sc.buf, sc.copied = i, i, w, true
	return true
}

// words returns the normalised words of s as Find compares them:
// lower-cased runs of letters and digits, inner '.', ',', '-' and ':' kept
// between word characters (1.2.3, 2026-01-04, 10:30, 2,500), each Han,
// Hiragana or Katakana character a word of its own.
func words(s string) []string {
	var sc scanner
	sc.reset(s)
	var out []string
	for sc.next() {
		out = append(out, sc.text())
	}
	return out
}
