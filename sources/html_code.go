package sources

import (
	"bytes"
	"strings"

	"golang.org/x/net/html/atom"

	"github.com/kbc-project/kbc/sources/internal/htmltree"
)

// Code blocks and tables of the block emitter.

// code emits the preformatted element i as a Code block: its text
// verbatim, markup removed.
func (e *htmlEmitter) code(i int) {
	n := &e.t.Nodes[i]
	var buf []byte
	e.verbatim(i, &buf)
	// A newline right after <pre> is not content (HTML Living Standard,
	// 13.2.6.4.7, "pre, listing" start tag).
	if len(buf) > 0 && buf[0] == '\n' {
		buf = buf[1:]
	}
	buf = bytes.TrimRight(buf, " \t\n\r\f")
	if len(bytes.TrimSpace(buf)) == 0 {
		return
	}
	e.add(Block{Kind: Code, Text: string(buf), Lang: e.codeLang(i)}, n.Start, n.End)
}

func (e *htmlEmitter) verbatim(i int, buf *[]byte) {
	nodes := e.t.Nodes
	for j := i + 1; j < nodes[i].Sub; j = nodes[j].Sub {
		n := &nodes[j]
		switch {
		case n.Flags&hDrop != 0:
		case n.Flags&hText != 0:
			*buf = append(*buf, e.t.Text(n)...)
		case n.Tag == atom.Br:
			*buf = append(*buf, '\n')
		default:
			e.verbatim(j, buf)
		}
	}
}

// codeLang finds the language of the code block i from a class
// "language-x" (the HTML Living Standard's suggestion for <code>, also
// used by CommonMark renderers), "lang-x" or "highlight-x" (Sphinx's
// wrapping div) on the pre, on a <code> child, or on wrapping divs.
func (e *htmlEmitter) codeLang(i int) string {
	t := e.t
	try := func(j int) string {
		if a := t.attrOf(j); a != nil && a.class != "" {
			return htmlLangFromClass(a.class)
		}
		return ""
	}
	if l := try(i); l != "" {
		return l
	}
	for j := i + 1; j < t.Nodes[i].Sub; j = t.Nodes[j].Sub {
		if t.Nodes[j].Tag == atom.Code {
			if l := try(j); l != "" {
				return l
			}
		}
	}
	for p, k := t.Nodes[i].Parent, 0; p > 0 && k < 3 && t.Nodes[p].Tag == atom.Div; p, k = t.Nodes[p].Parent, k+1 {
		if l := try(p); l != "" {
			return l
		}
	}
	return ""
}

func htmlLangFromClass(class string) string {
	for _, tok := range strings.Fields(class) {
		var l string
		switch {
		case strings.HasPrefix(tok, "language-"):
			l = tok[len("language-"):]
		case strings.HasPrefix(tok, "lang-"):
			l = tok[len("lang-"):]
		case strings.HasPrefix(tok, "highlight-"):
			l = tok[len("highlight-"):]
		default:
			continue
		}
		// Sphinx writes "highlight-default" for its configured default
		// lexer and "highlight-none" for no highlighting: neither names a
		// language.
		switch l {
		case "", "default", "none":
			continue
		}
		return strings.ToLower(l)
	}
	return ""
}

// layoutTable reports whether table i arranges blocks on the page rather
// than holding data. HTML says tables must not be used for layout (HTML
// Living Standard, 4.9.1 "The table element"), but generated pages do it
// (AsciiDoc's admonition blocks, DocBook's navigation bars). Signals, our
// judgement: role presentation or none means layout (WAI-ARIA 1.2); a
// nested table, a pre or a heading in a cell means layout; th, thead or a
// caption mean data; otherwise div, list or quote blocks, or more than
// one paragraph, in a cell mean layout. A single paragraph in a cell does
// not: docutils and AsciiDoc wrap every data cell in a <p>, and Sphinx puts line blocks (divs) and lists in data cells
// that have header rows.
func (e *htmlEmitter) layoutTable(i int) bool {
	t := e.t
	n := &t.Nodes[i]
	if n.Flags&hPresent != 0 {
		return true
	}
	data, blocks := false, false
	for j := i + 1; j < n.Sub; j++ {
		m := &t.Nodes[j]
		if m.Flags&hDrop != 0 {
			j = m.Sub - 1
			continue
		}
		switch m.Tag {
		case atom.Table, atom.Pre, atom.Listing, atom.Xmp, atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
			return true
		case atom.Th, atom.Thead, atom.Caption:
			data = true
		case atom.Div, atom.Ul, atom.Ol, atom.Dl, atom.Blockquote, atom.Section, atom.Article, atom.Figure:
			blocks = true
		case atom.Td:
			if t.blockChildren(j) > 1 {
				blocks = true
			}
		}
	}
	return blocks && !data
}

// blockChildren counts the visible block-level children of node i.
func (t *htmlTree) blockChildren(i int) int {
	k := 0
	for j := i + 1; j < t.Nodes[i].Sub; j = t.Nodes[j].Sub {
		if n := &t.Nodes[j]; n.Flags&(hDrop|hText) == 0 && htmltree.Block(n.Tag) {
			k++
		}
	}
	return k
}

// table emits data table i as one Table block, one line per row with the
// cells joined by " | ", after its caption (a Paragraph). The block spans
// the rows that hold text.
func (e *htmlEmitter) table(i int) {
	t := e.t
	var lines []byte
	start, end := -1, -1
	var c htmlCollapser
	var row func(j int) //lint:ignore S1021 row calls itself, so it is declared first
	row = func(j int) {
		m := &t.Nodes[j]
		cells, empty := 0, 0 // cells written, empty cells not yet written
		lineStart := len(lines)
		for k := j + 1; k < m.Sub; k = t.Nodes[k].Sub {
			cell := &t.Nodes[k]
			if cell.Flags&hDrop != 0 || (cell.Tag != atom.Td && cell.Tag != atom.Th) {
				continue
			}
			c.buf, c.pending = c.buf[:0], false
			e.collect(k, &c)
			text := htmlClean(c.buf)
			if len(text) == 0 {
				// Empty cells at either end of a row (spacers, icon
				// columns) are left out; inside a row they keep their
				// place so that columns still line up.
				if cells > 0 {
					empty++
				}
				continue
			}
			for ; cells > 0 && empty >= 0; empty-- {
				lines = append(lines, " | "...)
			}
			empty = 0
			lines = append(lines, text...)
			cells++
		}
		if cells == 0 {
			lines = lines[:lineStart]
			return
		}
		if start < 0 {
			start = m.Start
		}
		end = m.End
		lines = append(lines, '\n')
	}
	var walk func(p int)
	walk = func(p int) {
		for j := p + 1; j < t.Nodes[p].Sub; j = t.Nodes[j].Sub {
			m := &t.Nodes[j]
			if m.Flags&hDrop != 0 {
				continue
			}
			switch m.Tag {
			case atom.Tr:
				row(j)
			case atom.Thead, atom.Tbody, atom.Tfoot:
				walk(j)
			case atom.Caption:
				// A caption comes first in a valid table; one placed after
				// rows is left out so that block offsets keep rising.
				if start < 0 && !e.linkHeavy(j) {
					e.container(j, Paragraph)
				}
			}
		}
	}
	walk(i)
	if start < 0 {
		return
	}
	e.add(Block{Kind: Table, Text: string(bytes.TrimRight(lines, "\n"))}, start, end)
}
