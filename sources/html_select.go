package sources

import (
	"bytes"
	"strings"

	"golang.org/x/net/html/atom"

	"github.com/kbc-project/kbc/sources/internal/htmltree"
)

// Content selection: which parts of a page are its content. Elements are
// dropped with their subtree as the tree is built (element: hidden ones,
// page chrome by tag, role, class or id, page-level header and aside),
// link lists after it (stats and linkHeavy: link density), and
// contentRoots picks the main area.

// element reads the attributes of the start tag of n: the values kept in
// t.attrs, and the flags that drop an element (hidden, chrome, a tag left
// out) or mark it.
func (t *htmlTree) element(b *htmltree.Builder, n *htmltree.Node, sc *htmltree.TagScan) {
	a := n.Tag
	var at hattr
	keep := false
	display, hidden := true, false
	var seen uint16 // attributes met so far: the first of a name wins, as in the tokenizer
	for {
		k, v, ok := sc.Next()
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
				n.Flags |= hDrop
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
				n.Flags |= hDrop
			}
			if a == atom.A && htmlHasToken(v, "headerlink") {
				n.Flags |= hHeaderLink
			}
			switch a {
			case atom.Pre, atom.Code, atom.Div:
				at.class = htmlAttrString(v)
				keep = true
			}
		case htmlAttrHref:
			if a == atom.A {
				n.Flags |= hLink
			}
		case htmlAttrAlt:
			if a == atom.Img && len(v) > 0 {
				at.alt = htmlAttrString(v)
				keep = true
			}
		case htmlAttrRole:
			switch htmlFirstToken(v) {
			case "navigation", "banner", "contentinfo", "search", "complementary":
				n.Flags |= hDrop
			case "main":
				n.Flags |= hRoleMain
			case "presentation", "none":
				n.Flags |= hPresent
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
				t.styled = append(t.styled, styledHidden{r, n.Start, b.InDrop()})
			}
		}
	}
	if hidden || !display || htmlDropTag(a) {
		n.Flags |= hDrop
	}
	switch a {
	case atom.Header:
		if !htmlScoped(b, true) {
			n.Flags |= hDrop
		}
	case atom.Aside:
		if !htmlScoped(b, false) {
			n.Flags |= hDrop
		}
	}
	if keep {
		n.Attr = len(t.attrs)
		t.attrs = append(t.attrs, at)
	}
}

// htmlScoped reports whether a <header> or <aside> being opened sits inside
// sectioning content (article, aside, nav, section), or for a header also
// inside main. W3C HTML Accessibility API Mappings 1.0 maps such a header
// to no landmark (it is the heading block of its section, not the page
// banner) and such an aside to no landmark either (complementary only when
// scoped to body or main). Those are kept: docutils (Sphinx, Python's docs)
// writes footnotes and sidebars as <aside> inside <section>, and articles
// put their h1 in a <header>. Page-level ones are dropped.
func htmlScoped(b *htmltree.Builder, orMain bool) bool {
	stack, nodes := b.Open(), b.Tree().Nodes
	for k := len(stack) - 1; k > 0 && k >= len(stack)-htmltree.SearchDepth; k-- {
		switch nodes[stack[k]].Tag {
		case atom.Article, atom.Aside, atom.Nav, atom.Section:
			return true
		case atom.Main:
			return orMain
		}
	}
	return false
}

// stats computes, bottom-up, the character and link counts of every node,
// marks permalink anchors, and the heading and block flags.
func (t *htmlTree) stats() {
	nodes := t.Nodes
	for i := len(nodes) - 1; i > 0; i-- {
		n := &nodes[i]
		if n.Flags&hDrop != 0 {
			continue
		}
		if n.Tag == atom.A {
			if n.Flags&hHeaderLink == 0 && n.Chars <= 2 && t.permalinkText(i) {
				n.Flags |= hHeaderLink
			}
			if n.Flags&hHeaderLink != 0 {
				n.Flags |= hDrop
				continue
			}
			if n.Flags&hLink != 0 {
				n.Links++
				n.LinkChars = n.Chars
			}
		}
		if htmltree.Heading(n.Tag) {
			n.Flags |= hHasHeading
		}
		if n.Tag == atom.Dl {
			t.definitionLinks(i)
		}
		p := &nodes[n.Parent]
		p.Chars += n.Chars
		p.LinkChars += n.LinkChars
		p.Links += n.Links
		p.Flags |= n.Flags & hHasHeading
		if n.Flags&hText == 0 && (htmltree.Block(n.Tag) || n.Flags&hHasBlock != 0) {
			p.Flags |= hHasBlock
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
	nodes := t.Nodes
	n := &nodes[i]
	term := -1 // the dt before the current dd
	for c := i + 1; c < n.Sub; c = nodes[c].Sub {
		m := &nodes[c]
		if m.Flags&hDrop != 0 {
			continue
		}
		switch m.Tag {
		case atom.Dt:
			term = c
		case atom.Dd:
			// One or two links (the expansion, perhaps a second source),
			// holding all of the definition's text.
			if term >= 0 && m.Links > 0 && m.Links <= 2 && m.LinkChars == m.Chars {
				if tn := &nodes[term]; tn.Chars > tn.LinkChars {
					n.Links -= m.Links
					n.LinkChars -= m.LinkChars
				}
			}
		}
	}
}

// permalinkText reports whether the text of the <a> at i is only a
// permalink sign: the pilcrow Sphinx and many static site generators put
// after headings, a section sign, '#' or a link emoji.
func (t *htmlTree) permalinkText(i int) bool {
	if t.Nodes[i].Sub-i > 8 {
		return false // a permalink holds one sign, perhaps in a span or two
	}
	var s []byte
	for j := i + 1; j < t.Nodes[i].Sub; j++ {
		if n := &t.Nodes[j]; n.Flags&hText != 0 {
			s = append(s, t.Text(n)...)
		}
	}
	switch string(bytes.TrimSpace(s)) {
	case "¶", "§", "#", "🔗", "⁋", "⚓", "⚓︎", "":
		// An empty <a href> is also left out: it has nothing to show.
		return len(s) > 0 || t.Nodes[i].Flags&hLink != 0
	}
	return false
}

// contentRoots picks the part of the page that holds its content: <main>,
// else every outermost <article> in order, else the first role="main", else
// <body>, else the whole document.
func (t *htmlTree) contentRoots() []int {
	var articles []int
	roleMain, body := -1, -1
	for i := 1; i < len(t.Nodes); i++ {
		n := &t.Nodes[i]
		if n.Flags&hDrop != 0 {
			i = n.Sub - 1
			continue
		}
		switch {
		case n.Tag == atom.Main:
			return []int{i}
		case n.Tag == atom.Article:
			if len(articles) == 0 || i >= t.Nodes[articles[len(articles)-1]].Sub {
				articles = append(articles, i)
			}
		case n.Flags&hRoleMain != 0 && roleMain < 0:
			roleMain = i
		case n.Tag == atom.Body && body < 0:
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
	n := &e.t.Nodes[i]
	if n.Links < htmlLinkMin || 2*n.LinkChars <= n.Chars {
		return false
	}
	switch n.Tag {
	case atom.Pre, atom.Listing, atom.Xmp, atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		return false
	case atom.Section, atom.Article, atom.Main, atom.Body:
		return n.Flags&hHasHeading == 0
	}
	return true
}

// htmlDropTag reports whether elements with tag a are left out with their
// content: scripts and styles, navigation and page footers (header and
// aside are judged by where they sit, see htmlScoped), forms and
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
	for i < len(v) && htmltree.IsSpace(v[i]) {
		i++
	}
	j := i
	for j < len(v) && !htmltree.IsSpace(v[j]) {
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
