package sources

import (
	"bytes"
	"fmt"
	"path"
	"strconv"
	"strings"
	"sync"
	"unicode/utf8"

	"github.com/yuin/goldmark"
	"github.com/yuin/goldmark/ast"
	"github.com/yuin/goldmark/extension"
	east "github.com/yuin/goldmark/extension/ast"
	"github.com/yuin/goldmark/parser"
	"github.com/yuin/goldmark/text"
	"github.com/yuin/goldmark/util"
	"golang.org/x/net/html"
)

// markdownParser is the one goldmark parser all documents share:
// CommonMark plus the GFM extensions (tables, strikethrough, linkify, task
// lists) and heading attributes ({#id}). Sharing it is safe: in goldmark
// v1.8.7, parser.Parse finishes its own setup once under a sync.Once
// (parser/parser.go, initSync) and from then on only reads the parser;
// all state of one parse lives in the parser.Context made for that call,
// and the block and inline parsers are stateless values.
var markdownParser = sync.OnceValue(func() parser.Parser {
	return goldmark.New(
		goldmark.WithExtensions(extension.Table, extension.Strikethrough, extension.Linkify, extension.TaskList),
		goldmark.WithParserOptions(parser.WithHeadingAttribute()),
	).Parser()
})

// parseMarkdown fills doc from src, a Markdown file (an MDX file when mdx
// is set): front matter, title, headings and text blocks.
func parseMarkdown(doc *Document, src []byte, mdx bool) error {
	li := NewLineIndex(src)
	front, format, bodyStart, err := SplitFrontMatter(doc.Path, src)
	if err != nil {
		doc.Warnings = append(doc.Warnings, err.(*Error))
	}
	doc.Front, doc.FrontFormat = front, format
	if format != "" {
		doc.FrontLines = li.Line(bodyStart - 1)
		doc.FrontKeys = frontKeyLines(src[:bodyStart], format, front)
	}
	body := src[bodyStart:]
	if off := markdownDepth(body, MaxMarkdownDepth); off >= 0 {
		return &Error{Path: doc.Path, Line: li.Line(bodyStart + off),
			Msg: fmt.Sprintf("Markdown nested more than %d levels deep (block quotes and lists); skipped", MaxMarkdownDepth)}
	}
	w := &mdWalker{doc: doc, base: bodyStart, li: li, cur: -1}
	var root ast.Node
	if mdx {
		var probs []mdxProblem
		root, body, w.lay, probs = parseMDX(body)
		for _, p := range probs {
			doc.Warnings = append(doc.Warnings, &Error{Path: doc.Path, Line: li.Line(bodyStart + p.off), Msg: p.msg})
		}
	} else {
		root = markdownParser().Parse(text.NewReader(body))
	}
	w.src = body
	w.block(root, Paragraph)
	doc.Title = markdownTitle(doc)
	return nil
}

// parseMDX strips an MDX body, lays it out for CommonMark and parses it.
// It returns the tree, the text the tree's offsets refer to, the layout
// that maps them back to the body, and the MDX problems found.
func parseMDX(body []byte) (ast.Node, []byte, *mdxLayout, []mdxProblem) {
	st := stripMDX(body)
	buf, lay := layoutMDX(body, st.out, st.tags)
	root := markdownParser().Parse(text.NewReader(buf))
	// Indented code left over is a layout the JSX rule did not explain;
	// take it away and parse again (rarely needed).
	for range 4 {
		if !lay.unindentCode(buf, root) {
			break
		}
		root = markdownParser().Parse(text.NewReader(buf))
	}
	return root, buf, lay, st.probs
}

// markdownTitle picks the document title: the front matter title if it is a
// string, else the first level-1 heading, else the first heading, else the
// file name without its extension.
func markdownTitle(doc *Document) string {
	if t, ok := doc.Front["title"].(string); ok && strings.TrimSpace(t) != "" {
		return strings.TrimSpace(t)
	}
	for _, h := range doc.Headings {
		if h.Level == 1 {
			return h.Text
		}
	}
	if len(doc.Headings) > 0 {
		return doc.Headings[0].Text
	}
	base := path.Base(doc.Path)
	return strings.TrimSuffix(base, path.Ext(base))
}

// mdWalker turns a goldmark tree into headings and blocks.
type mdWalker struct {
	doc   *Document
	src   []byte     // the text goldmark parsed: the body, for MDX stripped and laid out
	base  int        // offset of src[0] in the file
	lay   *mdxLayout // MDX only: maps src offsets back to the file
	li    LineIndex  // lines of the whole file
	cur   int        // index of the current heading, -1 before the first
	slugs slugger
	buf   []byte // scratch for the text of one paragraph, heading or code block
}

// pos turns an offset into w.src into one into the file.
func (w *mdWalker) pos(off int) int {
	if w.lay != nil {
		off = w.lay.orig(off)
	}
	return w.base + off
}

// block walks block node n; kind is what its paragraphs become.
func (w *mdWalker) block(n ast.Node, kind BlockKind) {
	switch n := n.(type) {
	case *ast.Heading:
		w.heading(n)
	case *ast.Paragraph, *ast.TextBlock:
		start, end, ok := w.lineSpan(n)
		if ok {
			w.buf = w.inline(n, w.buf[:0])
			w.add(kind, cleanText(w.buf), "", start, end)
		}
	case *ast.ListItem:
		w.listItem(n)
	case *ast.Blockquote:
		for c := n.FirstChild(); c != nil; c = c.NextSibling() {
			w.block(c, Quote)
		}
	case *ast.FencedCodeBlock:
		w.code(n, string(fenceLang(n.Info, w.src)))
	case *ast.CodeBlock:
		w.code(n, "")
	case *ast.HTMLBlock:
		w.htmlBlock(n, kind)
	case *east.Table:
		w.table(n)
	case *ast.ThematicBreak:
	default: // document, list, and any container an extension adds
		for c := n.FirstChild(); c != nil; c = c.NextSibling() {
			w.block(c, kind)
		}
	}
}

// listItem gives the item's own paragraphs as one ListItem block; nested
// lists, code and other blocks inside it become blocks of their own, so
// the item's text is cut where they stand.
func (w *mdWalker) listItem(n *ast.ListItem) {
	var b []byte
	start, end := -1, -1
	flush := func() {
		if start >= 0 {
			w.add(ListItem, cleanText(b), "", start, end)
		}
		b, start, end = nil, -1, -1
	}
	for c := n.FirstChild(); c != nil; c = c.NextSibling() {
		switch c.(type) {
		case *ast.Paragraph, *ast.TextBlock:
			s, e, ok := w.lineSpan(c)
			if !ok {
				continue
			}
			if start < 0 {
				start = s
			} else {
				b = append(b, '\n')
			}
			end = e
			b = w.inline(c, b)
		default:
			flush()
			w.block(c, ListItem)
		}
	}
	flush()
}

// lineSpan returns the extent of a block's lines in w.src.
func (w *mdWalker) lineSpan(n ast.Node) (start, end int, ok bool) {
	lines := n.Lines()
	if lines.Len() == 0 {
		return 0, 0, false
	}
	return lines.At(0).Start, lines.At(lines.Len() - 1).Stop, true
}

// add appends a block with text t, spanning src[start:end], unless t is
// only white space.
func (w *mdWalker) add(kind BlockKind, t string, lang string, start, end int) {
	if strings.TrimSpace(t) == "" {
		return
	}
	for end > start && isSpaceByte(w.src[end-1]) {
		end--
	}
	s, e := w.pos(start), w.pos(end)
	if n := len(w.doc.Blocks); n > 0 && s < w.doc.Blocks[n-1].End {
		// Never overlap the block before (offsets rise block by block).
		s = w.doc.Blocks[n-1].End
	}
	if e <= s {
		if s >= w.base+len(w.src) {
			return
		}
		e = s + 1
	}
	w.doc.Blocks = append(w.doc.Blocks, Block{
		Kind: kind, Text: t, Lang: lang, Heading: w.cur,
		Start: s, End: e, Line: w.li.Line(s), EndLine: w.li.Line(e - 1),
	})
}

func (w *mdWalker) heading(n *ast.Heading) {
	w.buf = w.inline(n, w.buf[:0])
	t := cleanText(w.buf)
	if t == "" {
		return
	}
	off := n.Pos()
	if off < 0 {
		if s, _, ok := w.lineSpan(n); ok {
			off = s
		} else {
			off = 0
		}
	}
	anchor := ""
	if v, ok := n.AttributeString("id"); ok {
		switch v := v.(type) {
		case []byte:
			anchor = string(v)
		case string:
			anchor = v
		}
	}
	switch {
	case anchor != "":
		// The renderer gives the heading this id instead of a slug.
		w.slugs.reserve(anchor)
	default:
		// An HTML anchor stands beside the heading, which still gets
		// its slug.
		slug := w.slugs.unique(Slug(t))
		if anchor = w.htmlAnchor(n); anchor != "" {
			w.slugs.reserve(anchor)
		} else {
			anchor = slug
		}
	}
	hs := w.doc.Headings
	parent := len(hs) - 1
	for parent >= 0 && hs[parent].Level >= n.Level {
		parent = hs[parent].Parent
	}
	o := w.pos(off)
	w.doc.Headings = append(hs, Heading{Level: n.Level, Text: t, Anchor: anchor, Parent: parent, Offset: o, Line: w.li.Line(o)})
	w.cur = len(w.doc.Headings) - 1
}

// htmlAnchor finds an <a id> or <a name> inside heading n or right
// before it (see Slug for the whole anchor rule).
func (w *mdWalker) htmlAnchor(n *ast.Heading) string {
	var raw []byte
	for c := n.FirstChild(); c != nil; c = c.NextSibling() {
		if r, ok := c.(*ast.RawHTML); ok {
			raw = appendSegments(raw, r.Segments, w.src)
		}
	}
	if a := anchorIn(raw); a != "" {
		return a
	}
	raw = raw[:0]
	switch p := n.PreviousSibling().(type) {
	case *ast.HTMLBlock:
		raw = appendLines(raw, p, w.src)
	case *ast.Paragraph:
		for c := p.FirstChild(); c != nil; c = c.NextSibling() {
			switch c := c.(type) {
			case *ast.RawHTML:
				raw = appendSegments(raw, c.Segments, w.src)
			case *ast.Text:
				if !isBlank(c.Segment.Value(w.src)) {
					return ""
				}
			default:
				return ""
			}
		}
	}
	return anchorIn(raw)
}

func appendSegments(b []byte, segs *text.Segments, src []byte) []byte {
	for i := 0; i < segs.Len(); i++ {
		seg := segs.At(i)
		b = append(b, seg.Value(src)...)
	}
	return b
}

// appendLines appends the raw lines of an HTML block, closing line included.
func appendLines(b []byte, n *ast.HTMLBlock, src []byte) []byte {
	b = appendSegments(b, n.Lines(), src)
	if n.HasClosure() {
		b = append(b, n.ClosureLine.Value(src)...)
	}
	return b
}

// anchorIn returns the id (or name) of the last <a> element in raw HTML.
func anchorIn(raw []byte) string {
	if !bytes.Contains(raw, []byte("<a")) && !bytes.Contains(raw, []byte("<A")) {
		return ""
	}
	_, a, _ := mdHTMLText(raw)
	return a
}

func (w *mdWalker) code(n ast.Node, lang string) {
	lines := n.Lines()
	b := w.buf[:0]
	for i := 0; i < lines.Len(); i++ {
		seg := lines.At(i)
		v := seg.Value(w.src)
		if w.lay != nil && w.lay.isMoved(seg.Start) {
			// The line end holds the padding of an MDX line moved left.
			nl := len(v) > 0 && v[len(v)-1] == '\n'
			v = bytes.TrimRight(v, " \t\r\n")
			b = append(b, v...)
			if nl {
				b = append(b, '\n')
			}
			continue
		}
		b = append(b, v...)
	}
	start := n.Pos()
	end := -1
	if lines.Len() > 0 {
		if start < 0 {
			start = lines.At(0).Start
		}
		end = lines.At(lines.Len() - 1).Stop
	}
	if _, ok := n.(*ast.FencedCodeBlock); ok && start >= 0 && start < len(w.src) {
		// Take the closing fence into the block when there is one.
		after := end
		if after < 0 {
			_, after = lineAt(w.src, start)
		}
		if c := w.src[start]; (c == '`' || c == '~') && after < len(w.src) {
			l, _ := lineAt(w.src, after)
			if (codeFence{char: c, n: 3}).closes(bytes.TrimRight(l, "\r\n")) {
				end = after + len(bytes.TrimRight(l, " \t\r\n"))
			}
		}
	}
	w.buf = b
	if start < 0 || end < start {
		return
	}
	w.add(Code, string(bytes.TrimRight(b, " \t\r\n")), lang, start, end)
}

// fenceLang is the first word of a fenced code block's info string.
func fenceLang(info *ast.Text, src []byte) []byte {
	if info == nil {
		return nil
	}
	v := bytes.TrimSpace(info.Segment.Value(src))
	if i := bytes.IndexAny(v, " \t{"); i >= 0 {
		v = v[:i]
	}
	return v
}

func (w *mdWalker) htmlBlock(n *ast.HTMLBlock, kind BlockKind) {
	lines := n.Lines()
	if lines.Len() == 0 {
		return
	}
	raw := appendLines(nil, n, w.src)
	t, _, hidden := mdHTMLText(raw)
	for _, r := range hidden {
		w.doc.AddHidden(r.reason, w.li.Line(w.pos(lines.At(0).Start)+r.start), 1)
	}
	end := lines.At(lines.Len() - 1).Stop
	if n.HasClosure() {
		end = n.ClosureLine.Stop
	}
	w.add(kind, t, "", lines.At(0).Start, end)
}

// table gives one line per row, header row included, cells joined by " | ".
func (w *mdWalker) table(n *east.Table) {
	var b []byte
	var last ast.Node
	for r := n.FirstChild(); r != nil; r = r.NextSibling() {
		row := len(b)
		any := false
		for c := r.FirstChild(); c != nil; c = c.NextSibling() {
			if c != r.FirstChild() {
				b = append(b, " | "...)
			}
			cs := len(b)
			b = w.inline(c, b)
			cell := cleanText(b[cs:])
			b = append(b[:cs], cell...)
			any = any || cell != ""
		}
		if !any {
			b = b[:row]
			continue
		}
		b = append(b, '\n')
		last = r
	}
	if last == nil {
		return
	}
	start := n.Pos()
	if start < 0 {
		start = n.FirstChild().Pos()
	}
	lp := last.Pos()
	if lp < 0 {
		lp = start
	}
	if start < 0 || lp < 0 {
		return
	}
	end := len(w.src)
	if i := bytes.IndexByte(w.src[lp:], '\n'); i >= 0 {
		end = lp + i
	}
	w.add(Table, strings.TrimRight(string(b), "\n"), "", start, end)
}

// inline appends the plain text of n's inline children to b: link text
// but never a URL, image alt text, code span text, no HTML tags. A soft
// line break becomes a space, a hard one a newline.
func (w *mdWalker) inline(n ast.Node, b []byte) []byte {
	src := w.src
	for c := n.FirstChild(); c != nil; c = c.NextSibling() {
		if r, ok := c.(*ast.RawHTML); ok {
			if last := w.skipHidden(r); last != nil {
				c = last // go on after the hidden element (hiddencss.go)
				continue
			}
		}
		switch c := c.(type) {
		case *ast.Text:
			v := c.Segment.Value(src)
			if c.IsRaw() {
				b = append(b, v...)
			} else {
				b = appendUnescaped(b, v)
			}
			switch {
			case c.HardLineBreak():
				b = append(b, '\n')
			case c.SoftLineBreak():
				b = append(b, ' ')
			}
		case *ast.String:
			if c.IsCode() || c.IsRaw() {
				b = append(b, c.Value...)
			} else {
				b = appendUnescaped(b, c.Value)
			}
		case *ast.CodeSpan:
			// As goldmark's HTML renderer writes code spans: raw text, a
			// line end inside becomes a space.
			for t := c.FirstChild(); t != nil; t = t.NextSibling() {
				switch t := t.(type) {
				case *ast.Text:
					v := t.Segment.Value(src)
					if len(v) > 0 && v[len(v)-1] == '\n' {
						b = append(b, v[:len(v)-1]...)
						b = append(b, ' ')
					} else {
						b = append(b, v...)
					}
				case *ast.String:
					b = append(b, t.Value...)
				}
			}
		case *ast.AutoLink:
			// A URL is never body text; an e-mail address is.
			if c.AutoLinkType == ast.AutoLinkEmail {
				b = append(b, c.Label(src)...)
			}
		case *ast.Link:
			s := len(b)
			b = w.inline(c, b)
			if isURLText(b[s:], c.Destination) {
				b = b[:s]
			}
		case *ast.RawHTML:
			// Tags are dropped; a line break tag still separates words.
			if isBreakTag(c, src) {
				b = append(b, ' ')
			}
		case *east.TaskCheckBox:
		default: // emphasis, strikethrough, image (its alt text), others
			b = w.inline(c, b)
		}
	}
	return b
}

func isBreakTag(n *ast.RawHTML, src []byte) bool {
	if n.Segments.Len() == 0 {
		return false
	}
	seg := n.Segments.At(0)
	v := seg.Value(src)
	return len(v) >= 3 && v[0] == '<' && (v[1] == 'b' || v[1] == 'B') && (v[2] == 'r' || v[2] == 'R') &&
		(len(v) == 3 || !isNameChar(v[3]))
}

// isURLText reports whether link text t is a URL: the link's own
// destination, or one word that starts with a scheme or "www.".
func isURLText(t, dest []byte) bool {
	t = bytes.TrimSpace(t)
	if len(t) == 0 {
		return false
	}
	if bytes.Equal(t, dest) {
		return true
	}
	if bytes.ContainsAny(t, " \t\n") {
		return false
	}
	lower := bytes.ToLower(t)
	for _, p := range []string{"http://", "https://", "ftp://", "mailto:", "www."} {
		if bytes.HasPrefix(lower, []byte(p)) {
			return true
		}
	}
	return false
}

// appendUnescaped appends v with backslash escapes and entity and numeric
// character references resolved (CommonMark 0.31.2 sections 2.4 and 2.5),
// as goldmark v1.8.7's HTML renderer does in defaultWriter.Write; NUL
// becomes U+FFFD (section 2.3).
func appendUnescaped(b, v []byte) []byte {
	if bytes.IndexByte(v, '\\') < 0 && bytes.IndexByte(v, '&') < 0 && bytes.IndexByte(v, 0) < 0 {
		return append(b, v...)
	}
	for i := 0; i < len(v); i++ {
		c := v[i]
		switch {
		case c == '\\' && i+1 < len(v) && isASCIIPunct(v[i+1]):
			b = append(b, v[i+1])
			i++
		case c == '&':
			r, n := entityAt(v[i:])
			if n == 0 {
				b = append(b, '&')
				continue
			}
			b = append(b, r...)
			i += n - 1
		case c == 0:
			b = append(b, "\uFFFD"...)
		default:
			b = append(b, c)
		}
	}
	return b
}

// entityAt reads the character reference at the start of v and returns
// its characters and length, or n == 0.
func entityAt(v []byte) (chars []byte, n int) {
	if len(v) < 3 || v[0] != '&' {
		return nil, 0
	}
	semi := bytes.IndexByte(v, ';')
	if semi < 0 || semi > 40 {
		return nil, 0
	}
	body := v[1:semi]
	if len(body) == 0 {
		return nil, 0
	}
	if body[0] == '#' {
		digits, base, max := body[1:], 10, 7
		if len(digits) > 0 && (digits[0] == 'x' || digits[0] == 'X') {
			digits, base, max = digits[1:], 16, 6
		}
		if len(digits) == 0 || len(digits) > max {
			return nil, 0
		}
		x, err := strconv.ParseUint(string(digits), base, 32)
		if err != nil {
			return nil, 0
		}
		r := rune(x)
		if r == 0 || !utf8.ValidRune(r) {
			r = utf8.RuneError
		}
		return utf8.AppendRune(nil, r), semi + 1
	}
	for _, c := range body {
		if !('a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9') {
			return nil, 0
		}
	}
	e, ok := util.LookUpHTML5EntityByName(string(body))
	if !ok {
		return nil, 0
	}
	return e.Characters, semi + 1
}

// cleanText trims b and folds each run of spaces and tabs into one space;
// newlines (from hard line breaks and joined paragraphs) are kept, without
// the spaces around them.
func cleanText(b []byte) string {
	var out strings.Builder
	out.Grow(len(b))
	space, newline := false, false // pending separators
	for _, c := range b {
		switch c {
		case ' ', '\t', '\r', '\f', '\v':
			space = true
			continue
		case '\n':
			newline = true
			continue
		}
		if out.Len() > 0 {
			switch {
			case newline:
				out.WriteByte('\n')
			case space:
				out.WriteByte(' ')
			}
		}
		space, newline = false, false
		out.WriteByte(c)
	}
	return out.String()
}

// mdHTMLText returns the visible text of an HTML fragment (no tags,
// comments, scripts or styles; image alt text kept; block-level tags and
// <br> become line breaks, table cells a space) and the id or name of its
// last <a> element. Elements hidden by their attributes (htmlTagHides)
// are left out with their content and listed, with their offsets in raw.
func mdHTMLText(raw []byte) (text, anchor string, hidden []styledHidden) {
	z := html.NewTokenizer(bytes.NewReader(raw))
	var b []byte
	skip := 0
	hide, depth, pos := "", 0, 0 // the hidden element being skipped
	for {
		tt := z.Next()
		at := pos
		pos += len(z.Raw())
		if tt == html.StartTagToken || tt == html.SelfClosingTagToken || tt == html.EndTagToken {
			if hide != "" {
				if n, end := rawTagName(z.Raw()); n == hide && tt != html.SelfClosingTagToken {
					depth = nestDepth(depth, end)
					if depth == 0 {
						hide = ""
					}
				}
				continue
			}
			if n, r, ok := htmlTagHides(z.Raw()); ok && skip == 0 {
				hidden = append(hidden, styledHidden{reason: r, start: at})
				if tt == html.StartTagToken && !htmlVoidName(n) {
					hide, depth = n, 1
				}
				continue
			}
		}
		switch tt {
		case html.ErrorToken:
			return cleanText(b), anchor, hidden
		case html.TextToken:
			if skip == 0 && hide == "" {
				b = append(b, z.Text()...)
			}
		case html.StartTagToken, html.SelfClosingTagToken, html.EndTagToken:
			name, hasAttr := z.TagName()
			switch string(name) {
			case "script", "style", "template", "noscript":
				if tt == html.StartTagToken {
					skip++
				} else if tt == html.EndTagToken && skip > 0 {
					skip--
				}
			case "a":
				for hasAttr && tt != html.EndTagToken {
					var k, v []byte
					k, v, hasAttr = z.TagAttr()
					if (string(k) == "id" || string(k) == "name") && len(v) > 0 {
						anchor = string(v)
					}
				}
			case "img":
				for hasAttr && skip == 0 {
					var k, v []byte
					k, v, hasAttr = z.TagAttr()
					if string(k) == "alt" {
						b = append(b, ' ')
						b = append(b, v...)
						b = append(b, ' ')
					}
				}
			case "td", "th":
				b = append(b, ' ')
			default:
				if mdBlockTag(string(name)) {
					b = append(b, '\n')
				}
			}
		}
	}
}

// mdBlockTag reports whether the HTML element name starts a new line of
// text.
func mdBlockTag(name string) bool {
	switch name {
	case "address", "article", "aside", "blockquote", "br", "dd", "details", "div",
		"dl", "dt", "figcaption", "figure", "footer", "form", "h1", "h2", "h3", "h4",
		"h5", "h6", "header", "hr", "li", "main", "nav", "ol", "p", "pre", "section",
		"summary", "table", "tr", "ul":
		return true
	}
	return false
}
