// Package htmltree builds a tree of an HTML page whose nodes keep their
// byte ranges in the source.
//
// golang.org/x/net/html's Parse does the whole HTML5 tree construction
// (WHATWG HTML Living Standard, 13.2.6 "Tree construction") but loses where
// each node came from; its Tokenizer keeps the raw bytes of each token but
// builds no tree. Build tokenizes with the Tokenizer and does the fix-ups
// common in documentation pages itself: void elements, implied </p>,
// </li>, </dt>, </dd>, </tr>, </td>, </th>, </option>, headings that close
// an open heading, end tags that match no open element, inline end tags
// that would cross a block, an implied end of <head>. It skips on purpose
// the fix-ups that add elements the source does not have (implied html,
// head, body, tbody and colgroup, an empty p for a stray </p>, re-opened
// formatting elements) and foster parenting, and it closes a self-closing
// tag whatever the element. TestAgainstParse compares its trees with
// html.Parse's on real pages and lists these differences.
//
// The tree is a flat slice in document order: a node's descendants follow
// it, up to Node.Sub. The caller sees each start tag through an
// ElementFunc, which can mark the element Drop (its text is then neither
// decoded nor counted) and keep what it needs of the attributes.
package htmltree

import (
	"bytes"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// Node flags set by the builder. The caller's own flags start at User.
const (
	Text    uint32 = 1 << iota // a text node
	Drop                       // left out with its subtree (set by the ElementFunc)
	Space                      // a text node of white space only, or of text not kept
	Decoded                    // a text node whose text is in Tree.decoded, not Src
	User                       // the first flag free for the caller
)

// Node is one element or text run. Elements span from the first byte of
// their start tag to the last byte of their end tag (or to where they were
// implicitly closed).
type Node struct {
	Tag    atom.Atom // 0 for text, the document, and elements atom does not know
	Flags  uint32
	Parent int
	Sub    int // index one past the node's last descendant
	// Start and End are the node's byte range in the source.
	Start, End int
	// T0 and T1 locate a text node's text, in Src or (Decoded) in the
	// tree's decoded text; see Tree.Text.
	T0, T1 int
	Attr   int // the caller's index of the element's attributes, -1 for none
	// Chars is the number of non-white-space characters (runes) of the
	// visible text below the node: the builder sets it on text nodes and
	// leaves elements at 0 for the caller to sum, as it does LinkChars
	// (those of Chars inside links) and Links (the number of links).
	Chars, LinkChars, Links int
}

// Tree is the tree of one page. Nodes[0] is the document.
type Tree struct {
	Src     []byte
	Nodes   []Node
	decoded []byte // text of the text nodes that needed decoding
}

// Text returns the text of text node n.
func (t *Tree) Text(n *Node) []byte {
	if n.Flags&Decoded != 0 {
		return t.decoded[n.T0:n.T1]
	}
	return t.Src[n.T0:n.T1]
}

// Name returns the lower-case tag name of element i (not a text node).
func (t *Tree) Name(i int) string {
	n := &t.Nodes[i]
	if n.Tag != 0 {
		return n.Tag.String()
	}
	var lower [32]byte
	name, _ := ScanTag(t.Src[n.Start:n.End], lower[:])
	return string(name)
}

// ElementFunc is called for each start tag, once the elements it closes
// are closed and before the element n is added under the innermost open
// element. It may set n.Flags (Drop and the caller's own) and n.Attr, and
// read the tag's attributes from attrs.
type ElementFunc func(b *Builder, n *Node, attrs *TagScan)

// SearchDepth bounds every search of the open-element stack, so that a
// page nested deeper than any real one, with many end tags that match
// nothing, still costs linear time. Blink stops nesting at the same depth
// (its HTML parser's maximum DOM tree depth is 512; from memory of
// Chromium's HTMLConstructionSite, not checked here).
const SearchDepth = 512

// Build tokenizes src and builds its tree, calling element (which may be
// nil) for each start tag.
func Build(src []byte, element ElementFunc) *Tree {
	b := Builder{t: &Tree{Src: src}, element: element}
	t := b.t
	// Every node but a text node starts with '<', and end tags make none:
	// the corpora have 1.05 to 1.3 nodes per '<' (1.44 at most on one
	// page), so the slice seldom regrows.
	tags := bytes.Count(src, []byte{'<'})
	t.Nodes = make([]Node, 1, tags+tags/2+8)
	t.Nodes[0] = Node{Parent: -1, Attr: -1, End: len(src)}
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
	t.Nodes[0].Sub = len(t.Nodes)
	return t
}

// Builder turns the token stream into a tree; an ElementFunc sees it to
// ask about the open elements.
type Builder struct {
	t       *Tree
	element ElementFunc
	stack   []int // open elements; stack[0] is the document
	body    bool  // a <body> has been opened
	drops   int   // open elements that are dropped (their text is not kept)
	// open counts the open elements of the tags that implied end tags look
	// for (see track), so that the common searches of the stack only run
	// when they can succeed.
	open [tracked]int
}

// Tree returns the tree being built.
func (b *Builder) Tree() *Tree { return b.t }

// Open returns the open elements, outermost first: indexes into
// Tree().Nodes, the first being the document. The slice is the builder's;
// the caller must not change it.
func (b *Builder) Open() []int { return b.stack }

// InDrop reports whether an open element is marked Drop.
func (b *Builder) InDrop() bool { return b.drops > 0 }

func (b *Builder) top() *Node { return &b.t.Nodes[b.stack[len(b.stack)-1]] }

// pop closes the innermost open element; end is where it stops.
func (b *Builder) pop(end int) {
	i := b.stack[len(b.stack)-1]
	b.stack = b.stack[:len(b.stack)-1]
	n := &b.t.Nodes[i]
	n.End = end
	n.Sub = len(b.t.Nodes)
	if n.Flags&Drop != 0 {
		b.drops--
	}
	if k := track(n.Tag); k >= 0 {
		b.open[k]--
	}
}

// popImplied closes the innermost open element, which has no end tag of
// its own, at the token starting at at. The white space before that token
// is left out of the element, so that its range ends with its content.
func (b *Builder) popImplied(at int) {
	n := &b.t.Nodes[b.stack[len(b.stack)-1]]
	end := at
	for end > n.Start && IsSpace(b.t.Src[end-1]) {
		end--
	}
	b.pop(max(end, n.Start+1))
}

// popTo closes open elements down to and including stack entry k: those
// above k have no end tag and end before implied, where the closing token
// starts; k itself ends at end.
func (b *Builder) popTo(k, implied, end int) {
	for len(b.stack)-1 > k {
		b.popImplied(implied)
	}
	if end == implied {
		b.popImplied(implied)
		return
	}
	b.pop(end)
}

func (b *Builder) text(z *html.Tokenizer, start, end int) {
	t := b.t
	n := Node{Flags: Text, Parent: b.stack[len(b.stack)-1], Start: start, End: end, Attr: -1}
	n.Sub = len(t.Nodes) + 1
	if b.drops > 0 || b.top().Tag == atom.Head {
		// Text inside dropped elements is never shown, nor is text in
		// <head> (only white space belongs there).
		n.Flags |= Space
		t.Nodes = append(t.Nodes, n)
		return
	}
	// Most text needs no decoding and is used where it lies in src. Text
	// with a character reference, a carriage return or a NUL is decoded by
	// the tokenizer (which knows whether the element is raw text) and kept.
	s := t.Src[start:end]
	n.T0, n.T1 = start, end
	if needsDecoding(s) {
		s = z.Text()
		n.Flags |= Decoded
		n.T0 = len(t.decoded)
		t.decoded = append(t.decoded, s...)
		n.T1 = len(t.decoded)
	}
	n.Chars = Chars(s)
	if n.Chars == 0 {
		n.Flags |= Space
	}
	t.Nodes = append(t.Nodes, n)
}

func needsDecoding(s []byte) bool {
	return bytes.IndexByte(s, '&') >= 0 || bytes.IndexByte(s, '\r') >= 0 || bytes.IndexByte(s, 0) >= 0
}

// Chars counts the runes of s that are not ASCII white space or controls.
func Chars(s []byte) int {
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

func (b *Builder) startTag(start, end int, selfClosing bool) {
	t := b.t
	var lower [32]byte
	name, sc := ScanTag(t.Src[start:end], lower[:])
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
	if !headContent(a) {
		b.closeHead(start)
	}
	b.impliedEnds(a, start)

	n := Node{Tag: a, Parent: b.stack[len(b.stack)-1], Start: start, End: end, Attr: -1}
	if b.element != nil {
		b.element(b, &n, &sc)
	}
	i := len(t.Nodes)
	t.Nodes = append(t.Nodes, n)
	// Void elements never have content. A self-closing tag on any other
	// element is an XHTML habit (<a id="x"/>); HTML5 would ignore the
	// slash and leave the element open, swallowing what follows, but
	// closing it is what the author meant and what keeps an XHTML page's
	// structure sane. Raw text elements are the exception: after
	// <script/> the tokenizer reads raw text up to </script> whatever the
	// slash, so the element must stay open to hold (and hide) that text.
	if Void(a) || selfClosing && !rawText(a) {
		t.Nodes[i].Sub = i + 1
		return
	}
	b.stack = append(b.stack, i)
	if n.Flags&Drop != 0 {
		b.drops++
	}
	if k := track(a); k >= 0 {
		b.open[k]++
	}
}

// closeHead closes an open <head> when body content starts without a <body>
// tag, as the HTML5 "in head" insertion mode does.
func (b *Builder) closeHead(at int) {
	if k := b.inStack(atom.Head); k >= 0 {
		b.popTo(k, at, at)
	}
}

// inStack returns the stack position of the innermost open element with
// tag a, or -1.
func (b *Builder) inStack(a atom.Atom) int {
	if k := track(a); k >= 0 && b.open[k] == 0 {
		return -1
	}
	for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-SearchDepth; k-- {
		if b.t.Nodes[b.stack[k]].Tag == a {
			return k
		}
	}
	return -1
}

// findOpen looks for an open element with tag a from the innermost one
// outwards and stops at any element stop reports true for. It returns the
// stack position or -1.
func (b *Builder) findOpen(a atom.Atom, stop func(atom.Atom) bool) int {
	if k := track(a); k >= 0 && b.open[k] == 0 {
		return -1
	}
	for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-SearchDepth; k-- {
		x := b.t.Nodes[b.stack[k]].Tag
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
func (b *Builder) impliedEnds(a atom.Atom, at int) {
	closeOne := func(want atom.Atom, stop func(atom.Atom) bool) {
		if k := b.findOpen(want, stop); k >= 0 {
			b.popTo(k, at, at)
		}
	}
	if closesP(a) {
		closeOne(atom.P, buttonScope)
	}
	switch a {
	case atom.Li:
		closeOne(atom.Li, listItemStop)
	case atom.Dd, atom.Dt:
		closeOne(atom.Dd, listItemStop)
		closeOne(atom.Dt, listItemStop)
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		if Heading(b.top().Tag) {
			b.popImplied(at)
		}
	case atom.Tr:
		closeOne(atom.Tr, tableStop)
	case atom.Td, atom.Th:
		closeOne(atom.Td, rowStop)
		closeOne(atom.Th, rowStop)
	case atom.Tbody, atom.Thead, atom.Tfoot:
		closeOne(atom.Tbody, tableStop)
		closeOne(atom.Thead, tableStop)
		closeOne(atom.Tfoot, tableStop)
	case atom.Option:
		if b.top().Tag == atom.Option {
			b.popImplied(at)
		}
	case atom.A:
		// An <a> inside an open <a> closes it (the "adoption agency"
		// case, without re-opening formatting elements).
		closeOne(atom.A, special)
	}
}

func (b *Builder) endTag(start, end int) {
	var lower [32]byte
	name, _ := ScanTag(b.t.Src[start:end], lower[:])
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
		stop = tableStop
	case atom.Li:
		// "has an li element in list item scope"
		stop = func(x atom.Atom) bool { return x == atom.Ol || x == atom.Ul || scope(x) }
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		// Any heading end tag closes the open heading, whatever its level
		// (<h2>Title</h3> is common enough).
		for k := len(b.stack) - 1; k > 0 && k >= len(b.stack)-SearchDepth; k-- {
			x := b.t.Nodes[b.stack[k]].Tag
			if Heading(x) {
				b.popTo(k, start, end)
				return
			}
			if scope(x) {
				return
			}
		}
		return
	case 0:
		b.endUnknown(name, start, end)
		return
	default:
		if special(a) || Block(a) {
			stop = scope
		} else {
			// An inline end tag never closes a block it did not open.
			stop = special
		}
	}
	if k := b.findOpen(a, stop); k >= 0 {
		b.popTo(k, start, end)
	}
}

// endUnknown closes the open element named name, an element atom does not
// know (a custom element), unless a special element comes first.
func (b *Builder) endUnknown(name []byte, start, end int) {
	k := len(b.stack) - 1
	for ; k > 0; k-- {
		if k < len(b.stack)-SearchDepth {
			return
		}
		n := &b.t.Nodes[b.stack[k]]
		if n.Tag == 0 {
			var lower [32]byte
			if open, _ := ScanTag(b.t.Src[n.Start:n.End], lower[:]); bytes.Equal(open, name) {
				break
			}
		}
		if special(n.Tag) {
			return
		}
	}
	if k > 0 {
		b.popTo(k, start, end)
	}
}
