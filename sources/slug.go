package sources

import (
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Slug turns heading text into an anchor: lower-case, white space becomes
// "-", and only letters (any script, with their combining marks), digits,
// "-" and "_" are kept; everything else is dropped. Repeated white space
// is not merged ("a  b" gives "a--b").
//
// Slug is step 3 of the rule that gives Heading.Anchor, the fragment a
// browser link to the heading would use. No standard says how Markdown
// renderers make heading ids; kbc follows the common practice of Git
// hosting sites' Markdown renderers, with two explicit forms first:
//
//  1. An explicit attribute, "## Install {#setup}", gives "setup"; the
//     heading then has no slug of its own.
//  2. Otherwise an HTML anchor, <a id="x"> or <a name="x">, inside the
//     heading's text or immediately before the heading (the last one of
//     an HTML block, or of a paragraph of only inline HTML, right above
//     it) gives "x". The heading still takes its slug (step 3), as a
//     renderer still gives it one.
//  3. Otherwise the anchor is Slug(heading text). When that slug is
//     already taken in the document (by an earlier heading's anchor of
//     any kind), "-1", "-2", ... is added, counting per slug in document
//     order: "Usage", "Usage", "Usage" give usage, usage-1, usage-2.
//
// Explicit and HTML anchors are used as written, even if they repeat.
func Slug(text string) string {
	var b strings.Builder
	b.Grow(len(text))
	for _, r := range text {
		switch {
		case r == '-' || r == '_':
			b.WriteRune(r)
		case unicode.IsSpace(r):
			b.WriteByte('-')
		case unicode.IsLetter(r) || unicode.IsMark(r) || unicode.IsNumber(r):
			if r < utf8.RuneSelf {
				if 'A' <= r && r <= 'Z' {
					r += 'a' - 'A'
				}
				b.WriteByte(byte(r))
			} else {
				b.WriteRune(unicode.ToLower(r))
			}
		}
	}
	return b.String()
}

// slugger hands out unique anchors for one document.
type slugger struct {
	// used maps each anchor given out to the highest suffix tried for it.
	used map[string]int
}

// reserve records an anchor taken by an explicit id or HTML anchor.
func (s *slugger) reserve(id string) {
	if s.used == nil {
		s.used = make(map[string]int)
	}
	if _, ok := s.used[id]; !ok {
		s.used[id] = 0
	}
}

// unique returns base, or base-N with the smallest N not yet taken
// (the scheme of the github-slugger package, from memory; common practice).
func (s *slugger) unique(base string) string {
	if s.used == nil {
		s.used = make(map[string]int)
	}
	n, ok := s.used[base]
	if !ok {
		s.used[base] = 0
		return base
	}
	for {
		n++
		cand := base + "-" + strconv.Itoa(n)
		if _, taken := s.used[cand]; !taken {
			s.used[base] = n
			s.used[cand] = 0
			return cand
		}
	}
}
