package sources

import (
	"bytes"
)

// StripMDX returns a copy of src, the body of an MDX file, in which every
// part that is not Markdown is replaced by spaces: top-level import and
// export statements, JSX comments {/* ... */}, {expressions}, and JSX tags
// (<Tabs>, </Tabs>, <Card />, <>, and lower-case tags written with
// JSX-only syntax such as <div style={x}>). The text between an opening
// and a closing tag is kept. Fenced code blocks and inline code spans are
// never touched, and neither are heading attributes ({#id} at the end of
// an ATX heading) or HTML comments.
//
// The result has the same length as src and holds '\n' and '\r' at the
// same offsets, so every offset and line number into it is one into src.
// A tag or expression that never ends is blanked to the end of its line.
// StripMDX never panics.
//
// The recognised syntax follows MDX 2 as its documentation describes it
// (ESM at the start of a line, JSX, expressions; from memory); it is a
// scanner, not a JavaScript parser, so a stray quote inside an expression
// can make it stop early at the end of that line.
func StripMDX(src []byte) []byte {
	return stripMDX(src).out
}

// mdxTag is one JSX tag that stripMDX blanked.
type mdxTag struct {
	off   int    // offset of '<'
	name  string // "" for a fragment
	close bool   // </name>
	self  bool   // <name />
}

// mdxProblem is one piece of MDX that did not end.
type mdxProblem struct {
	off int
	msg string
}

type mdxStripper struct {
	src   []byte
	out   []byte
	tags  []mdxTag
	probs []mdxProblem
	open  []string // names of the JSX elements open at this point
	// noCloser[n] is an offset before which no closing run of n
	// backticks exists (a cache that keeps unmatched backticks linear).
	noCloser map[int]int
}

// maxNest bounds the nesting of JSX inside expressions inside JSX that
// the scanner follows, so hostile input cannot exhaust the stack.
const maxNest = 64

func stripMDX(src []byte) *mdxStripper {
	s := &mdxStripper{src: src, out: bytes.Clone(src)}
	if s.out == nil {
		s.out = []byte{}
	}
	s.run()
	return s
}

// attrStop reports whether c ends a JSX attribute name.
func attrStop(c byte) bool {
	switch c {
	case ' ', '\t', '\n', '\r', '\f', '=', '>', '/', '{', '}', '"', '\'', '<', '`':
		return true
	}
	return false
}

// mdxSpecial reports whether c can start something stripMDX handles.
func mdxSpecial(c byte) bool {
	switch c {
	case '\\', '`', '<', '{', '\n':
		return true
	}
	return false
}

func (s *mdxStripper) run() {
	src := s.src
	var fence codeFence
	prevBlank, afterESM := true, false
	for ls := 0; ls < len(src); {
		le := bytes.IndexByte(src[ls:], '\n')
		if le < 0 {
			le = len(src)
		} else {
			le += ls
		}
		line := src[ls:le]
		next := le + 1
		blank := isBlank(line)
		if fence.char != 0 {
			if fence.closes(line) {
				fence = codeFence{}
			}
			ls, prevBlank, afterESM = next, blank, false
			continue
		}
		if f, ok := openFence(line); ok {
			fence = f
			ls, prevBlank, afterESM = next, false, false
			continue
		}
		if len(s.open) == 0 && (prevBlank || afterESM) && isESMStart(line) {
			end, ok := s.esm(ls)
			if !ok {
				s.problem(ls, "unterminated import or export statement")
				s.blank(ls, le)
				ls, prevBlank, afterESM = next, false, false
				continue
			}
			s.blank(ls, end)
			// The statement ends at a line end (or the end of input).
			ls, prevBlank, afterESM = end+1, false, true
			continue
		}
		// A tag or expression may run over into later lines; those lines
		// never start a fence or an import, so go on from the end of the
		// line where it ended.
		for i := s.scanLine(ls, le); i > le; {
			le = bytes.IndexByte(src[i:], '\n')
			if le < 0 {
				le = len(src)
			} else {
				le += i
			}
			next, blank = le+1, false
			i = s.scanLine(i, le)
		}
		ls, prevBlank, afterESM = next, blank, false
	}
}

// scanLine handles the text from i up to the line end le and returns
// where scanning stopped, which is past le when a construct spans lines.
func (s *mdxStripper) scanLine(i, le int) int {
	src := s.src
	lineStart := i
	for i < le {
		c := src[i]
		if !mdxSpecial(c) {
			i++
			continue
		}
		switch c {
		case '\\':
			if i+1 < le && isASCIIPunct(src[i+1]) {
				i += 2
			} else {
				i++
			}
		case '`':
			i = s.codeSpan(i)
		case '<':
			if bytes.HasPrefix(src[i:], []byte("<!--")) {
				if j := indexNoFence(src, i+4, "-->"); j >= 0 {
					i = j + 3
				} else {
					i += 4
				}
				continue
			}
			t := s.tag(i, 0)
			switch {
			case t.status == tagNone || !t.jsx && !(t.close && s.isOpen(t.name)):
				i++
			case t.status == tagUnterminated:
				s.problem(i, "unterminated JSX tag <"+t.name)
				s.blank(i, le)
				i = le
			default:
				s.blank(i, t.end)
				s.tags = append(s.tags, mdxTag{off: i, name: t.name, close: t.close, self: t.self})
				switch {
				case t.close:
					s.closeElem(t.name)
				case !t.self:
					s.open = append(s.open, t.name)
				}
				i = t.end
			}
		case '{':
			if i+1 < le && (src[i+1] == '#' || src[i+1] == '.') && isATXLine(src[lineStart:le]) {
				i++ // heading attribute, left to the Markdown parser
				continue
			}
			end, ok := s.expr(i, 0)
			if !ok {
				s.problem(i, "unterminated JSX expression")
				s.blank(i, le)
				i = le
				continue
			}
			s.blank(i, end)
			i = end
		default:
			i++
		}
	}
	return i
}

func (s *mdxStripper) problem(off int, msg string) {
	s.probs = append(s.probs, mdxProblem{off, msg})
}

// blank replaces src[a:b] with spaces in the output, keeping line ends.
func (s *mdxStripper) blank(a, b int) {
	for k := a; k < b && k < len(s.out); k++ {
		if c := s.out[k]; c != '\n' && c != '\r' {
			s.out[k] = ' '
		}
	}
}

func (s *mdxStripper) isOpen(name string) bool {
	for k := len(s.open) - 1; k >= 0; k-- {
		if s.open[k] == name {
			return true
		}
	}
	return false
}

func (s *mdxStripper) closeElem(name string) {
	for k := len(s.open) - 1; k >= 0; k-- {
		if s.open[k] == name {
			s.open = s.open[:k]
			return
		}
	}
}

// codeSpan skips the code span whose opening backtick run starts at i
// (CommonMark: it ends at the next run of exactly as many backticks in the
// same paragraph) and returns the offset after it, or after the opening
// run when there is no closer.
func (s *mdxStripper) codeSpan(i int) int {
	src := s.src
	n := 0
	for i+n < len(src) && src[i+n] == '`' {
		n++
	}
	from := i + n
	if lim, ok := s.noCloser[n]; ok && from < lim {
		return from
	}
	for k := from; k < len(src); {
		switch src[k] {
		case '`':
			m := 0
			for k+m < len(src) && src[k+m] == '`' {
				m++
			}
			if m == n {
				return k + m
			}
			k += m
		case '\n':
			if blockEnds(src, k) {
				s.remember(n, k)
				return from
			}
			k++
		default:
			k++
		}
	}
	s.remember(n, len(src))
	return from
}

func (s *mdxStripper) remember(n, lim int) {
	if s.noCloser == nil {
		s.noCloser = make(map[int]int)
	}
	s.noCloser[n] = lim
}

type tagStatus uint8

const (
	tagNone         tagStatus = iota // not a tag: leave the '<' as text
	tagOK                            // a complete tag
	tagUnterminated                  // looked like JSX but never ended
)

type tagScan struct {
	status tagStatus
	end    int // offset after '>'
	name   string
	close  bool
	self   bool
	jsx    bool // capitalised or dotted name, fragment, or JSX-only syntax
}

// tag reads the tag starting with '<' at i. Attribute values may be
// quoted strings or {expressions}; a tag may span lines but not a blank
// line.
func (s *mdxStripper) tag(i, depth int) tagScan {
	src := s.src
	t := tagScan{}
	j := i + 1
	if j < len(src) && src[j] == '/' {
		t.close = true
		j++
	}
	if j < len(src) && src[j] == '>' { // fragment <> or </>
		t.status, t.end, t.jsx = tagOK, j+1, true
		return t
	}
	if j >= len(src) || !isNameStart(src[j]) {
		return t
	}
	ns := j
	for j < len(src) && isNameChar(src[j]) {
		j++
	}
	t.name = string(src[ns:j])
	t.jsx = 'A' <= t.name[0] && t.name[0] <= 'Z' || bytes.IndexByte(src[ns:j], '.') >= 0
	if j < len(src) && !(isSpaceByte(src[j]) || src[j] == '/' || src[j] == '>' || src[j] == '{') {
		return t // "<http://x>", "<a@b.c>": not a tag
	}
	fail := func() tagScan {
		if t.jsx {
			t.status = tagUnterminated
		} else {
			t.status = tagNone
		}
		return t
	}
	for {
		var ok bool
		if j, ok = skipSpaceNoBlank(src, j); !ok {
			return fail()
		}
		c := src[j]
		switch {
		case c == '>':
			t.status, t.end = tagOK, j+1
			return t
		case c == '/':
			if j+1 < len(src) && src[j+1] == '>' && !t.close {
				t.status, t.end, t.self = tagOK, j+2, true
				return t
			}
			return fail()
		case c == '{':
			if t.close {
				return fail()
			}
			t.jsx = true
			end, ok := s.expr(j, depth+1)
			if !ok {
				t.status = tagUnterminated
				return t
			}
			j = end
		case t.close:
			return fail()
		default:
			a := j
			for j < len(src) && !attrStop(src[j]) {
				j++
			}
			if j == a {
				return fail()
			}
			if j, ok = skipSpaceNoBlank(src, j); !ok {
				return fail()
			}
			if src[j] != '=' {
				continue
			}
			j++
			if j, ok = skipSpaceNoBlank(src, j); !ok {
				return fail()
			}
			switch q := src[j]; q {
			case '"', '\'':
				k := j + 1
				for k < len(src) && src[k] != q {
					if src[k] == '\n' && blockEnds(src, k) {
						return fail()
					}
					k++
				}
				if k >= len(src) {
					return fail()
				}
				j = k + 1
			case '{':
				t.jsx = true
				end, ok := s.expr(j, depth+1)
				if !ok {
					t.status = tagUnterminated
					return t
				}
				j = end
			case '<':
				if depth >= maxNest {
					return fail()
				}
				// An element as attribute value: <A b=<C /> />.
				t.jsx = true
				inner := s.tag(j, depth+1)
				if inner.status != tagOK {
					t.status = tagUnterminated
					return t
				}
				j = inner.end
			default:
				// Unquoted HTML value.
				for j < len(src) && !isSpaceByte(src[j]) && src[j] != '>' {
					j++
				}
			}
		}
	}
}

// expr returns the offset after the '}' that closes the expression
// opening at i. It follows JavaScript strings, template literals and
// comments, and JSX elements inside the expression (whose text may hold
// quotes). It fails at a blank line outside strings and comments, or at
// the end of input.
func (s *mdxStripper) expr(i, depth int) (int, bool) {
	if depth >= maxNest {
		return 0, false
	}
	src := s.src
	// Each open brace is an expression context; each open JSX element
	// inside one is a text context.
	const (
		inExpr = iota
		inText
	)
	stack := []uint8{inExpr}
	for k := i + 1; k < len(src); k++ {
		c := src[k]
		top := stack[len(stack)-1]
		switch c {
		case '{':
			stack = append(stack, inExpr)
		case '}':
			// Leave any JSX text contexts, then the expression.
			for len(stack) > 0 && stack[len(stack)-1] == inText {
				stack = stack[:len(stack)-1]
			}
			if len(stack) > 0 {
				stack = stack[:len(stack)-1]
			}
			if len(stack) == 0 {
				return k + 1, true
			}
		case '\n':
			if blockEnds(src, k) {
				return 0, false
			}
		case '"', '\'':
			if top == inExpr {
				k = skipString(src, k)
			}
		case '`':
			if top == inExpr {
				e := skipTemplate(src, k)
				if e < 0 {
					return 0, false
				}
				k = e
			}
		case '/':
			if top == inExpr && k+1 < len(src) {
				switch src[k+1] {
				case '/':
					for k < len(src) && src[k] != '\n' {
						k++
					}
					k--
				case '*':
					e := indexNoFence(src, k+2, "*/")
					if e < 0 {
						return 0, false
					}
					k = e + 1
				}
			}
		case '<':
			if k+1 >= len(src) {
				continue
			}
			n := src[k+1]
			if !(isNameStart(n) || n == '/' || n == '>') {
				continue
			}
			t := s.tag(k, depth+1)
			switch t.status {
			case tagNone:
				continue // a less-than sign, or text
			case tagUnterminated:
				// Giving up here, not rescanning the tag's inside as
				// expression text, keeps nested failures linear.
				return 0, false
			}
			switch {
			case t.close:
				if top == inText {
					stack = stack[:len(stack)-1]
				}
			case !t.self:
				stack = append(stack, inText)
			}
			k = t.end - 1
		}
	}
	return 0, false
}

// esmContinues reports whether a statement whose line ends with c goes
// on to the next line.
func esmContinues(c byte) bool {
	switch c {
	case '=', ',', '(', '+', '-', '*', '/', '&', '|', '?', ':', '.', '{', '[':
		return true
	}
	return false
}

// esm returns the offset of the line end where the import or export
// statement starting at ls ends: the first line end outside brackets,
// strings and comments where the line does not end with an operator or
// comma. It fails at the end of input inside brackets.
func (s *mdxStripper) esm(ls int) (int, bool) {
	src := s.src
	depth := 0
	last := byte(0) // last non-space byte of the current line
	for k := ls; k < len(src); k++ {
		c := src[k]
		switch c {
		case '{', '(', '[':
			depth++
		case '}', ')', ']':
			depth--
		case '"', '\'':
			k = skipString(src, k)
			c = src[k]
		case '`':
			e := skipTemplate(src, k)
			if e < 0 {
				return 0, false
			}
			k = e
		case '/':
			if k+1 < len(src) && src[k+1] == '/' {
				for k+1 < len(src) && src[k+1] != '\n' {
					k++
				}
				continue
			}
			if k+1 < len(src) && src[k+1] == '*' {
				e := indexNoFence(src, k+2, "*/")
				if e < 0 {
					return 0, false
				}
				k = e + 1
				c = '/'
			}
		case '\n':
			if depth <= 0 && !esmContinues(last) {
				return k, true
			}
			if k+1 < len(src) && startsFence(src, k) {
				if depth <= 0 {
					return k, true
				}
				return 0, false
			}
			last = 0
			continue
		}
		if !isSpaceByte(c) && c != '\n' {
			last = c
		}
	}
	if depth <= 0 {
		return len(src), true
	}
	return 0, false
}

// skipString returns the offset of the quote closing the JavaScript
// string that opens at k, or of the line end (a string cannot span lines).
func skipString(src []byte, k int) int {
	q := src[k]
	for j := k + 1; j < len(src); j++ {
		switch src[j] {
		case '\\':
			if j+1 < len(src) && src[j+1] != '\n' {
				j++
			}
		case q:
			return j
		case '\n':
			return j - 1
		}
	}
	return len(src) - 1
}

// skipTemplate returns the offset of the backtick closing the template
// literal that opens at k, or -1.
func skipTemplate(src []byte, k int) int {
	for j := k + 1; j < len(src); j++ {
		switch src[j] {
		case '\\':
			if j+1 < len(src) && src[j+1] != '\n' {
				j++
			}
		case '`':
			return j
		case '\n':
			if startsFence(src, j) {
				return -1
			}
		}
	}
	return -1
}

// indexNoFence returns the offset of the first pat in src from offset
// from, or -1 when there is none before a line that opens a fenced code
// block.
func indexNoFence(src []byte, from int, pat string) int {
	for from < len(src) {
		nl := bytes.IndexByte(src[from:], '\n')
		end := len(src)
		if nl >= 0 {
			end = from + nl
		}
		// pat holds no newline, so a match lies within one line.
		if i := bytes.Index(src[from:end], []byte(pat)); i >= 0 {
			return from + i
		}
		if nl < 0 || startsFence(src, end) {
			return -1
		}
		from = end + 1
	}
	return -1
}

// skipSpaceNoBlank skips white space from j. It reports false at the end
// of input or when a blank line is crossed.
func skipSpaceNoBlank(src []byte, j int) (int, bool) {
	for j < len(src) {
		switch src[j] {
		case ' ', '\t', '\r':
			j++
		case '\n':
			if blockEnds(src, j) {
				return j, false
			}
			j++
		default:
			return j, true
		}
	}
	return j, false
}

// blockEnds reports whether the line after the '\n' at k ends what came
// before it: the line is blank or missing, or it opens a fenced code block.
// No tag, expression or code span runs on past such a line, so fenced code
// is never blanked.
func blockEnds(src []byte, k int) bool {
	j := k + 1
	for ; j < len(src); j++ {
		switch src[j] {
		case ' ', '\t', '\r':
		case '\n':
			return true
		default:
			e := bytes.IndexByte(src[j:], '\n')
			if e < 0 {
				e = len(src)
			} else {
				e += j
			}
			_, fence := openFence(src[k+1 : e])
			return fence
		}
	}
	return true
}

// startsFence reports whether the line after the '\n' at k opens a
// fenced code block.
func startsFence(src []byte, k int) bool {
	e := bytes.IndexByte(src[k+1:], '\n')
	if e < 0 {
		e = len(src)
	} else {
		e += k + 1
	}
	_, ok := openFence(src[k+1 : e])
	return ok
}

// codeFence is an open fenced code block (CommonMark 0.31.2 section 4.5),
// found with MDX's rule that indentation never makes code, so a fence may
// be indented any amount.
type codeFence struct {
	char byte // '`' or '~'; 0 when no fence is open
	n    int  // length of the opening run
}

// openFence reports whether line opens a fenced code block, possibly after
// block quote markers and list item markers.
func openFence(line []byte) (codeFence, bool) {
	j := skipContainerMarks(line)
	if j >= len(line) || (line[j] != '`' && line[j] != '~') {
		return codeFence{}, false
	}
	c := line[j]
	n := 0
	for j+n < len(line) && line[j+n] == c {
		n++
	}
	if n < 3 || c == '`' && bytes.IndexByte(line[j+n:], '`') >= 0 {
		return codeFence{}, false
	}
	return codeFence{char: c, n: n}, true
}

// closes reports whether line closes the fence f.
func (f codeFence) closes(line []byte) bool {
	j := 0
	for j < len(line) && (line[j] == ' ' || line[j] == '\t' || line[j] == '>') {
		j++
	}
	n := 0
	for j+n < len(line) && line[j+n] == f.char {
		n++
	}
	return n >= f.n && isBlank(line[j+n:])
}

// skipContainerMarks skips indentation, block quote markers and list item
// markers at the start of line.
func skipContainerMarks(line []byte) int {
	j := 0
	for {
		for j < len(line) && (line[j] == ' ' || line[j] == '\t') {
			j++
		}
		if j >= len(line) {
			return j
		}
		switch c := line[j]; {
		case c == '>':
			j++
			continue
		case (c == '-' || c == '*' || c == '+') && j+1 < len(line) && (line[j+1] == ' ' || line[j+1] == '\t'):
			j += 2
			continue
		case '0' <= c && c <= '9':
			k := j
			for k < len(line) && k-j < 9 && '0' <= line[k] && line[k] <= '9' {
				k++
			}
			if k+1 < len(line) && (line[k] == '.' || line[k] == ')') && (line[k+1] == ' ' || line[k+1] == '\t') {
				j = k + 2
				continue
			}
		}
		return j
	}
}

// isESMStart reports whether line begins an MDX import or export
// statement: the keyword at the very start of the line, then a space, a
// brace, a star or a quote.
func isESMStart(line []byte) bool {
	for _, kw := range []string{"import", "export"} {
		if len(line) > len(kw) && string(line[:len(kw)]) == kw {
			switch line[len(kw)] {
			case ' ', '\t', '{', '*', '"', '\'':
				return true
			}
		}
	}
	return false
}

// isATXLine reports whether line is an ATX heading (CommonMark 4.2).
func isATXLine(line []byte) bool {
	j := 0
	for j < len(line) && j < 3 && line[j] == ' ' {
		j++
	}
	n := 0
	for j+n < len(line) && line[j+n] == '#' {
		n++
	}
	return n >= 1 && n <= 6 && (j+n == len(line) || line[j+n] == ' ' || line[j+n] == '\t')
}

func isBlank(line []byte) bool {
	for _, c := range line {
		if c != ' ' && c != '\t' && c != '\r' && c != '\n' {
			return false
		}
	}
	return true
}

func isSpaceByte(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f'
}

func isNameStart(c byte) bool {
	return 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || c == '_' || c == '$'
}

func isNameChar(c byte) bool {
	return isNameStart(c) || '0' <= c && c <= '9' || c == '-' || c == '.' || c == ':'
}

// isASCIIPunct reports whether c is ASCII punctuation, which a backslash
// escapes (CommonMark 0.31.2 section 2.4).
func isASCIIPunct(c byte) bool {
	return '!' <= c && c <= '/' || ':' <= c && c <= '@' || '[' <= c && c <= '`' || '{' <= c && c <= '~'
}
