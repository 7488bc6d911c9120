package build

import (
	"fmt"
	"strings"
	"testing"
)

// TestSplitCutWords cuts one-line paragraphs over the budget and checks
// that the parts come in reading order and that no cut falls inside a word
// (a run of non-space characters), however the tokenizer splits it.
func TestSplitCutWords(t *testing.T) {
	tok := newTestTokenizer(t)
	words := []string{"reefer", "don't", "pick_batch_size", "1234567", "re-run", "OSL2", "x=40;", "Ærø", "(wave)", "näher"}
	var sb strings.Builder
	for i := range 1500 {
		if i > 0 {
			sb.WriteByte(' ')
		}
		sb.WriteString(words[i*7%len(words)])
	}
	line := sb.String()
	for _, s := range []Settings{budget(60, 80, 0), budget(300, 512, 48), budget(40, 64, 10)} {
		src := "# Long\n\n" + line + "\n\n# Next\n\nafter\n"
		doc := sampleDoc("long.md", src)
		Normalize(doc)
		ps := Split(doc, tok, s)
		checkPassages(t, doc, ps, tok, s)
		var got []string
		for _, p := range ps {
			if p.Anchor != "long" {
				continue
			}
			if !p.Split {
				t.Errorf("part at line %d not marked Split", p.Line)
			}
			got = append(got, strings.Fields(p.Text)...)
		}
		if want := strings.Fields(line); strings.Join(got, " ") != strings.Join(want, " ") {
			t.Errorf("aim %d: parts, read in order, are not the paragraph's words in order (%d words, want %d)", s.AimTokens, len(got), len(want))
			for i := range min(len(got), len(want)) {
				if got[i] != want[i] {
					t.Errorf("first difference at word %d: %q, want %q", i, got[i], want[i])
					break
				}
			}
		}
	}
}

// TestSortKeepsReadingOrder sorts the parts of a cut one-line paragraph
// (all on the same source line) among another page's passages: they must
// stay in reading order, not be shuffled by their ids.
func TestSortKeepsReadingOrder(t *testing.T) {
	tok := newTestTokenizer(t)
	s := budget(40, 64, 10)
	var sb strings.Builder
	for i := range 200 {
		fmt.Fprintf(&sb, "aisle %d is checked twice a shift ", i)
	}
	line := strings.TrimSpace(sb.String())
	ps := Split(sampleDoc("b.md", "# Long\n\n"+line+"\n"), tok, s)
	if len(ps) < 5 {
		t.Fatalf("%d passages, want the paragraph cut in several", len(ps))
	}
	all := append(Split(sampleDoc("c.md", "# C\n\nother page\n"), tok, s), ps...)
	SortPassages(all)
	var got []string
	for _, p := range all {
		if p.Path == "b.md" {
			got = append(got, p.Text)
		}
	}
	for i := range ps {
		if got[i] != ps[i].Text {
			t.Fatalf("part %d after sorting is %.30q, want %.30q", i, got[i], ps[i].Text)
		}
	}
}
