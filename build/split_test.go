package build

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"sync"
	"testing"
	"unicode"

	"github.com/kbc-project/kbc/sources"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// sampleDoc builds a Document from a small line format, a test fixture (not
// Markdown, which package sources reads):
//
//	%% aim=40 max=80 min=10   settings for the golden test (first line only)
//	# Title ... ###### Title  a heading; its anchor is the text slugged
//	# Title {-}               a heading with no anchor
//	```lang ... ```           a code block, fence lines included in its lines
//	| a | b                   table rows (consecutive lines)
//	- item                    a list item
//	> quote                   a quote
//	other lines               a paragraph (consecutive lines)
//
// A blank line ends a block. Lines and byte offsets are those of src.
func sampleDoc(path, src string) *sources.Document {
	doc := &sources.Document{Path: path, Kind: sources.Markdown, Title: "Sample"}
	lines := strings.SplitAfter(src, "\n")
	var stack []int // open headings, outermost first
	anchors := map[string]int{}
	cur := -1 // current heading
	var blk *sources.Block
	off := 0
	flush := func() {
		if blk != nil {
			blk.Text = strings.TrimSuffix(blk.Text, "\n")
			doc.Blocks = append(doc.Blocks, *blk)
			blk = nil
		}
	}
	add := func(kind sources.BlockKind, text string, line, start, end int) {
		if blk != nil && blk.Kind == kind && (kind == sources.Paragraph || kind == sources.Table) {
			blk.Text += text
			blk.EndLine, blk.End = line, end
			return
		}
		flush()
		blk = &sources.Block{Kind: kind, Text: text, Heading: cur, Start: start, End: end, Line: line, EndLine: line}
	}
	for i := 0; i < len(lines); i++ {
		raw := lines[i]
		line := strings.TrimRight(raw, "\r\n")
		start := off
		off += len(raw)
		n := i + 1
		switch {
		case i == 0 && strings.HasPrefix(line, "%%"):
		case strings.TrimSpace(line) == "":
			flush()
		case strings.HasPrefix(line, "```"):
			flush()
			code := &sources.Block{Kind: sources.Code, Lang: strings.TrimSpace(strings.TrimLeft(line, "`")), Heading: cur, Start: start, Line: n}
			for i+1 < len(lines) {
				i++
				l := lines[i]
				off += len(l)
				if strings.HasPrefix(l, "```") {
					break
				}
				code.Text += l
			}
			code.EndLine, code.End = i+1, off
			doc.Blocks = append(doc.Blocks, *code)
		case strings.HasPrefix(line, "#"):
			flush()
			level := len(line) - len(strings.TrimLeft(line, "#"))
			level = min(level, 6)
			text := strings.TrimSpace(strings.TrimLeft(line, "#"))
			for len(stack) > 0 && doc.Headings[stack[len(stack)-1]].Level >= level {
				stack = stack[:len(stack)-1]
			}
			parent := -1
			if len(stack) > 0 {
				parent = stack[len(stack)-1]
			}
			anchor := sampleSlug(text)
			if t, ok := strings.CutSuffix(text, " {-}"); ok {
				text, anchor = t, ""
			} else if k := anchors[anchor]; k > 0 {
				anchors[anchor]++
				anchor += "-" + strconv.Itoa(k)
			} else {
				anchors[anchor] = 1
			}
			doc.Headings = append(doc.Headings, sources.Heading{Level: level, Text: text, Anchor: anchor, Parent: parent, Offset: start, Line: n})
			cur = len(doc.Headings) - 1
			stack = append(stack, cur)
		case strings.HasPrefix(line, "|"):
			add(sources.Table, line+"\n", n, start, off)
		case strings.HasPrefix(line, "- "):
			add(sources.ListItem, line[2:]+"\n", n, start, off)
		case strings.HasPrefix(line, "> "):
			add(sources.Quote, line[2:]+"\n", n, start, off)
		default:
			add(sources.Paragraph, line+"\n", n, start, off)
		}
	}
	flush()
	if len(doc.Headings) > 0 && doc.Headings[0].Level == 1 {
		doc.Title = doc.Headings[0].Text
	}
	return doc
}

// sampleSlug lower-cases text and joins its words with '-'.
func sampleSlug(text string) string {
	var sb strings.Builder
	for _, r := range strings.ToLower(text) {
		switch {
		case unicode.IsLetter(r) || unicode.IsDigit(r):
			sb.WriteRune(r)
		case r == ' ' || r == '-':
			sb.WriteByte('-')
		}
	}
	return sb.String()
}

// settingsLine reads "%% aim=40 max=80 min=10" into s.
func settingsLine(src string, s Settings) Settings {
	first, _, _ := strings.Cut(src, "\n")
	if !strings.HasPrefix(first, "%%") {
		return s
	}
	for _, f := range strings.Fields(first[2:]) {
		k, v, _ := strings.Cut(f, "=")
		n, _ := strconv.Atoi(v)
		switch k {
		case "aim":
			s.AimTokens = n
		case "max":
			s.MaxTokens = n
		case "min":
			s.MinTokens = n
		}
	}
	return s
}

// checkPassages asserts the invariants every split must hold.
func checkPassages(t *testing.T, doc *sources.Document, ps []Passage, tok *Tokenizer, s Settings) {
	t.Helper()
	ids := map[string]bool{}
	lastLine := 0
	for i, p := range ps {
		where := fmt.Sprintf("passage %d (%s#%s, line %d)", i, p.Path, p.Anchor, p.Line)
		if strings.TrimSpace(p.Text) == "" {
			t.Fatalf("%s: empty text", where)
		}
		if n := tok.Count(p.Text); n != p.Tokens {
			t.Fatalf("%s: Tokens %d, text has %d", where, p.Tokens, n)
		}
		if p.Tokens > s.MaxTokens {
			t.Fatalf("%s: %d tokens over MaxTokens %d:\n%s", where, p.Tokens, s.MaxTokens, p.Text)
		}
		if p.Line < 1 || p.Line > p.EndLine {
			t.Fatalf("%s: lines %d-%d", where, p.Line, p.EndLine)
		}
		if p.Line < lastLine {
			t.Fatalf("%s: starts at line %d, before the passage before it (%d)", where, p.Line, lastLine)
		}
		lastLine = p.Line
		if ids[p.ID] {
			t.Fatalf("%s: ID %s used twice", where, p.ID)
		}
		ids[p.ID] = true
		if len(p.ID) != 16 {
			t.Fatalf("%s: ID %q", where, p.ID)
		}
		sum := sha256.Sum256([]byte(p.Text))
		if p.Hash != hex.EncodeToString(sum[:]) {
			t.Fatalf("%s: Hash is not the SHA-256 of Text", where)
		}
		if p.Path != doc.Path || p.Title != doc.Title || p.Heading == nil {
			t.Fatalf("%s: path %q title %q heading %v", where, p.Path, p.Title, p.Heading)
		}
	}
	// Nothing is lost: the passages hold at least every visible character
	// of the blocks (fences and joined headings add some).
	in, out := 0, 0
	for _, b := range doc.Blocks {
		in += visible(b.Text)
	}
	for _, p := range ps {
		out += visible(p.Text)
	}
	if out < in {
		t.Fatalf("passages hold %d visible characters, blocks %d", out, in)
	}
}

func visible(s string) int {
	n := 0
	for _, r := range s {
		if !unicode.IsSpace(r) {
			n++
		}
	}
	return n
}

func budget(aim, maxT, minT int) Settings {
	s := DefaultSettings()
	s.AimTokens, s.MaxTokens, s.MinTokens = aim, maxT, minT
	return s
}

func repeatWord(n int, word string) string {
	return strings.TrimSpace(strings.Repeat(word+" ", n))
}

// shape is what a split test checks of a passage.
type shape struct {
	anchor     string
	line, end  int
	split      bool
	startsWith string
}

func TestSplitRules(t *testing.T) {
	tok := newTestTokenizer(t)
	long := func(n int) string { return repeatWord(n, "alpha") + "." } // about n tokens
	codeLines := func(n int) string {
		var sb strings.Builder
		for i := range n {
			fmt.Fprintf(&sb, "x%d := compute(x%d, %d) // step\n", i, i, i)
		}
		return sb.String()
	}
	rows := func(n int) string {
		var sb strings.Builder
		for i := range n {
			fmt.Fprintf(&sb, "| option%d | value %d | what it does, in words |\n", i, i)
		}
		return sb.String()
	}
	tests := []struct {
		name string
		src  string
		s    Settings
		want []shape
	}{
		{"section within max is one passage",
			"# Guide\n\n" + long(100) + "\n\n" + long(100) + "\n\n" + long(100) + "\n",
			budget(100, 400, 0),
			[]shape{{"guide", 1, 7, false, "alpha"}}},
		{"long section packed near aim, never inside a block",
			"# Guide\n\n" + long(60) + "\n\n" + long(60) + "\n\n" + long(60) + "\n\n" + long(60) + "\n",
			budget(130, 200, 0),
			[]shape{{"guide", 1, 5, false, "alpha"}, {"guide", 7, 9, false, "alpha"}}},
		{"preamble before the first heading",
			long(80) + "\n\n# Next\n\n" + long(80) + "\n",
			budget(100, 200, 10),
			[]shape{{"", 1, 1, false, "alpha"}, {"next", 3, 5, false, "alpha"}}},
		{"code block cut at lines, every part fenced",
			"# Code\n\n```go\n" + codeLines(60) + "```\n",
			budget(150, 200, 0),
			// Line k of the code (x<k>) is source line 4+k; about 13 tokens a
			// line, so 11 lines and the fences make a part near the aim.
			[]shape{
				{"code", 1, 14, true, "```go\nx0 :="}, {"code", 15, 25, true, "```go\nx11 :="},
				{"code", 26, 36, true, "```go\nx22 :="}, {"code", 37, 47, true, "```go\nx33 :="},
				{"code", 48, 58, true, "```go\nx44 :="}, {"code", 59, 63, true, "```go\nx55 :="},
			}},
		{"table cut between rows",
			"# Table\n\n" + rows(40),
			budget(150, 200, 0),
			// Row k is source line 3+k, 15 tokens a row: 10 rows a part.
			[]shape{{"table", 1, 12, true, "| option0 "}, {"table", 13, 22, true, "| option10 "}, {"table", 23, 32, true, "| option20 "}, {"table", 33, 42, true, "| option30 "}}},
		{"one-line prose cut at sentence ends",
			"# Prose\n\n" + strings.Repeat("The proxy reads its settings at start. ", 40) + "\n",
			budget(100, 150, 0),
			// 8 tokens a sentence (9 as estimated alone, with its space).
			[]shape{{"prose", 1, 3, true, "The proxy"}, {"prose", 3, 3, true, "The proxy"}, {"prose", 3, 3, true, "The proxy"}, {"prose", 3, 3, true, "The proxy"}}},
		{"tiny section joins the next sibling",
			"# A {-}\n\n## B {-}\n\nShort.\n\n## C {-}\n\n" + long(60) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 3, 9, false, "Short.\n\nC\n\nalpha"}}},
		{"tiny section joins its child",
			"# A {-}\n\n## B {-}\n\nShort.\n\n### B1 {-}\n\n" + long(60) + "\n\n## C {-}\n\n" + long(60) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 3, 9, false, "Short.\n\nB1\n\nalpha"}, {"", 11, 13, false, "alpha"}}},
		{"tiny last section joins the previous sibling",
			"# A {-}\n\n## B {-}\n\n" + long(60) + "\n\n## C {-}\n\nShort.\n\n# D {-}\n\n" + long(60) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 3, 9, false, "alpha"}, {"", 11, 13, false, "alpha"}}},
		{"tiny last child joins its parent's passage",
			"# A {-}\n\n## B {-}\n\n" + long(60) + "\n\n### B1 {-}\n\nShort.\n\n## C {-}\n\n" + long(60) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 3, 9, false, "alpha"}, {"", 11, 13, false, "alpha"}}},
		{"no join across parents",
			"# A {-}\n\n## A1 {-}\n\n" + long(60) + "\n\n### A1a {-}\n\n" + long(60) + "\n\n## A2 {-}\n\nShort.\n\n# B {-}\n\n" + long(60) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 3, 5, false, "alpha"}, {"", 7, 9, false, "alpha"}, {"", 11, 13, false, "Short."}, {"", 15, 17, false, "alpha"}}},
		{"join stops at the aim",
			"# A {-}\n\n## B {-}\n\nShort.\n\n## C {-}\n\n" + long(98) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 3, 5, false, "Short."}, {"", 7, 9, false, "alpha"}}},
		{"empty heading makes no passage but stays in the trail",
			"# A\n\n## B\n\n### B1\n\n" + long(60) + "\n",
			budget(100, 200, 0),
			[]shape{{"b1", 5, 7, false, "alpha"}}},
		{"tiny section joins over an empty heading",
			"# A {-}\n\nShort.\n\n## B {-}\n\n### B1 {-}\n\n" + long(60) + "\n",
			budget(100, 200, 20),
			[]shape{{"", 1, 9, false, "Short.\n\nB\n\nB1\n\nalpha"}}},
		{"tiny section with its own anchor is not joined",
			"# A\n\n## B\n\nShort.\n\n## C\n\n" + long(60) + "\n\n## D {-}\n\nTiny.\n",
			budget(100, 200, 20),
			[]shape{{"b", 3, 5, false, "Short."}, {"c", 7, 13, false, "alpha"}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc := sampleDoc("guide.md", tt.src)
			Normalize(doc)
			ps := Split(doc, tok, tt.s)
			checkPassages(t, doc, ps, tok, tt.s)
			var got []shape
			for i, p := range ps {
				n := 20
				if i < len(tt.want) {
					n = len(tt.want[i].startsWith)
				}
				got = append(got, shape{p.Anchor, p.Line, p.EndLine, p.Split, p.Text[:min(n, len(p.Text))]})
			}
			if !reflect.DeepEqual(got, tt.want) {
				var sb strings.Builder
				for _, p := range ps {
					fmt.Fprintf(&sb, "  %s %d-%d split=%v tokens=%d %q\n", p.Anchor, p.Line, p.EndLine, p.Split, p.Tokens, p.Text[:min(40, len(p.Text))])
				}
				t.Errorf("got %+v\nwant %+v\npassages:\n%s", got, tt.want, sb.String())
			}
		})
	}
}

func TestSplitOneLineOverBudget(t *testing.T) {
	tok := newTestTokenizer(t)
	s := budget(60, 80, 0)
	// Minified JSON on one line, and a word with no break at all.
	var sb strings.Builder
	sb.WriteString("{")
	for i := range 200 {
		fmt.Fprintf(&sb, "%q:[%d,%d,{\"k\":\"v%d\"}],", fmt.Sprint("key", i), i, i*7, i)
	}
	sb.WriteString("\"end\":true}")
	src := "# Data\n\n```json\n" + sb.String() + "\n```\n\n# Word\n\n" + strings.Repeat("abcdefghij", 300) + "\n"
	doc := sampleDoc("data.md", src)
	Normalize(doc)
	ps := Split(doc, tok, s)
	checkPassages(t, doc, ps, tok, s)
	var code, word strings.Builder
	for _, p := range ps {
		if !p.Split {
			t.Errorf("passage %s line %d not marked Split", p.Anchor, p.Line)
		}
		switch p.Anchor {
		case "data":
			if !strings.HasPrefix(p.Text, "```json\n") || !strings.HasSuffix(p.Text, "\n```") {
				t.Errorf("code part not fenced: %q", p.Text)
			}
			// The first part starts the section, at its heading's line.
			if wantLine := 4 - 3*btoi(code.Len() == 0); p.Line != wantLine || p.EndLine != 4 {
				t.Errorf("code part at lines %d-%d, want %d-4", p.Line, p.EndLine, wantLine)
			}
			code.WriteString(strings.TrimSuffix(strings.TrimPrefix(p.Text, "```json\n"), "\n```"))
		case "word":
			word.WriteString(p.Text)
		}
	}
	if code.String() != sb.String() {
		t.Errorf("code parts do not add up to the code")
	}
	if word.String() != strings.Repeat("abcdefghij", 300) {
		t.Errorf("word parts do not add up to the word")
	}
}

func TestSplitLongerFence(t *testing.T) {
	tok := newTestTokenizer(t)
	doc := &sources.Document{Path: "f.md", Blocks: []sources.Block{
		{Kind: sources.Code, Lang: "markdown {.numberLines}", Text: "Text\n```go\nx := 1\n```\n", Heading: -1, Line: 1, EndLine: 6},
		{Kind: sources.Code, Lang: "", Text: "plain\n", Heading: -1, Line: 8, EndLine: 10},
	}}
	ps := Split(doc, tok, DefaultSettings())
	want := "````markdown\nText\n```go\nx := 1\n```\n````\n\n```\nplain\n```"
	if len(ps) != 1 || ps[0].Text != want {
		t.Fatalf("got %+v, want text %q", ps, want)
	}
}

// TestSplitIDsStable checks that editing one section leaves the IDs of the
// others alone.
func TestSplitIDsStable(t *testing.T) {
	tok := newTestTokenizer(t)
	s := budget(100, 200, 0)
	para := repeatWord(60, "alpha") + "."
	b4 := para + "\n\n" + para + "\n\n" + para + "\n\n" + para // over MaxTokens: several passages
	before := "# A\n\n" + para + "\n\n# B\n\n" + b4 + "\n\n# C\n\n" + para + "\n"
	after := "# A\n\nA new first paragraph.\n\n" + para + "\n\n# B\n\n" + b4 + "\n\n# C\n\n" + para + " Changed.\n"
	ids := func(src string) map[string]string {
		doc := sampleDoc("a.md", src)
		Normalize(doc)
		m := map[string]string{}
		for _, p := range Split(doc, tok, s) {
			m[p.ID] = p.Anchor + " " + p.Hash[:8]
		}
		return m
	}
	b, a := ids(before), ids(after)
	if len(b) < 4 || len(a) != len(b) {
		t.Fatalf("passages: %d before, %d after; want the same, at least 4", len(b), len(a))
	}
	for id, v := range b {
		if _, ok := a[id]; !ok {
			t.Errorf("ID %s (%s) gone after editing other sections", id, v)
		}
	}
	// Same path, anchor and ordinal give the same ID in another run.
	if got := passageID("a.md", "b", 1); got != passageID("a.md", "b", 1) || got == passageID("a.md", "b", 2) || got == passageID("b.md", "b", 1) {
		t.Errorf("passageID not a function of path, key and ordinal")
	}
}

// TestSplitDuplicateAnchors checks that IDs stay unique when sections share
// an anchor or, with none, a trail.
func TestSplitDuplicateAnchors(t *testing.T) {
	tok := newTestTokenizer(t)
	para := repeatWord(60, "alpha") + "."
	doc := &sources.Document{Path: "d.html", Headings: []sources.Heading{
		{Level: 2, Text: "Example", Anchor: "", Parent: -1, Line: 1},
		{Level: 2, Text: "Example", Anchor: "", Parent: -1, Line: 3},
		{Level: 2, Text: "Other", Anchor: "Example", Parent: -1, Line: 5},
	}}
	for i := range 3 {
		doc.Blocks = append(doc.Blocks, sources.Block{Kind: sources.Paragraph, Text: para, Heading: i, Line: 2 * (i + 1), EndLine: 2 * (i + 1)})
	}
	ps := Split(doc, tok, budget(100, 200, 0))
	if len(ps) != 3 {
		t.Fatalf("%d passages, want 3", len(ps))
	}
	checkPassages(t, doc, ps, tok, budget(100, 200, 0))
}

func TestSplitNoText(t *testing.T) {
	tok := newTestTokenizer(t)
	for _, doc := range []*sources.Document{
		{Path: "empty.md"},
		{Path: "headings.md", Headings: []sources.Heading{{Level: 1, Text: "Only", Anchor: "only", Parent: -1, Line: 1}}},
		{Path: "blank.md", Blocks: []sources.Block{{Kind: sources.Paragraph, Text: "  ", Heading: -1, Line: 1, EndLine: 1}, {Kind: sources.Code, Text: "\n\n", Heading: -1, Line: 2, EndLine: 4}}},
	} {
		if ps := Split(doc, tok, DefaultSettings()); len(ps) != 0 {
			t.Errorf("%s: %d passages, want none", doc.Path, len(ps))
		}
	}
}

// TestSplitGolden splits each testdata/split/*.txt sample and compares the
// passages with the .json beside it; -update rewrites them.
func TestSplitGolden(t *testing.T) {
	tok := newTestTokenizer(t)
	files, err := filepath.Glob(filepath.Join("testdata", "split", "*.txt"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no golden samples: %v", err)
	}
	for _, f := range files {
		name := strings.TrimSuffix(filepath.Base(f), ".txt")
		t.Run(name, func(t *testing.T) {
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			s := settingsLine(string(src), DefaultSettings())
			doc := sampleDoc(name+".md", string(src))
			Normalize(doc)
			ps := Split(doc, tok, s)
			checkPassages(t, doc, ps, tok, s)
			got, err := json.MarshalIndent(ps, "", "  ")
			if err != nil {
				t.Fatal(err)
			}
			got = append(got, '\n')
			golden := strings.TrimSuffix(f, ".txt") + ".json"
			if *update {
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -run TestSplitGolden -update to write it)", err)
			}
			if string(got) != string(want) {
				t.Errorf("passages differ from %s (go test -run TestSplitGolden -update rewrites it):\n%s", golden, got)
			}
		})
	}
}

func FuzzSplit(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "split", "*.txt"))
	for _, name := range files {
		if b, err := os.ReadFile(name); err == nil {
			f.Add(string(b), uint16(300), uint16(512), uint16(48))
			f.Add(string(b), uint16(40), uint16(64), uint16(10))
		}
	}
	f.Add("# A\n\ntext\n\n## B\n\n```go\ncode\n```\n\n| a | b\n| c | d\n", uint16(20), uint16(64), uint16(5))
	f.Add("x\n\n###### deep\n\n# top\n\n- item\n> quote\n", uint16(1), uint16(64), uint16(0))
	// One line over the budget: cut at words, parts in reading order.
	f.Add("# Long\n\n"+strings.Repeat("don't re-run pick_batch_size 1234567 näher ", 60)+"\n", uint16(40), uint16(64), uint16(10))
	f.Add("# W\n\n"+strings.Repeat("abcdefghij", 80)+" tail\n", uint16(20), uint16(0), uint16(0))
	tok := newTestTokenizer(f)
	f.Fuzz(func(t *testing.T, src string, aim, maxT, minT uint16) {
		s := DefaultSettings()
		s.MaxTokens = minMaxTokens + int(maxT)%512
		s.AimTokens = 1 + int(aim)%s.MaxTokens
		s.MinTokens = int(minT) % (s.AimTokens + 1)
		if err := s.Validate(); err != nil {
			t.Fatalf("settings %+v: %v", s, err)
		}
		for _, norm := range []bool{false, true} {
			doc := sampleDoc("f.md", src)
			if norm {
				Normalize(doc)
			}
			ps := Split(doc, tok, s)
			checkPassages(t, doc, ps, tok, s)
			checkWholeWords(t, doc, ps, tok, s)
			if again := Split(doc, tok, s); !reflect.DeepEqual(again, ps) {
				t.Fatalf("second split differs")
			}
		}
	})
}

// checkWholeWords asserts that no cut falls inside a word: every word
// (run of non-space characters) of a passage is a word of a block or a
// heading, or a fence, unless it is part of a word that is over the budget
// on its own.
func checkWholeWords(t *testing.T, doc *sources.Document, ps []Passage, tok *Tokenizer, s Settings) {
	t.Helper()
	words := map[string]bool{}
	var long []string
	for _, b := range doc.Blocks {
		for _, w := range strings.Fields(b.Text) {
			words[w] = true
			if tok.Count(w) > s.MaxTokens/2 {
				long = append(long, w)
			}
		}
	}
	for _, h := range doc.Headings {
		for _, w := range strings.Fields(h.Text) {
			words[w] = true
		}
	}
	for _, p := range ps {
		for _, w := range strings.Fields(p.Text) {
			if words[w] || strings.HasPrefix(w, "```") {
				continue
			}
			inLong := false
			for _, l := range long {
				inLong = inLong || strings.Contains(l, w)
			}
			if !inLong {
				t.Fatalf("passage at line %d holds %q, a cut inside a word", p.Line, w)
			}
		}
	}
}

func ExampleSplit() {
	doc := &sources.Document{
		Path:  "install.md",
		Title: "Install",
		Headings: []sources.Heading{
			{Level: 1, Text: "Install", Anchor: "install", Parent: -1, Line: 1},
			{Level: 2, Text: "Linux", Anchor: "linux", Parent: 0, Line: 5},
		},
		Blocks: []sources.Block{
			{Kind: sources.Paragraph, Text: "Download the archive for your system.", Heading: 0, Line: 3, EndLine: 3},
			{Kind: sources.Code, Lang: "sh", Text: "tar xzf kbc.tgz\n", Heading: 1, Line: 7, EndLine: 9},
		},
	}
	tok, err := NewTokenizer("cl100k_base")
	if err != nil {
		panic(err)
	}
	s := DefaultSettings()
	s.MinTokens = 0 // keep the two small sections apart
	for _, p := range Split(doc, tok, s) {
		fmt.Printf("%s lines %d-%d, %d tokens, trail %q:\n%s\n", p.ID, p.Line, p.EndLine, p.Tokens, p.Heading, p.Text)
	}
	// Output:
	// bbb75d43fe7ad19b lines 1-3, 7 tokens, trail ["Install"]:
	// Download the archive for your system.
	// 6d1e78417453de65 lines 5-9, 12 tokens, trail ["Install" "Linux"]:
	// ```sh
	// tar xzf kbc.tgz
	// ```
}

func btoi(b bool) int {
	if b {
		return 1
	}
	return 0
}

func BenchmarkSplit(b *testing.B) {
	docs, size := benchDocs(b)
	for _, d := range docs {
		Normalize(d)
	}
	tok := newTestTokenizer(b)
	s := DefaultSettings()
	for _, d := range docs {
		Split(d, tok, s) // warm the token cache, as after the first documents
	}
	b.SetBytes(int64(size))
	for b.Loop() {
		for _, d := range docs {
			Split(d, tok, s)
		}
	}
}

// benchDocs returns real documents read with sources.Parse from the
// corpora (all of them, in walk order) and the bytes of their block text,
// or one generated document when KBC_CORPORA is not set.
func benchDocs(b *testing.B) ([]*sources.Document, int) {
	b.Helper()
	dir := os.Getenv("KBC_CORPORA")
	var docs []*sources.Document
	if dir != "" {
		filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
			if err != nil || d.IsDir() {
				return nil
			}
			if _, ok := sources.KindOf(p); !ok {
				return nil
			}
			src, err := os.ReadFile(p)
			if err != nil {
				return nil
			}
			if doc, err := sources.Parse(p, src); err == nil {
				docs = append(docs, doc)
			}
			return nil
		})
	}
	if len(docs) == 0 {
		docs = []*sources.Document{benchDocument(benchText(8 << 20))}
	}
	size := 0
	for _, d := range docs {
		for _, bl := range d.Blocks {
			size += len(bl.Text)
		}
	}
	return docs, size
}

// TestSplitCorpora splits every text file of the real corpora, cut into a
// document at its Markdown headings and blank lines, and checks the
// invariants on each.
func TestSplitCorpora(t *testing.T) {
	dir := corporaDir(t)
	paths, texts := corporaTexts(t, dir)
	tok := newTestTokenizer(t)
	s := DefaultSettings()
	passages, split, bytes := 0, 0, 0
	for i, text := range texts {
		doc := benchDocument(text)
		doc.Path = paths[i]
		Normalize(doc)
		ps := Split(doc, tok, s)
		checkPassages(t, doc, ps, tok, s)
		passages += len(ps)
		bytes += len(text)
		for _, p := range ps {
			if p.Split {
				split++
			}
		}
	}
	t.Logf("%d files, %d bytes: %d passages, %d of them from cut blocks", len(texts), bytes, passages, split)
}

// TestSplitConcurrent splits several documents at once with one Tokenizer
// (run with -race) and compares with splitting them one by one.
func TestSplitConcurrent(t *testing.T) {
	tok := newTestTokenizer(t)
	s := budget(60, 100, 10)
	var docs []*sources.Document
	for i := range 8 {
		docs = append(docs, benchDocument(benchText(20000+i*1000)))
	}
	want := make([][]Passage, len(docs))
	for i, d := range docs {
		want[i] = Split(d, newTestTokenizer(t), s)
	}
	got := make([][]Passage, len(docs))
	var wg sync.WaitGroup
	for i, d := range docs {
		wg.Go(func() { got[i] = Split(d, tok, s) })
	}
	wg.Wait()
	if !reflect.DeepEqual(got, want) {
		t.Errorf("concurrent splits differ from sequential ones")
	}
}

// TestSplitParsedCorpora reads the real corpora with sources.Parse and runs
// the stages as a build does (normalise, boilerplate, split), checking the
// invariants on every document, and that each part of a cut Markdown (or
// MDX) code block starts at the source line it names.
func TestSplitParsedCorpora(t *testing.T) {
	dir := corporaDir(t)
	tok := newTestTokenizer(t)
	s := DefaultSettings()
	var docs []*sources.Document
	srcs := map[string][]string{} // source lines of each Markdown file
	skipped := 0
	err := filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			if d != nil && d.IsDir() && strings.HasPrefix(d.Name(), ".") && p != dir {
				return filepath.SkipDir
			}
			return err
		}
		if _, ok := sources.KindOf(p); !ok {
			return nil
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		doc, perr := sources.Parse(filepath.ToSlash(rel), b)
		if perr != nil {
			skipped++
			return nil
		}
		Normalize(doc)
		docs = append(docs, doc)
		if strings.HasSuffix(p, ".md") || strings.HasSuffix(p, ".mdx") {
			srcs[doc.Path] = strings.Split(string(b), "\n")
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	// Each corpus is a site of its own.
	sites := map[string][]*sources.Document{}
	for _, d := range docs {
		site, _, _ := strings.Cut(d.Path, "/")
		sites[site] = append(sites[site], d)
	}
	bps := map[string]*Boilerplate{}
	kinds := 0
	for site, ds := range sites {
		bps[site] = FindBoilerplate(ds, s)
		kinds += bps[site].Len()
	}
	passages, cut, checked, dropped, inLine := 0, 0, 0, 0, 0
	for _, doc := range docs {
		site, _, _ := strings.Cut(doc.Path, "/")
		kept, n := bps[site].Strip(doc)
		dropped += n
		ps := Split(kept, tok, s)
		checkPassages(t, kept, ps, tok, s)
		passages += len(ps)
		lines := srcs[doc.Path]
		for i, p := range ps {
			if !p.Split {
				continue
			}
			cut++
			if lines == nil || !strings.HasPrefix(p.Text, "```") || i == 0 || ps[i-1].Anchor != p.Anchor {
				continue // not Markdown code, or a part that starts at its heading
			}
			first, _, _ := strings.Cut(p.Text[strings.IndexByte(p.Text, '\n')+1:], "\n")
			if p.Line <= len(lines) && strings.TrimSpace(first) != strings.TrimSpace(lines[p.Line-1]) &&
				strings.Contains(lines[p.Line-1], strings.TrimSpace(first)) && tok.Count(lines[p.Line-1]) > s.MaxTokens {
				// A line over the budget on its own is cut inside: at
				// white space, else between tokenizer pieces (Split's
				// doc); the part starts within its line.
				inLine++
				continue
			}
			if p.Line > len(lines) || strings.TrimSpace(lines[p.Line-1]) != strings.TrimSpace(first) {
				t.Errorf("%s: part at line %d starts %q, source line is %q", p.Path, p.Line, first, lines[min(p.Line, len(lines))-1])
				continue
			}
			checked++
		}
	}
	t.Logf("%d documents (%d files not read), %d boilerplate blocks dropped (%d distinct), %d passages, %d from cut blocks, %d code parts checked against their source line, %d of them within a line over the budget",
		len(docs), skipped, dropped, kinds, passages, cut, checked+inLine, inLine)
}

func TestSplitBadHeadingTree(t *testing.T) {
	tok := newTestTokenizer(t)
	// Parents that loop, point out of range or at the heading itself, and a
	// block naming a heading that does not exist: no hang, no panic.
	doc := &sources.Document{Path: "bad.md", Headings: []sources.Heading{
		{Level: 1, Text: "A", Anchor: "a", Parent: 1, Line: 1},
		{Level: 2, Text: "B", Anchor: "b", Parent: 0, Line: 3},
		{Level: 2, Text: "C", Anchor: "c", Parent: 7, Line: 5},
		{Level: 2, Text: "D", Anchor: "d", Parent: 3, Line: 7},
	}}
	for i, h := range []int{0, 1, 2, 3, 9} {
		doc.Blocks = append(doc.Blocks, sources.Block{Kind: sources.Paragraph, Text: repeatWord(60, "beta") + ".", Heading: h, Line: 2*i + 2, EndLine: 2*i + 2})
	}
	ps := Split(doc, tok, budget(100, 200, 0))
	if len(ps) != 5 {
		t.Fatalf("%d passages, want 5", len(ps))
	}
	if got := ps[0].Heading; len(got) != 0 {
		t.Errorf("block with a missing heading: trail %q, want the preamble's", got)
	}
}
