package build

import (
	"crypto/sha256"
	"encoding/hex"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/kbc-project/kbc/sources"
)

// Split cuts a normalised document into passages within the token budget of
// s, counted with tok. It reads doc and never changes it; it is safe to call
// on several documents at once with the same Tokenizer. The result depends
// only on doc (its path and content), tok's encoding and s, so it can be
// cached by the document's content hash.
//
// # Sections
//
// A document is cut along its headings. A section is a heading and the
// blocks whose Block.Heading is that heading; blocks before the first
// heading form the preamble. A section's text is its blocks' texts joined by
// a blank line: prose and table text as it is (a table keeps one row per
// line), a code block fenced with its language ("```go" ... "```", with a
// longer fence when the code holds a line of three backticks). A heading
// with no blocks makes no passage of its own; its text still shows in the
// heading trails of the sections under it.
//
// # Budget
//
// A section of at most s.MaxTokens is one passage. A longer one is packed
// greedily: blocks are added to a passage while it stays within
// s.AimTokens (or within s.MaxTokens while the passage is under
// s.MinTokens), never cutting inside a block, and a short last passage joins
// the one before when they fit s.MaxTokens together. A defined term does
// not start a passage of its own: measured on the question sets of the real
// corpora, starting one at each term raised recip_rank by 0.005 on Python's
// index entries and by 0.10 on Git's glossary (87 questions), lowered it by
// 0.007 on Python's FAQ, and made 38% more passages of the Python docs,
// which a clean build pays for; its terms are listed instead (Terms). A single block over
// s.MaxTokens is cut: code and tables at line ends (never inside a table
// row), prose at line ends, then at sentence ends; a line or sentence that
// is over the budget on its own at word boundaries (white space), and only
// a word over the budget on its own (minified JSON, say) at tokenizer
// pieces and then at character boundaries. The parts of a cut block aim at s.AimTokens, every part of a
// code block is fenced with its language, and the passages holding them are
// marked Split. Token counts are exact: each block is counted once, and the
// count of blocks joined by blank lines follows exactly from theirs (see
// Tokenizer.measure), so every decision is taken on the count of the final
// text; a part of a cut block that comes out over the limit once rendered
// is cut again. No passage has more than s.MaxTokens tokens.
//
// # Small sections
//
// A section that has an anchor of its own (other than the anchor of the
// section a join would start from) is never joined: it stays a passage of
// its own, so a link or a section-level judgement naming it finds a
// passage that starts there. (On the question sets of the real corpora,
// keeping such sections apart found FAQ answers and handbook sections
// better than joining them, and changed the others by under 0.01; see
// README.) The joins below apply to the other sections, those without an
// anchor (an HTML heading with no id around or before it).
//
// A section under s.MinTokens joins a neighbour under the same parent: the
// next section when it is a sibling or a child (a joined group may go on
// taking siblings and children of its members while it stays under
// s.MinTokens), else the passage before it when that passage's first
// section is a sibling or one of its sections is the parent (a short last
// subsection goes with its parent's text). Joins never cross to another
// parent: every member sits under the first section's parent. They stop
// where the result would pass s.AimTokens: a join is there to avoid tiny
// passages, not to make big ones, and stopping at the aim keeps joined
// passages the size of packed ones. The joined passage keeps the trail and anchor of its first
// section; the heading of each section joined to it (and of any empty
// heading in between) is a line of its own in the text, so nothing is lost.
//
// # Fields
//
// Passage.Heading is the heading trail of the first section (empty for the
// preamble), Anchor its heading's anchor, Title and Path the document's.
// Terms lists, in order, the defined terms (blocks with an anchor) that
// start in the passage, each with its anchor; an anchor equal to the
// passage's own, or listed already, is left out.
// Line is the section heading's line when the passage starts a section,
// else its first block's line; EndLine is its last block's end line. Parts
// of a cut block get their own lines, counted from the block's first line
// (and, for a fenced code block, the line after the fence); prose whose
// line breaks differ from the source's is held within the block's lines.
// ID is the first 16 hex digits of the SHA-256 of the path, a NUL, the
// anchor (the trail joined with " > " when there is no anchor), a NUL and
// the ordinal of the passage among those with that anchor, so an edit to
// one section leaves the IDs of the others alone. Hash is the SHA-256 of
// Text; Tokens is the exact count of Text.
func Split(doc *sources.Document, tok *Tokenizer, s Settings) []Passage {
	sp := newSplitter(doc, tok, s)
	secs := sp.sections()
	var groups []*group
	for i := 0; i < len(secs); {
		if len(secs[i].items) == 0 {
			i++
			continue
		}
		g := sp.newGroup(secs, i)
		for g.tokens < sp.min && sp.joinNext(secs, g) {
		}
		i = g.last + 1
		if g.tokens < sp.min && len(groups) > 0 && sp.joinPrevious(secs, groups[len(groups)-1], g) {
			continue
		}
		groups = append(groups, g)
	}
	var out []Passage
	seen := make(map[string]int) // passages so far per ID key
	for _, g := range groups {
		for _, p := range sp.passages(secs, g) {
			key := p.Anchor
			if key == "" {
				key = strings.Join(p.Heading, " > ")
			}
			p.ID = passageID(doc.Path, key, seen[key])
			seen[key]++
			out = append(out, p)
		}
	}
	return out
}

// passageID hashes the path, the section key and the ordinal.
func passageID(path, key string, ordinal int) string {
	h := sha256.New()
	h.Write([]byte(path))
	h.Write([]byte{0})
	h.Write([]byte(key))
	h.Write([]byte{0})
	h.Write([]byte(strconv.Itoa(ordinal)))
	return hex.EncodeToString(h.Sum(nil))[:16]
}

func textHash(s string) string {
	sum := sha256.Sum256([]byte(s))
	return hex.EncodeToString(sum[:])
}

// splitter holds what one call of Split works with.
type splitter struct {
	doc           *sources.Document
	tok           *Tokenizer
	aim, max, min int
}

func newSplitter(doc *sources.Document, tok *Tokenizer, s Settings) *splitter {
	// Out-of-range settings are pulled into range rather than trusted, so
	// that no setting can make Split loop or fail; Validate reports them.
	maxT := max(s.MaxTokens, minMaxTokens)
	aim := min(max(s.AimTokens, 1), maxT)
	minT := min(max(s.MinTokens, 0), aim)
	return &splitter{doc: doc, tok: tok, aim: aim, max: maxT, min: minT}
}

// item is a rendered block, a heading line of a joined section, or a part
// of a block that was cut, with its exact count and source lines.
type item struct {
	measured
	line, endLine int
	cut           bool
	// term is set when the item starts a defined term (a block with an
	// anchor) or is the heading of a section joined to another: the text
	// and anchor a passage holding the item lists in Passage.Terms.
	term Term
}

// run is a sequence of items joined by blank lines, with its exact count
// (see Tokenizer.measure).
type run struct {
	items  []item
	tokens int
}

// with returns the count of r with more items after it.
func (r *run) with(more ...item) int {
	n := r.tokens
	for i, it := range more {
		switch {
		case i > 0:
			n += more[i-1].sep
		case len(r.items) > 0:
			n += r.items[len(r.items)-1].sep
		}
		n += it.tokens
	}
	return n
}

func (r *run) add(more ...item) {
	r.tokens = r.with(more...)
	r.items = append(r.items, more...)
}

func (r *run) text() string {
	if len(r.items) == 1 {
		return r.items[0].text
	}
	var sb strings.Builder
	for i, it := range r.items {
		if i > 0 {
			sb.WriteString("\n\n")
		}
		sb.WriteString(it.text)
	}
	return sb.String()
}

// section is a heading and its blocks, rendered and counted.
type section struct {
	heading int // index into doc.Headings; -1 for the preamble
	parent  int // the heading's parent; -1 at top level and for the preamble
	line    int // the heading's line; 0 for the preamble
	blocks  []sources.Block
	run           // rendered blocks, empty ones left out
	title   *item // the heading as a line of text, nil when empty
}

// sections returns the preamble and one section per heading, in document
// order. Blocks naming a heading that does not exist go to the preamble.
func (sp *splitter) sections() []*section {
	hs := sp.doc.Headings
	secs := make([]*section, len(hs)+1)
	secs[0] = &section{heading: -1, parent: -1}
	for i, h := range hs {
		p := h.Parent
		if p < -1 || p >= len(hs) || p == i {
			p = -1
		}
		sec := &section{heading: i, parent: p, line: h.Line}
		if t := strings.TrimSpace(h.Text); t != "" {
			sec.title = &item{measured: sp.tok.measure(t), line: h.Line, endLine: h.Line}
		}
		secs[i+1] = sec
	}
	for _, b := range sp.doc.Blocks {
		i := b.Heading + 1
		if i < 0 || i >= len(secs) {
			i = 0
		}
		secs[i].blocks = append(secs[i].blocks, b)
	}
	for _, sec := range secs {
		kept := sec.blocks[:0]
		for _, b := range sec.blocks {
			if t := renderBlock(b); t != "" {
				kept = append(kept, b)
				it := item{measured: sp.tok.measure(t), line: b.Line, endLine: max(b.EndLine, b.Line)}
				if b.Anchor != "" {
					it.term = Term{Text: termText(b.Text), Anchor: b.Anchor}
				}
				sec.add(it)
			}
		}
		sec.blocks = kept
	}
	return secs
}

// group is a run of sections, secs[first..last], that makes one passage, or
// (a single section over the budget) several.
type group struct {
	first, last int
	run
	headings map[int]bool // headings of the members, to test for children
}

func (sp *splitter) newGroup(secs []*section, i int) *group {
	g := &group{first: i, last: i, headings: map[int]bool{}}
	g.add(secs[i].items...)
	if secs[i].heading >= 0 {
		g.headings[secs[i].heading] = true
	}
	return g
}

// follow returns the items that sections secs[from..to] add to g, which
// ends just before from: each heading on a line of its own, then the
// blocks, and the headings they bring; ok is false when one of them is not
// related to g.
func (sp *splitter) follow(secs []*section, g *group, from, to int) (items []item, heads []int, ok bool) {
	isMember := func(h int) bool {
		for _, x := range heads {
			if x == h {
				return true
			}
		}
		return g.headings[h]
	}
	for k := from; k <= to; k++ {
		sec := secs[k]
		if sec.parent != secs[g.first].parent && !isMember(sec.parent) {
			return nil, nil, false
		}
		if len(sec.items) > 0 && sp.ownAnchor(sec, secs[g.first]) {
			return nil, nil, false // it stays a target of its own
		}
		if sec.heading >= 0 {
			heads = append(heads, sec.heading)
		}
		if sec.title != nil {
			items = append(items, *sec.title)
		}
		items = append(items, sec.items...)
	}
	return items, heads, true
}

// ownAnchor reports whether sec has an anchor, other than that of first,
// that a link can land on.
func (sp *splitter) ownAnchor(sec, first *section) bool {
	if sec.heading < 0 {
		return false
	}
	a := sp.doc.Headings[sec.heading].Anchor
	return a != "" && (first.heading < 0 || sp.doc.Headings[first.heading].Anchor != a)
}

// joinNext adds the next section with text (and any empty headings before
// it) to g when it is related and the result stays within the aim.
func (sp *splitter) joinNext(secs []*section, g *group) bool {
	next := g.last + 1
	for next < len(secs) && len(secs[next].items) == 0 {
		next++
	}
	if next == len(secs) {
		return false
	}
	items, heads, ok := sp.follow(secs, g, g.last+1, next)
	if !ok || g.with(items...) > sp.aim {
		return false
	}
	g.add(items...)
	for _, h := range heads {
		g.headings[h] = true
	}
	g.last = next
	return true
}

// joinPrevious adds g to prev, the group before it, when g's first section
// is related to prev, prev is one passage, and the result stays within the
// aim.
func (sp *splitter) joinPrevious(secs []*section, prev, g *group) bool {
	if prev.tokens > sp.max {
		return false // cut into several passages: leave it be
	}
	items, heads, ok := sp.follow(secs, prev, prev.last+1, g.first)
	if !ok {
		return false
	}
	// follow brought g's first section; the rest of g comes after it.
	items = append(items, g.items[len(secs[g.first].items):]...)
	if prev.with(items...) > sp.aim {
		return false
	}
	prev.add(items...)
	for _, h := range heads {
		prev.headings[h] = true
	}
	for h := range g.headings {
		prev.headings[h] = true
	}
	prev.last = g.last
	return true
}

// passages turns a group into passages.
func (sp *splitter) passages(secs []*section, g *group) []Passage {
	first := secs[g.first]
	base := Passage{
		Path:    sp.doc.Path,
		Title:   sp.doc.Title,
		Heading: []string{},
	}
	if first.heading >= 0 {
		base.Anchor = sp.doc.Headings[first.heading].Anchor
		base.Heading = sp.trail(first.heading)
	}
	runs := []run{g.run}
	if g.tokens > sp.max {
		// Only a single section can be over the budget: joins stay within
		// the aim.
		runs = sp.pack(sp.items(first))
	}
	out := make([]Passage, len(runs))
	for i, r := range runs {
		p := base
		p.Heading = slices.Clone(base.Heading)
		p.Text, p.Tokens = r.text(), r.tokens
		p.Hash = textHash(p.Text)
		p.Line = r.items[0].line
		if i == 0 && first.line > 0 {
			p.Line = first.line
		}
		for _, it := range r.items {
			p.Split = p.Split || it.cut
			p.EndLine = max(p.EndLine, it.endLine, p.Line)
			if it.term.Anchor != "" && it.term.Anchor != p.Anchor && !slices.ContainsFunc(p.Terms, func(t Term) bool { return t.Anchor == it.term.Anchor }) {
				p.Terms = append(p.Terms, it.term)
			}
		}
		out[i] = p
	}
	return out
}

// trail returns the heading trail of heading h, like Document.Trail, but
// stops after as many steps as there are headings, so that parents that
// loop (a reader's bug) cannot hang a build.
func (sp *splitter) trail(h int) []string {
	hs := sp.doc.Headings
	var t []string
	for n := 0; h >= 0 && h < len(hs) && n < len(hs); n++ {
		t = append(t, hs[h].Text)
		h = hs[h].Parent
	}
	slices.Reverse(t)
	return t
}

// items returns the items of sec, with the blocks over the budget cut.
func (sp *splitter) items(sec *section) []item {
	var out []item
	for i, it := range sec.items {
		if it.tokens <= sp.max {
			out = append(out, it)
			continue
		}
		parts := sp.cutBlock(sec.blocks[i])
		if len(parts) > 0 {
			parts[0].term = it.term
		}
		out = append(out, parts...)
	}
	return out
}

// maxTermBytes bounds the text of a term: a signature with many
// parameters is cut at a word near this length.
const maxTermBytes = 200

// termText returns the text of a defined term's block on one line, cut
// at a word when it is long.
func termText(s string) string {
	s = strings.Join(strings.Fields(s), " ")
	if len(s) <= maxTermBytes {
		return s
	}
	cut := strings.LastIndexByte(s[:maxTermBytes], ' ')
	if cut <= 0 {
		cut = runeStart(s, maxTermBytes, 0)
	}
	return s[:cut]
}

// pack groups items into runs, each a passage: greedily within the aim, or
// within the limit while the run is under the minimum; a short last run
// joins the one before when they fit the limit together. Counts are exact,
// so every run is within the limit.
func (sp *splitter) pack(items []item) []run {
	var runs []run
	var cur run
	for _, it := range items {
		if len(cur.items) > 0 {
			next := cur.with(it)
			if next <= sp.aim || (cur.tokens < sp.min && next <= sp.max) {
				cur.add(it)
				continue
			}
			runs = append(runs, cur)
		}
		cur = run{}
		cur.add(it)
	}
	if len(cur.items) > 0 {
		if n := len(runs); n > 0 && cur.tokens < sp.min && runs[n-1].with(cur.items...) <= sp.max {
			runs[n-1].add(cur.items...)
		} else {
			runs = append(runs, cur)
		}
	}
	return runs
}

// renderBlock returns the text a block adds to a passage, or "" for a
// block with no text.
func renderBlock(b sources.Block) string {
	if b.Kind != sources.Code {
		return strings.TrimSpace(b.Text)
	}
	body := codeBody(b.Text)
	if body == "" {
		return ""
	}
	open, close := fences(b.Lang, body)
	return open + body + close
}

// codeBody returns code without its trailing line ends, or "" when it is
// only white space.
func codeBody(code string) string {
	if strings.TrimSpace(code) == "" {
		return ""
	}
	return strings.TrimRight(code, "\r\n")
}

// maxFence bounds the fence length, so that the fences of a cut code block
// always leave room for code within the smallest MaxTokens.
const maxFence = 16

// fences returns the opening and closing fence for body: three backticks,
// or one more than the longest run of backticks that starts a line of the
// code (which CommonMark would take for a closing fence), and the
// language's first word when it is a plain short name.
func fences(lang, body string) (open, close string) {
	n := 3
	for line := range strings.SplitSeq(body, "\n") {
		t := strings.TrimLeft(line, " ")
		if len(line)-len(t) > 3 {
			continue
		}
		run := len(t) - len(strings.TrimLeft(t, "`"))
		n = max(n, run+1)
	}
	n = min(n, maxFence)
	fence := strings.Repeat("`", n)
	return fence + cleanLang(lang) + "\n", "\n" + fence
}

// cleanLang returns the first word of a code block's language when it is a
// plain name of at most 20 bytes (it goes on the fence line), else "".
func cleanLang(lang string) string {
	f := strings.Fields(lang)
	if len(f) == 0 {
		return ""
	}
	l := f[0]
	if len(l) > 20 || strings.ContainsAny(l, "`~") {
		return ""
	}
	return l
}

// cutBlock cuts a block over the budget into parts, each rendered (code
// fenced) and within MaxTokens.
func (sp *splitter) cutBlock(b sources.Block) []item {
	body := strings.TrimSpace(b.Text)
	open, close := "", ""
	first := b.Line
	if b.Kind == sources.Code {
		body = codeBody(b.Text)
		open, close = fences(b.Lang, body)
		// A fenced block's Line is its opening fence when the block spans
		// more source lines than its code has.
		if lines := strings.Count(body, "\n") + 1; max(b.EndLine, b.Line)-b.Line+1 > lines {
			first++
		}
	}
	overhead := sp.tok.Count(open + close)
	// Two tokens of margin for pieces that merge across a cut or a fence.
	limit := max(sp.max-overhead-2, 1)
	target := max(min(sp.aim, sp.max)-overhead, 1)
	prose := b.Kind != sources.Code && b.Kind != sources.Table
	units := sp.units(body, limit, target, prose)

	// Greedy parts near the aim, as for blocks.
	var parts [][]unit
	var cur []unit
	est := 0
	for _, u := range units {
		if len(cur) > 0 && est+u.tokens > target && !(est < sp.min && est+u.tokens <= limit) {
			parts = append(parts, cur)
			cur, est = nil, 0
		}
		cur = append(cur, u)
		est += u.tokens
	}
	if len(cur) > 0 {
		if n := len(parts); n > 0 && est < sp.min && est+sumTokens(parts[n-1]) <= limit {
			// A short tail goes with the part before it rather than alone.
			parts[n-1] = append(parts[n-1], cur...)
		} else {
			parts = append(parts, cur)
		}
	}

	var out []item
	line := first // source line of the start of the current part
	off := 0      // byte offset in body the line count has reached
	lastLine := max(b.EndLine, b.Line)
	for _, part := range parts {
		for _, it := range sp.renderPart(part, open, close, limit) {
			start := it.off
			line += strings.Count(body[off:start], "\n")
			off = start
			it.item.line = min(line, lastLine)
			it.item.endLine = min(line+strings.Count(strings.TrimRight(body[start:it.end], "\n"), "\n"), lastLine)
			out = append(out, it.item)
		}
	}
	return out
}

func sumTokens(us []unit) int {
	n := 0
	for _, u := range us {
		n += u.tokens
	}
	return n
}

// unit is a piece of a block's body that is not cut further: a line, a
// sentence, a run of tokenizer pieces. Units are contiguous in the body.
type unit struct {
	off, end int // byte range in the body
	text     string
	tokens   int
}

// units cuts body into units of at most limit tokens each: lines; for
// prose, sentences of a line over the limit; then runs of tokenizer pieces
// (words, numbers, punctuation) of about target tokens; then runs of
// characters.
func (sp *splitter) units(body string, limit, target int, prose bool) []unit {
	var out []unit
	for off := 0; off < len(body); {
		end := strings.IndexByte(body[off:], '\n')
		if end < 0 {
			end = len(body)
		} else {
			end += off + 1
		}
		line := body[off:end]
		if n := sp.tok.Count(line); n <= limit {
			out = append(out, unit{off, end, line, n})
		} else if prose {
			for _, r := range sentences(line) {
				s := line[r[0]:r[1]]
				if n := sp.tok.Count(s); n <= limit {
					out = append(out, unit{off + r[0], off + r[1], s, n})
				} else {
					out = sp.wordUnits(out, body, off+r[0], off+r[1], limit, target)
				}
			}
		} else {
			out = sp.wordUnits(out, body, off, end, limit, target)
		}
		off = end
	}
	return out
}

// wordUnits appends units for body[from:to] made of whole words (a word is
// a run of characters other than white space, with the white space after
// it), each of about target tokens; only a word over limit on its own is
// cut inside, at tokenizer pieces.
func (sp *splitter) wordUnits(out []unit, body string, from, to, limit, target int) []unit {
	start, n := from, 0
	for i := from; i < to; {
		j := i
		for j < to && !isSpaceByte(body[j]) {
			j++
		}
		for j < to && isSpaceByte(body[j]) {
			j++
		}
		c := sp.tok.Count(body[i:j])
		if c > limit {
			if i > start {
				out = append(out, unit{start, i, body[start:i], sp.tok.Count(body[start:i])})
			}
			out = sp.pieceUnits(out, body, i, j, target)
			start, n, i = j, 0, j
			continue
		}
		if n+c > target && i > start {
			out = append(out, unit{start, i, body[start:i], sp.tok.Count(body[start:i])})
			start, n = i, 0
		}
		n += c
		i = j
	}
	if start < to {
		out = append(out, unit{start, to, body[start:to], sp.tok.Count(body[start:to])})
	}
	return out
}

// isSpaceByte reports whether c is ASCII white space. Normalised text has
// no other spaces between words; code keeps its own, and a line of code
// with none is one word.
func isSpaceByte(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f' || c == '\v'
}

// pieceUnits appends units for body[from:to], made of whole tokenizer
// pieces, each within limit; a piece over the limit on its own is cut at
// character boundaries.
func (sp *splitter) pieceUnits(out []unit, body string, from, to, limit int) []unit {
	s := body[:to]
	start, n := from, 0
	for i := from; i < to; {
		j, skip := nextPiece(s, i)
		c := 0
		if !skip {
			c = sp.tok.countPiece(s[i:j])
		}
		if c > limit {
			if i > start {
				out = append(out, unit{start, i, body[start:i], n})
			}
			out = sp.runeUnits(out, body, i, j, limit)
			start, n = j, 0
			i = j
			continue
		}
		if n+c > limit && i > start {
			out = append(out, unit{start, i, body[start:i], n})
			start, n = i, 0
		}
		n += c
		i = j
	}
	if start < to {
		out = append(out, unit{start, to, body[start:to], n})
	}
	return out
}

// runeUnits appends units for body[from:to] cut at character boundaries,
// each the longest run within limit tokens (a single character when even
// that is over the limit).
func (sp *splitter) runeUnits(out []unit, body string, from, to, limit int) []unit {
	fits := func(end int) bool { return sp.tok.Count(body[from:end]) <= limit }
	for from < to {
		// A token is at least one byte, so limit bytes always fit. Grow the
		// window while it fits, then search between the last end that fit
		// (lo) and the first that did not (hi).
		lo := runeStart(body, min(from+limit, to), from)
		if lo == from {
			_, w := utf8.DecodeRuneInString(body[from:to])
			lo = from + w
		}
		hi := to + 1 // past the end: "does not fit" until shown otherwise
		for step := 2 * limit; lo < to; step *= 2 {
			end := runeStart(body, min(lo+step, to), lo)
			if end == lo {
				break
			}
			if !fits(end) {
				hi = end
				break
			}
			lo = end
		}
		for hi <= to {
			mid := runeStart(body, lo+(hi-lo)/2, lo)
			if mid <= lo {
				break
			}
			if fits(mid) {
				lo = mid
			} else {
				hi = mid
			}
		}
		out = append(out, unit{from, lo, body[from:lo], sp.tok.Count(body[from:lo])})
		from = lo
	}
	return out
}

// runeStart returns i moved back to the start of the rune it falls in, but
// not before floor.
func runeStart(s string, i, floor int) int {
	for i > floor && i < len(s) && !utf8.RuneStart(s[i]) {
		i--
	}
	return i
}

// sentences returns the byte ranges of the sentences of a line: each ends
// after ".", "!" or "?" (and any closing quotes or brackets) followed by a
// space, which it keeps, or after a CJK full stop.
func sentences(line string) [][2]int {
	var out [][2]int
	start := 0
	for i := 0; i < len(line); {
		r, w := utf8.DecodeRuneInString(line[i:])
		i += w
		switch r {
		case '.', '!', '?':
			j := i
			for j < len(line) && strings.IndexByte(`"')]`, line[j]) >= 0 {
				j++
			}
			if j < len(line) && line[j] == ' ' {
				out = append(out, [2]int{start, j + 1})
				start, i = j+1, j+1
			}
		case '。', '！', '？':
			out = append(out, [2]int{start, i})
			start = i
		}
	}
	if start < len(line) {
		out = append(out, [2]int{start, len(line)})
	}
	return out
}

// cutItem is a rendered part of a cut block and its range in the body.
type cutItem struct {
	item     item
	off, end int
}

// renderPart renders a part of a cut block, checks its exact count, and
// halves it until it fits MaxTokens. A part of only white space is dropped.
func (sp *splitter) renderPart(part []unit, open, close string, limit int) []cutItem {
	from, to := part[0].off, part[len(part)-1].end
	var sb strings.Builder
	for _, u := range part {
		sb.WriteString(u.text)
	}
	body := sb.String()
	if strings.TrimSpace(body) == "" {
		return nil
	}
	text := strings.TrimSpace(body)
	if open != "" {
		text = open + strings.TrimRight(body, "\r\n") + close
	}
	m := sp.tok.measure(text)
	if m.tokens <= sp.max {
		return []cutItem{{item{measured: m, cut: true}, from, to}}
	}
	if len(part) > 1 {
		h := len(part) / 2
		return append(sp.renderPart(part[:h], open, close, limit), sp.renderPart(part[h:], open, close, limit)...)
	}
	// One unit too big once rendered: cut it finer. A single character
	// with the longest fences is still well within the smallest MaxTokens,
	// so this ends; the check on limit makes sure of it.
	u := part[0]
	if limit <= 1 {
		return []cutItem{{item{measured: m, cut: true}, from, to}}
	}
	limit /= 2
	var out []cutItem
	for _, f := range sp.runeUnits(nil, u.text, 0, len(u.text), limit) {
		f.off += u.off
		f.end += u.off
		out = append(out, sp.renderPart([]unit{f}, open, close, limit)...)
	}
	return out
}
