package build

import (
	"fmt"
	"strings"
	"testing"

	"github.com/kbc-project/kbc/sources"
)

// termDoc is a reference section holding n defined terms, each a block with
// its own anchor followed by a definition of about words words.
func termDoc(n, words int) *sources.Document {
	doc := &sources.Document{Path: "ref.html", Kind: sources.HTML, Title: "Harbour WMS reference"}
	doc.Headings = []sources.Heading{{Level: 2, Text: "Settings", Anchor: "settings", Parent: -1, Line: 1}}
	line := 2
	for i := range n {
		doc.Blocks = append(doc.Blocks,
			sources.Block{Kind: sources.Paragraph, Text: fmt.Sprintf("pick.setting%d", i), Anchor: fmt.Sprintf("pick.setting%d", i), Line: line, EndLine: line},
			sources.Block{Kind: sources.Paragraph, Text: repeatWord(words, "reserve"), Line: line + 1, EndLine: line + 1})
		line += 2
	}
	return doc
}

func TestSplitTerms(t *testing.T) {
	tok := newTestTokenizer(t)
	t.Run("one passage lists its terms", func(t *testing.T) {
		s := budget(300, 512, 48)
		ps := Split(termDoc(3, 10), tok, s)
		if len(ps) != 1 {
			t.Fatalf("%d passages, want 1", len(ps))
		}
		p := ps[0]
		if p.Anchor != "settings" {
			t.Errorf("anchor %q, want the section's", p.Anchor)
		}
		want := []Term{{"pick.setting0", "pick.setting0"}, {"pick.setting1", "pick.setting1"}, {"pick.setting2", "pick.setting2"}}
		if fmt.Sprint(p.Terms) != fmt.Sprint(want) {
			t.Errorf("terms %v, want %v", p.Terms, want)
		}
	})
	t.Run("packed passages list the terms that start in them", func(t *testing.T) {
		s := budget(60, 100, 10)
		doc := termDoc(8, 30)
		ps := Split(doc, tok, s)
		checkPassages(t, doc, ps, tok, s)
		seen := 0
		for _, p := range ps {
			for _, term := range p.Terms {
				if !strings.Contains(p.Text, term.Text) {
					t.Errorf("passage at line %d lists term %q it does not hold", p.Line, term.Text)
				}
				seen++
			}
		}
		if seen != 8 {
			t.Errorf("%d terms listed, want each of the 8 once", seen)
		}
	})
	t.Run("a cut term keeps its anchor on the first part", func(t *testing.T) {
		s := budget(40, 64, 0)
		doc := termDoc(1, 0)
		doc.Blocks = doc.Blocks[:1]
		doc.Blocks[0].Text = "pick.setting0(" + repeatWord(120, "site,") + ")"
		ps := Split(doc, tok, s)
		if len(ps) < 2 || len(ps[0].Terms) != 1 || len(ps[1].Terms) != 0 {
			t.Fatalf("passages %d, terms of the first two: %v", len(ps), ps)
		}
		if got := ps[0].Terms[0]; got.Anchor != "pick.setting0" || len(got.Text) > maxTermBytes || !strings.HasPrefix(got.Text, "pick.setting0(site,") {
			t.Errorf("term %+v", got)
		}
	})
	t.Run("tiny sections with anchors stay targets", func(t *testing.T) {
		s := budget(300, 512, 48)
		doc := sampleDoc("j.md", "# Pick\n\nRelease waves.\n\n## Batch\n\nForty lines.\n\n## Hold\n\nStops a wave.\n")
		var got []string
		for _, p := range Split(doc, tok, s) {
			got = append(got, p.Anchor)
		}
		if strings.Join(got, " ") != "pick batch hold" {
			t.Errorf("anchors %q, want a passage for each of pick, batch and hold", got)
		}
	})
}
