package build

import "time"

// Passage is one retrievable unit of text: a section of a document, or part
// of one, within the token budget.
type Passage struct {
	ID      string   `json:"id"`               // stable: survives edits elsewhere in the document
	Path    string   `json:"path"`             // source file, slash-separated, relative to the root
	Anchor  string   `json:"anchor,omitempty"` // fragment of the section, without '#'
	Title   string   `json:"title"`            // document title
	Heading []string `json:"heading"`          // heading trail, outermost first
	Text    string   `json:"text"`             // normalised body text; code kept verbatim
	Line    int      `json:"line"`             // first source line, 1-based
	EndLine int      `json:"end_line"`         // last source line
	Tokens  int      `json:"tokens"`           // BPE tokens in Text
	Hash    string   `json:"hash"`             // SHA-256 (hex) of Text
	Split   bool     `json:"split,omitempty"`  // a block over the budget was cut (at lines, else words)

	// Freshness, inherited from the passage's document (see build/fresh).
	Updated       time.Time  `json:"updated,omitzero"`         // last change
	UpdatedSource string     `json:"updated_source,omitempty"` // "front matter: updated", "git" or "file time"
	Reviewed      *time.Time `json:"reviewed,omitempty"`
	ReviewBy      time.Time  `json:"review_by,omitzero"` // when the document turns stale
	Expires       *time.Time `json:"expires,omitempty"`
	Owner         string     `json:"owner,omitempty"`
	Audience      string     `json:"audience,omitempty"`

	// AlsoAt lists the other places (path#anchor) that hold a copy of this
	// passage; those copies are not in the bundle, so an answer can cite
	// every location through this one.
	AlsoAt []string `json:"also_at,omitempty"`

	// Terms are the defined terms that start inside this passage: the
	// term of a definition-list entry or an API signature whose element
	// carries its own id. They are searched like headings, and each can be
	// cited at its own anchor, finer than the section's.
	Terms []Term `json:"terms,omitempty"`
}

// Ref returns "path#anchor", or the path alone when the passage has no
// anchor: the link an answer cites it by.
func (p *Passage) Ref() string { return Location{Path: p.Path, Anchor: p.Anchor}.Ref() }

// Term is a defined term and the fragment a link to its definition lands on.
type Term struct {
	Text   string `json:"text"`
	Anchor string `json:"anchor,omitempty"`
}
