package sources

import (
	"bytes"
	"strings"
	"unicode"
	"unicode/utf8"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// The HTML reader works in three passes over one file:
//
//  1. tokenize with golang.org/x/net/html's Tokenizer, which gives the raw
//     bytes of each token, and build a light tree (a flat slice in document
//     order) whose nodes know their byte range in the source. html.Parse
//     would do the HTML5 tree-building fixups for us but loses positions, so
//     the common implied-end-tag cases are handled here (see htmlBuilder);
//  2. walk the tree bottom-up once to count text and link characters per
//     element (for link density) and to mark permalink anchors;
//  3. walk the content root top-down and emit headings and blocks.

// parseHTML fills doc.Title, doc.Headings and doc.Blocks from the HTML page
// src.
func parseHTML(doc *Document, src []byte) error {
	t := buildHTMLTree(src)
	t.stats()
	e := htmlEmitter{t: t, doc: doc, li: NewLineIndex(src), heading: -1}
	for _, r := range t.contentRoots() {
		e.root = r
		e.container(r, Paragraph)
	}
	t.countStyled(doc, e.li)
	doc.Title = t.title()
	if doc.Title == "" {
		for _, h := range doc.Headings {
			if h.Level == 1 {
				doc.Title = h.Text
				break
			}
		}
	}
	return nil
}

// Node flags.
const (
	hText       uint32 = 1 << iota // a text node
	hDrop                          // left out with its subtree
	hLink                          // <a href>
	hHeaderLink                    // permalink anchor such as Sphinx's ¶
	hHasHeading                    // holds an h1-h6 (itself included)
	hHasBlock                      // holds a block-level element (itself excluded)
	hRoleMain                      // role="main"
	hPresent                       // table with role presentation or none
	hSpace                         // text node of white space only
	hDecoded                       // text node whose text is in htmlTree.text, not src
)

// hnode is one element or text run. Elements span from the first byte of
// their start tag to the last byte of their end tag (or to where they were
// implicitly closed).
type hnode struct {
	tag        atom.Atom
	flags      uint32
	parent     int
	sub        int // index one past the node's last descendant
	start, end int // byte range in the source
	t0, t1     int // text nodes: the text, in src or (hDecoded) in htmlTree.text
	attr       int // index into htmlTree.attrs, or -1
	// Non-white-space characters (runes) of the visible text below the
	// node, those of them inside <a href>, and the number of <a href>.
	chars, linkChars, links int
}

// hattr keeps the few attribute values the reader needs later.
type hattr struct {
	name  string // tag name, for elements without an atom
	id    string
	aname string // name attribute of <a>
	class string // kept for pre, code and div (code language)
	alt   string // img alt
}

type htmlTree struct {
	src   []byte
	nodes []hnode // nodes[0] is the document
	attrs []hattr
	text  []byte // text of the text nodes that needed decoding
	// styled lists the elements an inline style hides (hiddencss.go).
	styled []styledHidden
}

// textOf returns the text of text node n.
func (t *htmlTree) textOf(n *hnode) []byte {
	if n.flags&hDecoded != 0 {
		return t.text[n.t0:n.t1]
	}
	return t.src[n.t0:n.t1]
}

func (t *htmlTree) attrOf(i int) *hattr {
	if a := t.nodes[i].attr; a >= 0 {
		return &t.attrs[a]
	}
	return nil
}

func (t *htmlTree) id(i int) string {
	if a := t.attrOf(i); a != nil {
		return a.id
	}
	return ""
}

// buildHTMLTree tokenizes src and builds the node tree.
func buildHTMLTree(src []byte) *htmlTree {
	b := htmlBuilder{t: &htmlTree{src: src}}
	t := b.t
	// Every node but a text node starts with '<', and end tags make none:
	// the corpora have 1.05 to 1.3 nodes per '<' (1.44 at most on one
	// page), so the slice seldom regrows.
	tags := bytes.Count(src, []byte{'<'})
	t.nodes = make([]hnode, 1, tags+tags/2+8)
	t.nodes[0] = hnode{parent: -1, attr: -1, end: len(src)}
	b.stack = append(b.stack, 0)
	z := html.NewTokenizer(bytes.NewReader(src))
	pos := 0
	for {
		tt := z.Next()
		if tt == html.ErrorToken {
			// io.EOF, or a tag cut off by the end of the file: the
			// tokenizer drops that tail, and so does the tree.
			break
		}
		start := pos
		pos += len(z.Raw())
		switch tt {
		case html.TextToken:
			b.text(z, start, pos)
		case html.StartTagToken, html.SelfClosingTagToken:
			b.startTag(start, pos, tt == html.SelfClosingTagToken)
		case html.EndTagToken:
			b.endTag(start, pos)
		}
	}
	for len(b.stack) > 1 {
		b.popImplied(len(src))
	}
	t.nodes[0].sub = len(t.nodes)
	return t
}

// htmlBuilder turns the token stream into a tree. The tokenizer does none of
// the HTML5 tree-construction fixups (WHATWG HTML Living Standard, 13.2.6
// "Tree construction"); the builder handles the cases common in
// documentation pages: void elements, implied </p>, </li>, </dt>, </dd>,
// </tr>, </td>, </th>, </option>, headings that close an open heading, end
// tags that match no open element, and inline end tags that would cross a
// block.
type htmlBuilder struct {
	t     *htmlTree
	stack []int // open elements; stack[0] is the document
	body  bool  // a <body> has been opened
	drops int   // open elements that are dropped (their text is not kept)
	// open counts the open elements of the tags that implied end tags look
	// for (see htmlTrack), so that the common searches of the stack only
	// run when they can succeed.
	open [htmlTracked]int
}

// htmlSearchDepth bounds every search of the open-element stack, so that a
// page nested deeper than any real one, with many end tags that match
// nothing, still costs linear time. Blink stops nesting at the same depth
// (its HTML parser's maximum DOM tree depth is 512; from memory of
// Chromium's HTMLConstructionSite, not checked here).
const htmlSearchDepth = 512

func (b *htmlBuilder) top() *hnode { return &b.t.nodes[b.stack[len(b.stack)-1]] }

// pop closes the innermost open element; end is where it stops.
func (b *htmlBuilder) pop(end int) {
	i := b.stack[len(b.stack)-1]
	b.stack = b.stack[:len(b.stack)-1]
	n := &b.t.nodes[i]
	n.end = end
	n.sub = len(b.t.nodes)
	if n.flags&hDrop != 0 {
		b.drops--
	}
	if k := htmlTrack(n.tag); k >= 0 {
		b.open[k]--
	}
}

// popImplied closes the innermost open element, which has no end tag of
// its own, at the token starting at at. The white space before that token
// is left out of the element, so that its range ends with its content.
func (b *htmlBuilder) popImplied(at int) {
	n := &b.t.nodes[b.stack[len(b.stack)-1]]
	end := at
	for end > n.start && htmlSpace(b.t.src[end-1]) {
		end--
	}
	b.pop(max(end, n.start+1))
}

// popTo closes open elements down to and including stack entry k: those
// above k have no end tag and end before implied, where the closing token
// starts; k itself ends at end.
func (b *htmlBuilder) popTo(k, implied, end int) {
	for len(b.stack)-1 > k {
		b.popImplied(implied)
	}
	if end == implied {
		b.popImplied(implied)
		return
	}
	b.pop(end)
}

func (b *htmlBuilder) text(z *html.Tokenizer, start, end int) {
	t := b.t
	n := hnode{flags: hText, parent: b.stack[len(b.stack)-1], start: start, end: end, attr: -1}
	n.sub = len(t.nodes) + 1
	if b.drops > 0 || b.top().tag == atom.Head {
		// Text inside script, style, nav and the like is never shown.
		n.flags |= hSpace
		t.nodes = append(t.nodes, n)
		return
	}
	// Most text needs no decoding and is used where it lies in src. Text
	// with a character reference, a carriage return or a NUL is decoded by
	// the tokenizer (which knows whether the element is raw text) and kept.
	s := t.src[start:end]
	n.t0, n.t1 = start, end
	if htmlNeedsDecoding(s) {
		s = z.Text()
		n.flags |= hDecoded
		n.t0 = len(t.text)
		t.text = append(t.text, s...)
		n.t1 = len(t.text)
	}
	n.chars = htmlChars(s)
	if n.chars == 0 {
		n.flags |= hSpace
	}
	t.nodes = append(t.nodes, n)
}

func htmlNeedsDecoding(s []byte) bool {
	return bytes.IndexByte(s, '&') >= 0 || bytes.IndexByte(s, '\r') >= 0 || bytes.IndexByte(s, 0) >= 0
}

// htmlChars counts the runes of s that are not ASCII white space or
// controls. It is the measure of text length used for link density.
func htmlChars(s []byte) int {
	c := 0
	for _, x := range s {
		// Not white space or another C0 control, and not a UTF-8
		// continuation byte.
		if x > ' ' && x&0xC0 != 0x80 {
			c++
		}
	}
	return c
}

func (b *htmlBuilder) startTag(start, end int, selfClosing bool) {
	t := b.t
	var lower [32]byte
	name, sc := htmlScanTag(t.src[start:end], lower[:])
	a := atom.Lookup(name)
	switch a {
	case atom.Html:
		return // attributes of <html> do not matter here
	case atom.Body:
		if b.body {
			return
		}
		b.closeHead(start)
		b.body = true
	case atom.Head:
		if b.body || b.inStack(atom.Head) >= 0 {
			return
		}
	}
	if !htmlHeadContent(a) {
		b.closeHead(start)
	}
	b.impliedEnds(a, start)

	n := hnode{tag: a, parent: b.stack[len(b.stack)-1], start: start, end: end, attr: -1}
	var at hattr
	keep := false
	if a == 0 {
		at.name = string(name)
		keep = true
	}
	display, hidden := true, false
	var seen uint16 // attributes met so far: the first of a name wins, as in the tokenizer
	for {
		k, v, ok := sc.next()
		if !ok {
			break
		}
		bit := htmlAttrBit(k)
		if bit == 0 || seen&bit != 0 {
			continue
		}
		seen |= bit
		switch bit {
		case htmlAttrID:
			if htmlChromeName(v) {
				n.flags |= hDrop
			}
			if len(v) > 0 {
				at.id = htmlAttrString(v)
				keep = true
			}
		case htmlAttrName:
			if a == atom.A && len(v) > 0 {
				at.aname = htmlAttrString(v)
				keep = true
			}
		case htmlAttrClass:
			if htmlChromeName(v) {
				n.flags |= hDrop
			}
			if a == atom.A && htmlHasToken(v, "headerlink") {
				n.flags |= hHeaderLink
			}
			switch a {
			case atom.Pre, atom.Code, atom.Div:
				at.class = htmlAttrString(v)
				keep = true
			}
		case htmlAttrHref:
			if a == atom.A {
				n.flags |= hLink
			}
		case htmlAttrAlt:
			if a == atom.Img && len(v) > 0 {
				at.alt = htmlAttrString(v)
				keep = true
			}
		case htmlAttrRole:
			switch htmlFirstToken(v) {
			case "navigation", "banner", "contentinfo", "search", "complementary":
				n.flags |= hDrop
			case "main":
				n.flags |= hRoleMain
			case "presentation", "none":
				n.flags |= hPresent
			}
		case htmlAttrHidden:
			// hidden="until-found" content is searchable and revealed by
			// find-in-page (HTML Living Standard, 6.1 "The hidden
			// attribute"), so it stays.
			if !strings.EqualFold(string(v), "until-found") {
				hidden = true
			}
		case htmlAttrAriaHidden:
			if strings.EqualFold(strings.TrimSpace(string(v)), "true") {
				hidden = true
			}
		case htmlAttrStyle:
			if htmlDisplayNone(v) {
				display = false
			} else if r, ok := hiddenByStyle(string(v)); ok {
				display = false
				t.styled = append(t.styled, styledHidden{r, start, b.drops > 0})
			}
		}
	}
	if hidden || !display || htmlDropTag(a) {
		n.flags |= hDrop
	}
	switch a {
	case atom.Header:
		if !b.scoped(true) {
			n.flags |= hDrop
		}
	case atom.Aside:
		if !b.scoped(false) {
			n.flags |= hDrop
		}
	}
	if keep {
		n.attr = len(t.attrs)
		t.attrs = append(t.attrs, at)
	}
	i := len(t.nodes)
	t.nodes = append(t.nodes, n)
	// Void elements never have content. A self-closing tag on any other
	// element is an XHTML habit (<a id="x"/>); HTML5 would ignore the
	// slash and leave the element open, swallowing what follows, but
	// closing it is what the author meant and what keeps an XHTML page's
	// structure sane. Raw text elements are the exception: after
	// <script/> the tokenizer reads raw text up to </script> whatever the
	// slash, so the element must stay open to hold (and hide) that text.
	if htmlVoid(a) || selfClosing && !htmlRawText(a) {
		t.nodes[i].sub = i + 1
		return
	}
	b.stack = append(b.stack, i)
	if n.flags&hDrop != 0 {
		b.drops++
	}
	if k := htmlTrack(a); k >= 0 {
		b.open[k]++
	}
}

// closeHead closes an open <head> when body content starts without a <body>
// tag, as the HTML5 "in head" insertion mode does.
func (b *htmlBuilder) closeHead(at int) {
	if k := b.inStack(atom.Head); k >= 0 {
		b.popTo(k, at, at)
	}
}

// scoped reports whether a <header> or <aside> being opened sits inside
// sectioning content (article, aside, nav, section), or for a header also
// inside main. W3C HTML Accessibility API Mappings 1.0 maps such a header
// to no landmark (it is the heading block of its section, not the page
// banner) and such an aside to no landmark either (complementary only when
// scoped to body or main). Those are kept: docutils (Sphinx, Python's docs)
// writes footnotes and sidebars as <aside> inside <section>, and articles
// put their h1 in a <header>. Page-level ones are dropped.
func (b *htmlBuilder) scoped(orMain bool) bool {
	for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-htmlSearchDepth; k-- {
		switch b.t.nodes[b.stack[k]].tag {
		case atom.Article, atom.Aside, atom.Nav, atom.Section:
			return true
		case atom.Main:
			return orMain
		}
	}
	return false
}

// inStack returns the stack position of the innermost open element with
// tag a, or -1.
func (b *htmlBuilder) inStack(a atom.Atom) int {
	if k := htmlTrack(a); k >= 0 && b.open[k] == 0 {
		return -1
	}
	for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-htmlSearchDepth; k-- {
		if b.t.nodes[b.stack[k]].tag == a {
			return k
		}
	}
	return -1
}

// findOpen looks for an open element with tag a from the innermost one
// outwards and stops at any element stop reports true for. It returns the
// stack position or -1.
func (b *htmlBuilder) findOpen(a atom.Atom, stop func(atom.Atom) bool) int {
	if k := htmlTrack(a); k >= 0 && b.open[k] == 0 {
		return -1
	}
	for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-htmlSearchDepth; k-- {
		x := b.t.nodes[b.stack[k]].tag
		if x == a {
			return k
		}
		if stop(x) {
			return -1
		}
	}
	return -1
}

// impliedEnds closes the elements that the start tag a implies are over
// (WHATWG HTML, 13.2.6.4.7 "The 'in body' insertion mode" and the table
// modes, simplified).
func (b *htmlBuilder) impliedEnds(a atom.Atom, at int) {
	closeOne := func(want atom.Atom, stop func(atom.Atom) bool) {
		if k := b.findOpen(want, stop); k >= 0 {
			b.popTo(k, at, at)
		}
	}
	if htmlClosesP(a) {
		closeOne(atom.P, htmlButtonScope)
	}
	switch a {
	case atom.Li:
		closeOne(atom.Li, htmlListItemStop)
	case atom.Dd, atom.Dt:
		closeOne(atom.Dd, htmlListItemStop)
		closeOne(atom.Dt, htmlListItemStop)
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		if htmlHeading(b.top().tag) {
			b.popImplied(at)
		}
	case atom.Tr:
		closeOne(atom.Tr, htmlTableStop)
	case atom.Td, atom.Th:
		closeOne(atom.Td, htmlRowStop)
		closeOne(atom.Th, htmlRowStop)
	case atom.Tbody, atom.Thead, atom.Tfoot:
		closeOne(atom.Tbody, htmlTableStop)
		closeOne(atom.Thead, htmlTableStop)
		closeOne(atom.Tfoot, htmlTableStop)
	case atom.Option:
		if b.top().tag == atom.Option {
			b.popImplied(at)
		}
	case atom.A:
		// An <a> inside an open <a> closes it (the "adoption agency"
		// case, without re-opening formatting elements).
		closeOne(atom.A, htmlSpecial)
	}
}

func (b *htmlBuilder) endTag(start, end int) {
	var lower [32]byte
	name, _ := htmlScanTag(b.t.src[start:end], lower[:])
	a := atom.Lookup(name)
	var stop func(atom.Atom) bool
	switch a {
	case atom.Html, atom.Body:
		// Browsers put content after </body> back into the body.
		return
	case atom.Head:
		if k := b.inStack(atom.Head); k >= 0 {
			b.popTo(k, start, end)
		}
		return
	case atom.Table:
		stop = func(x atom.Atom) bool { return x == atom.Template }
	case atom.Tr, atom.Tbody, atom.Thead, atom.Tfoot, atom.Td, atom.Th, atom.Caption:
		stop = htmlTableStop
	case atom.Li:
		// "has an li element in list item scope"
		stop = func(x atom.Atom) bool { return x == atom.Ol || x == atom.Ul || htmlScope(x) }
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		// Any heading end tag closes the open heading, whatever its level
		// (<h2>Title</h3> is common enough).
		for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-htmlSearchDepth; k-- {
			x := b.t.nodes[b.stack[k]].tag
			if htmlHeading(x) {
				b.popTo(k, start, end)
				return
			}
			if htmlScope(x) {
				return
			}
		}
		return
	case 0:
		k := len(b.stack) - 1
		for ; k > 0; k-- {
			if k < len(b.stack)-htmlSearchDepth {
				return
			}
			n := &b.t.nodes[b.stack[k]]
			if n.tag == 0 && b.t.attrs[n.attr].name == string(name) {
				break
			}
			if htmlSpecial(n.tag) {
				return
			}
		}
		if k > 0 {
			b.popTo(k, start, end)
		}
		return
	default:
		if htmlSpecial(a) || htmlBlock(a) {
			stop = htmlScope
		} else {
			// An inline end tag never closes a block it did not open.
			stop = htmlSpecial
		}
	}
	if k := b.findOpen(a, stop); k >= 0 {
		b.popTo(k, start, end)
	}
}

// stats computes, bottom-up, the character and link counts of every node,
// marks permalink anchors, and the heading and block flags.
func (t *htmlTree) stats() {
	nodes := t.nodes
	for i := len(nodes) - 1; i > 0; i-- {
		n := &nodes[i]
		if n.flags&hDrop != 0 {
			continue
		}
		if n.tag == atom.A {
			if n.flags&hHeaderLink == 0 && n.chars <= 2 && t.permalinkText(i) {
				n.flags |= hHeaderLink
			}
			if n.flags&hHeaderLink != 0 {
				n.flags |= hDrop
				continue
			}
			if n.flags&hLink != 0 {
				n.links++
				n.linkChars = n.chars
			}
		}
		if htmlHeading(n.tag) {
			n.flags |= hHasHeading
		}
		if n.tag == atom.Dl {
			t.definitionLinks(i)
		}
		p := &nodes[n.parent]
		p.chars += n.chars
		p.linkChars += n.linkChars
		p.links += n.links
		p.flags |= n.flags & hHasHeading
		if n.flags&hText == 0 && (htmlBlock(n.tag) || n.flags&hHasBlock != 0) {
			p.flags |= hHasBlock
		}
	}
}

// definitionLinks takes out of the link counts of definition list i the
// links that are the whole text of a definition whose term is not a link
// (an abbreviation expanded as a link to its source): they are content,
// and without this a page that is such a list is dropped as a link list.
// A list whose terms are links (a table of contents) is left as it is. It
// runs in stats, when the list's children are counted and the list's own
// counts are not yet added to its parent.
func (t *htmlTree) definitionLinks(i int) {
	nodes := t.nodes
	n := &nodes[i]
	term := -1 // the dt before the current dd
	for c := i + 1; c < n.sub; c = nodes[c].sub {
		m := &nodes[c]
		if m.flags&hDrop != 0 {
			continue
		}
		switch m.tag {
		case atom.Dt:
			term = c
		case atom.Dd:
			// One or two links (the expansion, perhaps a second source),
			// holding all of the definition's text.
			if term >= 0 && m.links > 0 && m.links <= 2 && m.linkChars == m.chars {
				if tn := &nodes[term]; tn.chars > tn.linkChars {
					n.links -= m.links
					n.linkChars -= m.linkChars
				}
			}
		}
	}
}

// permalinkText reports whether the text of the <a> at i is only a
// permalink sign: the pilcrow Sphinx and many static site generators put
// after headings, a section sign, '#' or a link emoji.
func (t *htmlTree) permalinkText(i int) bool {
	if t.nodes[i].sub-i > 8 {
		return false // a permalink holds one sign, perhaps in a span or two
	}
	var s []byte
	for j := i + 1; j < t.nodes[i].sub; j++ {
		if n := &t.nodes[j]; n.flags&hText != 0 {
			s = append(s, t.textOf(n)...)
		}
	}
	switch string(bytes.TrimSpace(s)) {
	case "¶", "§", "#", "🔗", "⁋", "⚓", "⚓︎", "":
		// An empty <a href> is also left out: it has nothing to show.
		return len(s) > 0 || t.nodes[i].flags&hLink != 0
	}
	return false
}

// contentRoots picks the part of the page that holds its content: <main>,
// else every outermost <article> in order, else the first role="main", else
// <body>, else the whole document.
func (t *htmlTree) contentRoots() []int {
	var articles []int
	roleMain, body := -1, -1
	for i := 1; i < len(t.nodes); i++ {
		n := &t.nodes[i]
		if n.flags&hDrop != 0 {
			i = n.sub - 1
			continue
		}
		switch {
		case n.tag == atom.Main:
			return []int{i}
		case n.tag == atom.Article:
			if len(articles) == 0 || i >= t.nodes[articles[len(articles)-1]].sub {
				articles = append(articles, i)
			}
		case n.flags&hRoleMain != 0 && roleMain < 0:
			roleMain = i
		case n.tag == atom.Body && body < 0:
			body = i
		}
	}
	switch {
	case len(articles) > 0:
		return articles
	case roleMain >= 0:
		return []int{roleMain}
	case body >= 0:
		return []int{body}
	}
	return []int{0}
}

// title returns the text of the first <title> outside svg and math.
func (t *htmlTree) title() string {
	for i := 1; i < len(t.nodes); i++ {
		n := &t.nodes[i]
		switch n.tag {
		case atom.Svg, atom.Math:
			i = n.sub - 1
		case atom.Title:
			var c htmlCollapser
			for j := i + 1; j < n.sub; j++ {
				if m := &t.nodes[j]; m.flags&hText != 0 {
					c.add(t.textOf(m))
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
	nodes := e.t.nodes
	n := &nodes[i]
	r := htmlRun{start: -1}
	e.c.buf, e.c.pending = e.c.buf[:0], false
	sawBlock := false
	for c := i + 1; c < n.sub; c = nodes[c].sub {
		cn := &nodes[c]
		if cn.flags&hDrop != 0 {
			continue
		}
		if cn.flags&hText != 0 || (!htmlBlock(cn.tag) && cn.flags&hHasBlock == 0) {
			e.inline(c, &r)
			continue
		}
		e.flush(&r, kind, -1, -1)
		sawBlock = true
		e.block(c, kind)
		e.c.buf, e.c.pending = e.c.buf[:0], false
	}
	if !sawBlock && htmlTextBlock(n.tag) {
		// The element is the block: its range takes in its tags.
		e.flush(&r, kind, n.start, n.end)
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
	nodes := e.t.nodes
	n := &nodes[i]
	if n.flags&hDrop != 0 {
		return
	}
	if n.flags&hText != 0 {
		if n.flags&hSpace != 0 {
			e.c.space()
			return
		}
		e.c.add(e.t.textOf(n))
		// The block starts at the first visible character, not at the
		// line break before it.
		start, end := n.start, n.end
		for start < end && htmlSpace(e.t.src[start]) {
			start++
		}
		for end > start && htmlSpace(e.t.src[end-1]) {
			end--
		}
		r.cover(start, end)
		return
	}
	switch n.tag {
	case atom.Br:
		e.c.space()
		return
	case atom.Img:
		if a := e.t.attrOf(i); a != nil && a.alt != "" && !htmlLocation(a.alt) {
			e.c.space()
			e.c.addString(a.alt)
			e.c.space()
			r.cover(n.start, n.end)
		}
		return
	}
	for c := i + 1; c < n.sub; c = nodes[c].sub {
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

// Link density (the share of a block's text inside links) is, with the
// number of words, the strongest shallow text feature for telling
// navigation and other boilerplate from content in Kohlschuetter,
// Fankhauser & Nejdl 2010, "Boilerplate Detection using Shallow Text
// Features" (WSDM) (from memory of the paper, not re-checked here). They
// measure it in words per text block; here it is non-white-space
// characters per element, which needs no word splitting. The cut-off is our judgement, not
// a value from the paper: an element holding at least htmlLinkMin links whose
// text is more than half link text (linkChars/chars > 1/2) is a link list
// (a table of contents, a related-pages bar, an index). The link minimum
// keeps a normal paragraph with one or two links, however short.
const htmlLinkMin = 3

// linkHeavy reports whether element i is mostly links and should be left
// out. Code, headings, and sections or articles that hold a heading are
// never judged as a whole: their parts are.
func (e *htmlEmitter) linkHeavy(i int) bool {
	n := &e.t.nodes[i]
	if n.links < htmlLinkMin || 2*n.linkChars <= n.chars {
		return false
	}
	switch n.tag {
	case atom.Pre, atom.Listing, atom.Xmp, atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		return false
	case atom.Section, atom.Article, atom.Main, atom.Body:
		return n.flags&hHasHeading == 0
	}
	return true
}

// block emits the block-level element i; kind is the block kind its loose
// text inherits.
func (e *htmlEmitter) block(i int, kind BlockKind) {
	n := &e.t.nodes[i]
	if e.linkHeavy(i) {
		return
	}
	switch n.tag {
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
	for p, k := t.nodes[i].parent, 0; p > 0 && p != e.root && k < htmlSearchDepth; p, k = t.nodes[p].parent, k+1 {
		switch t.nodes[p].tag {
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
	for j := i + 1; j < t.nodes[i].sub; j++ {
		n := &t.nodes[j]
		if n.flags&hDrop != 0 {
			j = n.sub - 1
			continue
		}
		if n.flags&hText != 0 {
			if n.flags&hSpace == 0 {
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
	n := &e.t.nodes[i]
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
	level := int(n.tag.String()[1] - '0')
	parent := e.heading
	for parent >= 0 && e.doc.Headings[parent].Level >= level {
		parent = e.doc.Headings[parent].Parent
	}
	e.doc.Headings = append(e.doc.Headings, Heading{
		Level:  level,
		Text:   string(text),
		Anchor: e.anchor(i),
		Parent: parent,
		Offset: n.start,
		Line:   e.li.Line(n.start),
	})
	e.heading = len(e.doc.Headings) - 1
}

// collect appends the visible text below node i to c, block elements
// included (each counts as white space around it).
func (e *htmlEmitter) collect(i int, c *htmlCollapser) {
	nodes := e.t.nodes
	n := &nodes[i]
	if n.flags&hDrop != 0 {
		return
	}
	if n.flags&hText != 0 {
		if n.flags&hSpace != 0 {
			c.space()
		} else {
			c.add(e.t.textOf(n))
		}
		return
	}
	switch n.tag {
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
	blockish := htmlBlock(n.tag)
	if blockish {
		c.space()
	}
	for j := i + 1; j < n.sub; j = nodes[j].sub {
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
		p := t.nodes[c].parent
		if t.firstContent(p) != c {
			break
		}
		if id := t.id(p); id != "" {
			return id
		}
		c = p
	}
	// An empty element with an id or name just before the heading.
	if prev := t.prevElement(i); prev > 0 && t.nodes[prev].chars == 0 {
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
	for j := i + 1; j < t.nodes[i].sub; j++ {
		if t.nodes[j].tag == atom.A {
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
	for p, k := t.nodes[i].parent, 0; p > 0 && p != e.root && k < htmlSearchDepth; p, k = t.nodes[p].parent, k+1 {
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
	for c := p + 1; c < t.nodes[p].sub; c = t.nodes[c].sub {
		n := &t.nodes[c]
		if n.flags&hSpace != 0 {
			continue
		}
		if n.flags&hText == 0 && t.blank(c) {
			continue
		}
		return c
	}
	return -1
}

// blank reports whether element i shows nothing: no text and no image
// below it (dropped parts count as nothing).
func (t *htmlTree) blank(i int) bool {
	n := &t.nodes[i]
	if n.flags&hDrop != 0 {
		return true
	}
	if n.chars > 0 {
		return false
	}
	for j := i; j < n.sub; j++ {
		m := &t.nodes[j]
		if m.flags&hDrop != 0 {
			j = m.sub - 1
			continue
		}
		if m.tag == atom.Img {
			return false
		}
	}
	return true
}

// prevElement returns the element sibling just before i, skipping blank
// text, or -1.
func (t *htmlTree) prevElement(i int) int {
	p := t.nodes[i].parent
	for j := i - 1; j > p; {
		// j is the last node of the previous sibling's subtree; climb to
		// that sibling.
		c := j
		for t.nodes[c].parent != p {
			c = t.nodes[c].parent
		}
		n := &t.nodes[c]
		switch {
		case n.flags&hSpace != 0:
			j = c - 1
		case n.flags&hText != 0:
			return -1
		default:
			return c
		}
	}
	return -1
}

// code emits the preformatted element i as a Code block: its text
// verbatim, markup removed.
func (e *htmlEmitter) code(i int) {
	n := &e.t.nodes[i]
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
	e.add(Block{Kind: Code, Text: string(buf), Lang: e.codeLang(i)}, n.start, n.end)
}

func (e *htmlEmitter) verbatim(i int, buf *[]byte) {
	nodes := e.t.nodes
	for j := i + 1; j < nodes[i].sub; j = nodes[j].sub {
		n := &nodes[j]
		switch {
		case n.flags&hDrop != 0:
		case n.flags&hText != 0:
			*buf = append(*buf, e.t.textOf(n)...)
		case n.tag == atom.Br:
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
	for j := i + 1; j < t.nodes[i].sub; j = t.nodes[j].sub {
		if t.nodes[j].tag == atom.Code {
			if l := try(j); l != "" {
				return l
			}
		}
	}
	for p, k := t.nodes[i].parent, 0; p > 0 && k < 3 && t.nodes[p].tag == atom.Div; p, k = t.nodes[p].parent, k+1 {
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
	n := &t.nodes[i]
	if n.flags&hPresent != 0 {
		return true
	}
	data, blocks := false, false
	for j := i + 1; j < n.sub; j++ {
		m := &t.nodes[j]
		if m.flags&hDrop != 0 {
			j = m.sub - 1
			continue
		}
		switch m.tag {
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
	for j := i + 1; j < t.nodes[i].sub; j = t.nodes[j].sub {
		if n := &t.nodes[j]; n.flags&(hDrop|hText) == 0 && htmlBlock(n.tag) {
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
	var row func(j int)
	row = func(j int) {
		m := &t.nodes[j]
		cells, empty := 0, 0 // cells written, empty cells not yet written
		lineStart := len(lines)
		for k := j + 1; k < m.sub; k = t.nodes[k].sub {
			cell := &t.nodes[k]
			if cell.flags&hDrop != 0 || (cell.tag != atom.Td && cell.tag != atom.Th) {
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
			start = m.start
		}
		end = m.end
		lines = append(lines, '\n')
	}
	var walk func(p int)
	walk = func(p int) {
		for j := p + 1; j < t.nodes[p].sub; j = t.nodes[j].sub {
			m := &t.nodes[j]
			if m.flags&hDrop != 0 {
				continue
			}
			switch m.tag {
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

// --- Element classes. ---

// htmlDropTag reports whether elements with tag a are left out with their
// content: scripts and styles, navigation and page footers (header and
// aside are judged by where they sit, see htmlBuilder.scoped), forms and
// their controls, embedded content whose fallback text only shows when it
// cannot play, and dialogs, shown only when opened.
func htmlDropTag(a atom.Atom) bool {
	switch a {
	case atom.Script, atom.Style, atom.Noscript, atom.Template,
		atom.Nav, atom.Footer,
		atom.Form, atom.Button, atom.Select, atom.Textarea, atom.Input, atom.Option, atom.Datalist,
		atom.Svg, atom.Iframe, atom.Object, atom.Embed, atom.Canvas, atom.Audio, atom.Video,
		atom.Noembed, atom.Noframes, atom.Frameset, atom.Dialog:
		return true
	}
	return false
}

// htmlRawText reports whether x/net/html's Tokenizer reads the content of
// a as raw text (Tokenizer.readStartTag).
func htmlRawText(a atom.Atom) bool {
	switch a {
	case atom.Iframe, atom.Noembed, atom.Noframes, atom.Noscript, atom.Plaintext, atom.Script,
		atom.Style, atom.Textarea, atom.Title, atom.Xmp:
		return true
	}
	return false
}

// htmlHeadContent reports whether a may appear in <head> without closing it.
func htmlHeadContent(a atom.Atom) bool {
	switch a {
	case atom.Title, atom.Meta, atom.Link, atom.Script, atom.Style, atom.Base, atom.Noscript, atom.Template, atom.Head:
		return true
	}
	return false
}

// dropClasses are class names (or ids) of page chrome that link density
// cannot catch because it holds few links or none. This is the second line
// of defence, after tags, roles and link density; each name is the exact
// output of a well-known documentation generator:
//   - "related": Sphinx's previous/next/index bar (older themes give it no
//     role="navigation");
//   - "sphinxsidebar": Sphinx's sidebar (same);
//   - "footer": Sphinx's div.footer (copyright, "Created using Sphinx") and
//     AsciiDoc's div#footer ("Last updated ..."), plain text with at most a
//     few links;
//   - "navheader", "navfooter": DocBook XSL's navigation tables (PostgreSQL,
//     Git's user manual), whose short links ("Prev", "Up", "Next") sit beside
//     long chapter titles, so their link density is only about 0.2;
//   - "toc": DocBook XSL's per-chapter table of contents (also AsciiDoc's
//     div#toc); a short chapter's has one or two links, under the link
//     minimum, beside its "Table of Contents" title.
func htmlChromeName(v []byte) bool {
	for len(v) > 0 {
		var tok []byte
		tok, v = htmlNextToken(v)
		switch string(tok) {
		case "related", "sphinxsidebar", "footer", "navheader", "navfooter", "toc":
			return true
		}
	}
	return false
}

func htmlNextToken(v []byte) (tok, rest []byte) {
	i := 0
	for i < len(v) && htmlSpace(v[i]) {
		i++
	}
	j := i
	for j < len(v) && !htmlSpace(v[j]) {
		j++
	}
	return v[i:j], v[j:]
}

func htmlHasToken(v []byte, want string) bool {
	for len(v) > 0 {
		var tok []byte
		tok, v = htmlNextToken(v)
		if string(tok) == want {
			return true
		}
	}
	return false
}

func htmlFirstToken(v []byte) string {
	tok, _ := htmlNextToken(v)
	return strings.ToLower(string(tok))
}

func htmlSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f'
}

// htmlDisplayNone reports whether an inline style sets display:none, with any
// spacing and case ("DISPLAY : None !important" included).
func htmlDisplayNone(v []byte) bool {
	for len(v) > 0 {
		decl := v
		if k := bytes.IndexByte(v, ';'); k >= 0 {
			decl, v = v[:k], v[k+1:]
		} else {
			v = nil
		}
		k := bytes.IndexByte(decl, ':')
		if k < 0 {
			continue
		}
		prop := bytes.TrimSpace(decl[:k])
		val := bytes.TrimSpace(decl[k+1:])
		if !bytes.EqualFold(prop, []byte("display")) {
			continue
		}
		if f := bytes.Fields(val); len(f) > 0 && bytes.EqualFold(f[0], []byte("none")) {
			return true
		}
	}
	return false
}

// htmlVoid reports whether a is a void element, one that has no end tag
// (HTML Living Standard, 13.1.2 "Elements").
func htmlVoid(a atom.Atom) bool {
	switch a {
	case atom.Area, atom.Base, atom.Br, atom.Col, atom.Embed, atom.Hr, atom.Img, atom.Input,
		atom.Keygen, atom.Link, atom.Meta, atom.Param, atom.Source, atom.Track, atom.Wbr:
		return true
	}
	return false
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

// htmlTracked is the number of tags htmlTrack numbers.
const htmlTracked = 14

// htmlTrack numbers the tags whose open elements the builder counts: those
// that start tags close implicitly, and head. Others get -1.
func htmlTrack(a atom.Atom) int {
	switch a {
	case atom.P:
		return 0
	case atom.Li:
		return 1
	case atom.Dd:
		return 2
	case atom.Dt:
		return 3
	case atom.Tr:
		return 4
	case atom.Td:
		return 5
	case atom.Th:
		return 6
	case atom.Tbody:
		return 7
	case atom.Thead:
		return 8
	case atom.Tfoot:
		return 9
	case atom.A:
		return 10
	case atom.Option:
		return 11
	case atom.Head:
		return 12
	case atom.Table:
		return 13
	}
	return -1
}

func htmlHeading(a atom.Atom) bool {
	switch a {
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		return true
	}
	return false
}

// htmlBlock reports whether a starts a new block of text: the elements that
// CSS renders as display block, list-item or table parts by default (HTML
// Living Standard, 15.3 "Non-replaced elements" user agent style sheet).
// Everything else, unknown custom elements included, is inline.
func htmlBlock(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Article, atom.Aside, atom.Blockquote, atom.Body, atom.Caption,
		atom.Center, atom.Dd, atom.Details, atom.Dialog, atom.Dir, atom.Div, atom.Dl, atom.Dt,
		atom.Fieldset, atom.Figcaption, atom.Figure, atom.Footer, atom.Form, atom.H1, atom.H2,
		atom.H3, atom.H4, atom.H5, atom.H6, atom.Head, atom.Header, atom.Hgroup, atom.Hr, atom.Html,
		atom.Legend, atom.Li, atom.Listing, atom.Main, atom.Menu, atom.Nav, atom.Ol, atom.P,
		atom.Plaintext, atom.Pre, atom.Search, atom.Section, atom.Summary, atom.Table, atom.Tbody,
		atom.Td, atom.Tfoot, atom.Th, atom.Thead, atom.Title, atom.Tr, atom.Ul, atom.Xmp,
		atom.Optgroup, atom.Option, atom.Frameset, atom.Noframes:
		return true
	}
	return false
}

// htmlClosesP reports whether start tag a closes an open <p> (HTML Living
// Standard, 13.2.6.4.7: the start tags that "close a p element" when one is
// in button scope).
func htmlClosesP(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Article, atom.Aside, atom.Blockquote, atom.Center, atom.Details,
		atom.Dialog, atom.Dir, atom.Div, atom.Dl, atom.Fieldset, atom.Figcaption, atom.Figure,
		atom.Footer, atom.Header, atom.Hgroup, atom.Main, atom.Menu, atom.Nav, atom.Ol, atom.P,
		atom.Search, atom.Section, atom.Summary, atom.Ul, atom.H1, atom.H2, atom.H3, atom.H4,
		atom.H5, atom.H6, atom.Pre, atom.Listing, atom.Form, atom.Li, atom.Dd, atom.Dt,
		atom.Plaintext, atom.Table, atom.Hr, atom.Xmp:
		return true
	}
	return false
}

// htmlScope is the HTML "has an element in scope" boundary set (HTML Living
// Standard, 13.2.4.2), HTML elements only.
func htmlScope(a atom.Atom) bool {
	switch a {
	case atom.Applet, atom.Caption, atom.Html, atom.Table, atom.Td, atom.Th, atom.Marquee,
		atom.Object, atom.Template:
		return true
	}
	return false
}

// htmlButtonScope is htmlScope plus button ("in button scope").
func htmlButtonScope(a atom.Atom) bool { return a == atom.Button || htmlScope(a) }

// htmlListItemStop ends the search for an open li, dd or dt: any special
// element other than address, div and p (HTML Living Standard,
// 13.2.6.4.7, "li" and "dd, dt" start tags).
func htmlListItemStop(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Div, atom.P:
		return false
	}
	return htmlSpecial(a)
}

// htmlTableStop keeps row and section closing inside the current table.
func htmlTableStop(a atom.Atom) bool { return a == atom.Table || a == atom.Template || a == atom.Html }

// htmlRowStop keeps cell closing inside the current row.
func htmlRowStop(a atom.Atom) bool { return a == atom.Tr || htmlTableStop(a) }

// htmlSpecial reports whether a is in the HTML "special" category (HTML
// Living Standard, 13.2.4.2), the elements an inline end tag may not close
// implicitly.
func htmlSpecial(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Applet, atom.Area, atom.Article, atom.Aside, atom.Base,
		atom.Basefont, atom.Bgsound, atom.Blockquote, atom.Body, atom.Br, atom.Button,
		atom.Caption, atom.Center, atom.Col, atom.Colgroup, atom.Dd, atom.Details, atom.Dir,
		atom.Div, atom.Dl, atom.Dt, atom.Embed, atom.Fieldset, atom.Figcaption, atom.Figure,
		atom.Footer, atom.Form, atom.Frame, atom.Frameset, atom.H1, atom.H2, atom.H3, atom.H4,
		atom.H5, atom.H6, atom.Head, atom.Header, atom.Hgroup, atom.Hr, atom.Html, atom.Iframe,
		atom.Img, atom.Input, atom.Keygen, atom.Li, atom.Link, atom.Listing, atom.Main,
		atom.Marquee, atom.Menu, atom.Meta, atom.Nav, atom.Noembed, atom.Noframes,
		atom.Noscript, atom.Object, atom.Ol, atom.P, atom.Param, atom.Plaintext, atom.Pre,
		atom.Script, atom.Search, atom.Section, atom.Select, atom.Source, atom.Style,
		atom.Summary, atom.Table, atom.Tbody, atom.Td, atom.Template, atom.Textarea,
		atom.Tfoot, atom.Th, atom.Thead, atom.Title, atom.Tr, atom.Track, atom.Ul, atom.Wbr,
		atom.Xmp:
		return true
	}
	return false
}

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
			for j < len(b) && !htmlSpace(b[j]) && b[j] != '"' {
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

// htmlTagScan reads the attributes of a tag from its raw bytes. The
// tokenizer has found the tag's extent; reading names and values again
// here, rather than through Tokenizer.TagName and TagAttr, saves two
// allocations per attribute. It follows x/net/html's Tokenizer.readTag,
// readTagAttrKey and readTagAttrVal step by step, so that both agree.
type htmlTagScan struct {
	b []byte
	i int
}

// htmlScanTag returns the lower-cased name of the start or end tag raw
// (written into buf when it fits, as atom.Lookup needs lower case) and a
// scanner for its attributes.
func htmlScanTag(raw []byte, buf []byte) ([]byte, htmlTagScan) {
	i := 1
	if i < len(raw) && raw[i] == '/' {
		i++
	}
	j := i + 1 // the first byte, a letter, is always part of the name
	for j < len(raw) && !htmlSpace(raw[j]) && raw[j] != '/' && raw[j] != '>' {
		j++
	}
	j = min(j, len(raw))
	name := raw[i:j]
	if len(name) <= len(buf) {
		name = buf[:copy(buf, name)]
	} else {
		name = bytes.Clone(name)
	}
	for k, c := range name {
		if 'A' <= c && c <= 'Z' {
			name[k] = c + 'a' - 'A'
		}
	}
	return name, htmlTagScan{b: raw, i: j}
}

func (s *htmlTagScan) skipSpace() {
	for s.i < len(s.b) && htmlSpace(s.b[s.i]) {
		s.i++
	}
}

// next returns the next attribute's name (as written) and raw value.
func (s *htmlTagScan) next() (key, val []byte, ok bool) {
	b := s.b
	for {
		s.skipSpace()
		if s.i >= len(b) || b[s.i] == '>' {
			return nil, nil, false
		}
		from := s.i
		// Name: up to white space, '/', '>' or a '=' that is not its
		// first byte.
		ks := s.i
		s.i++
		if b[ks] == '/' {
			s.i = ks
		} else {
			for s.i < len(b) && !htmlSpace(b[s.i]) && b[s.i] != '/' && b[s.i] != '>' && b[s.i] != '=' {
				s.i++
			}
		}
		key = b[ks:s.i]
		// Value.
		val = nil
		s.skipSpace()
		if s.i < len(b) {
			switch b[s.i] {
			case '/':
				s.i++
			case '=':
				s.i++
				s.skipSpace()
				if s.i < len(b) && b[s.i] != '>' {
					if q := b[s.i]; q == '"' || q == '\'' {
						s.i++
						vs := s.i
						for s.i < len(b) && b[s.i] != q {
							s.i++
						}
						val = b[vs:min(s.i, len(b))]
						s.i++
					} else {
						vs := s.i
						for s.i < len(b) && !htmlSpace(b[s.i]) && b[s.i] != '>' {
							s.i++
						}
						val = b[vs:s.i]
					}
				}
			}
		}
		if s.i == from {
			s.i++ // cannot happen with the rules above; never loop forever
		}
		if len(key) > 0 {
			return key, val, true
		}
	}
}

// The attributes the reader looks at.
const (
	htmlAttrID uint16 = 1 << iota
	htmlAttrName
	htmlAttrClass
	htmlAttrHref
	htmlAttrAlt
	htmlAttrRole
	htmlAttrHidden
	htmlAttrAriaHidden
	htmlAttrStyle
)

// htmlAttrBit gives each attribute the reader looks at a bit, and 0 to
// the others. key is as written, in any case.
func htmlAttrBit(key []byte) uint16 {
	var buf [11]byte
	if len(key) > len(buf) {
		return 0
	}
	for i, c := range key {
		if 'A' <= c && c <= 'Z' {
			c += 'a' - 'A'
		}
		buf[i] = c
	}
	switch string(buf[:len(key)]) {
	case "id":
		return htmlAttrID
	case "name":
		return htmlAttrName
	case "class":
		return htmlAttrClass
	case "href":
		return htmlAttrHref
	case "alt":
		return htmlAttrAlt
	case "role":
		return htmlAttrRole
	case "hidden":
		return htmlAttrHidden
	case "aria-hidden":
		return htmlAttrAriaHidden
	case "style":
		return htmlAttrStyle
	}
	return 0
}

// htmlAttrString decodes a raw attribute value.
func htmlAttrString(v []byte) string {
	if bytes.IndexByte(v, '&') < 0 {
		return string(v)
	}
	return html.UnescapeString(string(v))
}
