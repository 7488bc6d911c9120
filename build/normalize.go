package build

import (
	"strings"
	"unicode"
	"unicode/utf8"

	"golang.org/x/text/unicode/norm"

	"github.com/kbc-project/kbc/sources"
)

// Normalize cleans the text of doc in place, so that the same words always
// give the same bytes (for hashing, duplicate finding and search) and no
// invisible characters reach a passage.
//
// Prose blocks (paragraphs, list items, quotes) and tables:
//   - invalid UTF-8 becomes U+FFFD;
//   - line ends (CR LF, CR, NEL, U+2028, U+2029) become "\n";
//   - tabs and every other Unicode space (no-break, thin, ideographic...)
//     become a plain space;
//   - Unicode tag characters (U+E0000-E007F) and bidirectional
//     embeddings, overrides and isolates (U+202A-202E, U+2066-2069) are
//     dropped from every text, code included, and counted in doc.Hidden
//     by reason and line: they hide text from readers or reorder it;
//   - soft hyphens (U+00AD), zero-width spaces (U+200B), word joiners
//     (U+2060), byte order marks (U+FEFF) and other control characters are
//     dropped; the zero-width joiner and non-joiner (U+200D, U+200C) are
//     kept, because emoji sequences and Persian and Indic spelling need
//     them (Unicode Standard, section 23.2);
//   - the text is put in Unicode Normalization Form C (UAX #15);
//   - runs of spaces become one space, spaces at line ends go, and runs of
//     line ends become one, so a table keeps one row per line;
//   - the text is trimmed.
//
// Code blocks are kept byte for byte, not even NFC: code may depend on the
// exact bytes. Headings and the title are cleaned like prose, on one line.
// Blocks left empty are dropped (code blocks holding only white space too);
// heading indexes do not change.
//
// Normalize is idempotent. It touches only doc, so documents can be
// normalised on several goroutines at once.
func Normalize(doc *sources.Document) {
	dropInvisible(doc)
	doc.Title = normalizeText(doc.Title, false)
	for i := range doc.Headings {
		doc.Headings[i].Text = normalizeText(doc.Headings[i].Text, false)
	}
	kept := doc.Blocks[:0]
	for _, b := range doc.Blocks {
		if b.Kind == sources.Code {
			if strings.TrimSpace(b.Text) == "" {
				continue
			}
		} else if b.Text = normalizeText(b.Text, true); b.Text == "" {
			continue
		}
		kept = append(kept, b)
	}
	clear(doc.Blocks[len(kept):]) // let dropped text be collected
	doc.Blocks = kept
}

// normalizeText cleans one prose text; lines says whether line breaks are
// kept (else they become spaces).
func normalizeText(s string, lines bool) string {
	if cleanASCII(s, lines) {
		return s
	}
	buf := make([]byte, 0, len(s))
	ascii := true
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			i++
			switch {
			case c == '\r':
				if i < len(s) && s[i] == '\n' {
					i++
				}
				buf = append(buf, '\n')
			case c == '\n':
				buf = append(buf, '\n')
			case c == '\t' || c == '\v' || c == '\f':
				buf = append(buf, ' ')
			case c < ' ' || c == 0x7f:
				// other control characters: dropped
			default:
				buf = append(buf, c)
			}
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		i += n
		switch {
		case r == 0x85 || r == 0x2028 || r == 0x2029:
			buf = append(buf, '\n')
		case unicode.IsSpace(r):
			buf = append(buf, ' ')
		case dropRune(r):
		default:
			// An invalid byte decodes as utf8.RuneError and is written as
			// U+FFFD.
			buf = utf8.AppendRune(buf, r)
			ascii = false
		}
	}
	if !ascii {
		// After the drops, so that a mark split from its letter by a soft
		// hyphen composes with it. No composition makes a space or a line
		// end, so the collapse below keeps the text in NFC.
		buf = norm.NFC.Append(nil, buf...)
	}
	return collapseSpace(buf, lines)
}

// dropRune reports whether a non-ASCII rune is dropped from prose.
func dropRune(r rune) bool {
	switch r {
	case 0xAD, 0x200B, 0x2060, 0xFEFF:
		return true
	}
	return r < 0xA0 // C1 controls (NEL was handled before)
}

// collapseSpace removes spaces at the ends of the text and its lines, turns
// runs of spaces into one and runs of line ends into one (or into a space
// when lines is false).
func collapseSpace(b []byte, lines bool) string {
	out := b[:0] // the output never outruns the input
	space, newline := false, false
	for _, c := range b {
		switch c {
		case ' ':
			space = true
		case '\n':
			if lines {
				newline = true
			} else {
				space = true
			}
		default:
			if len(out) > 0 {
				if newline {
					out = append(out, '\n')
				} else if space {
					out = append(out, ' ')
				}
			}
			space, newline = false, false
			out = append(out, c)
		}
	}
	return string(out)
}

// cleanASCII reports whether s is printable ASCII that normalizeText would
// leave as it is, the common case, so that it can be kept without a copy.
func cleanASCII(s string, lines bool) bool {
	if s == "" {
		return true
	}
	if s[0] == ' ' || s[0] == '\n' || s[len(s)-1] == ' ' || s[len(s)-1] == '\n' {
		return false
	}
	var prev byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c == ' ':
			if prev == ' ' || prev == '\n' {
				return false
			}
		case c == '\n':
			if !lines || prev == ' ' || prev == '\n' {
				return false
			}
		case c < ' ' || c >= 0x7f:
			return false
		}
		prev = c
	}
	return true
}
