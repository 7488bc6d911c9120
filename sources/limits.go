package sources

import (
	"bytes"
	"fmt"
)

// Limits on what one file may ask of the parsers, checked before any
// decoding so that a hostile file costs one warning or one error, never
// the build's time or memory.
const (
	// MaxFrontMatterSize is the largest front matter block read, in
	// bytes. A hand-written block is a few hundred bytes; 64 KiB leaves
	// room for long generated lists (our judgement, no standard).
	MaxFrontMatterSize = 64 << 10
	// MaxFrontMatterDepth is the deepest nesting of lists, tables and
	// dotted keys read in front matter. 100 is the default nesting limit
	// of Ruby's JSON parser (max_nesting) and close to serde_json's 128
	// (both from memory): common practice for data that people write.
	MaxFrontMatterDepth = 100
	// MaxMarkdownDepth is the deepest nesting of block quotes and list
	// items a Markdown or MDX file may have. The parser's work per line
	// grows with the square of the depth, so the limit bounds a file's
	// cost to a small multiple of its size. 100 is the default nesting
	// limit of the markdown-it parser (maxNesting, from memory); real
	// pages rarely pass 6.
	MaxMarkdownDepth = 100
)

// frontNesting returns the deepest nesting in a front matter block and
// the 1-based line (of the block) where it first passes limit, or 0. It
// counts open brackets and braces outside quoted strings and comments,
// plus on each line the dots of a TOML key or header, or the "- " and
// "? " markers that open YAML block sequences and keys at the start of a
// YAML line. It overestimates rather than misses: an estimate over the
// limit is never a page a person wrote.
func frontNesting(block []byte, format string, limit int) (depth, line int) {
	flow := 0
	var quote byte // open single-line quote
	triple := ""   // open TOML multi-line string delimiter
	for ln, off := 1, 0; off < len(block); ln++ {
		l, next := lineAt(block, off)
		off = next
		extra := 0
		if format == "yaml" && quote == 0 {
			j := 0
			for {
				for j < len(l) && (l[j] == ' ' || l[j] == '\t') {
					j++
				}
				if j+1 < len(l) && (l[j] == '-' || l[j] == '?') && (l[j+1] == ' ' || l[j+1] == '\t') {
					extra++
					j += 2
					continue
				}
				break
			}
		}
		inKey := format == "toml" && quote == 0 && triple == ""
		for i := 0; i < len(l); i++ {
			c := l[i]
			if triple != "" {
				if bytes.HasPrefix(l[i:], []byte(triple)) {
					i += 2
					triple = ""
				}
				continue
			}
			if quote != 0 {
				switch {
				case c == '\\' && quote == '"':
					i++
				case c == quote:
					quote = 0
				}
				continue
			}
			switch c {
			case '#':
				i = len(l)
			case '"', '\'':
				if format == "toml" && bytes.HasPrefix(l[i:], bytes.Repeat([]byte{c}, 3)) {
					triple = string(bytes.Repeat([]byte{c}, 3))
					i += 2
					continue
				}
				quote = c
			case '[', '{':
				flow++
			case ']', '}':
				if flow > 0 {
					flow--
				}
			case '=':
				inKey = false
			case '.':
				if inKey || flow > 0 && format == "toml" {
					extra++
				}
			}
			if d := flow + extra; d > depth {
				depth = d
				if depth > limit && line == 0 {
					line = ln
				}
			}
		}
		if d := flow + extra; d > depth {
			depth = d
			if depth > limit && line == 0 {
				line = ln
			}
		}
		if format != "toml" || triple == "" {
			quote = 0 // single-line quotes end with the line
		}
	}
	return depth, line
}

// markdownDepth returns the offset in body of the line where the
// nesting of block quotes and list items first passes limit, or -1.
// On each line outside fenced code it counts the container markers at
// its start (">", "-", "+", "*", "1." and "1)" followed by a space), and,
// on a line that has one, its indentation in steps of two columns (a
// nested list item is indented under its parent's text, two columns at
// least). Deep nesting needs a marker at every level, so the count
// cannot miss it.
func markdownDepth(body []byte, limit int) int {
	var fence codeFence
	for off := 0; off < len(body); {
		start := off
		l, next := lineAt(body, off)
		off = next
		if fence.char != 0 {
			if fence.closes(l) {
				fence = codeFence{}
			}
			continue
		}
		if f, ok := openFence(l); ok {
			fence = f
			continue
		}
		cols, markers, j := 0, 0, 0
		for j < len(l) {
			switch c := l[j]; {
			case c == ' ':
				cols++
				j++
				continue
			case c == '\t':
				cols += 4
				j++
				continue
			case c == '>':
				markers++
				j++
				continue
			case (c == '-' || c == '+' || c == '*') && (j+1 == len(l) || l[j+1] == ' ' || l[j+1] == '\t' || l[j+1] == '\n' || l[j+1] == '\r'):
				markers++
				j++
				continue
			case '0' <= c && c <= '9':
				k := j
				for k < len(l) && k-j < 10 && '0' <= l[k] && l[k] <= '9' {
					k++
				}
				if k < len(l) && (l[k] == '.' || l[k] == ')') && (k+1 == len(l) || l[k+1] == ' ' || l[k+1] == '\t' || l[k+1] == '\n' || l[k+1] == '\r') {
					markers++
					j = k + 1
					continue
				}
			}
			break
		}
		if markers > 0 && markers+cols/2 > limit {
			return start
		}
	}
	return -1
}

// NestedTooDeep returns the 1-based line where the nesting of lists,
// tables and dotted keys in a TOML or YAML text ("toml", "yaml") first
// passes limit, or 0 (see frontNesting). Callers that decode such text
// from untrusted files check it first.
func NestedTooDeep(data []byte, format string, limit int) int {
	_, line := frontNesting(data, format, limit)
	return line
}

// sizeOver is the message for a front matter block over the size limit.
func sizeOver(n int) string {
	return fmt.Sprintf("front matter: %s, over the %s limit; not read", SizeString(int64(n)), SizeString(MaxFrontMatterSize))
}
