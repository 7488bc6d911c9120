package build

import (
	"sort"
	"strings"
	"unicode"

	"github.com/kbc-project/kbc/build/secrets"
	"github.com/kbc-project/kbc/sources"
)

// redactSecrets replaces every credential in doc's title, headings and
// blocks (code too: connection strings live in code) with its marker,
// "[secret removed: RULE]", and records where it was in doc.Secrets.
// It runs after normalisation, so that splitting, the duplicate search
// and the index all see the marker, never the value.
func redactSecrets(doc *sources.Document) {
	var fs []secrets.Finding
	doc.Title, fs = secrets.Redact(doc.Title)
	for _, f := range fs {
		doc.Secrets = append(doc.Secrets, sources.Mark{Reason: f.Rule, Count: 1})
	}
	for i := range doc.Headings {
		h := &doc.Headings[i]
		orig := h.Text
		if h.Text, fs = secrets.Redact(h.Text); len(fs) > 0 {
			for _, f := range fs {
				doc.Secrets = append(doc.Secrets, sources.Mark{Reason: f.Rule, Line: h.Line, Count: 1})
				// The heading's slug spells the value too: a link to it
				// no longer lands, but the value must not travel with
				// every passage of the section.
				if v := slugOf(orig[f.Start:f.End]); len(v) >= 4 {
					h.Anchor = strings.ReplaceAll(h.Anchor, v, "secret-removed")
				}
			}
		}
	}
	for i := range doc.Blocks {
		b := &doc.Blocks[i]
		text, fs := secrets.Redact(b.Text)
		for _, f := range fs {
			doc.Secrets = append(doc.Secrets, sources.Mark{Reason: f.Rule, Line: blockLine(doc.Kind, *b, f.Start), Count: 1})
		}
		b.Text = text
	}
}

// SecretsCaution opens the secrets report.
const SecretsCaution = "Credentials found in the sources were replaced in passages by a marker; their values are in no passage and not in this report. " +
	"Treat every real one as leaked: rotate it first, then remove it from the sources and their history. " +
	"The team that owns each credential decides whether a finding is real."

// SecretFinding is one credential found, by place and rule, never value.
type SecretFinding struct {
	Path string `json:"path"`
	Line int    `json:"line"`
	Rule string `json:"rule"`
}

// SecretsReport lists the credentials found in a build's sources.
type SecretsReport struct {
	Caution  string          `json:"caution"`
	Total    int             `json:"total"`
	Rules    map[string]int  `json:"rules"`    // findings per rule
	Findings []SecretFinding `json:"findings"` // by path and line
}

// NewSecretsReport collects the credentials found in docs.
func NewSecretsReport(docs []*sources.Document) *SecretsReport {
	r := &SecretsReport{Caution: SecretsCaution, Rules: map[string]int{}, Findings: []SecretFinding{}}
	for _, d := range docs {
		for _, m := range d.Secrets {
			r.Findings = append(r.Findings, SecretFinding{Path: d.Path, Line: m.Line, Rule: m.Reason})
			r.Rules[m.Reason]++
		}
	}
	sort.SliceStable(r.Findings, func(i, j int) bool {
		a, b := r.Findings[i], r.Findings[j]
		if a.Path != b.Path {
			return a.Path < b.Path
		}
		if a.Line != b.Line {
			return a.Line < b.Line
		}
		return a.Rule < b.Rule
	})
	r.Total = len(r.Findings)
	return r
}

// slugOf returns v as a heading slug spells it: lower case, letters,
// digits, '-' and '_' kept, the rest dropped.
func slugOf(v string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(v) {
		if unicode.IsLetter(r) || unicode.IsDigit(r) || r == '-' || r == '_' {
			b.WriteRune(r)
		}
	}
	return b.String()
}
