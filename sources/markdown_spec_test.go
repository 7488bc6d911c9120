package sources

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"golang.org/x/net/html"
)

// specExample is one example of the CommonMark spec as spec.json holds it.
type specExample struct {
	Markdown string `json:"markdown"`
	HTML     string `json:"html"`
	Example  int    `json:"example"`
	Section  string `json:"section"`
}

// specExceptions lists the CommonMark examples whose extracted text
// differs from the text of the spec's HTML on purpose, by example number.
// Three principles cover them all: URLs are never body text (an autolink
// to a URL is dropped; with GFM linkify on, so is a bare URL), a file that
// starts with a "---" line has front matter, and raw HTML is dropped whole.
var specExceptions = map[int]string{
	// Autolinks: every <scheme:...> autolink is a URL, dropped.
	594: "URL autolink dropped",
	595: "URL autolink dropped",
	596: "URL autolink dropped",
	597: "URL autolink dropped (mailto: is a URL scheme here, not an e-mail autolink)",
	598: "URL autolink dropped",
	599: "URL autolink dropped",
	600: "URL autolink dropped",
	601: "URL autolink dropped",
	603: "URL autolink dropped",
	608: "bare URL dropped: GFM linkify makes it an autolink",
	611: "bare URL dropped: GFM linkify makes it an autolink",
	// The same autolinks in other sections.
	20:  "Backslash escapes: URL autolink dropped",
	346: "Code spans: URL autolink dropped",
	480: "Emphasis: URL autolink dropped",
	481: "Emphasis: URL autolink dropped",
	526: "Links: URL autolink dropped",
	538: "Links: URL autolink dropped",
	// Front matter.
	96: "Setext headings: a file starting with a --- line and a later --- line has front matter",
	// Raw HTML.
	629: "Raw HTML: a CDATA section is dropped whole; an HTML parser shows the text after its first '>'",
}

// TestCommonMarkSpec checks the text kbc extracts against the CommonMark
// Spec 0.31.2 examples (spec.json shipped in goldmark v1.8.7; goldmark's
// README states CommonMark 0.31.2 compliance, and the file holds 652
// examples including example 354, "*$*alpha", which 0.31 added): for each
// example, all heading and block text joined in document order must equal
// the visible text of the expected HTML, white space folded. Every
// document must also pass checkMarkdownDoc.
func TestCommonMarkSpec(t *testing.T) {
	examples := loadSpec(t)
	failed := 0
	for _, ex := range examples {
		doc := &Document{Path: "spec.md"}
		if err := parseMarkdown(doc, []byte(ex.Markdown), false); err != nil {
			t.Errorf("example %d: %v", ex.Example, err)
			continue
		}
		checkMarkdownDoc(t, doc, []byte(ex.Markdown))
		got := foldSpace(docText(doc))
		want := foldSpace(specHTMLText(ex.HTML))
		_, excepted := specExceptions[ex.Example]
		switch {
		case got != want && !excepted:
			failed++
			t.Errorf("example %d (%s):\nmarkdown %q\ngot  %q\nwant %q", ex.Example, ex.Section, ex.Markdown, got, want)
		case got == want && excepted:
			t.Errorf("example %d (%s) is listed as an exception but matches", ex.Example, ex.Section)
		}
	}
	t.Logf("%d examples, %d exceptions, %d unexpected", len(examples), len(specExceptions), failed)
}

func loadSpec(t *testing.T) []specExample {
	t.Helper()
	out, err := exec.Command("go", "list", "-m", "-f", "{{.Dir}}", "github.com/yuin/goldmark").Output()
	if err != nil {
		t.Skipf("cannot locate the goldmark module: %v", err)
	}
	b, err := os.ReadFile(filepath.Join(strings.TrimSpace(string(out)), "_test", "spec.json"))
	if err != nil {
		t.Skipf("spec.json not in the goldmark module: %v", err)
	}
	var ex []specExample
	if err := json.Unmarshal(b, &ex); err != nil {
		t.Fatal(err)
	}
	return ex
}

// docText joins heading and block text in source order.
func docText(doc *Document) string {
	type piece struct {
		off  int
		text string
	}
	var ps []piece
	for _, h := range doc.Headings {
		ps = append(ps, piece{h.Offset, h.Text})
	}
	for _, b := range doc.Blocks {
		ps = append(ps, piece{b.Start, b.Text})
	}
	sort.SliceStable(ps, func(i, j int) bool { return ps[i].off < ps[j].off })
	var sb strings.Builder
	for _, p := range ps {
		sb.WriteString(p.text)
		sb.WriteByte(' ')
	}
	return sb.String()
}

// specHTMLText is the visible text of an HTML fragment, written for this
// test apart from the reader's own: text nodes in order (entities decoded
// by golang.org/x/net/html), image alt text, a line break for <br> and
// block elements, nothing from comments, scripts and styles.
func specHTMLText(s string) string {
	z := html.NewTokenizer(strings.NewReader(s))
	var b bytes.Buffer
	skip := 0
	for {
		switch tt := z.Next(); tt {
		case html.ErrorToken:
			return b.String()
		case html.TextToken:
			if skip == 0 {
				b.Write(z.Text())
			}
		case html.StartTagToken, html.SelfClosingTagToken, html.EndTagToken:
			tok := z.Token()
			switch tok.Data {
			case "script", "style":
				if tt == html.StartTagToken {
					skip++
				} else if tt == html.EndTagToken && skip > 0 {
					skip--
				}
			case "img":
				for _, a := range tok.Attr {
					if a.Key == "alt" {
						b.WriteString(" " + a.Val + " ")
					}
				}
			case "br", "p", "div", "li", "ul", "ol", "pre", "blockquote", "h1", "h2", "h3", "h4", "h5", "h6", "hr", "table", "tr", "td", "th":
				b.WriteByte('\n')
			}
		}
	}
}

func foldSpace(s string) string {
	return strings.Join(strings.Fields(s), " ")
}
