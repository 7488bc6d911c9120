package sources

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/yuin/goldmark/text"
)

func init() {
	// Another reader's tests in this package may define -update too; the
	// first one defined serves both.
	if flag.Lookup("update") == nil {
		flag.Bool("update", false, "rewrite the golden files in testdata")
	}
}

// updating reports whether -update was given.
func updating() bool {
	f := flag.Lookup("update")
	return f != nil && f.Value.String() == "true"
}

// TestMarkdownGolden parses each file under testdata/markdown and
// testdata/mdx and compares the Document with the .json beside it.
func TestMarkdownGolden(t *testing.T) {
	var files []string
	for _, pat := range []string{"testdata/markdown/*.md", "testdata/mdx/*.mdx"} {
		m, err := filepath.Glob(pat)
		if err != nil {
			t.Fatal(err)
		}
		files = append(files, m...)
	}
	if len(files) == 0 {
		t.Fatal("no golden inputs")
	}
	for _, file := range files {
		t.Run(filepath.Base(file), func(t *testing.T) {
			src, err := os.ReadFile(file)
			if err != nil {
				t.Fatal(err)
			}
			name := filepath.ToSlash(filepath.Join("docs", filepath.Base(file)))
			doc, err := Parse(name, src)
			if err != nil {
				t.Fatal(err)
			}
			checkMarkdownDoc(t, doc, src)
			got, err := json.MarshalIndent(doc, "", "  ")
			if err != nil {
				t.Fatal(err)
			}
			got = append(got, '\n')
			golden := strings.TrimSuffix(file, filepath.Ext(file)) + ".json"
			if updating() {
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -run TestMarkdownGolden -update)", err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s differs from %s (run with -update to rewrite):\n%s", file, golden, firstDiff(string(want), string(got)))
			}
		})
	}
}

// firstDiff shows the first line where two texts differ.
func firstDiff(want, got string) string {
	w, g := strings.Split(want, "\n"), strings.Split(got, "\n")
	for i := 0; i < len(w) || i < len(g); i++ {
		var a, b string
		if i < len(w) {
			a = w[i]
		}
		if i < len(g) {
			b = g[i]
		}
		if a != b {
			return "line " + strconv.Itoa(i+1) + ":\nwant " + a + "\ngot  " + b
		}
	}
	return ""
}

// checkMarkdownDoc checks what every Document from the Markdown reader
// must hold.
func checkMarkdownDoc(t testing.TB, doc *Document, src []byte) {
	t.Helper()
	li := NewLineIndex(src)
	prevEnd := 0
	for i, b := range doc.Blocks {
		switch {
		case b.Start < prevEnd:
			t.Errorf("block %d starts at %d, before the end %d of the block before", i, b.Start, prevEnd)
		case !(b.Start < b.End && b.End <= len(src)):
			t.Errorf("block %d spans [%d,%d) in %d bytes", i, b.Start, b.End, len(src))
		case b.Line != li.Line(b.Start) || b.EndLine != li.Line(b.End-1) || b.Line > b.EndLine:
			t.Errorf("block %d: lines %d-%d, offsets say %d-%d", i, b.Line, b.EndLine, li.Line(b.Start), li.Line(b.End-1))
		case strings.TrimSpace(b.Text) == "":
			t.Errorf("block %d has no text", i)
		case b.Heading < -1 || b.Heading >= len(doc.Headings):
			t.Errorf("block %d: heading %d of %d", i, b.Heading, len(doc.Headings))
		case b.Heading >= 0 && doc.Headings[b.Heading].Offset > b.Start:
			t.Errorf("block %d at %d is under heading %d at %d", i, b.Start, b.Heading, doc.Headings[b.Heading].Offset)
		case b.Kind != Code && b.Kind != Table && strings.Contains(b.Text, "  "):
			t.Errorf("block %d: white space not folded: %q", i, b.Text)
		}
		if b.End > prevEnd {
			prevEnd = b.End
		}
	}
	prevOff := -1
	for i, h := range doc.Headings {
		switch {
		case h.Offset <= prevOff || h.Offset >= len(src):
			t.Errorf("heading %d at %d, previous at %d, size %d", i, h.Offset, prevOff, len(src))
		case h.Line != li.Line(h.Offset):
			t.Errorf("heading %d: line %d, offset says %d", i, h.Line, li.Line(h.Offset))
		case h.Level < 1 || h.Level > 6 || h.Text == "":
			t.Errorf("heading %d: level %d text %q", i, h.Level, h.Text)
		case h.Parent < -1 || h.Parent >= i || h.Parent >= 0 && doc.Headings[h.Parent].Level >= h.Level:
			t.Errorf("heading %d: bad parent %d", i, h.Parent)
		}
		prevOff = h.Offset
	}
	if _, err := json.Marshal(doc); err != nil {
		t.Errorf("document cannot be encoded: %v", err)
	}
	for _, w := range doc.Warnings {
		if w.Line < 1 || w.Line > len(li) {
			t.Errorf("warning %q at line %d of %d", w.Error(), w.Line, len(li))
		}
	}
}

func TestMarkdownBlocks(t *testing.T) {
	type blk struct {
		kind BlockKind
		text string
		lang string
	}
	tests := []struct {
		name string
		file string
		src  string
		want []blk
	}{
		{"paragraph", "a.md", "Hello *big*\nworld.\n", []blk{{Paragraph, "Hello big world.", ""}}},
		{"hard break", "a.md", "one  \ntwo\\\nthree\n", []blk{{Paragraph, "one\ntwo\nthree", ""}}},
		{"link text kept, URL dropped", "a.md", "See [the guide](http://x.example/g) at <http://x.example>.\n", []blk{{Paragraph, "See the guide at .", ""}}},
		{"link whose text is its URL", "a.md", "[http://x.example](http://x.example) and [www.x.example](http://x.example)\n", []blk{{Paragraph, "and", ""}}},
		{"e-mail autolink kept", "a.md", "Write to <ops@x.example>.\n", []blk{{Paragraph, "Write to ops@x.example.", ""}}},
		{"bare URL dropped", "a.md", "Visit https://x.example/a?b today\n", []blk{{Paragraph, "Visit today", ""}}},
		{"image alt", "a.md", "![a buoy](b.png \"title\")\n", []blk{{Paragraph, "a buoy", ""}}},
		{"inline code", "a.md", "Run `tp  --x &amp;`.\n", []blk{{Paragraph, "Run tp --x &amp;.", ""}}},
		{"raw inline html", "a.md", "a <span class=\"x\">b</span><br>c\n", []blk{{Paragraph, "a b c", ""}}},
		{"entities", "a.md", "&lt;tag&gt; &#35; &#xFFFFFF; &bogus;\n", []blk{{Paragraph, "<tag> # \uFFFD &bogus;", ""}}},
		{"list items", "a.md", "- one\n- two\n  - nested\n- three\n", []blk{{ListItem, "one", ""}, {ListItem, "two", ""}, {ListItem, "nested", ""}, {ListItem, "three", ""}}},
		{"loose item paragraphs", "a.md", "1. first\n\n   more\n2. second\n", []blk{{ListItem, "first\nmore", ""}, {ListItem, "second", ""}}},
		{"item cut by code", "a.md", "- before\n\n  ```\n  x\n  ```\n\n  after\n", []blk{{ListItem, "before", ""}, {Code, "x", ""}, {ListItem, "after", ""}}},
		{"task list", "a.md", "- [x] done\n- [ ] todo\n", []blk{{ListItem, "done", ""}, {ListItem, "todo", ""}}},
		{"quote", "a.md", "> a\n> b\n>\n> c\n", []blk{{Quote, "a b", ""}, {Quote, "c", ""}}},
		{"list in quote", "a.md", "> - a\n", []blk{{ListItem, "a", ""}}},
		{"fenced code", "a.md", "```go {title=x}\n  a := 1\n\n\tb\n```\n", []blk{{Code, "  a := 1\n\n\tb", "go"}}},
		{"tilde fence", "a.md", "~~~ python extra\nprint()\n~~~\n", []blk{{Code, "print()", "python"}}},
		{"indented code", "a.md", "    x  y\n      z\n", []blk{{Code, "x  y\n  z", ""}}},
		{"empty code dropped", "a.md", "```\n```\n\ntext\n", []blk{{Paragraph, "text", ""}}},
		{"table", "a.md", "| a | b |\n|---|---|\n| 1 | **2** |\n|   | 3 \\| 4 |\n", []blk{{Table, "a | b\n1 | 2\n | 3 | 4", ""}}},
		{"html block", "a.md", "<div>\n<p>Hi <b>there</b></p><p>again</p>\n<!-- no -->\n</div>\n", []blk{{Paragraph, "Hi there\nagain", ""}}},
		{"html block of tags only", "a.md", "<div>\n</div>\n\ntext\n", []blk{{Paragraph, "text", ""}}},
		{"html script dropped", "a.md", "<script>\nalert(1)\n</script>\n", nil},
		{"thematic break and link definition", "a.md", "***\n\n[x]: http://x.example\n", nil},
		{"mdx tags and expressions", "a.mdx", "<Note>Hi {name}!</Note>\n", []blk{{Paragraph, "Hi !", ""}}},
		{"mdx import", "a.mdx", "import A from 'a'\n\nText\n", []blk{{Paragraph, "Text", ""}}},
		{"mdx indented children", "a.mdx", "<Tabs>\n  <Tab>\n    Text\n\n    ```sh\n    run\n    ```\n  </Tab>\n</Tabs>\n", []blk{{Paragraph, "Text", ""}, {Code, "run", "sh"}}},
		{"mdx tab-indented list", "a.mdx", "<Note>\n\tIntro:\n\n    \t- a\n    \t- b\n</Note>\n", []blk{{Paragraph, "Intro:", ""}, {ListItem, "a", ""}, {ListItem, "b", ""}}},
		{"mdx keeps code spans", "a.mdx", "Use `{x}` and `<Tab>`.\n", []blk{{Paragraph, "Use {x} and <Tab>.", ""}}},
		{"mdx trailing tag is no hard break", "a.mdx", "<Note>one</Note>\ntwo\n", []blk{{Paragraph, "one two", ""}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			doc, err := Parse(tc.file, []byte(tc.src))
			if tc.want == nil {
				if err != nil || len(doc.Blocks) != 0 {
					t.Fatalf("got blocks %+v, %v; want none and no error", doc, err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			checkMarkdownDoc(t, doc, []byte(tc.src))
			var got []blk
			for _, b := range doc.Blocks {
				got = append(got, blk{b.Kind, b.Text, b.Lang})
			}
			if len(got) != len(tc.want) {
				t.Fatalf("got %q\nwant %q", got, tc.want)
			}
			for i := range got {
				if got[i] != tc.want[i] {
					t.Errorf("block %d: got %q, want %q", i, got[i], tc.want[i])
				}
			}
		})
	}
}

func TestMarkdownPositions(t *testing.T) {
	src := "---\ntitle: T\n---\n\n# One\n\nPara\ngraph.\n\n```sh\nrun\n```\n\n- item\n"
	doc, err := Parse("docs/p.md", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	if doc.FrontLines != 3 || doc.FrontFormat != "yaml" || doc.Title != "T" {
		t.Errorf("front: lines %d format %q title %q", doc.FrontLines, doc.FrontFormat, doc.Title)
	}
	h := doc.Headings[0]
	if h.Offset != strings.Index(src, "# One") || h.Line != 5 {
		t.Errorf("heading at %d line %d", h.Offset, h.Line)
	}
	want := []struct {
		text       string
		start, end string // the source text at Start and just before End
		line, endl int
	}{
		{"Para graph.", "Para", "graph.", 7, 8},
		{"run", "```sh", "```", 10, 12},
		{"item", "item", "item", 14, 14},
	}
	if len(doc.Blocks) != len(want) {
		t.Fatalf("got %d blocks: %+v", len(doc.Blocks), doc.Blocks)
	}
	for i, w := range want {
		b := doc.Blocks[i]
		if b.Text != w.text || !strings.HasPrefix(src[b.Start:], w.start) || !strings.HasSuffix(src[:b.End], w.end) ||
			b.Line != w.line || b.EndLine != w.endl || b.Heading != 0 {
			t.Errorf("block %d: %+v, want %+v", i, b, w)
		}
	}
}

// TestMDXPositions checks that offsets of MDX blocks whose lines were
// moved to take away JSX indentation point at the original text.
func TestMDXPositions(t *testing.T) {
	src := "<Tabs>\n  <Tab>\n    Hello there\n    friend.\n\n    ```sh\n    run it\n    ```\n  </Tab>\n</Tabs>\n<Tip>Read this</Tip>\n"
	doc, err := Parse("p.mdx", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	want := []struct{ text, at, end string }{
		{"Hello there friend.", "Hello there", "friend."},
		{"run it", "```sh", "```"},
		{"Read this", "Read this", "Read this"},
	}
	if len(doc.Blocks) != len(want) {
		t.Fatalf("got %+v", doc.Blocks)
	}
	for i, w := range want {
		b := doc.Blocks[i]
		if b.Text != w.text || !strings.HasPrefix(src[b.Start:], w.at) || !strings.HasSuffix(src[:b.End], w.end) {
			t.Errorf("block %d: %q at %q..%q", i, b.Text, src[b.Start:min(b.Start+12, len(src))], src[max(0, b.End-12):b.End])
		}
	}
}

func TestMarkdownTitle(t *testing.T) {
	tests := []struct{ name, src, want string }{
		{"front matter", "---\ntitle: From front\n---\n# H1\ntext\n", "From front"},
		{"front title not a string", "---\ntitle: 3\n---\n## Two\n# One\ntext\n", "One"},
		{"first h1", "## Two\n\n# One\ntext\n", "One"},
		{"first heading", "### Three\n\n## Two\ntext\n", "Three"},
		{"file name", "just text\n", "install-guide"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			doc, err := Parse("docs/install-guide.md", []byte(tc.src))
			if err != nil {
				t.Fatal(err)
			}
			if doc.Title != tc.want {
				t.Errorf("title %q, want %q", doc.Title, tc.want)
			}
		})
	}
}

// TestMarkdownWarnings pins the exact warning text, position included.
func TestMarkdownWarnings(t *testing.T) {
	tests := []struct{ name, file, src, want string }{
		{"bad yaml", "docs/a.md", "---\ntitle: x\nowner: docs: team\n---\nBody\n",
			"docs/a.md:3: front matter: invalid YAML: mapping values are not allowed in this context"},
		{"bad toml", "docs/a.md", "+++\ntitle = \"x\"\nweight = \n+++\nBody\n",
			`docs/a.md:3: front matter: invalid TOML: expected value but found '\n' instead`},
		{"unclosed", "docs/a.md", "---\ntitle: x\nBody\n",
			"docs/a.md:1: front matter: no closing --- line; the whole file is read as body"},
		{"not a mapping", "docs/a.md", "---\n- a\n---\nBody\n",
			"docs/a.md:2: front matter: want key: value pairs, found a list"},
		{"mdx expression", "docs/a.mdx", "---\nt: 1\n---\n\nText {open\n\nmore\n",
			"docs/a.mdx:5: unterminated JSX expression"},
		{"mdx tag", "docs/a.mdx", "Text\n\n<Gauge level={3}\n\nmore\n",
			"docs/a.mdx:3: unterminated JSX tag <Gauge"},
		{"mdx export", "docs/a.mdx", "export const a = {\n  b: 1,\n\nText\n",
			"docs/a.mdx:1: unterminated import or export statement"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			doc, err := Parse(tc.file, []byte(tc.src))
			if err != nil {
				t.Fatal(err)
			}
			if len(doc.Warnings) != 1 {
				t.Fatalf("warnings %v, want one", doc.Warnings)
			}
			if got := doc.Warnings[0].Error(); got != tc.want {
				t.Errorf("got  %s\nwant %s", got, tc.want)
			}
		})
	}
}

// TestMarkdownNoBody: a page with front matter only is a normal landing
// page, read with no blocks; an HTML page with no text is bad input.
func TestMarkdownNoBody(t *testing.T) {
	doc, err := Parse("docs/empty.md", []byte("---\ntitle: x\n---\n\n<!-- nothing -->\n"))
	if err != nil || len(doc.Blocks) != 0 || doc.Title != "x" {
		t.Errorf("got %+v, %v; want an empty document titled x", doc, err)
	}
	_, err = Parse("docs/empty.html", []byte("<title>x</title><nav><a href=a>a</a></nav>"))
	if err == nil || err.Error() != "docs/empty.html:1: no body text" {
		t.Errorf("got %v", err)
	}
}

// TestMarkdownConcurrent parses from many goroutines with the shared
// parser; run with -race to check that sharing it is safe.
func TestMarkdownConcurrent(t *testing.T) {
	src, err := os.ReadFile("testdata/markdown/guide.md")
	if err != nil {
		t.Fatal(err)
	}
	first, err := Parse("guide.md", src)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := json.Marshal(first)
	var wg sync.WaitGroup
	for range 8 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for range 20 {
				doc, err := Parse("guide.md", src)
				if err != nil {
					t.Error(err)
					return
				}
				if got, _ := json.Marshal(doc); !bytes.Equal(got, want) {
					t.Error("concurrent parse gave a different document")
					return
				}
			}
		}()
	}
	wg.Wait()
}

// markdownSeeds returns the testdata inputs, for fuzzing.
func markdownSeeds(t testing.TB) [][]byte {
	var seeds [][]byte
	for _, dir := range []string{"testdata/markdown", "testdata/mdx", "testdata/frontmatter"} {
		_ = filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
			if err != nil || d.IsDir() || strings.HasSuffix(p, ".json") {
				return nil
			}
			b, err := os.ReadFile(p)
			if err != nil {
				t.Fatal(err)
			}
			seeds = append(seeds, b)
			return nil
		})
	}
	return seeds
}

func FuzzParseMarkdown(f *testing.F) {
	for _, s := range markdownSeeds(f) {
		f.Add(s, false)
		f.Add(s, true)
	}
	f.Add([]byte("- a\n  > b\n  ```\n  c"), false)
	f.Add([]byte("<A>\n  <B x={<C/>}>\n    ```\n    {d}\n    ```\n"), true)
	f.Add([]byte("&;00"), false) // found by fuzzing
	f.Fuzz(func(t *testing.T, src []byte, mdx bool) {
		name := "f.md"
		if mdx {
			name = "f.mdx"
		}
		doc, err := Parse(name, src)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || strings.Contains(e.Msg, "parser failed") {
				t.Fatalf("Parse: %v", err)
			}
			return
		}
		// Parse replaces invalid UTF-8 byte for byte; check against that.
		checkMarkdownDoc(t, doc, src)
	})
}

// BenchmarkParseMarkdown measures parse and text extraction in MB/s of
// source: a testdata page, and with KBC_CORPORA set the bun docs (MDX) and
// Next.js docs (Markdown) corpora.
func BenchmarkParseMarkdown(b *testing.B) {
	type input struct {
		name  string
		files [][]byte
		names []string
	}
	var inputs []input
	for _, f := range []string{"testdata/markdown/guide.md", "testdata/mdx/components.mdx"} {
		src, err := os.ReadFile(f)
		if err != nil {
			b.Fatal(err)
		}
		inputs = append(inputs, input{filepath.Base(f), [][]byte{src}, []string{filepath.Base(f)}})
	}
	if root := os.Getenv("KBC_CORPORA"); root != "" {
		for _, c := range []string{"bun-docs", "nextjs-docs"} {
			in := input{name: c}
			_ = filepath.WalkDir(filepath.Join(root, c), func(p string, d fs.DirEntry, err error) error {
				if err != nil || d.IsDir() {
					return nil
				}
				if _, ok := KindOf(p); !ok || strings.HasSuffix(p, ".html") {
					return nil
				}
				src, err := os.ReadFile(p)
				if err == nil {
					in.files = append(in.files, src)
					in.names = append(in.names, p)
				}
				return nil
			})
			if len(in.files) > 0 {
				inputs = append(inputs, in)
			}
		}
	}
	for _, in := range inputs {
		n := 0
		for _, f := range in.files {
			n += len(f)
		}
		b.Run(in.name, func(b *testing.B) {
			b.SetBytes(int64(n))
			b.ReportAllocs()
			for b.Loop() {
				for i, f := range in.files {
					_, _ = Parse(in.names[i], f)
				}
			}
		})
		// The floor to compare with in the same run: goldmark's parse
		// alone, same extensions, no front matter, MDX or extraction.
		b.Run(in.name+"/goldmark-only", func(b *testing.B) {
			b.SetBytes(int64(n))
			b.ReportAllocs()
			p := markdownParser()
			for b.Loop() {
				for _, f := range in.files {
					_ = p.Parse(text.NewReader(f))
				}
			}
		})
	}
}
