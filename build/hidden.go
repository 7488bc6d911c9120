package build

import (
	"regexp"
	"sort"
	"strings"

	"github.com/kbc-project/kbc/sources"
)

// Reasons for text dropped by normalisation, as counted in
// Document.Hidden and the hidden-text report.
const (
	// HiddenTag is a Unicode tag character, U+E0000-E007F (Unicode
	// Standard, section 23.9): invisible, yet each one mirrors an ASCII
	// character, so a run of them spells text no reader sees.
	HiddenTag = "unicode-tag"
	// HiddenBidi is a bidirectional embedding, override or isolate,
	// U+202A-202E and U+2066-2069 (UAX #9, section 2.1-2.4): it reorders
	// what a reader sees against what a program reads.
	HiddenBidi = "bidi-control"
)

// invisibleAt reports whether s holds a tag character or a bidi control
// at byte i, which reason, and its length in bytes.
func invisibleAt(s string, i int) (string, int) {
	switch s[i] {
	case 0xF3: // U+E0000-E007F is F3 A0 80 80 ... F3 A0 81 BF
		if i+3 < len(s) && s[i+1] == 0xA0 && (s[i+2] == 0x80 || s[i+2] == 0x81) {
			return HiddenTag, 4
		}
	case 0xE2: // U+202A-202E is E2 80 AA-AE; U+2066-2069 is E2 81 A6-A9
		if i+2 < len(s) && (s[i+1] == 0x80 && s[i+2] >= 0xAA && s[i+2] <= 0xAE || s[i+1] == 0x81 && s[i+2] >= 0xA6 && s[i+2] <= 0xA9) {
			return HiddenBidi, 3
		}
	}
	return "", 0
}

// stripInvisible returns s without tag characters and bidi controls,
// calling drop with the byte offset (in s) and reason of each one.
// Without any it returns s itself, having only looked for the lead bytes.
func stripInvisible(s string, drop func(off int, reason string)) string {
	first := -1
	for i := 0; i < len(s); i++ {
		if c := s[i]; c == 0xE2 || c == 0xF3 {
			if r, _ := invisibleAt(s, i); r != "" {
				first = i
				break
			}
		}
	}
	if first < 0 {
		return s
	}
	b := make([]byte, 0, len(s))
	b = append(b, s[:first]...)
	for i := first; i < len(s); {
		if c := s[i]; c == 0xE2 || c == 0xF3 {
			if r, n := invisibleAt(s, i); r != "" {
				drop(i, r)
				i += n
				continue
			}
		}
		b = append(b, s[i])
		i++
	}
	return string(b)
}

// blockLine returns the source line of byte off of b's text, in a
// document of kind k: in a code block, whose lines are the source's, the
// block's line plus the lines before off (and the opening fence of a
// Markdown fenced block); elsewhere, where text is reflowed, the block's
// first line.
func blockLine(k sources.Kind, b sources.Block, off int) int {
	if b.Kind != sources.Code {
		return b.Line
	}
	nl := strings.Count(b.Text[:off], "\n")
	if k != sources.HTML && b.EndLine-b.Line+1 > strings.Count(b.Text, "\n")+1 {
		nl++ // the opening fence line (```), which the text leaves out
	}
	return min(b.Line+nl, max(b.EndLine, b.Line))
}

// dropInvisible removes tag characters and bidi controls from doc's
// title, headings and blocks (code too: they change what a reader sees of
// code as much as of prose) and counts them in doc.Hidden by line.
func dropInvisible(doc *sources.Document) {
	// A title taken from a heading is counted with the heading.
	fromHeading := false
	for _, h := range doc.Headings {
		fromHeading = fromHeading || h.Text == doc.Title
	}
	doc.Title = stripInvisible(doc.Title, func(_ int, r string) {
		if !fromHeading {
			doc.AddHidden(r, 0, 1)
		}
	})
	for i := range doc.Headings {
		h := &doc.Headings[i]
		h.Text = stripInvisible(h.Text, func(_ int, r string) { doc.AddHidden(r, h.Line, 1) })
	}
	for i := range doc.Blocks {
		b := &doc.Blocks[i]
		orig := *b
		b.Text = stripInvisible(b.Text, func(off int, r string) { doc.AddHidden(r, blockLine(doc.Kind, orig, off), 1) })
	}
}

// Phrasings that address an AI assistant rather than a human reader: the
// usual openings of instructions planted in documents for an assistant
// to obey. The list is common practice, not from a source; a hit is
// flagged (Document.Lints), never dropped.
var addressesAssistant = regexp.MustCompile(`(?i)\b(?:ignore|disregard|forget|override)\s+(?:all\s+|any\s+)?(?:of\s+)?(?:the\s+|your\s+|my\s+)?(?:previous|prior|above|earlier|preceding|system|original)\s+(?:instructions|prompts?|rules|directions|guidelines)\b` +
	`|\bif\s+you\s+are\s+an?\s+(?:ai|llm|large\s+language\s+model|language\s+model|ai\s+assistant|chatbot|assistant)\b` +
	`|\b(?:note|message|instructions?)\s+(?:to|for)\s+(?:the\s+|any\s+|all\s+)?(?:ai|llm|assistant|language\s+model|chatbot)s?\b`)

// Lint reasons, one per family of phrasings.
const (
	LintIgnoreInstructions = "ignore-previous-instructions"
	LintIfYouAreAnAI       = "if-you-are-an-ai"
	LintNoteToAssistant    = "note-to-the-assistant"
)

func lintReason(match string) string {
	switch match[0] | 0x20 {
	case 'i':
		if len(match) > 1 && match[1]|0x20 == 'f' {
			return LintIfYouAreAnAI
		}
		if len(match) > 1 && match[1]|0x20 == 'n' { // "instructions for"
			return LintNoteToAssistant
		}
	case 'n', 'm':
		return LintNoteToAssistant
	}
	return LintIgnoreInstructions
}

// lintAssistant flags the text of doc's blocks that addresses an AI
// assistant, in doc.Lints.
func lintAssistant(doc *sources.Document) {
	for _, b := range doc.Blocks {
		if !mayAddress(b.Text) {
			continue
		}
		for _, loc := range addressesAssistant.FindAllStringIndex(b.Text, -1) {
			doc.Lints = append(doc.Lints, sources.Mark{Reason: lintReason(b.Text[loc[0]:loc[1]]), Line: blockLine(doc.Kind, b, loc[0]), Count: 1})
		}
	}
}

// anchorWords are words one of which every match of addressesAssistant
// holds: a block without any is not searched, so the expression runs on
// few blocks.
var anchorWords = []string{"ignore", "disregard", "forget", "override", "ai", "llm", "llms", "model", "models",
	"chatbot", "chatbots", "assistant", "assistants", "ais"}

// mayAddress reports whether s holds one of anchorWords as a word, ASCII
// case folded.
func mayAddress(s string) bool {
	for i := 0; i < len(s); {
		if !isASCIILetter(s[i]) {
			i++
			continue
		}
		j := i + 1
		for j < len(s) && isASCIILetter(s[j]) {
			j++
		}
		if n := j - i; n >= 2 && n <= 10 {
			for _, w := range anchorWords {
				if len(w) == n && strings.EqualFold(s[i:j], w) {
					return true
				}
			}
		}
		i = j
	}
	return false
}

func isASCIILetter(c byte) bool { return 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' }

// HiddenCaution opens the hidden-text report.
const HiddenCaution = "Text that readers of a page do not see never reaches a passage: it is where instructions aimed at an assistant hide. " +
	"Each page below had such text dropped; the lints flag visible text that addresses an assistant, which is kept. " +
	"The owners of each page decide what it should say."

// HiddenPage is one page's line in the hidden-text report.
type HiddenPage struct {
	Path    string         `json:"path"`
	Total   int            `json:"total"`   // characters and elements dropped
	Reasons map[string]int `json:"reasons"` // the same, by reason
	At      []sources.Mark `json:"at"`      // by line
}

// HiddenLint is visible text flagged as addressing an assistant.
type HiddenLint struct {
	Path   string `json:"path"`
	Line   int    `json:"line"`
	Reason string `json:"reason"`
}

// HiddenReport lists the text dropped as hidden, per page, and the
// lints.
type HiddenReport struct {
	Caution string         `json:"caution"`
	Total   int            `json:"total"`
	Reasons map[string]int `json:"reasons"`
	Pages   []HiddenPage   `json:"pages"` // by path
	Lints   []HiddenLint   `json:"lints"` // by path and line
}

// NewHiddenReport collects the hidden text and lints of docs.
func NewHiddenReport(docs []*sources.Document) *HiddenReport {
	r := &HiddenReport{Caution: HiddenCaution, Reasons: map[string]int{}, Pages: []HiddenPage{}, Lints: []HiddenLint{}}
	for _, d := range docs {
		if len(d.Hidden) > 0 {
			p := HiddenPage{Path: d.Path, Reasons: map[string]int{}, At: append([]sources.Mark(nil), d.Hidden...)}
			sort.SliceStable(p.At, func(i, j int) bool {
				if p.At[i].Line != p.At[j].Line {
					return p.At[i].Line < p.At[j].Line
				}
				return p.At[i].Reason < p.At[j].Reason
			})
			for _, m := range d.Hidden {
				p.Total += m.Count
				p.Reasons[m.Reason] += m.Count
				r.Reasons[m.Reason] += m.Count
			}
			r.Total += p.Total
			r.Pages = append(r.Pages, p)
		}
		for _, m := range d.Lints {
			r.Lints = append(r.Lints, HiddenLint{Path: d.Path, Line: m.Line, Reason: m.Reason})
		}
	}
	sort.SliceStable(r.Pages, func(i, j int) bool { return r.Pages[i].Path < r.Pages[j].Path })
	sort.SliceStable(r.Lints, func(i, j int) bool {
		a, b := r.Lints[i], r.Lints[j]
		if a.Path != b.Path {
			return a.Path < b.Path
		}
		return a.Line < b.Line
	})
	return r
}
