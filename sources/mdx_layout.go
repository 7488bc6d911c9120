package sources

// The layout of a stripped MDX body: what was moved where, so that
// positions in the text goldmark reads map back to the file's own lines.

import (
	"sort"

	"github.com/yuin/goldmark/ast"
)

// mdxLayout records the lines whose content was moved left to take
// away indentation, so that offsets can be mapped back.
type mdxLayout struct {
	src   []byte      // the original MDX body
	li    LineIndex   // its line starts (moves keep them)
	moved []movedLine // by start once sorted
	index map[int]int // line start -> index into moved
}

// movedLine is one line whose content was moved left by shift bytes; the
// freed bytes were put after the content as spaces.
type movedLine struct {
	start        int // offset of the line start
	contentStart int // offset of the content now
	contentEnd   int // offset just past the content now
	shift        int
}

// layoutMDX prepares stripped MDX (from stripMDX over orig) for a
// CommonMark parser. MDX has no indented code blocks and lets authors
// indent the children of JSX elements:
//
//	<Tabs>
//	  <Tab title="npm">
//	    ```bash
//	    npm install
//	    ```
//	  </Tab>
//	</Tabs>
//
// CommonMark would read the indented fence as indented code, and text
// after a blanked tag ("<Tip>Read this") as indented too. So each line
// inside a JSX element that spans lines loses the indentation its
// elements add: an element adds the indentation of its first non-blank
// line beyond the indentation of its opening tag's line, and nested
// elements add up. Blanked tags and expressions at a line start count as
// nothing. Relative indentation (nested lists) is kept. What indented code
// is left after this is undone by mdxLayout.unindentCode.
//
// The stripped buffer is changed in place and returned.
func layoutMDX(orig, stripped []byte, tags []mdxTag) ([]byte, *mdxLayout) {
	buf := stripped
	li := NewLineIndex(orig)
	lay := &mdxLayout{src: orig, li: li}
	nlines := len(li)
	// Elements spanning lines, and the indentation each one adds.
	type elem struct {
		name string
		line int
	}
	add := make([]int, nlines+1)
	var stack []elem
	span := func(e elem, closeLine int) {
		if closeLine <= e.line {
			return
		}
		first := -1
		for l := e.line + 1; l <= closeLine; l++ {
			if !isBlank(orig[li[l]:lay.lineEnd(l)]) {
				first = l
				break
			}
		}
		if first < 0 {
			return
		}
		sh := indentCols(orig[li[first]:lay.lineEnd(first)]) - indentCols(orig[li[e.line]:lay.lineEnd(e.line)])
		if sh > 0 {
			add[e.line+1] += sh
			add[closeLine+1] -= sh
		}
	}
	for _, t := range tags {
		l := li.Line(t.off) - 1
		switch {
		case t.self:
		case t.close:
			for k := len(stack) - 1; k >= 0; k-- {
				if stack[k].name == t.name {
					for m := len(stack) - 1; m >= k; m-- {
						span(stack[m], l)
					}
					stack = stack[:k]
					break
				}
			}
		default:
			stack = append(stack, elem{t.name, l})
		}
	}
	for m := len(stack) - 1; m >= 0; m-- {
		span(stack[m], nlines-1)
	}

	d := 0
	for l := 0; l < nlines; l++ {
		d += add[l]
		ls, le := li[l], lay.lineEnd(l)
		sl := buf[ls:le]
		if isBlank(sl) {
			continue
		}
		ol := orig[ls:le]
		if d > 0 || leadingSpace(sl) != leadingSpace(ol) {
			lay.setIndent(buf, l, max(0, indentCols(ol)-d))
		}
		lay.fixHardBreak(buf, l)
	}
	lay.sort()
	return buf, lay
}

// lineEnd returns the offset of the end of 0-based line l, before '\n'.
func (lay *mdxLayout) lineEnd(l int) int {
	if l+1 < len(lay.li) {
		return lay.li[l+1] - 1
	}
	return len(lay.src)
}

// setIndent rewrites 0-based line l of buf so that its content follows
// cols spaces (or fewer, when the line's leading white space has fewer
// bytes), moving the content left and putting the freed bytes after it.
func (lay *mdxLayout) setIndent(buf []byte, l, cols int) {
	ls, le := lay.li[l], lay.lineEnd(l)
	line := buf[ls:le]
	lead := leadingSpace(line)
	ce := len(line)
	for ce > lead && isSpaceByte(line[ce-1]) {
		ce--
	}
	if ce == lead {
		return
	}
	newIndent := min(cols, lead)
	shift := lead - newIndent
	for k := 0; k < newIndent; k++ {
		line[k] = ' '
	}
	if shift == 0 {
		return
	}
	n := ce - lead
	copy(line[newIndent:], line[lead:ce])
	for k := newIndent + n; k < ce; k++ {
		line[k] = ' '
	}
	if lay.index == nil {
		lay.index = make(map[int]int)
	}
	if k, ok := lay.index[ls]; ok {
		m := &lay.moved[k]
		m.contentStart, m.contentEnd, m.shift = ls+newIndent, ls+newIndent+n, m.shift+shift
	} else {
		lay.index[ls] = len(lay.moved)
		lay.moved = append(lay.moved, movedLine{start: ls, contentStart: ls + newIndent, contentEnd: ls + newIndent + n, shift: shift})
	}
	lay.fixHardBreak(buf, l)
}

// fixHardBreak keeps a line from ending in two spaces, which CommonMark
// reads as a hard line break, unless the author wrote them.
func (lay *mdxLayout) fixHardBreak(buf []byte, l int) {
	ls, e := lay.li[l], lay.lineEnd(l)
	if e > ls && buf[e-1] == '\r' {
		e--
	}
	if e-ls >= 2 && buf[e-1] == ' ' && buf[e-2] == ' ' && !(lay.src[e-1] == ' ' && lay.src[e-2] == ' ') {
		buf[e-1] = '\t'
	}
}

// sort orders the moved lines for orig and isMoved.
func (lay *mdxLayout) sort() {
	sort.Slice(lay.moved, func(i, j int) bool { return lay.moved[i].start < lay.moved[j].start })
	for k, m := range lay.moved {
		lay.index[m.start] = k
	}
}

// unindentCode takes four columns of indentation away from every line of
// each indented code block in root, which buf was parsed into: MDX has no
// indented code, so such a block is text whose indentation the JSX layout
// did not explain. Lines behind block quote markers are left alone. It
// reports whether it changed anything.
func (lay *mdxLayout) unindentCode(buf []byte, root ast.Node) bool {
	changed := false
	_ = ast.Walk(root, func(n ast.Node, entering bool) (ast.WalkStatus, error) {
		cb, ok := n.(*ast.CodeBlock)
		if !entering || !ok {
			return ast.WalkContinue, nil
		}
		lines := cb.Lines()
		for i := 0; i < lines.Len(); i++ {
			seg := lines.At(i)
			l := lay.li.Line(seg.Start) - 1
			ls, le := lay.li[l], lay.lineEnd(l)
			if !isBlank(buf[ls:seg.Start]) || isBlank(buf[ls:le]) {
				continue
			}
			lay.setIndent(buf, l, max(0, indentCols(buf[ls:le])-4))
			changed = true
		}
		return ast.WalkSkipChildren, nil
	})
	lay.sort()
	return changed
}

// orig maps an offset into the laid-out text back to the stripped (and so
// the original) text.
func (lay *mdxLayout) orig(off int) int {
	m := lay.moved
	k := sort.Search(len(m), func(i int) bool { return m[i].start > off }) - 1
	if k < 0 {
		return off
	}
	ml := m[k]
	switch {
	case off < ml.contentStart:
		return off
	case off < ml.contentEnd:
		return off + ml.shift
	case off < ml.contentEnd+ml.shift:
		return ml.contentEnd + ml.shift
	}
	return off
}

// isMoved reports whether the line holding offset off was moved.
func (lay *mdxLayout) isMoved(off int) bool {
	l := lay.li.Line(off) - 1
	_, ok := lay.index[lay.li[l]]
	return ok
}

func leadingSpace(line []byte) int {
	j := 0
	for j < len(line) && (line[j] == ' ' || line[j] == '\t') {
		j++
	}
	return j
}

// indentCols is the width of line's indentation, with tab stops of 4
// (CommonMark 0.31.2 section 2.2).
func indentCols(line []byte) int {
	col := 0
	for _, c := range line {
		switch c {
		case ' ':
			col++
		case '\t':
			col += 4 - col%4
		default:
			return col
		}
	}
	return col
}
