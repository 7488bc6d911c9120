package sources

import (
	"bytes"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/kbc-project/kbc/sources/internal/htmltree"
)

// htmlScrubURLs removes web addresses (http:// and https://) from text, in
// place: a URL is an address, not words a reader searches for, and it would
// pollute the index. Other schemes (git://, ssh://, file://) stay, because
// documentation that shows them is usually explaining their syntax. White
// space left before punctuation and emptied brackets are tidied.
func htmlScrubURLs(b []byte) []byte {
	if !bytes.Contains(b, []byte("://")) {
		return b
	}
	out := b[:0]
	for i := 0; i < len(b); {
		if k := htmlURLAt(b, i); k > 0 {
			j := i + k
			for j < len(b) && !htmltree.IsSpace(b[j]) && b[j] != '"' {
				j++
			}
			// Closing punctuation belongs to the sentence, not the URL; so
			// does a '>' when the URL holds no '<' (<http://x>, <URL:...>).
			for j > i && (strings.IndexByte(".,;:!?)]}'\"", b[j-1]) >= 0 ||
				b[j-1] == '>' && bytes.IndexByte(b[i:j], '<') < 0) {
				j--
			}
			for j-i >= 3 && (bytes.HasSuffix(b[i:j], []byte("’")) || bytes.HasSuffix(b[i:j], []byte("”"))) {
				j -= 3
			}
			i = j
			// Drop the space before the URL when punctuation or the end
			// follows, and a bracket pair the URL was alone in.
			if i == len(b) || strings.IndexByte(".,;:!?)]}", b[i]) >= 0 {
				out = bytes.TrimRight(out, " ")
			}
			if i < len(b) && (b[i] == ')' || b[i] == ']') && len(out) > 0 && (out[len(out)-1] == '(' || out[len(out)-1] == '[') {
				out = bytes.TrimRight(out[:len(out)-1], " ")
				i++
			}
			if i < len(b) && b[i] == ')' && bytes.HasSuffix(out, []byte(",")) {
				out = out[:len(out)-1]
			}
			if i < len(b) && b[i] == ' ' && (len(out) == 0 || out[len(out)-1] == ' ') {
				i++
			}
			continue
		}
		out = append(out, b[i])
		i++
	}
	return bytes.TrimSpace(out)
}

// htmlURLAt returns the length of the "http://" or "https://" that starts
// a web address at b[i], or 0. A scheme with no host after it ("such as
// https:// and ssh://") names a protocol and is not an address.
func htmlURLAt(b []byte, i int) int {
	if b[i] != 'h' && b[i] != 'H' {
		return 0
	}
	var k int
	switch {
	case len(b)-i >= 7 && bytes.EqualFold(b[i:i+7], []byte("http://")):
		k = 7
	case len(b)-i >= 8 && bytes.EqualFold(b[i:i+8], []byte("https://")):
		k = 8
	default:
		return 0
	}
	if i+k < len(b) && htmlHostByte(b[i+k]) {
		return k
	}
	return 0
}

func htmlHostByte(c byte) bool {
	return c >= 0x80 || c == '[' || c == '$' || c == '*' || c == '{' || c == '<' || '0' <= c && c <= '9' || 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z'
}

// htmlClean returns collapsed text b with its web addresses removed, or
// nothing when only punctuation is left where a URL was ("—" before an
// address in an attribution line). Punctuation that was there all along
// (a glossary entry ">>>", a "-" table cell) stays.
func htmlClean(b []byte) []byte {
	t := htmlScrubURLs(b)
	if len(t) < len(b) && !htmlHasWord(t) {
		return nil
	}
	return t
}

// htmlHasWord reports whether s holds a letter or a digit.
func htmlHasWord(s []byte) bool {
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if '0' <= c && c <= '9' || 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' {
				return true
			}
			i++
			continue
		}
		r, n := utf8.DecodeRune(s[i:])
		if unicode.IsLetter(r) || unicode.IsDigit(r) {
			return true
		}
		i += n
	}
	return false
}
