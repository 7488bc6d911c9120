package sources

import (
	"bytes"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/yuin/goldmark/ast"
)

func TestStripMDX(t *testing.T) {
	tests := []struct{ name, src, want string }{
		{"import", "import A from 'a'\nText\n", "                 \nText\n"},
		{"import spans lines", "import {\n  A,\n  B,\n} from 'x'\n\nText\n", "        \n    \n    \n          \n\nText\n"},
		{"export object", "export const m = {\n  a: '}',\n}\nText\n", "                  \n         \n \nText\n"},
		{"export ends at operator", "export const a =\n  1\nText\n", "                \n   \nText\n"},
		{"import mid-paragraph stays", "Some text\nimport x from 'y'\n", "Some text\nimport x from 'y'\n"},
		{"unmatched backticks", "a `b {c} `` d\n", "a `b     `` d\n"},
		{"export with template and comment", "export const a = `x{`; // }\nText\n", "                           \nText\n"},
		{"export with block comment", "export default function A() {\n  /* } */ return 1\n}\nText\n", "                             \n                  \n \nText\n"},
		{"jsx comment", "a {/* note } */} b\n", "a                b\n"},
		{"expression with strings", "x {\"}\" + '{' + `}`} y\n", "x                   y\n"},
		{"nested braces", "x {{a: {b: 1}}} y\n", "x               y\n"},
		{"escaped brace", "x \\{y} z\n", "x \\{y} z\n"},
		{"capitalised tags, text kept", "<Note type=\"x\">Keep *this*</Note>\n", "               Keep *this*       \n"},
		{"self-closing", "a <Card title={t} /> b\n", "a                    b\n"},
		{"fragment", "<>x</>\n", "  x   \n"},
		{"dotted name", "<UI.Tab>x</UI.Tab>\n", "        x         \n"},
		{"lower-case with jsx syntax", "<div style={{a: 1}}>x</div>\n", "                    x      \n"},
		{"lower-case html kept", "<div class=\"a\">x</div>\n", "<div class=\"a\">x</div>\n"},
		{"tag over lines", "<Step\n  title=\"a\"\n>\nx\n</Step>\n", "     \n           \n \nx\n       \n"},
		{"attribute holds jsx", "<A t={<span>Don't</span>}>x</A>\n", "                          x    \n"},
		{"autolink kept", "<https://x.example> <a@b.example>\n", "<https://x.example> <a@b.example>\n"},
		{"less-than kept", "a < b and a<3\n", "a < b and a<3\n"},
		{"code span kept", "use `{x}` and `` <A> ``\n", "use `{x}` and `` <A> ``\n"},
		{"code span over lines", "a `{x\ny}` b {z}\n", "a `{x\ny}` b    \n"},
		{"fenced code kept", "```js\n{a}\n<A>\n```\n{b}\n", "```js\n{a}\n<A>\n```\n   \n"},
		{"indented fence kept", "<T>\n    ~~~\n    {a}\n    ~~~\n</T>\n", "   \n    ~~~\n    {a}\n    ~~~\n    \n"},
		{"fence in list item", "- ```\n  {a}\n  ```\n", "- ```\n  {a}\n  ```\n"},
		{"heading attribute kept", "## Title {#id}\n", "## Title {#id}\n"},
		{"html comment kept", "<!-- {a} <B> -->\n", "<!-- {a} <B> -->\n"},
		{"crlf kept", "<A>\r\nx {y}\r\n", "   \r\nx    \r\n"},
		{"unterminated expression", "a {b\n\nc {d}\n", "a   \n\nc    \n"},
		{"unterminated tag", "<A b=\"c\"\n\nd\n", "        \n\nd\n"},
		{"expression stops at fence", "a {b\n```\n}\n```\n", "a   \n```\n}\n```\n"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := string(StripMDX([]byte(tc.src)))
			if got != tc.want {
				t.Errorf("StripMDX(%q)\ngot  %q\nwant %q", tc.src, got, tc.want)
			}
		})
	}
}

func ExampleStripMDX() {
	src := "import Note from './note'\n\n<Note kind=\"tip\">Run `{cmd}` {/* here */}</Note>\n"
	fmt.Printf("%q\n", StripMDX([]byte(src)))
	// Output:
	// "                         \n\n                 Run `{cmd}`                    \n"
}

// TestMDXCorpus reads every .mdx file under $KBC_CORPORA and checks that no
// import or export statement, JSX tag or expression is left as text, that
// no indented code block is left (MDX has none) and that each block's
// offsets point at its text.
func TestMDXCorpus(t *testing.T) {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		t.Skip("KBC_CORPORA is not set; fetch corpora with shared/corpora/get-corpora.sh")
	}
	if _, err := os.Stat(root); err != nil {
		t.Skipf("KBC_CORPORA: %v", err)
	}
	files, problems := 0, 0
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() || !strings.HasSuffix(p, ".mdx") {
			return err
		}
		files++
		src, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		_, _, bodyStart, _ := SplitFrontMatter(p, src)
		root, buf, _, probs := parseMDX(src[bodyStart:])
		for _, pr := range probs {
			problems++
			t.Logf("%s: %s", p, pr.msg)
		}
		if bad := mdxLeftovers(root, buf); len(bad) > 0 {
			t.Errorf("%s: MDX left as text: %q", p, bad)
		}
		checkCorpusFile(t, p, src)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if files == 0 {
		t.Skipf("no .mdx files under %s", root)
	}
	t.Logf("%d MDX files, %d unterminated constructs", files, problems)
}

// checkCorpusFile parses one corpus file and checks the document, and
// that the first word of each text block lies in its source span.
func checkCorpusFile(t *testing.T, p string, src []byte) {
	t.Helper()
	doc, err := Parse(p, src)
	if err != nil {
		// A page that is only components or links has no body text.
		if e, ok := err.(*Error); !ok || e.Msg != "no body text" {
			t.Errorf("%s: %v", p, err)
		}
		return
	}
	checkMarkdownDoc(t, doc, src)
	for i, b := range doc.Blocks {
		if b.Kind == Paragraph || b.Kind == ListItem || b.Kind == Quote {
			// Inline markup may sit inside a word ("`Worker`s",
			// "[`Worker`][]s"): compare with the markup characters
			// taken out of both.
			if w := firstWord(b.Text); w != "" && !bytes.Contains(dropMarkup(src[b.Start:b.End]), dropMarkup([]byte(w))) {
				t.Errorf("%s: block %d (line %d): %q not in its source span %q", p, i, b.Line, w, src[b.Start:b.End])
			}
		}
	}
}

// dropMarkup returns b without the characters of Markdown's inline
// markup: code spans, emphasis, link brackets and escapes.
func dropMarkup(b []byte) []byte {
	return bytes.Map(func(r rune) rune {
		if strings.ContainsRune("`*_[]\\~", r) {
			return -1
		}
		return r
	}, b)
}

// TestMarkdownCorpus reads every .md file under $KBC_CORPORA and checks
// the documents as TestMDXCorpus does.
func TestMarkdownCorpus(t *testing.T) {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		t.Skip("KBC_CORPORA is not set; fetch corpora with shared/corpora/get-corpora.sh")
	}
	files := 0
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() || !(strings.HasSuffix(p, ".md") || strings.HasSuffix(p, ".markdown")) {
			return err
		}
		files++
		src, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		checkCorpusFile(t, p, src)
		return nil
	})
	if err != nil {
		t.Skipf("KBC_CORPORA: %v", err)
	}
	if files == 0 {
		t.Skipf("no .md files under %s", root)
	}
	t.Logf("%d Markdown files", files)
}

// mdxLeftovers returns the MDX syntax that reached the Markdown parser as
// text or as an HTML block: a capitalised tag, a brace, an import or export
// statement at a paragraph start, and indented code.
func mdxLeftovers(root ast.Node, buf []byte) []string {
	var bad []string
	_ = ast.Walk(root, func(n ast.Node, entering bool) (ast.WalkStatus, error) {
		if !entering {
			return ast.WalkContinue, nil
		}
		switch n := n.(type) {
		case *ast.CodeSpan, *ast.FencedCodeBlock:
			return ast.WalkSkipChildren, nil
		case *ast.CodeBlock:
			seg := n.Lines().At(0)
			bad = append(bad, "indented code: "+string(buf[seg.Start:seg.Stop]))
			return ast.WalkSkipChildren, nil
		case *ast.HTMLBlock:
			v := n.Lines().Value(buf)
			if hasJSXTag(v) {
				bad = append(bad, "html block: "+string(v))
			}
		case *ast.Paragraph:
			if n.Lines().Len() > 0 {
				seg := n.Lines().At(0)
				v := buf[seg.Start:seg.Stop]
				if bytes.HasPrefix(v, []byte("import ")) || bytes.HasPrefix(v, []byte("export ")) {
					bad = append(bad, "statement: "+string(v))
				}
			}
		case *ast.Text:
			v := n.Segment.Value(buf)
			for i, c := range v {
				if (c == '{' || c == '}') && (i == 0 || v[i-1] != '\\') {
					bad = append(bad, "brace: "+string(v))
					break
				}
			}
			if hasJSXTag(v) {
				bad = append(bad, "tag: "+string(v))
			}
		}
		return ast.WalkContinue, nil
	})
	return bad
}

// hasJSXTag reports whether v holds "<X" or "</X" with X a capital letter.
func hasJSXTag(v []byte) bool {
	for i := 0; i+1 < len(v); i++ {
		if v[i] != '<' {
			continue
		}
		j := i + 1
		if v[j] == '/' && j+1 < len(v) {
			j++
		}
		if 'A' <= v[j] && v[j] <= 'Z' {
			return true
		}
	}
	return false
}

// firstWord returns the first run of ASCII letters of three or more in s.
func firstWord(s string) string {
	for _, w := range strings.FieldsFunc(s, func(r rune) bool { return !('a' <= r && r <= 'z' || 'A' <= r && r <= 'Z') }) {
		if len(w) >= 3 {
			return w
		}
	}
	return ""
}

// FuzzStripMDX checks that StripMDX keeps the length and every line end,
// only ever writes spaces, and leaves fenced code blocks alone.
func FuzzStripMDX(f *testing.F) {
	for _, s := range markdownSeeds(f) {
		f.Add(s)
	}
	f.Add([]byte("<A b={`x\n```\n`}>\n```\n{c}\n```\n"))
	f.Add([]byte("export const a = `\n~~~\n`\n~~~\n<B>\n~~~\n"))
	f.Add([]byte("export `\\\n~~~`")) // found by fuzzing
	f.Fuzz(func(t *testing.T, src []byte) {
		out := StripMDX(src)
		if len(out) != len(src) {
			t.Fatalf("length %d, want %d", len(out), len(src))
		}
		for i := range src {
			c, o := src[i], out[i]
			if c == '\n' || c == '\r' {
				if o != c {
					t.Fatalf("line end at %d changed to %q", i, o)
				}
			} else if o != c && o != ' ' {
				t.Fatalf("byte %d: %q became %q", i, c, o)
			}
		}
		// Fenced code, found line by line, is untouched.
		var fence codeFence
		for ls := 0; ls < len(src); {
			le := bytes.IndexByte(src[ls:], '\n')
			if le < 0 {
				le = len(src)
			} else {
				le += ls
			}
			line := src[ls:le]
			inCode := fence.char != 0
			if inCode {
				if fence.closes(line) {
					fence = codeFence{}
				}
			} else if f, ok := openFence(line); ok {
				fence, inCode = f, true
			}
			if inCode && !bytes.Equal(out[ls:le], line) {
				t.Fatalf("fenced code line changed:\n%q\n%q", line, out[ls:le])
			}
			ls = le + 1
		}
	})
}
