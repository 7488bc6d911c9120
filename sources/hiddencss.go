package sources

import (
	"bytes"
	"strconv"
	"strings"

	"github.com/yuin/goldmark/ast"
	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"

	"github.com/kbc-project/kbc/sources/internal/htmltree"
)

// Reasons an inline style hides an element's text from readers, as
// counted in Document.Hidden.
const (
	HiddenVisibility = "visibility-hidden" // visibility: hidden or collapse
	HiddenOpacity    = "opacity-0"         // opacity below 0.1
	HiddenFontSize   = "font-size-0"       // font-size below 1px (or 0 in any unit)
	HiddenOffScreen  = "off-screen"        // moved 500px or more left or up
	HiddenSameColor  = "same-color"        // color equal to the background color, or transparent
	// Raw HTML inside Markdown: the HTML reader drops these without
	// counting them; in Markdown they are counted with the rest.
	HiddenDisplayNone = "display-none"     // style display: none
	HiddenAttribute   = "hidden-attribute" // the hidden attribute (not until-found)
)

// offScreenPx is how far left or up (in CSS pixels) an element must be
// moved to count as off-screen: farther than any layout puts text a
// reader is meant to see. Our judgement, no source; the usual tricks
// use -999px or -9999px.
const offScreenPx = 500

// hiddenByStyle reports whether an inline style attribute's value hides
// the element's text from a reader, and why (one of the Hidden...
// reasons). It reads only the declarations in the attribute itself
// (CSS Syntax Level 3: declarations split on ';', property and value on
// the first ':', names case-insensitive, "!important" ignored); style
// sheets and inherited values are not seen. display: none is handled by
// the reader itself and is not reported here.
func hiddenByStyle(style string) (reason string, hidden bool) {
	var color, background, position string
	var offX, offY, indent float64
	for decl := range strings.SplitSeq(style, ";") {
		k := strings.IndexByte(decl, ':')
		if k < 0 {
			continue
		}
		prop := strings.ToLower(strings.TrimSpace(decl[:k]))
		val := strings.ToLower(strings.TrimSpace(decl[k+1:]))
		val = strings.TrimSpace(strings.TrimSuffix(val, "!important"))
		switch prop {
		case "visibility":
			if val == "hidden" || val == "collapse" {
				return HiddenVisibility, true
			}
		case "opacity":
			if n, ok := cssNumber(val); ok && (strings.HasSuffix(val, "%") && n < 10 || !strings.HasSuffix(val, "%") && n < 0.1) {
				return HiddenOpacity, true
			}
		case "font-size":
			if px, ok := cssPixels(val); ok && px < 1 {
				return HiddenFontSize, true
			}
		case "color":
			color = cssColor(val)
		case "background-color":
			background = cssColor(val)
		case "background":
			// The shorthand: its colour is the one word that parses as
			// a colour.
			for _, w := range strings.Fields(val) {
				if c := cssColor(w); c != "" && (c[0] == '#' || strings.HasPrefix(c, "rgb")) {
					background = c
				}
			}
		case "position":
			position = val
		case "left", "right":
			if px, ok := cssPixels(val); ok {
				offX = min(offX, px)
			}
		case "top", "bottom":
			if px, ok := cssPixels(val); ok {
				offY = min(offY, px)
			}
		case "margin-left", "margin-top":
			if px, ok := cssPixels(val); ok {
				offX = min(offX, px)
			}
		case "text-indent":
			if px, ok := cssPixels(val); ok {
				indent = px
			}
		}
	}
	if indent <= -offScreenPx || (position == "absolute" || position == "fixed") && (offX <= -offScreenPx || offY <= -offScreenPx) {
		return HiddenOffScreen, true
	}
	if color == "transparent" || color != "" && color == background {
		return HiddenSameColor, true
	}
	return "", false
}

// cssNumber reads the number at the start of a CSS value ("0.5", ".0",
// "-9999px", "0%").
func cssNumber(v string) (float64, bool) {
	end := 0
	for end < len(v) && (v[end] >= '0' && v[end] <= '9' || v[end] == '.' || v[end] == '-' || v[end] == '+') {
		end++
	}
	n, err := strconv.ParseFloat(v[:end], 64)
	return n, err == nil
}

// cssPixels converts a CSS length to pixels: px, pt (4/3 px), em and rem
// (16px, the usual default font size), or a bare 0 (CSS Values and
// Units Level 3, section 5 and 6.1). Other units are not read.
func cssPixels(v string) (float64, bool) {
	n, ok := cssNumber(v)
	if !ok {
		return 0, false
	}
	unit := strings.TrimLeft(v, "0123456789.+-")
	switch unit {
	case "px":
		return n, true
	case "pt":
		return n * 4 / 3, true
	case "em", "rem":
		return n * 16, true
	case "", "%", "vw", "vh", "ch", "ex":
		if n == 0 {
			return 0, true
		}
	}
	return 0, false
}

// cssColor returns a colour value in one spelling, so that equal colours
// compare equal: #rgb becomes #rrggbb, a few named colours their hex,
// rgb() loses its spaces; "" for a value it does not know.
func cssColor(v string) string {
	v = strings.TrimSpace(v)
	switch v {
	case "white":
		return "#ffffff"
	case "black":
		return "#000000"
	case "red":
		return "#ff0000"
	case "transparent":
		return v
	}
	if strings.HasPrefix(v, "#") {
		h := v[1:]
		if len(h) == 3 || len(h) == 4 {
			var b strings.Builder
			b.WriteByte('#')
			for i := 0; i < 3; i++ {
				b.WriteByte(h[i])
				b.WriteByte(h[i])
			}
			return b.String()
		}
		if len(h) == 6 || len(h) == 8 {
			return "#" + h[:6]
		}
		return ""
	}
	if strings.HasPrefix(v, "rgb") {
		return strings.ReplaceAll(strings.Replace(v, "rgba", "rgb", 1), " ", "")
	}
	return ""
}

// styledHidden is an element of an HTML page that an inline style hides:
// why, where its start tag begins, and whether it sits inside an element
// already left out (then it is not counted again).
type styledHidden struct {
	reason string
	start  int
	inDrop bool
}

// countStyled counts the hidden elements of t on doc (Document.Hidden),
// one per element, at the line of its start tag.
func (t *htmlTree) countStyled(doc *Document, li LineIndex) {
	for _, h := range t.styled {
		if !h.inDrop {
			doc.AddHidden(h.reason, li.Line(h.start), 1)
		}
	}
}

// htmlTagHides reports whether raw, one HTML start tag, hides its
// element and its content: display: none, the hidden attribute (but
// hidden="until-found", which find-in-page reveals), or a style
// hiddenByStyle reads. It returns the tag's name and the reason. A void
// element (img, br) has no content to hide and is reported only for
// counting; the caller drops nothing after it.
func htmlTagHides(raw []byte) (name, reason string, hidden bool) {
	if !bytes.Contains(raw, []byte("style")) && !bytes.Contains(raw, []byte("hidden")) &&
		!bytes.Contains(raw, []byte("STYLE")) && !bytes.Contains(raw, []byte("HIDDEN")) {
		return "", "", false
	}
	z := html.NewTokenizer(bytes.NewReader(raw))
	if tt := z.Next(); tt != html.StartTagToken && tt != html.SelfClosingTagToken {
		return "", "", false
	}
	n, more := z.TagName()
	name = string(n)
	for more {
		var k, v []byte
		k, v, more = z.TagAttr()
		switch string(k) {
		case "hidden":
			if !strings.EqualFold(string(v), "until-found") {
				reason = HiddenAttribute
			}
		case "style":
			if htmlDisplayNone(v) {
				reason = HiddenDisplayNone
			} else if r, ok := hiddenByStyle(string(v)); ok {
				reason = r
			}
		}
		if reason != "" {
			return name, reason, true
		}
	}
	return name, "", false
}

// htmlVoidName reports whether the element name is a void element.
func htmlVoidName(name string) bool { return htmltree.Void(atom.Lookup([]byte(name))) }

// rawTagName returns the name of the tag raw begins with, lower-cased,
// and whether it is an end tag; "" when raw is no tag.
func rawTagName(raw []byte) (string, bool) {
	if len(raw) < 2 || raw[0] != '<' {
		return "", false
	}
	i, end := 1, false
	if raw[1] == '/' {
		i, end = 2, true
	}
	j := i
	for j < len(raw) && (raw[j] >= 'a' && raw[j] <= 'z' || raw[j] >= 'A' && raw[j] <= 'Z' || raw[j] >= '0' && raw[j] <= '9' || raw[j] == '-') {
		j++
	}
	return strings.ToLower(string(raw[i:j])), end
}

// nestDepth returns depth one deeper for a start tag, one shallower for
// an end tag.
func nestDepth(depth int, end bool) int {
	if end {
		return depth - 1
	}
	return depth + 1
}

// skipHidden returns, when the inline raw HTML tag r hides its element,
// the last inline node of that element (its end tag, or r's last sibling
// when the element is not closed within the paragraph), and counts it on
// the document; else nil.
func (w *mdWalker) skipHidden(r *ast.RawHTML) ast.Node {
	raw := appendSegments(nil, r.Segments, w.src)
	name, reason, ok := htmlTagHides(raw)
	if !ok {
		return nil
	}
	if r.Segments.Len() > 0 {
		w.doc.AddHidden(reason, w.li.Line(w.pos(r.Segments.At(0).Start)), 1)
	}
	if htmlVoidName(name) || bytes.HasSuffix(bytes.TrimSpace(raw), []byte("/>")) {
		return r
	}
	var last ast.Node = r
	depth := 1
	for s := r.NextSibling(); s != nil; s = s.NextSibling() {
		last = s
		rr, ok := s.(*ast.RawHTML)
		if !ok {
			continue
		}
		if n, end := rawTagName(appendSegments(nil, rr.Segments, w.src)); n == name {
			if depth = nestDepth(depth, end); depth == 0 {
				return s
			}
		}
	}
	return last
}
