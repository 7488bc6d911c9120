package htmltree

import (
	"bytes"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// TestAgainstParse compares the trees Build makes of the real HTML corpora
// (the Python 3.11 and Git 2.39 documentation, under $KBC_CORPORA) with
// those of the reference, golang.org/x/net/html's Parse, which implements
// the whole WHATWG HTML tree construction (HTML Living Standard, 13.2.6).
// Both trees are written out as the sequence of element starts, element
// ends and text runs in document order, and the sequences must be equal.
//
// Build differs from the reference on purpose in these ways, each excluded
// from the comparison by name rather than by loosening it:
//   - html, head and body: the reference always makes all three; Build
//     makes head and body only for their tags and never html. Their starts
//     and ends are left out of both sequences (what they hold is compared).
//   - tbody and colgroup: the reference adds a tbody around rows written
//     straight in a table and a colgroup around such col elements
//     (13.2.6.4.9 "in table", the tr and col start tags); Build adds no
//     element the source does not have. On a page with no <tbody> tag,
//     every tbody of the reference is such an implied one and is left out,
//     and likewise colgroup; on a page with the tag both trees must agree.
//   - a </p> that closes nothing: the reference inserts an empty p
//     (13.2.6.4.7, 'An end tag whose tag name is "p"'); Build ignores the
//     stray tag. A p element with no child nodes at all is left out of
//     both sequences.
//   - white space: Build keeps each text token as it lies in the source;
//     the reference drops the newline that follows <pre> (13.2.6.4.7) and
//     moves white space out of tables (foster parenting). Text is compared
//     with runs of white space as one space and trimmed, and text of white
//     space only is not compared.
//   - comments and the doctype make no nodes in Build and are not compared.
func TestAgainstParse(t *testing.T) {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		t.Skip("KBC_CORPORA is not set: fetch the corpora with shared/corpora/get-corpora.sh and point KBC_CORPORA at them")
	}
	for _, set := range []string{"python-3.11-html", "git-2.39-html"} {
		t.Run(set, func(t *testing.T) {
			dir := filepath.Join(root, set)
			if _, err := os.Stat(dir); err != nil {
				t.Skipf("KBC_CORPORA=%s: %v", root, err)
			}
			pages, differ := 0, 0
			err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
				if err != nil || d.IsDir() || !strings.HasSuffix(p, ".html") {
					return err
				}
				src, err := os.ReadFile(p)
				if err != nil {
					return err
				}
				pages++
				if msg := compareWithParse(src); msg != "" {
					differ++
					if differ <= 10 {
						t.Errorf("%s: %s", p, msg)
					}
				}
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			if differ > 0 {
				t.Errorf("%d of %d pages differ from html.Parse", differ, pages)
			}
			t.Logf("%d pages compared with html.Parse", pages)
		})
	}
}

// TestFixups checks the fix-ups Build does against html.Parse on small
// pages, and the differences it keeps on purpose.
func TestFixups(t *testing.T) {
	same := []string{
		"<p>a<p>b<div>c</div>d",
		"<ul><li>a<li>b<ul><li>c</ul><li>d</ul>",
		"<dl><dt>a<dd>b<dt>c<dd>d</dl>",
		"<table><tr><td>a<td>b<tr><th>c</table>",
		"<table><thead><tr><th>a<tbody><tr><td>b<tfoot><tr><td>c</table>",
		"<h2>title</h3>text",
		"<h1>one<h2>two</h2>",
		"<a href=x>a<a href=y>b</a>",
		"<p>a</span>b</p>",
		"<select><option>a<option>b</select>",
		"<title>t</title><p>body without a body tag",
		"<my-box>a<p>b</p></my-box>c",
		"<p>x</p></p><p>y",
		"<pre>\ncode</pre>",
		"<script>if (a<b) {}</script><p>x",
	}
	for _, src := range same {
		src = strings.ReplaceAll(src, `\n`, "\n")
		if msg := compareWithParse([]byte(src)); msg != "" {
			t.Errorf("%q: %s", src, msg)
		}
	}
	// On purpose: a self-closing tag closes any element (html.Parse leaves
	// a non-void one open), and a formatting element an end tag closed by
	// implication is not opened again after it (html.Parse reconstructs
	// the active formatting elements, 13.2.4.3).
	for _, src := range []string{`<p><a id="x"/>text</p>`, "<div/>after", "<div><em>a</div>b"} {
		if compareWithParse([]byte(src)) == "" {
			t.Errorf("%q: Build agrees with html.Parse, where it differs on purpose", src)
		}
	}
}

// TestPositions checks the byte ranges of the nodes: an element spans its
// tags, one closed by implication ends with its content.
func TestPositions(t *testing.T) {
	src := "<ul>\n<li>one\n<li><b>two</b></li>\n</ul>"
	tree := Build([]byte(src), nil)
	var got []string
	for i := 1; i < len(tree.Nodes); i++ {
		n := &tree.Nodes[i]
		if n.Flags&Space != 0 {
			continue
		}
		name := "#text"
		if n.Flags&Text == 0 {
			name = tree.Name(i)
		}
		got = append(got, fmt.Sprintf("%s=%q", name, src[n.Start:n.End]))
	}
	want := []string{
		`ul="<ul>\n<li>one\n<li><b>two</b></li>\n</ul>"`,
		`li="<li>one"`, `#text="one\n"`,
		`li="<li><b>two</b></li>"`, `b="<b>two</b>"`, `#text="two"`,
	}
	if strings.Join(got, " ") != strings.Join(want, " ") {
		t.Errorf("got  %s\nwant %s", strings.Join(got, " "), strings.Join(want, " "))
	}
}

// compareWithParse returns "" when Build and html.Parse agree on src, else
// where they first part.
func compareWithParse(src []byte) string {
	ref, err := html.Parse(bytes.NewReader(src))
	if err != nil {
		return "html.Parse: " + err.Error()
	}
	lower := bytes.ToLower(src)
	implied := map[string]bool{
		"tbody":    !bytes.Contains(lower, []byte("<tbody")),
		"colgroup": !bytes.Contains(lower, []byte("<colgroup")),
	}
	var want events
	want.fromParse(ref, implied)
	want.flush()
	var got events
	tree := Build(src, nil)
	got.fromBuild(tree, 0)
	got.flush()
	n := min(len(want.seq), len(got.seq))
	i := 0
	for i < n && want.seq[i] == got.seq[i] {
		i++
	}
	if i == n && len(want.seq) == len(got.seq) {
		return ""
	}
	from := max(0, i-6)
	return fmt.Sprintf("event %d of %d:\n  html.Parse: %s\n  Build:      %s", i, len(want.seq),
		strings.Join(want.seq[from:min(i+4, len(want.seq))], " "),
		strings.Join(got.seq[from:min(i+4, len(got.seq))], " "))
}

// events is a tree written out in document order: "<name" for an element
// start, ">name" for its end, and "'text'" for a text run.
type events struct {
	seq  []string
	text []byte // the text run not yet written
}

// transparent reports whether the element name is left out of the
// comparison (see TestAgainstParse).
func transparent(name string) bool {
	return name == "" || name == "html" || name == "head" || name == "body"
}

func (e *events) flush() {
	if s := strings.Join(strings.Fields(string(e.text)), " "); s != "" {
		e.seq = append(e.seq, "'"+s+"'")
	}
	e.text = e.text[:0]
}

func (e *events) element(name string, end bool) {
	if transparent(name) {
		return
	}
	e.flush()
	if end {
		e.seq = append(e.seq, ">"+name)
	} else {
		e.seq = append(e.seq, "<"+name)
	}
}

// fromParse writes out the reference's tree n; implied names the elements
// the reference adds on this page that its source has no tags for.
func (e *events) fromParse(n *html.Node, implied map[string]bool) {
	switch n.Type {
	case html.TextNode:
		e.text = append(e.text, n.Data...)
		return
	case html.ElementNode:
		name := strings.ToLower(n.Data)
		if implied[name] || name == "p" && n.FirstChild == nil {
			name = "" // left out
		}
		e.element(name, false)
		defer e.element(name, true)
	case html.DocumentNode:
	default:
		return
	}
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		e.fromParse(c, implied)
	}
}

func (e *events) fromBuild(t *Tree, i int) {
	n := &t.Nodes[i]
	if n.Flags&Text != 0 {
		e.text = append(e.text, t.Text(n)...)
		return
	}
	if i > 0 {
		name := t.Name(i)
		if n.Tag == atom.P && n.Sub == i+1 {
			name = "" // left out
		}
		e.element(name, false)
		defer e.element(name, true)
	}
	for c := i + 1; c < n.Sub; c = t.Nodes[c].Sub {
		e.fromBuild(t, c)
	}
}
