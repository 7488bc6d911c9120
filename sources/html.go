package sources

import (
	"bytes"

	"golang.org/x/net/html"

	"github.com/kbc-project/kbc/sources/internal/htmltree"
)

// The HTML reader works in three passes over one file, each in its own
// file:
//
//  1. build a tree whose nodes know their byte range in the source
//     (package htmltree, which does the HTML5 fix-ups), reading the
//     attributes this reader needs as each start tag arrives (element,
//     below): ids and names for anchors, classes, alt text, and what hides
//     an element or marks it as page chrome;
//  2. select the content (html_select.go): count text and link characters
//     per element bottom-up for link density, mark permalink anchors, and
//     pick the content roots (main, article, role="main", body);
//  3. walk the content roots top-down and emit headings and blocks
//     (html_emit.go, html_code.go for code and tables), with web addresses
//     scrubbed from the text (html_urls.go).

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

// Node flags: the builder's, then this reader's.
const (
	hText       = htmltree.Text         // a text node
	hDrop       = htmltree.Drop         // left out with its subtree
	hSpace      = htmltree.Space        // text node of white space only
	hLink       = htmltree.User << iota // <a href>
	hHeaderLink                         // permalink anchor such as Sphinx's ¶
	hHasHeading                         // holds an h1-h6 (itself included)
	hHasBlock                           // holds a block-level element (itself excluded)
	hRoleMain                           // role="main"
	hPresent                            // table with role presentation or none
)

// hattr keeps the few attribute values the reader needs later.
type hattr struct {
	id    string
	aname string // name attribute of <a>
	class string // kept for pre, code and div (code language)
	alt   string // img alt
}

// htmlTree is a page's tree with the attributes the reader keeps.
type htmlTree struct {
	*htmltree.Tree
	attrs []hattr
	// styled lists the elements an inline style hides (hiddencss.go).
	styled []styledHidden
}

func (t *htmlTree) attrOf(i int) *hattr {
	if a := t.Nodes[i].Attr; a >= 0 {
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

// buildHTMLTree builds the tree of src.
func buildHTMLTree(src []byte) *htmlTree {
	t := &htmlTree{}
	t.Tree = htmltree.Build(src, t.element)
	return t
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
