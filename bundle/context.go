package bundle

import (
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"slices"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
)

// ContextOptions configure Context. Budget is required; the rest have
// defaults.
type ContextOptions struct {
	// SearchOptions choose what may be used (audiences, exclusions, the
	// instant freshness is judged at). K is ignored: Context fetches
	// Fetch candidates.
	SearchOptions
	// Budget is the number of tokens (in the bundle's tokenizer,
	// cl100k_base) the context may take, citations and warnings included.
	Budget int
	// Lambda weighs relevance against novelty in the choice of passages
	// (maximal marginal relevance): 1 takes the best scores only, 0
	// novelty only. Zero means DefaultLambda; pass a tiny positive value
	// for pure novelty.
	Lambda float64
	// Fetch is the number of search hits to choose from; 0 means five
	// times the passages the budget holds at the bundle's aim size, at
	// least 20.
	Fetch int
	// Tokenizer counts the budget; nil makes the bundle's own on first
	// use. Loading its vocabulary is most of a first Context call, so a
	// program that answers once can make one and Preload it before Open,
	// and a server can share one; one of another encoding than the
	// bundle's is not used.
	Tokenizer *build.Tokenizer
}

// DefaultLambda is the weight of relevance in maximal marginal relevance.
// Carbonell and Goldstein (1998) leave it to the application; 0.7, a
// leaning towards relevance, is common practice, not from the paper.
const DefaultLambda = 0.7

// Context is what an assistant puts in front of the model for one
// question: numbered blocks of passage text, each with its citation and
// warnings.
type Context struct {
	Question string  `json:"question"`
	Tokens   int     `json:"tokens"` // the whole context as Markdown renders it, at most Budget
	Budget   int     `json:"budget"`
	Blocks   []Block `json:"blocks"`
}

// Block is one numbered piece of a Context: one passage, or passages that
// follow each other in one section merged back in reading order.
type Block struct {
	N        int       `json:"n"`    // its number, cited as [N]
	Cite     string    `json:"cite"` // path#anchor, or path
	Path     string    `json:"path"`
	Anchor   string    `json:"anchor,omitempty"`
	Heading  []string  `json:"heading,omitempty"`
	Line     int       `json:"line"`
	EndLine  int       `json:"end_line"`
	Updated  time.Time `json:"updated,omitzero"`
	Text     string    `json:"text"`
	Tokens   int       `json:"tokens"` // the block as Markdown renders it
	Warnings []string  `json:"warnings,omitempty"`
	IDs      []string  `json:"ids"` // the passages it holds, in reading order
}

// Context assembles the context for question within opts.Budget tokens:
//
//  1. Query (so the audience and exclusion rules apply) fetches the
//     candidates, each with its status and conflicts.
//  2. Passages are chosen one at a time by maximal marginal relevance
//     (Carbonell and Goldstein, "The Use of MMR, Diversity-Based Reranking
//     for Reordering Documents and Producing Summaries", SIGIR 1998):
//     the next is the candidate d maximising
//     λ·rel(d) − (1−λ)·max over chosen e of sim(d, e), where rel is the
//     BM25 score divided by the best candidate's and sim the Jaccard
//     similarity of the word shingles the duplicate search compares
//     (dedupe.Similarity, the bundle's shingle size).
//  3. A passage that does not fit what is left of the budget is replaced
//     by its first whole sentences when some fit (and says so), else
//     skipped for the next candidate; a code block or a table row is never
//     cut. Choosing stops when nothing more fits.
//  4. Chosen passages that follow each other in one section are merged
//     into one block in reading order; blocks are numbered in the order
//     their first passage was chosen.
//
// Every block carries its warnings: stale, expired, due soon, no known
// date, and disputed (another copy says otherwise). Context is safe for
// concurrent use.
func (b *Bundle) Context(question string, opts ContextOptions) (*Context, error) {
	if opts.Budget <= 0 {
		return nil, errors.New("context: the token budget must be at least 1")
	}
	lambda := cmp.Or(opts.Lambda, DefaultLambda)
	if lambda < 0 || lambda > 1 {
		return nil, fmt.Errorf("context: lambda %g is not in [0, 1]", lambda)
	}
	set := b.settings()
	tok := opts.Tokenizer
	if tok == nil || tok.Name() != set.Tokenizer {
		var err error
		if tok, err = b.tokenizer(); err != nil {
			return nil, err
		}
	}
	so := opts.SearchOptions
	so.K = cmp.Or(opts.Fetch, max(20, 5*opts.Budget/max(set.AimTokens, 1)))
	if so.Now.IsZero() {
		so.Now = time.Now()
	}
	hits, err := b.Query(question, so)
	if err != nil {
		return nil, err
	}
	c := &Context{Question: question, Budget: opts.Budget, Blocks: []Block{}}
	if len(hits) == 0 {
		return c, nil
	}

	// Choose by MMR within the budget. Each choice is priced as a block of
	// its own (citation line, warnings, text); merging later only saves.
	type choice struct {
		hit  *Hit
		text string // whole, or its first sentences
		note string // how it was cut, if it was
		at   span   // its line in passages.jsonl
	}
	var chosen []choice
	left := opts.Budget
	rel := make([]float64, len(hits))
	for i := range hits {
		rel[i] = hits[i].Score / hits[0].Score
	}
	m := newMMR(rel, lambda, func(i, j int) float64 { return dedupe.Similarity(hits[i].Text, hits[j].Text, set.Shingle) })
	// price is what a block adds to the context: its Markdown and the
	// blank line after it. Summed over blocks it bounds the count of the
	// whole (no token of cl100k_base spans two blocks but the newlines
	// between them, which the sum counts apart).
	price := func(h *Hit, warns []string, text string) int {
		return tok.Count(renderBlock(len(chosen)+1, h.Path, h.Anchor, h.Line, h.EndLine, h.Updated, warns, text) + "\n")
	}
	for left > 0 {
		pick := m.next()
		if pick < 0 {
			break
		}
		h := &hits[pick]
		warn := warnings(h)
		cost := price(h, warn, h.Text)
		text, note := h.Text, ""
		if cost > left {
			text, note = firstSentences(h.Text, func(s string) bool {
				return price(h, append(slices.Clone(warn), sentencesNote(s, h.Text)), s) <= left
			})
			if text == "" {
				m.skip(pick) // it takes no part in novelty
				continue
			}
			cost = price(h, append(warn, note), text)
		}
		m.take(pick)
		left -= cost
		at, _ := b.lines.find(h.ID) // a hit's id is always there
		chosen = append(chosen, choice{hit: h, text: text, note: note, at: at})
	}

	// Merge passages that follow each other in one section, in reading
	// order, and number the blocks in the order they were first chosen.
	type group struct {
		first int // index in chosen of its first choice
		items []choice
	}
	var groups []*group
	for i, ch := range chosen {
		var g *group
		for _, og := range groups {
			for _, it := range og.items {
				if it.note == "" && ch.note == "" && it.hit.Path == ch.hit.Path && it.hit.Anchor == ch.hit.Anchor &&
					(it.at.next() == ch.at.off || ch.at.next() == it.at.off) {
					g = og
				}
			}
		}
		if g == nil {
			g = &group{first: i}
			groups = append(groups, g)
		}
		g.items = append(g.items, ch)
	}
	for _, g := range groups {
		slices.SortFunc(g.items, func(x, y choice) int { return cmp.Compare(x.at.off, y.at.off) })
		first := g.items[0].hit
		blk := Block{N: len(c.Blocks) + 1, Path: first.Path, Anchor: first.Anchor, Heading: first.Heading,
			Line: first.Line, EndLine: first.EndLine, Updated: first.Updated, Cite: first.Ref()}
		var texts []string
		for _, it := range g.items {
			texts = append(texts, it.text)
			blk.IDs = append(blk.IDs, it.hit.ID)
			blk.Line, blk.EndLine = min(blk.Line, it.hit.Line), max(blk.EndLine, it.hit.EndLine)
			if it.hit.Updated.After(blk.Updated) {
				blk.Updated = it.hit.Updated
			}
			for _, w := range warnings(it.hit) {
				if !slices.Contains(blk.Warnings, w) {
					blk.Warnings = append(blk.Warnings, w)
				}
			}
			if it.note != "" {
				blk.Warnings = append(blk.Warnings, it.note)
			}
		}
		blk.Text = strings.Join(texts, "\n\n")
		blk.Tokens = tok.Count(blk.markdown())
		c.Blocks = append(c.Blocks, blk)
	}
	c.Tokens = tok.Count(c.Markdown())
	return c, nil
}

// mmr chooses candidates one at a time by maximal marginal relevance: the
// next is the unused i maximising
//
//	lambda·rel[i] − (1−lambda)·max over chosen j of sim(i, j)
//
// (Carbonell and Goldstein 1998, equation 1: Sim1 is rel, Sim2 is sim;
// the max term is 0 while nothing is chosen). Ties go to the lower index,
// the better search rank. The max term of each candidate is kept up to
// date as choices are made, so each similarity is computed once.
type mmr struct {
	rel, red []float64 // relevance; highest similarity to a chosen one
	used     []bool
	lambda   float64
	sim      func(i, j int) float64
}

func newMMR(rel []float64, lambda float64, sim func(i, j int) float64) *mmr {
	return &mmr{rel: rel, red: make([]float64, len(rel)), used: make([]bool, len(rel)), lambda: lambda, sim: sim}
}

// next returns the next candidate, or -1 when every one is used.
func (m *mmr) next() int {
	pick, best := -1, 0.0
	for i := range m.rel {
		if m.used[i] {
			continue
		}
		if score := m.lambda*m.rel[i] - (1-m.lambda)*m.red[i]; pick < 0 || score > best {
			pick, best = i, score
		}
	}
	return pick
}

// take marks i chosen: the others are now compared with it too.
func (m *mmr) take(i int) {
	m.used[i] = true
	if m.lambda == 1 {
		return // novelty has no weight
	}
	for k := range m.rel {
		if !m.used[k] {
			m.red[k] = max(m.red[k], m.sim(k, i))
		}
	}
}

// skip marks i used without choosing it (it did not fit).
func (m *mmr) skip(i int) { m.used[i] = true }

// warnings returns what a reader of h must know, from the status and
// conflicts Query gave it.
func warnings(h *Hit) []string {
	var w []string
	switch h.Status {
	case fresh.Expired:
		w = append(w, "expired "+day(*h.Expires)+": this page is known to be wrong from that date")
	case fresh.Stale:
		w = append(w, "stale: review was due "+day(h.ReviewBy))
	case fresh.DueSoon:
		w = append(w, "due for review "+day(h.ReviewBy))
	case fresh.Unknown:
		w = append(w, "date unknown: freshness cannot be judged")
	}
	for _, c := range h.Conflict {
		msg := "disputed: " + c.With + " differs"
		if len(c.Differences) > 0 {
			msg += " (" + c.Words() + ")"
		}
		w = append(w, msg)
	}
	return w
}

// markdown renders the block as Context's Markdown gives it.
func (blk *Block) markdown() string {
	return renderBlock(blk.N, blk.Path, blk.Anchor, blk.Line, blk.EndLine, blk.Updated, blk.Warnings, blk.Text)
}

// renderBlock writes one block: its citation line, its warnings as a
// quote, then the text. Token costs are counted on exactly this.
func renderBlock(n int, path, anchor string, line, end int, updated time.Time, warns []string, text string) string {
	var sb strings.Builder
	fmt.Fprintf(&sb, "[%d] %s, lines %d-%d", n, build.Location{Path: path, Anchor: anchor}.Ref(), line, end)
	if !updated.IsZero() {
		fmt.Fprintf(&sb, ", updated %s", day(updated))
	}
	sb.WriteString("\n")
	for _, w := range warns {
		fmt.Fprintf(&sb, "> warning: %s\n", w)
	}
	sb.WriteString("\n")
	sb.WriteString(text)
	sb.WriteString("\n")
	return sb.String()
}

// Markdown renders the context as Markdown that a prompt can include as
// it is: each block with its citation, warnings and text, separated by
// blank lines.
func (c *Context) Markdown() string {
	var parts []string
	for i := range c.Blocks {
		parts = append(parts, c.Blocks[i].markdown())
	}
	return strings.Join(parts, "\n")
}

// MarshalJSON keeps Blocks an array when empty.
func (c *Context) MarshalJSON() ([]byte, error) {
	type plain Context
	p := plain(*c)
	if p.Blocks == nil {
		p.Blocks = []Block{}
	}
	return json.Marshal(p)
}

// firstSentences returns the longest run of whole leading sentences of
// text that fits (as fits judges it), and a note saying how much was
// kept; "" when not even the first sentence fits. Code blocks and table
// rows count as one sentence each and are never cut.
func firstSentences(text string, fits func(string) bool) (string, string) {
	units := sentences(text)
	kept := ""
	for i := range units {
		try := strings.TrimRightFunc(text[:units[i]], unicode.IsSpace)
		if !fits(try) {
			break
		}
		kept = try
	}
	if kept == "" {
		return "", ""
	}
	return kept, sentencesNote(kept, text)
}

// sentencesNote says how much of text the cut part holds.
func sentencesNote(part, text string) string {
	return fmt.Sprintf("shortened: the first %d of %d sentences of this passage", len(sentences(part)), len(sentences(text)))
}

// sentences returns the end offsets of the units text is cut at: each
// sentence of prose (ending in '.', '!' or '?', with closing quotes or
// brackets, before white space), each line of a list or table, and each
// fenced code block whole.
func sentences(text string) []int {
	var ends []int
	inCode := false
	lineStart := 0
	for lineStart < len(text) {
		nl := strings.IndexByte(text[lineStart:], '\n')
		lineEnd := len(text)
		if nl >= 0 {
			lineEnd = lineStart + nl
		}
		line := text[lineStart:lineEnd]
		trimmed := strings.TrimSpace(line)
		switch {
		case strings.HasPrefix(trimmed, "```"):
			if inCode {
				ends = append(ends, lineEnd)
			}
			inCode = !inCode
		case inCode || trimmed == "":
		case strings.Contains(trimmed, " | ") || listItem(trimmed):
			ends = append(ends, lineEnd)
		default:
			for i := 0; i < len(line); {
				r, size := utf8.DecodeRuneInString(line[i:])
				i += size
				if r != '.' && r != '!' && r != '?' {
					continue
				}
				for i < len(line) && strings.ContainsRune(`"')]»”’`, rune(line[i])) {
					i++
				}
				if i == len(line) || line[i] == ' ' || line[i] == '\t' {
					ends = append(ends, lineStart+i)
				}
			}
			if len(ends) == 0 || ends[len(ends)-1] < lineStart+len(strings.TrimRightFunc(line, unicode.IsSpace)) {
				// A line that ends without a full stop: its own unit
				// when the next line starts a new block.
				if lineEnd == len(text) || strings.HasPrefix(text[lineEnd:], "\n\n") {
					ends = append(ends, lineEnd)
				}
			}
		}
		lineStart = lineEnd + 1
	}
	if inCode || len(ends) == 0 || ends[len(ends)-1] < len(strings.TrimRightFunc(text, unicode.IsSpace)) {
		ends = append(ends, len(text))
	}
	return ends
}

// listItem reports whether a trimmed line starts a list item.
func listItem(s string) bool {
	if strings.HasPrefix(s, "- ") || strings.HasPrefix(s, "* ") || strings.HasPrefix(s, "+ ") {
		return true
	}
	i := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
	}
	return i > 0 && i+1 < len(s) && (s[i] == '.' || s[i] == ')') && s[i+1] == ' '
}

// tokenizer returns the bundle's tokenizer, made on first use.
func (b *Bundle) tokenizer() (*build.Tokenizer, error) {
	b.tokOnce.Do(func() {
		b.tok, b.tokErr = build.NewTokenizer(b.settings().Tokenizer)
	})
	return b.tok, b.tokErr
}
