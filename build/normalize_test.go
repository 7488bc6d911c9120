package build

import (
	"fmt"
	"slices"
	"strings"
	"testing"
	"unicode/utf8"

	"golang.org/x/text/unicode/norm"

	"github.com/kbc-project/kbc/sources"
)

func TestNormalizeText(t *testing.T) {
	tests := []struct {
		name  string
		in    string
		lines bool
		want  string
	}{
		{"clean", "Install the proxy.", true, "Install the proxy."},
		{"empty", "", true, ""},
		{"trim", "  \n Install \n\n", true, "Install"},
		{"spaces and tabs", "a \t  b\t\tc", true, "a b c"},
		{"no-break and thin spaces", "10\u00a0MB and 5\u2009s and\u202fmore\u3000x", true, "10 MB and 5 s and more x"},
		{"zero width and soft hyphen", "in\u00adstall zero\u200bwidth\u2060joined\ufeff", true, "install zerowidthjoined"},
		{"joiners kept", "\u0645\u06cc\u200c\u062e\u0648\u0627\u0647\u0645 👩\u200d💻", true, "\u0645\u06cc\u200c\u062e\u0648\u0627\u0647\u0645 👩\u200d💻"},
		{"control characters", "a\x00b\x07c\x7fd\u0080e\u009fz", true, "abcdez"},
		{"line ends", "one\r\ntwo\rthree\u0085four\u2028five\u2029six", true, "one\ntwo\nthree\nfour\nfive\nsix"},
		{"blank lines", "row 1\n\n\nrow 2\n \n row 3", true, "row 1\nrow 2\nrow 3"},
		{"spaces at line ends", "a  \n  b", true, "a\nb"},
		{"one line", "Install\n  on   Linux\n", false, "Install on Linux"},
		// UAX #15: e + U+0301 COMBINING ACUTE ACCENT composes to U+00E9.
		{"NFC", "caf\u0065\u0301", true, "caf\u00e9"},
		// Hangul jamo L+V+T compose to one syllable (UAX #15, Hangul).
		{"NFC Hangul", "\u1112\u1161\u11ab", true, "\ud55c"},
		{"NFC after drop", "e\u00ad\u0301", true, "\u00e9"},
		{"invalid UTF-8", "a\xffb", true, "a\ufffdb"},
		{"table", "| Name | Value |\n\n| a | 1 |", true, "| Name | Value |\n| a | 1 |"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := normalizeText(tt.in, tt.lines); got != tt.want {
				t.Errorf("normalizeText(%q, %v) = %q, want %q", tt.in, tt.lines, got, tt.want)
			}
		})
	}
}

func TestNormalizeDocument(t *testing.T) {
	code := "func main() {\r\n\tfmt.Println(\"caf\u0065\u0301\")  \n\n\n}\n"
	doc := &sources.Document{
		Path:  "a.md",
		Title: "  The\u00a0Guide \n",
		Headings: []sources.Heading{
			{Level: 1, Text: "Install\u200b  now", Anchor: "install", Parent: -1, Line: 1},
		},
		Blocks: []sources.Block{
			{Kind: sources.Paragraph, Text: " First  para ", Heading: 0, Line: 2, EndLine: 2},
			{Kind: sources.Paragraph, Text: "\u200b \u00ad", Heading: 0, Line: 3, EndLine: 3},
			{Kind: sources.Code, Text: code, Lang: "go", Heading: 0, Line: 4, EndLine: 9},
			{Kind: sources.Code, Text: " \n\t\n", Heading: 0, Line: 10, EndLine: 12},
			{Kind: sources.Table, Text: "a | b\n\n1 | 2", Heading: 0, Line: 13, EndLine: 15},
			{Kind: sources.ListItem, Text: "", Heading: 0, Line: 16, EndLine: 16},
		},
	}
	Normalize(doc)
	if doc.Title != "The Guide" {
		t.Errorf("Title = %q", doc.Title)
	}
	if got := doc.Headings[0].Text; got != "Install now" {
		t.Errorf("heading = %q", got)
	}
	var got []string
	for _, b := range doc.Blocks {
		got = append(got, fmt.Sprintf("%s@%d:%q", b.Kind, b.Line, b.Text))
	}
	want := []string{
		`paragraph@2:"First para"`,
		fmt.Sprintf("code@4:%q", code), // byte for byte, not even NFC
		`table@13:"a | b\n1 | 2"`,
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("blocks:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
}

func FuzzNormalize(f *testing.F) {
	for _, s := range []string{"", "a  b", " x\n\n y ", "caf\u0065\u0301", "e\u00ad\u0301", "\r\n\t\u00a0\u2028", "a\xffb", "\u1112\u1161\u11ab", "\u0345\u0301 \u0301"} {
		f.Add(s, true)
		f.Add(s, false)
	}
	f.Fuzz(func(t *testing.T, s string, lines bool) {
		once := normalizeText(s, lines)
		if twice := normalizeText(once, lines); twice != once {
			t.Fatalf("not idempotent: %q -> %q -> %q", s, once, twice)
		}
		if !utf8.ValidString(once) {
			t.Fatalf("invalid UTF-8 out: %q", once)
		}
		if !norm.NFC.IsNormalString(once) {
			t.Fatalf("not NFC: %q -> %q", s, once)
		}
		if strings.Contains(once, "  ") || strings.Contains(once, "\n\n") || strings.Contains(once, " \n") || strings.Contains(once, "\n ") {
			t.Fatalf("white space left: %q -> %q", s, once)
		}
		if strings.TrimSpace(once) != once {
			t.Fatalf("not trimmed: %q -> %q", s, once)
		}
		if !lines && strings.Contains(once, "\n") {
			t.Fatalf("line break in one-line text: %q -> %q", s, once)
		}
		for _, r := range once {
			if r == '\t' || r == '\r' || r == 0xAD || r == 0x200B || r == 0xFEFF || r == 0x2060 || r < ' ' && r != '\n' {
				t.Fatalf("%U left in %q -> %q", r, s, once)
			}
		}
	})
}

// benchDocument returns a document of realistic shape built from text:
// headings from Markdown heading lines, a block per paragraph.
func benchDocument(text string) *sources.Document {
	doc := &sources.Document{Path: "bench.md", Title: "Bench"}
	line := 1
	parent := []int{} // heading stack by level
	for _, para := range strings.Split(text, "\n\n") {
		n := strings.Count(para, "\n") + 1
		if strings.HasPrefix(para, "#") && !strings.Contains(para, "\n") {
			level := min(len(para)-len(strings.TrimLeft(para, "#")), 6)
			for len(parent) > 0 && doc.Headings[parent[len(parent)-1]].Level >= level {
				parent = parent[:len(parent)-1]
			}
			p := -1
			if len(parent) > 0 {
				p = parent[len(parent)-1]
			}
			txt := strings.TrimSpace(strings.TrimLeft(para, "#"))
			doc.Headings = append(doc.Headings, sources.Heading{Level: level, Text: txt, Anchor: fmt.Sprintf("h%d", len(doc.Headings)), Parent: p, Line: line})
			parent = append(parent, len(doc.Headings)-1)
		} else if strings.TrimSpace(para) != "" {
			kind := sources.Paragraph
			if strings.HasPrefix(para, "```") {
				kind = sources.Code
			} else if strings.HasPrefix(para, "|") {
				kind = sources.Table
			}
			doc.Blocks = append(doc.Blocks, sources.Block{Kind: kind, Text: para, Heading: len(doc.Headings) - 1, Line: line, EndLine: line + n - 1})
		}
		line += n + 1
	}
	return doc
}

func BenchmarkNormalize(b *testing.B) {
	docs, size := benchDocs(b)
	blocks := make([][]sources.Block, len(docs))
	for i, d := range docs {
		blocks[i] = d.Blocks
	}
	b.SetBytes(int64(size))
	for b.Loop() {
		b.StopTimer()
		work := make([]sources.Document, len(docs))
		for i, d := range docs {
			work[i] = *d
			work[i].Headings = slices.Clone(d.Headings)
			work[i].Blocks = slices.Clone(blocks[i])
		}
		b.StartTimer()
		for i := range work {
			Normalize(&work[i])
		}
	}
}

func ExampleNormalize() {
	doc := &sources.Document{
		Title: "Proxy\u00a0setup",
		Blocks: []sources.Block{
			{Kind: sources.Paragraph, Text: "Set  the\u200b proxy   before\r\n\r\nyou start.", Heading: -1},
			{Kind: sources.Code, Text: "export  HTTPS_PROXY=http://proxy:3128\n", Heading: -1},
			{Kind: sources.Paragraph, Text: " \u00ad ", Heading: -1},
		},
	}
	Normalize(doc)
	fmt.Printf("%q\n", doc.Title)
	for _, b := range doc.Blocks {
		fmt.Printf("%s: %q\n", b.Kind, b.Text)
	}
	// Output:
	// "Proxy setup"
	// paragraph: "Set the proxy before\nyou start."
	// code: "export  HTTPS_PROXY=http://proxy:3128\n"
}
