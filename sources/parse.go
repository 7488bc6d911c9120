package sources

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"path"
	"strings"
	"unicode/utf8"
)

// KindOf returns the format of the file at name, judged by its extension,
// and whether sources can read it.
func KindOf(name string) (Kind, bool) {
	switch strings.ToLower(path.Ext(name)) {
	case ".md", ".markdown":
		return Markdown, true
	case ".mdx":
		return MDX, true
	case ".html", ".htm", ".xhtml":
		return HTML, true
	}
	return "", false
}

// Parse turns the bytes of the file at name (slash-separated, relative to
// the source root) into a Document. It reports a *Error, and no document,
// when the file cannot be used at all (binary content, an HTML page with no body text);
// smaller problems are kept in Document.Warnings and the document is still
// returned. A Markdown or MDX page with no body text is returned with no
// blocks. Parse never panics on bad input.
func Parse(name string, src []byte) (doc *Document, err error) {
	kind, ok := KindOf(name)
	if !ok {
		return nil, &Error{Path: name, Msg: "not a Markdown, MDX or HTML file"}
	}
	if off, bin := looksBinary(src); bin {
		return nil, &Error{Path: name, Line: NewLineIndex(src[:off]).Line(off), Msg: "binary content in a text file (NUL byte)"}
	}
	sum := sha256.Sum256(src)
	doc = &Document{Path: name, Kind: kind, Hash: hex.EncodeToString(sum[:]), Size: int64(len(src))}
	if !utf8.Valid(src) {
		off := firstInvalidUTF8(src)
		li := NewLineIndex(src)
		doc.Warnings = append(doc.Warnings, &Error{Path: name, Line: li.Line(off), Msg: `invalid UTF-8; bad bytes replaced with "?"`})
		// Replace byte for byte so that offsets still match the source file.
		src = replaceInvalidUTF8(src)
	}
	defer func() {
		// A parser bug on odd input must cost one file, not the build, so
		// every panic becomes that file's error.
		if r := recover(); r != nil {
			doc, err = nil, &Error{Path: name, Msg: fmt.Sprintf("parser failed: %v", r)}
		}
	}()
	switch kind {
	case HTML:
		err = parseHTML(doc, src)
	case Markdown:
		if looksLikeMDX(src) {
			doc.Kind = MDX
		}
		err = parseMarkdown(doc, src, doc.Kind == MDX)
	default:
		err = parseMarkdown(doc, src, true)
	}
	if err != nil {
		return nil, err
	}
	// An HTML page with no text left means extraction found nothing worth
	// keeping (a redirect stub, a page of links, a script-rendered app).
	// A Markdown page with front matter only is normal (a section landing
	// page that the site renders from its children) and comes back empty.
	if kind == HTML && len(doc.Blocks) == 0 {
		return nil, ErrNoText(name)
	}
	return doc, nil
}

// looksBinary reports whether src holds a NUL byte in its first 8 KiB, the
// test git and grep use for binary files (common practice, no standard), and
// the offset of that byte.
func looksBinary(src []byte) (int, bool) {
	head := src
	if len(head) > 8192 {
		head = head[:8192]
	}
	i := bytes.IndexByte(head, 0)
	return i, i >= 0
}

func firstInvalidUTF8(src []byte) int {
	for i := 0; i < len(src); {
		r, n := utf8.DecodeRune(src[i:])
		if r == utf8.RuneError && n == 1 {
			return i
		}
		i += n
	}
	return len(src)
}

// replaceInvalidUTF8 returns a copy of src where each invalid byte is
// replaced. A U+FFFD takes three bytes, so to keep every later offset valid
// each bad byte becomes '?' instead, which has the same width.
func replaceInvalidUTF8(src []byte) []byte {
	out := make([]byte, 0, len(src))
	for i := 0; i < len(src); {
		r, n := utf8.DecodeRune(src[i:])
		if r == utf8.RuneError && n == 1 {
			out = append(out, '?')
			i++
			continue
		}
		out = append(out, src[i:i+n]...)
		i += n
	}
	return out
}

// looksLikeMDX reports whether a file named .md is really MDX, as some
// sites write it (the Next.js docs put {/* comments */} and <Components> in
// .md files): outside fenced code, a line starts with a JSX comment, a
// capitalised JSX tag, or an ES module import with a "from" clause. Plain
// Markdown almost never starts a line with any of these.
func looksLikeMDX(src []byte) bool {
	var fence codeFence
	for len(src) > 0 {
		line := src
		if i := bytes.IndexByte(src, '\n'); i >= 0 {
			line, src = src[:i], src[i+1:]
		} else {
			src = nil
		}
		if fence.char != 0 {
			if fence.closes(line) {
				fence = codeFence{}
			}
			continue
		}
		if f, ok := openFence(line); ok {
			fence = f
			continue
		}
		t := bytes.TrimLeft(line, " \t")
		switch {
		case bytes.HasPrefix(t, []byte("{/*")):
			return true
		case len(t) > 1 && t[0] == '<' && 'A' <= t[1] && t[1] <= 'Z':
			return true
		case bytes.HasPrefix(line, []byte("import ")) && bytes.Contains(line, []byte(" from ")):
			return true
		}
	}
	return false
}

// ErrNoText is the error for an HTML page, or a page emptied by
// normalisation, that has no body text left.
func ErrNoText(name string) *Error {
	return &Error{Path: name, Line: 1, Msg: "no body text"}
}
