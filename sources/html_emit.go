package sources

import (
	"bytes"
	"strings"
	"unicode"
	"unicode/utf8"

	"golang.org/x/net/html/atom"

	"github.com/kbc-project/kbc/sources/internal/htmltree"
)

// The block emitter: headings with their anchors, paragraphs, list items
// and quotes, walking the content roots top-down (code and tables are in
// html_code.go).

// title returns the text of the first <title> outside svg and math.
func (t *htmlTree) title() string {
	for i := 1; i < len(t.Nodes); i++ {
		n := &t.Nodes[i]
		switch n.Tag {
		case atom.Svg, atom.Math:
			i = n.Sub - 1
		case atom.Title:
			var c htmlCollapser
			for j := i + 1; j < n.Sub; j++ {
				if m := &t.Nodes[j]; m.Flags&hText != 0 {
					c.add(t.Text(m))
				}
			}
			return string(c.buf)
		}
	}
	return ""
}

// htmlCollapser appends text with runs of white space collapsed to one
// space, as CSS "white-space: normal" renders it, and no leading or
// trailing space. Besides HTML's white space (space, tab, LF, FF, CR) it
// treats every Unicode space (unicode.IsSpace: U+00A0 no-break space,
// U+3000 ideographic space and the like) and the other C0 controls as
// white space: they only shape the page on screen, and plain spaces serve
// the later stages better. A byte order mark is dropped.
type htmlCollapser struct {
	buf     []byte
	pending bool // white space seen since the last character
}

func (c *htmlCollapser) space() { c.pending = true }

func (c *htmlCollapser) add(s []byte) {
	for i := 0; i < len(s); {
		x := s[i]
		if x < utf8.RuneSelf {
			i++
			if x <= ' ' || x == 0x7F {
				c.pending = true
				continue
			}
			if c.pending && len(c.buf) > 0 {
				c.buf = append(c.buf, ' ')
			}
			c.pending = false
			c.buf = append(c.buf, x)
			continue
		}
		r, n := utf8.DecodeRune(s[i:])
		switch {
		case r == '\uFEFF':
		case unicode.IsSpace(r):
			c.pending = true
		default:
			if c.pending && len(c.buf) > 0 {
				c.buf = append(c.buf, ' ')
			}
			c.pending = false
			c.buf = append(c.buf, s[i:i+n]...)
		}
		i += n
	}
}

// addString is add for a string.
func (c *htmlCollapser) addString(s string) {
	c.add([]byte(s))
}

// htmlEmitter walks the content root and appends headings and blocks to
// the document.
type htmlEmitter struct {
	t       *htmlTree
	doc     *Document
	li      LineIndex
	root    int
	heading int // index of the latest heading, -1 before the first
	c       htmlCollapser
}

// htmlRun is a stretch of inline content that becomes one block: the byte
// range of its first and last visible node.
type htmlRun struct {
	start, end int
}

// container emits the blocks inside element i; loose inline content
// becomes blocks of kind.
func (e *htmlEmitter) container(i int, kind BlockKind) {
	nodes := e.t.Nodes
	n := &nodes[i]
	r := htmlRun{start: -1}
	e.c.buf, e.c.pending = e.c.buf[:0], false
	sawBlock := false
	for c := i + 1; c < n.Sub; c = nodes[c].Sub {
		cn := &nodes[c]
		if cn.Flags&hDrop != 0 {
			continue
		}
		if cn.Flags&hText != 0 || (!htmltree.Block(cn.Tag) && cn.Flags&hHasBlock == 0) {
			e.inline(c, &r)
			continue
		}
		e.flush(&r, kind, -1, -1)
		sawBlock = true
		e.block(c, kind)
		e.c.buf, e.c.pending = e.c.buf[:0], false
	}
	if !sawBlock && htmlTextBlock(n.Tag) {
		// The element is the block: its range takes in its tags.
		e.flush(&r, kind, n.Start, n.End)
		return
	}
	e.flush(&r, kind, -1, -1)
}

// flush emits the pending inline run, if it holds any text. A start and
// end of -1 mean the run's own range.
func (e *htmlEmitter) flush(r *htmlRun, kind BlockKind, start, end int) {
	if r.start >= 0 && len(e.c.buf) > 0 {
		if start < 0 {
			start, end = r.start, r.end
		}
		if text := htmlClean(e.c.buf); len(text) > 0 {
			e.add(Block{Kind: kind, Text: string(text)}, start, end)
		}
	}
	r.start = -1
	e.c.buf, e.c.pending = e.c.buf[:0], false
}

func (e *htmlEmitter) add(b Block, start, end int) {
	b.Heading = e.heading
	b.Start, b.End = start, end
	b.Line = e.li.Line(start)
	b.EndLine = e.li.Line(end - 1)
	e.doc.Blocks = append(e.doc.Blocks, b)
}

// inline appends the text of the inline node i to the pending run.
func (e *htmlEmitter) inline(i int, r *htmlRun) {
	nodes := e.t.Nodes
	n := &nodes[i]
	if n.Flags&hDrop != 0 {
		return
	}
	if n.Flags&hText != 0 {
		if n.Flags&hSpace != 0 {
			e.c.space()
			return
		}
		e.c.add(e.t.Text(n))
		// The block starts at the first visible character, not at the
		// line break before it.
		start, end := n.Start, n.End
		for start < end && htmltree.IsSpace(e.t.Src[start]) {
			start++
		}
		for end > start && htmltree.IsSpace(e.t.Src[end-1]) {
			end--
		}
		r.cover(start, end)
		return
	}
	switch n.Tag {
	case atom.Br:
		e.c.space()
		return
	case atom.Img:
		if a := e.t.attrOf(i); a != nil && a.alt != "" && !htmlLocation(a.alt) {
			e.c.space()
			e.c.addString(a.alt)
			e.c.space()
			r.cover(n.Start, n.End)
		}
		return
	}
	for c := i + 1; c < n.Sub; c = nodes[c].Sub {
		e.inline(c, r)
	}
}

func (r *htmlRun) cover(start, end int) {
	if r.start < 0 {
		r.start = start
	}
	r.end = end
}

// htmlLocation reports whether s (an img alt) is a URL or a file
// name rather than words: generators often fill alt with the image path.
func htmlLocation(s string) bool {
	if strings.Contains(s, "://") {
		return true
	}
	if strings.ContainsAny(s, " \t\n") {
		return false
	}
	if strings.ContainsRune(s, '/') {
		return true
	}
	switch strings.ToLower(s[strings.LastIndexByte(s, '.')+1:]) {
	case "png", "jpg", "jpeg", "gif", "svg", "webp", "bmp", "ico":
		return true
	}
	return false
}

// block emits the block-level element i; kind is the block kind its loose
// text inherits.
func (e *htmlEmitter) block(i int, kind BlockKind) {
	n := &e.t.Nodes[i]
	if e.linkHeavy(i) {
		return
	}
	switch n.Tag {
	case atom.Head, atom.Title:
		return
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		if e.inBox(i) {
			// The title of a note or a quote: text of the box, not the
			// start of a section.
			e.container(i, Paragraph)
			return
		}
		e.headingAt(i)
	case atom.Dt:
		first := len(e.doc.Blocks)
		e.container(i, Paragraph)
		if a := e.t.termAnchor(i); a != "" && len(e.doc.Blocks) > first {
			e.doc.Blocks[first].Anchor = a
		}
	case atom.Pre, atom.Listing, atom.Xmp, atom.Plaintext:
		e.code(i)
	case atom.Table:
		if e.layoutTable(i) {
			e.container(i, Paragraph)
		} else {
			e.table(i)
		}
	case atom.Li:
		e.container(i, ListItem)
	case atom.Blockquote:
		e.container(i, Quote)
	case atom.Dd, atom.Td, atom.Th, atom.Caption, atom.Figcaption, atom.Summary:
		e.container(i, Paragraph)
	default:
		e.container(i, kind)
	}
}

// inBox reports whether heading i sits in a box that is not a section of
// the page: an admonition (DocBook XSL writes <div class="note"><h3
// class="title">Note</h3>), a sidebar, or one of the elements the HTML
// outline algorithm made sectioning roots, whose headings do not belong to
// the outline around them (W3C HTML 5.2, 4.3.11.1 "Creating an outline":
// blockquote, details, fieldset, figure, td; a data table's cells are
// read as rows and never reach here), plus aside, a complementary box. A
// heading in such a box does not start a section: the text after the box
// stays in the section around it.
func (e *htmlEmitter) inBox(i int) bool {
	t := e.t
	for p, k := t.Nodes[i].Parent, 0; p > 0 && p != e.root && k < htmltree.SearchDepth; p, k = t.Nodes[p].Parent, k+1 {
		switch t.Nodes[p].Tag {
		case atom.Blockquote, atom.Details, atom.Fieldset, atom.Figure, atom.Aside:
			return true
		case atom.Div:
			if a := t.attrOf(p); a != nil && htmlBoxClass(a.class) {
				return true
			}
		}
	}
	return false
}

// htmlBoxClass reports whether a div's class names an admonition or a
// sidebar box, by the class names DocBook XSL (note, tip, warning, caution,
// important, sidebar), docutils and Sphinx (admonition, hint, attention,
// danger, error, seealso) and AsciiDoc (admonitionblock, sidebarblock)
// write.
func htmlBoxClass(class string) bool {
	for _, c := range strings.Fields(class) {
		switch c {
		case "note", "tip", "warning", "caution", "important", "sidebar", "admonition", "hint",
			"attention", "danger", "error", "seealso", "admonitionblock", "sidebarblock":
			return true
		}
	}
	return false
}

// termAnchor returns the fragment of the defined term dt i: its own id
// (Sphinx's <dt class="sig sig-object py" id="os.path.join">, AsciiDoc's
// <dt class="hdlist1" id="...">), else the id or name of an element
// inside it before any of its text (DocBook's <dt><span class="term"><a
// id="GUC-WORK-MEM"></a>...), else "".
func (t *htmlTree) termAnchor(i int) string {
	if id := t.id(i); id != "" {
		return id
	}
	for j := i + 1; j < t.Nodes[i].Sub; j++ {
		n := &t.Nodes[j]
		if n.Flags&hDrop != 0 {
			j = n.Sub - 1
			continue
		}
		if n.Flags&hText != 0 {
			if n.Flags&hSpace == 0 {
				return ""
			}
			continue
		}
		if a := t.attrOf(j); a != nil {
			if a.id != "" {
				return a.id
			}
			if a.aname != "" {
				return a.aname
			}
		}
	}
	return ""
}

// headingAt adds the heading element i.
func (e *htmlEmitter) headingAt(i int) {
	n := &e.t.Nodes[i]
	var c htmlCollapser
	e.collect(i, &c)
	if len(c.buf) == 0 {
		return
	}
	// A pilcrow left at the end (one not wrapped in a permalink <a>) is a
	// permalink sign too.
	text := bytes.TrimRight(htmlClean(c.buf), " ¶")
	if len(text) == 0 {
		return
	}
	level := int(n.Tag.String()[1] - '0')
	parent := e.heading
	for parent >= 0 && e.doc.Headings[parent].Level >= level {
		parent = e.doc.Headings[parent].Parent
	}
	e.doc.Headings = append(e.doc.Headings, Heading{
		Level:  level,
		Text:   string(text),
		Anchor: e.anchor(i),
		Parent: parent,
		Offset: n.Start,
		Line:   e.li.Line(n.Start),
	})
	e.heading = len(e.doc.Headings) - 1
}

// collect appends the visible text below node i to c, block elements
// included (each counts as white space around it).
func (e *htmlEmitter) collect(i int, c *htmlCollapser) {
	nodes := e.t.Nodes
	n := &nodes[i]
	if n.Flags&hDrop != 0 {
		return
	}
	if n.Flags&hText != 0 {
		if n.Flags&hSpace != 0 {
			c.space()
		} else {
			c.add(e.t.Text(n))
		}
		return
	}
	switch n.Tag {
	case atom.Br:
		c.space()
		return
	case atom.Img:
		if a := e.t.attrOf(i); a != nil && a.alt != "" && !htmlLocation(a.alt) {
			c.space()
			c.addString(a.alt)
			c.space()
		}
		return
	}
	blockish := htmltree.Block(n.Tag)
	if blockish {
		c.space()
	}
	for j := i + 1; j < n.Sub; j = nodes[j].Sub {
		e.collect(j, c)
	}
	if blockish {
		c.space()
	}
}

// anchor returns the fragment a link to heading i lands on: its own id;
// else the id of an element the heading opens (Sphinx wraps each section
// as <section id="x"><h2>, PostgreSQL's DocBook output as
// <div class="sect1" id="x"><div class="titlepage"><div><div><h2>); else an
// anchor just before it (<a name="x"></a><h2>, DocBook and AsciiDoc);
// else an anchor inside it (<h2><a name="x"></a>Title</h2>, DocBook XSL);
// else "".
func (e *htmlEmitter) anchor(i int) string {
	t := e.t
	if id := t.id(i); id != "" {
		return id
	}
	// Elements the heading opens.
	for c := i; c != e.root && c > 0; {
		p := t.Nodes[c].Parent
		if t.firstContent(p) != c {
			break
		}
		if id := t.id(p); id != "" {
			return id
		}
		c = p
	}
	// An empty element with an id or name just before the heading.
	if prev := t.prevElement(i); prev > 0 && t.Nodes[prev].Chars == 0 {
		if a := t.attrOf(prev); a != nil {
			if a.id != "" {
				return a.id
			}
			if a.aname != "" {
				return a.aname
			}
		}
	}
	// An anchor inside the heading.
	for j := i + 1; j < t.Nodes[i].Sub; j++ {
		if t.Nodes[j].Tag == atom.A {
			if a := t.attrOf(j); a != nil {
				if a.id != "" {
					return a.id
				}
				if a.aname != "" {
					return a.aname
				}
			}
		}
	}
	// The nearest enclosing element with an id: a link to it lands above
	// the heading, in the section that holds it (DocBook's refentry
	// around a refsynopsisdiv), which is still the closest place a link
	// can reach. The content root and what encloses it are the page
	// itself, which the path alone names.
	for p, k := t.Nodes[i].Parent, 0; p > 0 && p != e.root && k < htmltree.SearchDepth; p, k = t.Nodes[p].Parent, k+1 {
		if id := t.id(p); id != "" {
			return id
		}
	}
	return ""
}

// firstContent returns the first child of p that is an element or
// non-blank text, skipping elements that show no text and no image (such
// as Sphinx's <span id="label"></span> before a heading, or the empty
// <div class="titlepage"></div> DocBook XSL puts before a reference
// page's name), or -1.
func (t *htmlTree) firstContent(p int) int {
	for c := p + 1; c < t.Nodes[p].Sub; c = t.Nodes[c].Sub {
		n := &t.Nodes[c]
		if n.Flags&hSpace != 0 {
			continue
		}
		if n.Flags&hText == 0 && t.blank(c) {
			continue
		}
		return c
	}
	return -1
}

// blank reports whether element i shows nothing: no text and no image
// below it (dropped parts count as nothing).
func (t *htmlTree) blank(i int) bool {
	n := &t.Nodes[i]
	if n.Flags&hDrop != 0 {
		return true
	}
	if n.Chars > 0 {
		return false
	}
	for j := i; j < n.Sub; j++ {
		m := &t.Nodes[j]
		if m.Flags&hDrop != 0 {
			j = m.Sub - 1
			continue
		}
		if m.Tag == atom.Img {
			return false
		}
	}
	return true
}

// prevElement returns the element sibling just before i, skipping blank
// text, or -1.
func (t *htmlTree) prevElement(i int) int {
	p := t.Nodes[i].Parent
	for j := i - 1; j > p; {
		// j is the last node of the previous sibling's subtree; climb to
		// that sibling.
		c := j
		for t.Nodes[c].Parent != p {
			c = t.Nodes[c].Parent
		}
		n := &t.Nodes[c]
		switch {
		case n.Flags&hSpace != 0:
			j = c - 1
		case n.Flags&hText != 0:
			return -1
		default:
			return c
		}
	}
	return -1
}

// htmlTextBlock reports whether a is an element that holds one block of
// text (rather than a container whose loose text is a run inside it).
func htmlTextBlock(a atom.Atom) bool {
	switch a {
	case atom.P, atom.Li, atom.Dt, atom.Dd, atom.Td, atom.Th, atom.Caption, atom.Figcaption,
		atom.Summary, atom.Address, atom.Legend:
		return true
	}
	return false
}
