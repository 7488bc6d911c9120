// Package qsets builds question sets with relevance judgements (TREC
// queries and qrels files) from documentation corpora, so that retrieval
// quality can be measured against links the authors made themselves:
// index entries, FAQ headings, glossary terms.
//
// The relevant document of a link is the section that holds its target, at
// the anchor a bundle cites for that section; see Page.Section.
package qsets

import (
	"bytes"
	"io"
	"strings"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// Page is one parsed HTML page, ready to map an element id to the anchor of
// the section that holds the element.
type Page struct {
	root       *html.Node
	ids        map[string]*html.Node
	order      map[*html.Node]int          // preorder position of every node
	heads      map[*html.Node][]*html.Node // sectioning element (nil: the page) -> its own headings, in order
	headSet    map[*html.Node]bool
	textLen    map[*html.Node]int // visible characters below a node
	headings   []*html.Node       // every heading that starts a section, in order
	sectionIDs map[string]bool    // the anchors of the headings
}

// Heading is a heading that starts a section.
type Heading struct {
	Level  int
	Text   string
	Anchor string // "" when no fragment lands on it
	Leaf   bool   // no heading follows inside its section
}

// ParsePage reads an HTML page.
func ParsePage(r io.Reader) (*Page, error) {
	root, err := html.Parse(r)
	if err != nil {
		return nil, err
	}
	p := &Page{
		ids:     map[string]*html.Node{},
		order:   map[*html.Node]int{},
		heads:   map[*html.Node][]*html.Node{},
		headSet: map[*html.Node]bool{},
		textLen: map[*html.Node]int{},
	}
	p.root = root
	p.walk(root, nil, false)
	p.sectionIDs = map[string]bool{}
	for _, h := range p.headings {
		if a := p.anchor(h); a != "" {
			p.sectionIDs[a] = true
		}
	}
	return p, nil
}

// walk numbers the nodes in document order, records ids, and gives each
// heading outside admonitions and navigation to its sectioning element.
func (p *Page) walk(n, sect *html.Node, skip bool) int {
	p.order[n] = len(p.order)
	chars := 0
	switch n.Type {
	case html.TextNode:
		chars = len(strings.TrimSpace(n.Data))
	case html.ElementNode:
		if id := attr(n, "id"); id != "" {
			if _, dup := p.ids[id]; !dup {
				p.ids[id] = n
			}
		}
		if n.DataAtom == atom.A {
			if name := attr(n, "name"); name != "" {
				if _, dup := p.ids[name]; !dup {
					p.ids[name] = n
				}
			}
		}
		if hidden(n) {
			p.textLen[n] = 0
			return 0
		}
		if boxed(n) {
			skip = true
		}
		if heading(n) > 0 && !skip {
			p.heads[sect] = append(p.heads[sect], n)
			p.headSet[n] = true
			p.headings = append(p.headings, n)
		}
		if sectioning(n) {
			sect = n
		}
	}
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		chars += p.walk(c, sect, skip)
	}
	p.textLen[n] = chars
	return chars
}

// each calls f for every element in document order.
func (p *Page) each(f func(*html.Node)) {
	var visit func(n *html.Node)
	visit = func(n *html.Node) {
		if n.Type == html.ElementNode {
			f(n)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			visit(c)
		}
	}
	visit(p.root)
}

// Has reports whether the page has an element with this id (or an <a> with
// this name).
func (p *Page) Has(id string) bool { _, ok := p.ids[id]; return ok }

// Section returns the anchor of the section that holds the element with id
// frag. When frag is a section's own anchor, that is the section.
// Otherwise the section is the one whose heading is the last heading at or
// before the element within its enclosing sectioning element (looking
// outward when that element has none before it); an element that is itself
// a sectioning element, or that sits, empty, before the first heading of its
// sectioning element with no text before it, belongs to that element's
// first heading. ok is false when the page has no such element, no section
// holds it, or no fragment lands on the section's heading.
func (p *Page) Section(frag string) (anchor string, ok bool) {
	el, found := p.ids[frag]
	if !found {
		return "", false
	}
	// A link to a section's own anchor (an empty <div id> or <a name> just
	// before its heading, say) lands on that section.
	if p.sectionIDs[frag] {
		return frag, true
	}
	h := p.sectionOf(el)
	if h == nil {
		return "", false
	}
	a := p.anchor(h)
	return a, a != ""
}

func (p *Page) sectionOf(el *html.Node) *html.Node {
	if p.headSet[el] {
		return el
	}
	if sectioning(el) {
		if hs := p.heads[el]; len(hs) > 0 {
			return hs[0]
		}
	}
	cur := el
	for {
		s := enclosingSection(cur)
		hs := p.heads[s]
		var last *html.Node
		for _, h := range hs {
			if p.order[h] <= p.order[cur] {
				last = h
			}
		}
		if last != nil {
			return last
		}
		// An empty target before the first heading, with nothing to read
		// before it in its section: a link to it lands on that heading.
		if len(hs) > 0 && s != nil && p.textLen[cur] == 0 && p.textBetween(s, cur) == 0 {
			return hs[0]
		}
		if s == nil {
			return nil
		}
		cur = s
	}
}

// textBetween counts the visible characters inside s that come before el.
func (p *Page) textBetween(s, el *html.Node) int {
	n := 0
	var visit func(x *html.Node) bool
	visit = func(x *html.Node) bool {
		if x == el {
			return false
		}
		if x.Type == html.TextNode {
			n += len(strings.TrimSpace(x.Data))
			return true
		}
		if x.Type == html.ElementNode && hidden(x) {
			return true
		}
		for c := x.FirstChild; c != nil; c = c.NextSibling {
			if !visit(c) {
				return false
			}
		}
		return true
	}
	for c := s.FirstChild; c != nil; c = c.NextSibling {
		if !visit(c) {
			break
		}
	}
	return n
}

// anchor returns the fragment a link to heading h lands on: its own id;
// else the id of an element it opens (it is that element's first content,
// or the first heading of that sectioning element); else an <a id>,
// <a name> or empty element with an id just before it; else an <a id> or
// <a name> inside it; else the nearest enclosing element with an id.
func (p *Page) anchor(h *html.Node) string {
	if id := attr(h, "id"); id != "" {
		return id
	}
	first := true
	for c, a := h, h.Parent; a != nil && a.Type == html.ElementNode; c, a = a, a.Parent {
		first = first && p.firstContent(a) == c
		if id := attr(a, "id"); id != "" && (first || sectioning(a) && p.firstHeading(a) == h) {
			return id
		}
		if !first && sectioning(a) {
			break
		}
	}
	prev := h.PrevSibling
	for prev != nil && prev.Type != html.ElementNode && (prev.Type != html.TextNode || strings.TrimSpace(prev.Data) == "") {
		prev = prev.PrevSibling
	}
	if prev != nil && prev.Type == html.ElementNode && p.textLen[prev] == 0 {
		if id := attr(prev, "id"); id != "" {
			return id
		}
		if prev.DataAtom == atom.A {
			if name := attr(prev, "name"); name != "" {
				return name
			}
		}
	}
	var inside string
	var find func(n *html.Node)
	find = func(n *html.Node) {
		for c := n.FirstChild; c != nil && inside == ""; c = c.NextSibling {
			if c.Type == html.ElementNode && c.DataAtom == atom.A {
				if id := attr(c, "id"); id != "" {
					inside = id
				} else if name := attr(c, "name"); name != "" {
					inside = name
				}
			}
			if inside == "" {
				find(c)
			}
		}
	}
	find(h)
	if inside != "" {
		return inside
	}
	for a := h.Parent; a != nil; a = a.Parent {
		if id := attr(a, "id"); id != "" {
			return id
		}
	}
	return ""
}

// firstHeading returns the first heading that s owns, or nil.
func (p *Page) firstHeading(s *html.Node) *html.Node {
	if hs := p.heads[s]; len(hs) > 0 {
		return hs[0]
	}
	return nil
}

// firstContent returns the first child of n that is an element or
// non-blank text, skipping empty inline elements (a Sphinx
// <span id="label"></span> before a heading), or nil.
func (p *Page) firstContent(n *html.Node) *html.Node {
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		switch c.Type {
		case html.TextNode:
			if strings.TrimSpace(c.Data) != "" {
				return c
			}
		case html.ElementNode:
			if p.textLen[c] == 0 && !block(c) && c.DataAtom != atom.Img {
				continue
			}
			return c
		}
	}
	return nil
}

// Headings returns the headings that start sections, in document order.
func (p *Page) Headings() []Heading {
	out := make([]Heading, 0, len(p.headings))
	for i, h := range p.headings {
		// A deeper heading next opens a subsection of h's section.
		leaf := i+1 == len(p.headings) || heading(p.headings[i+1]) <= heading(h)
		out = append(out, Heading{Level: heading(h), Text: Text(h), Anchor: p.anchor(h), Leaf: leaf})
	}
	return out
}

// Text returns the visible text of n with white space collapsed; permalink
// signs (Sphinx's headerlink) left out.
func Text(n *html.Node) string {
	var b bytes.Buffer
	var visit func(x *html.Node)
	visit = func(x *html.Node) {
		switch x.Type {
		case html.TextNode:
			b.WriteString(x.Data)
			return
		case html.ElementNode:
			if hidden(x) || hasClass(x, "headerlink") {
				return
			}
			if block(x) || x.DataAtom == atom.Br {
				b.WriteByte(' ')
			}
		}
		for c := x.FirstChild; c != nil; c = c.NextSibling {
			visit(c)
		}
	}
	visit(n)
	return strings.TrimRight(strings.Join(strings.Fields(b.String()), " "), " ¶")
}

func enclosingSection(n *html.Node) *html.Node {
	for a := n.Parent; a != nil; a = a.Parent {
		if a.Type == html.ElementNode && sectioning(a) {
			return a
		}
	}
	return nil
}

func attr(n *html.Node, key string) string {
	for _, a := range n.Attr {
		if a.Namespace == "" && a.Key == key {
			return a.Val
		}
	}
	return ""
}

func hasClass(n *html.Node, class string) bool {
	for _, c := range strings.Fields(attr(n, "class")) {
		if c == class {
			return true
		}
	}
	return false
}

// heading returns 1..6 for h1..h6, else 0.
func heading(n *html.Node) int {
	switch n.DataAtom {
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		return int(n.Data[1] - '0')
	}
	return 0
}

// sectioning reports whether n is a section wrapper: <section>, <article>,
// or a div of a generator's section classes (Sphinx's older "section",
// AsciiDoc's and DocBook's "sect1".., "refsect1"..).
func sectioning(n *html.Node) bool {
	if n.Type != html.ElementNode {
		return false
	}
	switch n.DataAtom {
	case atom.Section, atom.Article:
		return true
	case atom.Div:
		for _, c := range strings.Fields(attr(n, "class")) {
			switch c {
			case "section", "sect1", "sect2", "sect3", "sect4", "sect5",
				"refsect1", "refsect2", "refsect3", "simplesect", "chapter", "appendix":
				return true
			}
		}
	}
	return false
}

// boxed reports whether headings inside n are not section headings: an
// admonition (note, warning, tip, ...), a sidebar or navigation.
func boxed(n *html.Node) bool {
	switch n.DataAtom {
	case atom.Nav, atom.Aside, atom.Footer:
		return true
	}
	if attr(n, "role") == "navigation" {
		return true
	}
	for _, c := range strings.Fields(attr(n, "class")) {
		switch c {
		case "admonition", "admonitionblock", "note", "warning", "tip", "caution",
			"important", "danger", "attention", "hint", "error", "seealso",
			"sidebar", "sphinxsidebar", "related", "callout":
			return true
		}
	}
	return false
}

// hidden reports elements whose text never shows: scripts, styles,
// templates and the like.
func hidden(n *html.Node) bool {
	switch n.DataAtom {
	case atom.Script, atom.Style, atom.Template, atom.Noscript, atom.Head:
		return true
	}
	_, h := attrOK(n, "hidden")
	return h
}

func attrOK(n *html.Node, key string) (string, bool) {
	for _, a := range n.Attr {
		if a.Namespace == "" && a.Key == key {
			return a.Val, true
		}
	}
	return "", false
}

// block reports block-level elements (their edges separate words).
func block(n *html.Node) bool {
	switch n.DataAtom {
	case atom.Address, atom.Article, atom.Aside, atom.Blockquote, atom.Dd, atom.Details,
		atom.Div, atom.Dl, atom.Dt, atom.Fieldset, atom.Figcaption, atom.Figure, atom.Footer,
		atom.Form, atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6, atom.Header,
		atom.Hr, atom.Li, atom.Main, atom.Nav, atom.Ol, atom.P, atom.Pre, atom.Section,
		atom.Table, atom.Tbody, atom.Td, atom.Tfoot, atom.Th, atom.Thead, atom.Tr, atom.Ul,
		atom.Summary, atom.Caption:
		return true
	}
	return false
}
