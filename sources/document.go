package sources

import (
	"bytes"
	"fmt"
	"sort"
	"time"

	"github.com/kbc-project/kbc/internal/printable"
)

// Kind names the source format a document was read from.
type Kind string

// The formats sources reads, chosen by file extension.
const (
	Markdown Kind = "markdown" // .md, .markdown
	MDX      Kind = "mdx"      // .mdx
	HTML     Kind = "html"     // .html, .htm
)

// BlockKind says what a text block is, so later stages know what they may
// not split or rewrite.
type BlockKind string

// The kinds of text block.
const (
	Paragraph BlockKind = "paragraph" // running text, also list items and quotes
	ListItem  BlockKind = "item"      // one list item
	Quote     BlockKind = "quote"     // a block quote's paragraph
	Code      BlockKind = "code"      // verbatim, never reflowed; Lang may be set
	Table     BlockKind = "table"     // one row per line, cells joined by " | "
)

// Document is one source file turned into text that can be traced back to
// its source lines. It is plain data: it can be cached and compared.
type Document struct {
	Path        string         `json:"path"` // slash-separated, relative to the walked root
	Kind        Kind           `json:"kind"`
	Title       string         `json:"title"` // front matter title, else <title>/first h1
	Front       map[string]any `json:"front,omitempty"`
	FrontFormat string         `json:"front_format,omitempty"` // "yaml", "toml" or ""
	FrontLines  int            `json:"front_lines,omitempty"`  // source lines taken by front matter
	FrontKeys   map[string]int `json:"front_keys,omitempty"`   // top-level front matter key -> its 1-based line in the file
	Headings    []Heading      `json:"headings,omitempty"`     // document order
	Blocks      []Block        `json:"blocks,omitempty"`       // document order, offsets rising
	Hash        string         `json:"hash"`                   // SHA-256 (hex) of the raw file bytes
	Size        int64          `json:"size"`
	ModTime     time.Time      `json:"mod_time"`
	// Warnings are problems that did not stop the document from being read
	// (a broken front matter block, invalid UTF-8 that was replaced).
	Warnings []*Error `json:"warnings,omitempty"`
	// Hidden counts text left out because a reader of the page would not
	// see it, by reason and source line: the readers add theirs (an
	// element styled invisible), normalisation its own (invisible Unicode).
	Hidden []Mark `json:"hidden,omitempty"`
	// Secrets lists the credentials replaced by a marker in the text, by
	// rule and source line; the values are never kept.
	Secrets []Mark `json:"secrets,omitempty"`
	// Lints lists visible text kept but flagged, by what was found and
	// source line (text that addresses an AI assistant).
	Lints []Mark `json:"lints,omitempty"`
}

// Mark is one thing found on a page at a source line: what it is
// (Reason, e.g. "unicode-tag", "aws-access-key") and how many (Count;
// characters for invisible Unicode, elements for hidden elements).
type Mark struct {
	Reason string `json:"reason"`
	Line   int    `json:"line,omitempty"` // 1-based; 0 when unknown (the title)
	Count  int    `json:"count,omitempty"`
}

// AddHidden records n units of text dropped at line for reason, adding to
// the count of an earlier mark with the same reason and line.
func (d *Document) AddHidden(reason string, line, n int) {
	if n <= 0 {
		return
	}
	for i := range d.Hidden {
		if m := &d.Hidden[i]; m.Reason == reason && m.Line == line {
			m.Count += n
			return
		}
	}
	d.Hidden = append(d.Hidden, Mark{Reason: reason, Line: line, Count: n})
}

// Heading is one heading of a document. Headings form a tree through Parent.
type Heading struct {
	Level  int    `json:"level"`  // 1..6
	Text   string `json:"text"`   // plain text, no markup
	Anchor string `json:"anchor"` // fragment a browser link would land on, without '#'
	Parent int    `json:"parent"` // index into Document.Headings, -1 at top level
	Offset int    `json:"offset"` // byte offset of the heading in the source file
	Line   int    `json:"line"`   // 1-based source line
}

// Block is one run of body text. Offsets and lines refer to the original
// file, front matter included.
type Block struct {
	Kind    BlockKind `json:"kind"`
	Text    string    `json:"text"`
	Lang    string    `json:"lang,omitempty"` // code language, when known
	Heading int       `json:"heading"`        // index of the enclosing heading, -1 before the first
	Start   int       `json:"start"`          // byte offset where the block starts in the source
	End     int       `json:"end"`            // byte offset just past the block
	Line    int       `json:"line"`           // 1-based source line of Start
	EndLine int       `json:"end_line"`       // 1-based source line of the block's last byte
	// Anchor is set only on the block of a defined term (a definition-list
	// term or an API signature) whose element carries its own id: the
	// fragment a link to that definition lands on, finer than the
	// section's. The block's text is the term.
	Anchor string `json:"anchor,omitempty"`
}

// Trail returns the heading trail of heading i, outermost first, or nil when
// i is -1.
func (d *Document) Trail(i int) []string {
	var t []string
	for i >= 0 && i < len(d.Headings) {
		t = append(t, d.Headings[i].Text)
		i = d.Headings[i].Parent
	}
	for a, b := 0, len(t)-1; a < b; a, b = a+1, b-1 {
		t[a], t[b] = t[b], t[a]
	}
	return t
}

// Error is one bad input, positioned in its source file. Line and Col are
// 1-based; zero means unknown.
type Error struct {
	Path string `json:"path"`
	Line int    `json:"line,omitempty"`
	Col  int    `json:"col,omitempty"`
	Msg  string `json:"msg"`
	Err  error  `json:"-"`
}

// Error returns "path:line:col: message" (line and column when known). The
// path and the message are passed through printable.Quote: a file name
// or a quoted line of a file holding a newline or an escape sequence is
// shown escaped, so it can neither forge a line of output nor drive the
// terminal.
func (e *Error) Error() string {
	path, msg := printable.Quote(e.Path), printable.Quote(e.Msg)
	switch {
	case e.Line > 0 && e.Col > 0:
		return fmt.Sprintf("%s:%d:%d: %s", path, e.Line, e.Col, msg)
	case e.Line > 0:
		return fmt.Sprintf("%s:%d: %s", path, e.Line, msg)
	}
	return fmt.Sprintf("%s: %s", path, msg)
}

// Unwrap returns the underlying cause, if any.
func (e *Error) Unwrap() error { return e.Err }

// SortErrors orders errors by path, then line, then column.
func SortErrors(errs []*Error) {
	sort.SliceStable(errs, func(i, j int) bool {
		a, b := errs[i], errs[j]
		if a.Path != b.Path {
			return a.Path < b.Path
		}
		if a.Line != b.Line {
			return a.Line < b.Line
		}
		return a.Col < b.Col
	})
}

// LineIndex maps byte offsets of one source file to 1-based line numbers.
type LineIndex []int // offsets at which each line starts

// NewLineIndex indexes the line starts of src.
func NewLineIndex(src []byte) LineIndex {
	idx := make(LineIndex, 1, 1+len(src)/40)
	for off := 0; ; {
		i := bytes.IndexByte(src[off:], '\n')
		if i < 0 {
			return idx
		}
		off += i + 1
		idx = append(idx, off)
	}
}

// Line returns the 1-based line holding byte offset off.
func (x LineIndex) Line(off int) int {
	return sort.Search(len(x), func(i int) bool { return x[i] > off })
}
