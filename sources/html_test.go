package sources

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"golang.org/x/net/html"
)

// The golden tests take -update to rewrite their expected files. The flag
// is registered in init, after every package-level variable, and only if no
// other test file of the package has registered it already.
func init() {
	if flag.Lookup("update") == nil {
		flag.Bool("update", false, "rewrite golden files under testdata")
	}
}

func updateGolden() bool {
	f := flag.Lookup("update")
	return f != nil && f.Value.String() == "true"
}

// parsePage parses src as page.html and fails the test on error.
func parsePage(t *testing.T, src string) *Document {
	t.Helper()
	doc, err := Parse("page.html", []byte(src))
	if err != nil {
		t.Fatalf("Parse: %v\nsource:\n%s", err, src)
	}
	checkHTMLDoc(t, []byte(src), doc)
	return doc
}

// blockList renders blocks as "kind: text" (code blocks with their language
// as "code/lang: text").
func blockList(doc *Document) []string {
	var out []string
	for _, b := range doc.Blocks {
		k := string(b.Kind)
		if b.Lang != "" {
			k += "/" + b.Lang
		}
		out = append(out, k+": "+b.Text)
	}
	return out
}

// headingList renders headings as "h2 Text #anchor ^parent".
func headingList(doc *Document) []string {
	var out []string
	for _, h := range doc.Headings {
		out = append(out, fmt.Sprintf("h%d %s #%s ^%d", h.Level, h.Text, h.Anchor, h.Parent))
	}
	return out
}

func sameList(t *testing.T, what string, got, want []string) {
	t.Helper()
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("%s:\ngot:\n  %s\nwant:\n  %s", what, strings.Join(got, "\n  "), strings.Join(want, "\n  "))
	}
}

// checkHTMLDoc checks the invariants every parsed document must keep.
func checkHTMLDoc(t testing.TB, src []byte, doc *Document) {
	t.Helper()
	li := NewLineIndex(src)
	prevEnd := 0
	for i, b := range doc.Blocks {
		if b.Start < prevEnd || b.Start >= b.End || b.End > len(src) {
			t.Fatalf("block %d: range %d-%d after %d, source %d bytes", i, b.Start, b.End, prevEnd, len(src))
		}
		prevEnd = b.End
		if b.Line != li.Line(b.Start) || b.EndLine != li.Line(b.End-1) || b.Line > b.EndLine {
			t.Fatalf("block %d: lines %d-%d, want %d-%d", i, b.Line, b.EndLine, li.Line(b.Start), li.Line(b.End-1))
		}
		if strings.TrimSpace(b.Text) == "" {
			t.Fatalf("block %d: empty text", i)
		}
		if b.Kind != Code && (b.Text != strings.TrimSpace(b.Text) || strings.Contains(b.Text, "  ") && b.Kind != Table) {
			t.Fatalf("block %d: white space not collapsed: %q", i, b.Text)
		}
		if b.Heading < -1 || b.Heading >= len(doc.Headings) {
			t.Fatalf("block %d: heading %d of %d", i, b.Heading, len(doc.Headings))
		}
		if b.Heading >= 0 && doc.Headings[b.Heading].Offset > b.Start {
			t.Fatalf("block %d starts at %d, before its heading at %d", i, b.Start, doc.Headings[b.Heading].Offset)
		}
	}
	prev := -1
	for i, h := range doc.Headings {
		if h.Offset <= prev || h.Offset >= len(src) || h.Line != li.Line(h.Offset) {
			t.Fatalf("heading %d: offset %d line %d after %d", i, h.Offset, h.Line, prev)
		}
		prev = h.Offset
		if h.Level < 1 || h.Level > 6 || strings.TrimSpace(h.Text) == "" || strings.HasSuffix(h.Text, "¶") {
			t.Fatalf("heading %d: level %d text %q", i, h.Level, h.Text)
		}
		if h.Parent >= i || h.Parent >= 0 && doc.Headings[h.Parent].Level >= h.Level {
			t.Fatalf("heading %d: parent %d", i, h.Parent)
		}
	}
}

func TestHTMLContentRoot(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"main", `<body><p>outside</p><main><p>inside</p></main><p>after</p></body>`,
			[]string{"paragraph: inside"}},
		{"articles in order", `<body><p>x</p><article><p>one</p><article><p>nested</p></article></article><div>y</div><article><p>two</p></article></body>`,
			[]string{"paragraph: one", "paragraph: nested", "paragraph: two"}},
		{"main beats article", `<body><article><p>a</p></article><main><p>m</p></main></body>`,
			[]string{"paragraph: m"}},
		{"role main", `<body><div>chrome text</div><div role="main"><p>body</p></div></body>`,
			[]string{"paragraph: body"}},
		{"body", `<html><head><title>T</title></head><body><p>a</p>loose</body></html>`,
			[]string{"paragraph: a", "paragraph: loose"}},
		{"no body tag", `<title>T</title><meta charset="utf-8"><p>a</p>`,
			[]string{"paragraph: a"}},
		{"hidden main skipped", `<body><main hidden><p>h</p></main><p>b</p></body>`,
			[]string{"paragraph: b"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, tt.src)), tt.want)
		})
	}
}

func TestHTMLDrop(t *testing.T) {
	tests := []struct{ name, drop string }{
		{"script", `<script>var x = "<p>no</p>";</script>`},
		{"style", `<style>p { color: red }</style>`},
		{"noscript", `<noscript><p>Enable JavaScript</p></noscript>`},
		{"template", `<template><p>tpl</p></template>`},
		{"nav", `<nav><p>Home</p></nav>`},
		{"header", `<header><p>Site name</p></header>`},
		{"footer", `<footer><p>Copyright</p></footer>`},
		{"aside", `<aside><p>Sidebar</p></aside>`},
		{"form", `<form><label>Name</label><input name=q></form>`},
		{"button", `<button>Copy</button>`},
		{"select", `<select><option>Dark<option>Light</select>`},
		{"textarea", `<textarea>typed</textarea>`},
		{"svg", `<svg><title>icon</title><text>label</text></svg>`},
		{"iframe", `<iframe src="x">fallback</iframe>`},
		{"comment", `<!-- <p>commented out</p> -->`},
		{"role navigation", `<div role="navigation"><p>menu</p></div>`},
		{"role case", `<div ROLE="Navigation"><p>menu</p></div>`},
		{"role banner", `<div role="banner">banner</div>`},
		{"role contentinfo", `<div role="contentinfo">info</div>`},
		{"role search", `<div role="search">Quick search</div>`},
		{"role complementary", `<div role="complementary">extra</div>`},
		{"hidden", `<div hidden>secret</div>`},
		{"hidden empty value", `<p hidden="">secret</p>`},
		{"aria-hidden", `<p aria-hidden="true">decor</p>`},
		{"aria-hidden case", `<p aria-hidden=" TRUE ">decor</p>`},
		{"display none", `<p style="display:none">x</p>`},
		{"display none spaced", `<p style="color: red;  DISPLAY :  None !important">x</p>`},
		{"class related", `<div class="related"><h3>Navigation</h3><p>previous | next</p></div>`},
		{"class sphinxsidebar", `<div class="sphinxsidebar"><h3>This Page</h3><p>Show Source</p></div>`},
		{"class footer", `<div class="footer">Created using Sphinx</div>`},
		{"id footer", `<div id="footer">Last updated 2026-01-01</div>`},
		{"class navheader", `<div class="navheader"><table><tr><td><a href="a">Prev</a></td><th>Chapter 2. Long title</th></tr></table></div>`},
		{"class navfooter", `<div class="x navfooter"><p>Home</p></div>`},
		{"class toc", `<div class="toc"><p><b>Table of Contents</b></p><dl><dt><a href="#a">A</a></dl></div>`},
		{"permalink in text", `<a class="headerlink" href="#x">link</a>`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			src := `<body><p>before</p>` + tt.drop + `<p>after</p></body>`
			sameList(t, "blocks", blockList(parsePage(t, src)), []string{"paragraph: before", "paragraph: after"})
		})
	}
	keep := []struct{ name, src, want string }{
		{"hidden until-found", `<div hidden="until-found">found</div>`, "paragraph: found"},
		{"aria-hidden false", `<p aria-hidden="false">shown</p>`, "paragraph: shown"},
		{"display block", `<p style="display: block">shown</p>`, "paragraph: shown"},
		{"display none-ish", `<p style="display: nonesuch">shown</p>`, "paragraph: shown"},
		{"header in article", `<article><header><p>By the harbour office</p></header></article>`, "paragraph: By the harbour office"},
		{"header in main", `<main><header><p>Lead</p></header></main>`, "paragraph: Lead"},
		{"aside in main", `<main><aside><p>Sidebar</p></aside><p>Lead</p></main>`, "paragraph: Lead"},
		{"footnote aside in section", `<section><aside class="footnote" role="note"><p>See the tide table.</p></aside></section>`, "paragraph: See the tide table."},
		{"div id header", `<div id="header"><p>NAME section</p></div>`, "paragraph: NAME section"},
	}
	for _, tt := range keep {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, "<body>"+tt.src+"</body>")), []string{tt.want})
		})
	}
}

func TestHTMLLinkDensity(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"link list", `<p>text</p><ul><li><a href="a">Alpha</a></li><li><a href="b">Beta</a></li><li><a href="c">Gamma</a></li></ul>`,
			[]string{"paragraph: text"}},
		{"short paragraph one link", `<p><a href="docs.html">Read the docs</a></p>`,
			[]string{"paragraph: Read the docs"}},
		{"paragraph two links", `<p><a href="a">one</a> and <a href="b">two</a></p>`,
			[]string{"paragraph: one and two"}},
		{"paragraph of links", `<p>text</p><p><a href="a">Mail</a> | <a href="b">Print</a> | <a href="c">Share</a></p>`,
			[]string{"paragraph: text"}},
		{"links in prose", `<p>Berths <a href="a">4</a>, <a href="b">5</a> and <a href="c">6</a> take vessels up to 120 m long and 8 m of draught at low water.</p>`,
			[]string{"paragraph: Berths 4, 5 and 6 take vessels up to 120 m long and 8 m of draught at low water."}},
		{"nav table", `<p>text</p><table><tr><td><a href="1">Prev</a></td><td><a href="2">Up</a></td><td><a href="3">Next</a></td></tr></table>`,
			[]string{"paragraph: text"}},
		{"section keeps heading", `<section><h2>Related</h2><ul><li><a href="a">Alpha</a><li><a href="b">Beta</a><li><a href="c">Gamma</a></ul></section>`,
			nil},
		{"code not judged", `<pre><a href="a">f</a>(<a href="b">x</a>, <a href="c">y</a>)</pre>`,
			[]string{"code: f(x, y)"}},
		{"dense div with heading", `<p>text</p><div><h3>See also</h3><a href="a">Alpha page</a> <a href="b">Beta page</a> <a href="c">Gamma page</a></div>`,
			[]string{"paragraph: text"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, `<body><p>lead</p>`+tt.src+`</body>`)), append([]string{"paragraph: lead"}, tt.want...))
		})
	}
	t.Run("section heading kept", func(t *testing.T) {
		doc := parsePage(t, `<body><p>lead</p><section><h2>Related</h2><ul><li><a href="a">Alpha</a><li><a href="b">Beta</a><li><a href="c">Gamma</a></ul></section></body>`)
		sameList(t, "headings", headingList(doc), []string{"h2 Related # ^-1"})
	})
}

func TestHTMLBlocks(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"paragraphs", `<p>One.</p><p>Two.</p>`, []string{"paragraph: One.", "paragraph: Two."}},
		{"list items", `<ul><li>a</li><li><p>b</p></li></ul><ol><li>c</ol>`, []string{"item: a", "item: b", "item: c"}},
		{"nested list", `<ul><li>outer<ul><li>inner</li></ul>tail</li></ul>`, []string{"item: outer", "item: inner", "item: tail"}},
		{"definition list", `<dl><dt>--berth</dt><dd><p>Berth number.</p></dd></dl>`, []string{"paragraph: --berth", "paragraph: Berth number."}},
		{"block quote", `<blockquote><p>Keep clear.</p><p>Slow down.</p></blockquote>`, []string{"quote: Keep clear.", "quote: Slow down."}},
		{"loose text", `<div>Loose <em>text</em><p>para</p>more loose</div>`, []string{"paragraph: Loose text", "paragraph: para", "paragraph: more loose"}},
		{"loose text in section", `<section>Only text</section>`, []string{"paragraph: Only text"}},
		{"pre", "<pre>\n  indented\n\n    more  spaces\n</pre>", []string{"code:   indented\n\n    more  spaces"}},
		{"pre markup", `<pre><span class="k">if</span> a &lt; b<br>{}</pre>`, []string{"code: if a < b\n{}"}},
		{"white space", "<p>  one\n\t two   three \n</p>", []string{"paragraph: one two three"}},
		{"no-break space", `<p>120&nbsp;m&#160;long</p>`, []string{"paragraph: 120 m long"}},
		{"entities", `<p>&lt;tag&gt; &amp; &quot;q&quot; &#8212; &eacute;t&eacute;</p>`, []string{`paragraph: <tag> & "q" — été`}},
		{"link text not href", `<p>See <a href="https://example.com/x">the fee table</a>.</p>`, []string{"paragraph: See the fee table."}},
		{"img alt", `<p>Chart: <img src="c.png" alt="berth chart"> above</p>`, []string{"paragraph: Chart: berth chart above"}},
		{"img alt file name", `<p>Logo <img src="logo.png" alt="logo.png"><img alt="/static/x"></p>`, []string{"paragraph: Logo"}},
		{"inline code", `<p>Run <code>harborctl status</code> first.</p>`, []string{"paragraph: Run harborctl status first."}},
		{"br", `<p>line one<br>line two</p>`, []string{"paragraph: line one line two"}},
		{"inline elements join", `<p><b>bold</b><i>it</i> <em>em</em></p>`, []string{"paragraph: boldit em"}},
		{"pilcrow", `<p>Text<a href="#t">¶</a></p><h2>Title<a href="#t" title="Permalink">§</a></h2><p>x<a href="#y">#</a></p>`,
			[]string{"paragraph: Text", "paragraph: x"}},
		{"url text", `<p>Fees are listed at <a href="https://harbor.example.org/fees">https://harbor.example.org/fees</a>.</p>`,
			[]string{"paragraph: Fees are listed at."}},
		{"url in brackets", `<p>The office (https://harbor.example.org) opens at six.</p>`,
			[]string{"paragraph: The office opens at six."}},
		{"url only", `<p>https://harbor.example.org/</p><p>kept</p>`, []string{"paragraph: kept"}},
		{"url kept in code", `<pre>curl https://harbor.example.org/api</pre>`, []string{"code: curl https://harbor.example.org/api"}},
		{"scheme name kept", `<p>Use https:// or ssh:// to fetch.</p>`, []string{"paragraph: Use https:// or ssh:// to fetch."}},
		{"details", `<details><summary>More</summary><p>Hidden until opened.</p></details>`, []string{"paragraph: More", "paragraph: Hidden until opened."}},
		{"hr splits", `<div>one<hr>two</div>`, []string{"paragraph: one", "paragraph: two"}},
		{"inline with block", `<a href="card"><div><p>Card text</p></div></a>`, []string{"paragraph: Card text"}},
		{"custom element", `<x-note>Custom <b>inline</b></x-note><p>p</p>`, []string{"paragraph: Custom inline", "paragraph: p"}},
		{"punctuation left by url", `<p>—https://harbor.example.org/notice</p><p>(https://x.example)</p><p>ok</p>`, []string{"paragraph: ok"}},
		{"punctuation only", `<dl><dt>&gt;&gt;&gt;</dt><dd>The prompt.</dd></dl>`, []string{"paragraph: >>>", "paragraph: The prompt."}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, "<body>"+tt.src+"</body>")), tt.want)
		})
	}
}

func TestHTMLCodeLang(t *testing.T) {
	tests := []struct{ name, src, want string }{
		{"pre class", `<pre class="language-go">x</pre>`, "go"},
		{"code child", `<pre><code class="hljs lang-Rust">x</code></pre>`, "rust"},
		{"sphinx div", `<div class="highlight-python3 notranslate"><div class="highlight"><pre>x</pre></div></div>`, "python3"},
		{"sphinx default", `<div class="highlight-default notranslate"><div class="highlight"><pre>x</pre></div></div>`, ""},
		{"sphinx none", `<div class="highlight-none"><pre>x</pre></div>`, ""},
		{"plain", `<pre class="screen">x</pre>`, ""},
		{"highlight alone", `<div class="highlight"><pre>x</pre></div>`, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc := parsePage(t, "<body>"+tt.src+"</body>")
			if len(doc.Blocks) != 1 || doc.Blocks[0].Kind != Code || doc.Blocks[0].Lang != tt.want {
				t.Errorf("got %q, want one code block with lang %q", blockList(doc), tt.want)
			}
		})
	}
}

func TestHTMLTables(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"data", `<table><tr><th>Berth</th><th>Depth</th></tr><tr><td>4</td><td>8 m</td></tr></table>`,
			[]string{"table: Berth | Depth\n4 | 8 m"}},
		{"sections and p cells", `<table><thead><tr><th><p>A</p></th><th><p>B</p></th></tr></thead><tbody><tr><td><p>1</p></td><td><p>2</p></td></tr></tbody></table>`,
			[]string{"table: A | B\n1 | 2"}},
		{"caption", `<table><caption>Depths</caption><tr><td>4</td><td>8 m</td></tr></table>`,
			[]string{"paragraph: Depths", "table: 4 | 8 m"}},
		{"empty edge cells", `<table><tr><td></td><td>a</td><td></td><td>b</td><td> </td></tr></table>`,
			[]string{"table: a |  | b"}},
		{"empty rows", `<table><tr><td> </td></tr><tr><td>x</td></tr></table>`,
			[]string{"table: x"}},
		{"list in data cell", `<table><thead><tr><th>Context</th><th>Ways</th></tr></thead><tr><td>pattern</td><td><ul><li>one</li><li>two</li></ul></td></tr></table>`,
			[]string{"table: Context | Ways\npattern | one two"}},
		{"layout: div in cell", `<table><tr><td class="icon"><div class="title">Note</div></td><td>Windows are rounded.</td></tr></table>`,
			[]string{"paragraph: Note", "paragraph: Windows are rounded."}},
		{"layout: paragraphs in cell", `<table><tr><td><p>First.</p><p>Second.</p></td></tr></table>`,
			[]string{"paragraph: First.", "paragraph: Second."}},
		{"layout: pre in cell", `<table><thead><tr><th>x</th></tr></thead><tr><td><pre>code</pre></td></tr></table>`,
			[]string{"paragraph: x", "code: code"}},
		{"layout: nested table", `<table><tr><td><table><tr><td>a</td><td>b</td></tr></table></td></tr></table>`,
			[]string{"table: a | b"}},
		{"layout: role presentation", `<table role="presentation"><tr><td>left</td><td>right</td></tr></table>`,
			[]string{"paragraph: left", "paragraph: right"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, "<body>"+tt.src+"</body>")), tt.want)
		})
	}
}

func TestHTMLHeadings(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"tree", `<h1>A</h1><h2>B</h2><h3>C</h3><h2>D</h2><h4>E</h4><h1>F</h1><h3>G</h3>`,
			[]string{"h1 A # ^-1", "h2 B # ^0", "h3 C # ^1", "h2 D # ^0", "h4 E # ^3", "h1 F # ^-1", "h3 G # ^5"}},
		{"starts deep", `<h3>A</h3><h2>B</h2><h3>C</h3>`, []string{"h3 A # ^-1", "h2 B # ^-1", "h3 C # ^1"}},
		{"own id", `<h2 id="own">T</h2>`, []string{"h2 T #own ^-1"}},
		{"sphinx section", `<section id="sec"><span id="label"></span><h2>T<a class="headerlink" href="#sec">¶</a></h2><p>x</p></section>`,
			[]string{"h2 T #sec ^-1"}},
		// Not the section's first content: the section's id is the nearest
		// place above it a link can land on.
		{"heading not first", `<section id="sec"><p>intro</p><h2>T</h2></section>`, []string{"h2 T #sec ^-1"}},
		{"docbook nested divs", `<div class="sect1" id="FUNCS"><div class="titlepage"><div><div><h2 class="title">T</h2></div></div></div></div>`,
			[]string{"h2 T #FUNCS ^-1"}},
		{"anchor before", `<p>x</p><a name="before"></a><h2>T</h2>`, []string{"h2 T #before ^-1"}},
		{"id anchor before", `<p>x</p><a id="before"></a>` + "\n" + `<h2>T</h2>`, []string{"h2 T #before ^-1"}},
		{"anchor before with text is not", `<p>x</p><a name="n">text</a><h2>T</h2>`, []string{"h2 T # ^-1"}},
		{"anchor inside", `<h2 class="title"><a name="inside"></a>T</h2>`, []string{"h2 T #inside ^-1"}},
		{"anchor inside by id", `<h2><a id="inside2">T</a></h2>`, []string{"h2 T #inside2 ^-1"}},
		{"own id wins", `<section id="s"><h2 id="own"><a name="in"></a>T</h2></section>`, []string{"h2 T #own ^-1"}},
		{"none", `<div><p>x</p><h2>T</h2></div>`, []string{"h2 T # ^-1"}},
		{"text", `<h2><span class="section-number">3.1. </span>Creating a <code>booking</code><a class="headerlink" href="#c">¶</a></h2>`,
			[]string{"h2 3.1. Creating a booking # ^-1"}},
		{"empty heading skipped", `<h2> </h2><h2><img src="x.png"></h2><h2>¶</h2><h3>Real</h3>`, []string{"h3 Real # ^-1"}},
		{"bare pilcrow", `<h2>Title <span class="anchor">¶</span></h2>`, []string{"h2 Title # ^-1"}},
		{"in dropped nav", `<nav><h2>Menu</h2></nav><h2>Body</h2>`, []string{"h2 Body # ^-1"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc, err := Parse("page.html", []byte("<body>"+tt.src+"<p>text</p></body>"))
			if err != nil {
				t.Fatal(err)
			}
			sameList(t, "headings", headingList(doc), tt.want)
		})
	}
	t.Run("blocks point at headings", func(t *testing.T) {
		doc := parsePage(t, `<body><p>pre</p><h1>A</h1><p>a</p><h2>B</h2><p>b</p></body>`)
		var got []string
		for _, b := range doc.Blocks {
			got = append(got, fmt.Sprintf("%s@%d", b.Text, b.Heading))
		}
		sameList(t, "blocks", got, []string{"pre@-1", "a@0", "b@1"})
		if tr := doc.Trail(doc.Blocks[2].Heading); strings.Join(tr, " > ") != "A > B" {
			t.Errorf("trail %q", tr)
		}
	})
}

func TestHTMLTitle(t *testing.T) {
	tests := []struct{ name, src, want string }{
		{"title", "<title>  Berth\n   bookings &amp; fees </title><p>x</p>", "Berth bookings & fees"},
		{"first h1", `<body><h2>Sub</h2><h1>Main <a class="headerlink" href="#m">¶</a></h1><h1>Second</h1><p>x</p></body>`, "Main"},
		{"svg title ignored", `<body><svg><title>icon</title></svg><h1>Page</h1><p>x</p></body>`, "Page"},
		{"empty title falls back", `<title> </title><h1>Page</h1><p>x</p>`, "Page"},
		{"none", `<p>x</p>`, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := parsePage(t, tt.src).Title; got != tt.want {
				t.Errorf("title %q, want %q", got, tt.want)
			}
		})
	}
}

// TestHTMLTreeFixups covers the HTML5 tree-construction cases the reader
// handles itself, since the tokenizer does not.
func TestHTMLTreeFixups(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"implied p end", `<p>one<p>two<div>three</div>`, []string{"paragraph: one", "paragraph: two", "paragraph: three"}},
		{"implied li end", `<ul><li>a<li>b</ul><p>c`, []string{"item: a", "item: b", "paragraph: c"}},
		{"li inside div inside li", `<ul><li><div>a<li>b</div></ul>`, []string{"item: a", "item: b"}},
		{"implied dt dd end", `<dl><dt>t1<dd>d1<dt>t2<dd>d2</dl>`, []string{"paragraph: t1", "paragraph: d1", "paragraph: t2", "paragraph: d2"}},
		{"implied cell and row end", `<table><tr><td>a<td>b<tr><td>c<td>d</table>`, []string{"table: a | b\nc | d"}},
		{"implied tbody end", `<table><thead><tr><th>h<tbody><tr><td>v</table>`, []string{"table: h\nv"}},
		{"p in cell closed by cell", `<table><tr><td><p>a<td><p>b</table>`, []string{"table: a | b"}},
		{"heading closes heading", `<h2>one<h3>two</h3><p>x`, []string{"paragraph: x"}},
		{"mismatched heading end", `<h2>Title</h3><p>body</p>`, []string{"paragraph: body"}},
		{"li end crosses blocks", `<ul><li><blockquote>q</li><li>b</li></ul>`, []string{"quote: q", "item: b"}},
		{"dd end", `<dl><dd><div>d</dd><dt>t</dt></dl>`, []string{"paragraph: d", "paragraph: t"}},
		{"unclosed at end of file", `<div><p>open <b>bold`, []string{"paragraph: open bold"}},
		{"stray end tags", `</div></p></span><p>a</p></li></td><p>b</p>`, []string{"paragraph: a", "paragraph: b"}},
		{"inline end does not close block", `<p><b>x</p><p>y</b>z</p>`, []string{"paragraph: x", "paragraph: yz"}},
		{"a closes a", `<p><a href="1">one<a href="2">two</p>`, []string{"paragraph: onetwo"}},
		{"block end closes inline", `<div><span>one</div><p>two</p>`, []string{"paragraph: one", "paragraph: two"}},
		{"end tag blocked by cell", `<table><tr><td><b>a</td><td>b</b></td></tr></table>`, []string{"table: a | b"}},
		{"void elements", `<p>a<br>b<img alt="c">d<hr>e`, []string{"paragraph: a b c d", "paragraph: e"}},
		{"xhtml self-closing anchor", `<p><a id="x"/>text after</p>`, []string{"paragraph: text after"}},
		{"self-closing script", `<script src="x.js"/><p>raw</p></script><p>after</p>`, []string{"paragraph: after"}},
		{"self-closing title", `<title/>T</title><p>body</p>`, []string{"paragraph: body"}},
		{"custom element end", `<x-a><x-b>in</x-b>mid</x-a>out`, []string{"paragraph: inmidout"}},
		{"body after end", `<body><p>a</p></body><p>b</p></html><p>c</p>`, []string{"paragraph: a", "paragraph: b", "paragraph: c"}},
		{"head closed by content", `<html><head><title>T</title><p>in body</p>`, []string{"paragraph: in body"}},
		{"second body ignored", `<body><p>a</p><body><p>b</p>`, []string{"paragraph: a", "paragraph: b"}},
		{"cut-off tag", `<p>text</p><div class="x`, []string{"paragraph: text"}},
		{"unquoted and odd attributes", `<p class=lead id=x/>one</p><div/ hidden>two</div><p =odd>three</p>`, []string{"paragraph: one", "paragraph: three"}},
		{"upper case tags", `<P CLASS="x">A<BR>B</P><DIV HIDDEN>c</DIV>`, []string{"paragraph: A B"}},
		{"cdata in svg", `<svg><![CDATA[<p>x</p>]]></svg><p>y</p>`, []string{"paragraph: y"}},
		{"crlf", "<p>a\r\nb</p>\r\n<pre>x\r\ny</pre>", []string{"paragraph: a b", "code: x\ny"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, tt.src)), tt.want)
		})
	}
}

// TestHTMLDeepNesting parses pages nested far deeper than real ones. Every
// search of the open-element stack is bounded, so these stay linear; a
// quadratic slip shows up as a test that takes seconds instead of
// milliseconds.
func TestHTMLDeepNesting(t *testing.T) {
	const n = 20000
	tests := []struct {
		name, src string
		empty     bool // all of it is left out
	}{
		{"divs", strings.Repeat("<div>", n) + "x", false},
		{"spans and stray ends", strings.Repeat("<span>", n) + "x" + strings.Repeat("</b></p></x-y>", n), false},
		{"custom elements", strings.Repeat("<x-a>", n) + "x" + strings.Repeat("</x-b>", n), false},
		{"links around divs", strings.Repeat("<div><a href=x>", n) + "x", true}, // all link text
		{"lists", strings.Repeat("<ul><li>a", n), false},
		{"tables", strings.Repeat("<table><tr><td>", n) + "x", false},
		{"sections", strings.Repeat("<section id=s><h2>h</h2><p>p", n), false},
		{"headers", strings.Repeat("<article><header>", n) + "x", false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc, err := Parse("deep.html", []byte(tt.src))
			if tt.empty {
				if err == nil || err.Error() != "deep.html:1: no body text" {
					t.Fatalf("err %v, want no body text", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			checkHTMLDoc(t, []byte(tt.src), doc)
		})
	}
}

func TestHTMLOffsets(t *testing.T) {
	src := "<body>\n<h1 id=\"t\">Title</h1>\n<p>First\nparagraph.</p>\n<p>Implied\n<p>end</p>\n<div>\n  loose text\n</div>\n<pre>code</pre>\n</body>\n"
	doc := parsePage(t, src)
	type span struct {
		text       string
		line, end  int
		start, raw string
	}
	want := []span{
		{"First paragraph.", 3, 4, "", "<p>First\nparagraph.</p>"},
		{"Implied", 5, 5, "", "<p>Implied"},
		{"end", 6, 6, "", "<p>end</p>"},
		{"loose text", 8, 8, "", "loose text"},
		{"code", 10, 10, "", "<pre>code</pre>"},
	}
	if len(doc.Blocks) != len(want) {
		t.Fatalf("blocks %q", blockList(doc))
	}
	for i, w := range want {
		b := doc.Blocks[i]
		if b.Text != w.text || b.Line != w.line || b.EndLine != w.end || src[b.Start:b.End] != w.raw {
			t.Errorf("block %d: %q lines %d-%d raw %q; want %q lines %d-%d raw %q", i, b.Text, b.Line, b.EndLine, src[b.Start:b.End], w.text, w.line, w.end, w.raw)
		}
	}
	h := doc.Headings[0]
	if h.Line != 2 || !strings.HasPrefix(src[h.Offset:], `<h1 id="t">`) {
		t.Errorf("heading at %d line %d", h.Offset, h.Line)
	}
	t.Run("table spans its rows", func(t *testing.T) {
		src := "<table>\n<caption>Cap</caption>\n<tr><td>a</td></tr>\n<tr><td>b</td></tr>\n</table>"
		doc := parsePage(t, src)
		b := doc.Blocks[1]
		if got := src[b.Start:b.End]; got != "<tr><td>a</td></tr>\n<tr><td>b</td></tr>" || b.Line != 3 || b.EndLine != 4 {
			t.Errorf("table raw %q lines %d-%d", got, b.Line, b.EndLine)
		}
	})
	t.Run("invalid UTF-8 keeps offsets", func(t *testing.T) {
		src := "<p>caf\xe9</p>\n<p>two</p>"
		doc, err := Parse("page.html", []byte(src))
		if err != nil {
			t.Fatal(err)
		}
		if got := blockList(doc); strings.Join(got, "|") != "paragraph: caf?|paragraph: two" || src[doc.Blocks[1].Start:doc.Blocks[1].End] != "<p>two</p>" {
			t.Errorf("got %q", got)
		}
	})
}

func TestHTMLNoBodyText(t *testing.T) {
	tests := []struct{ name, src string }{
		{"empty", ``},
		{"chrome only", `<html><head><title>T</title></head><body><nav><a href="/">Home</a></nav><footer>(c)</footer></body></html>`},
		{"headings only", `<body><h1>Title</h1></body>`},
		{"link index", `<body><ul><li><a href="a">a</a><li><a href="b">b</a><li><a href="c">c</a></ul></body>`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Parse("docs/page.html", []byte(tt.src))
			var pe *Error
			if !errors.As(err, &pe) || err.Error() != "docs/page.html:1: no body text" {
				t.Errorf("err %v, want docs/page.html:1: no body text", err)
			}
		})
	}
}

// TestHTMLGolden parses each testdata/html/*.html page and compares the
// Document, as indented JSON, with the .json file beside it. Run with
// -update to rewrite the .json files.
func TestHTMLGolden(t *testing.T) {
	pages, err := filepath.Glob(filepath.Join("testdata", "html", "*.html"))
	if err != nil || len(pages) == 0 {
		t.Fatalf("no golden pages: %v", err)
	}
	for _, page := range pages {
		name := strings.TrimSuffix(filepath.Base(page), ".html")
		t.Run(name, func(t *testing.T) {
			src, err := os.ReadFile(page)
			if err != nil {
				t.Fatal(err)
			}
			doc, err := Parse(filepath.Base(page), src)
			if err != nil {
				t.Fatal(err)
			}
			checkHTMLDoc(t, src, doc)
			got, err := json.MarshalIndent(doc, "", "  ")
			if err != nil {
				t.Fatal(err)
			}
			got = append(got, '\n')
			golden := strings.TrimSuffix(page, ".html") + ".json"
			if updateGolden() {
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -run TestHTMLGolden -update)", err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s differs from the parse; run with -update and review the diff\ngot:\n%s", golden, got)
			}
		})
	}
}

func FuzzParseHTML(f *testing.F) {
	pages, _ := filepath.Glob(filepath.Join("testdata", "html", "*.html"))
	for _, p := range pages {
		if src, err := os.ReadFile(p); err == nil {
			f.Add(src)
		}
	}
	for _, s := range []string{
		``, `<p>`, `<p>a<p>b`, `<table><tr><td>a<td><table><tr><td>b</table>`, `<h1>a<h2>b<h3>c`,
		`<pre>` + "\n\n" + `</pre>`, `<ul><li><ul><li><ul><li>x`, `</p></p><p>&amp`, `<a href=x>¶</a><h2 id=a>¶</h2>`,
		`<section id=s><span id=t></span><h2>x</h2></section>`, "<p>\x00\r\n\xff</p>", `<div hidden><main><p>x`,
		`<p>http://a.b https://</p>`, `<br/><br/><img alt="a b"/>`, `<caption>c</caption>`, `<table><caption>c<tr><td>x</caption>`,
		"<h1>¶</h1 >0", "\v", "<p>\u3000</p>", // found by fuzzing
		`<div id=r><div class=titlepage></div><div><h2>n</h2></div></div>`, `<div class="note"><h3>Note</h3><p>x</div><p>y`,
		`<dl><dt id=a>t<dd><a href=x>d</a><dt><a id=b></a>u<dd>v</dl>`, `<blockquote><h2 id=q>q</h2></blockquote><h2>r</h2>`,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		doc, err := Parse("fuzz.html", src)
		if err != nil {
			var pe *Error
			if !errors.As(err, &pe) || strings.HasPrefix(pe.Msg, "parser failed") {
				t.Fatalf("Parse: %v", err)
			}
			return
		}
		// Parse replaces invalid UTF-8 byte for byte, so offsets and lines
		// still refer to src.
		checkHTMLDoc(t, src, doc)
		for i, b := range doc.Blocks {
			if b.Kind != Code && htmlURLPattern.MatchString(b.Text) {
				t.Fatalf("block %d holds a URL: %q", i, b.Text)
			}
		}
	})
}

// htmlURLPattern finds a web address: a scheme followed by a host.
var htmlURLPattern = regexp.MustCompile(`(?i)https?://[\pL\pN\[$*{<]`)

// TestHTMLCorpora reads the real documentation sets fetched by
// get-corpora.sh (python-3.11-html, git-2.39-html) from $KBC_CORPORA and
// checks that no navigation or URL text gets through and that anchors are
// real.
func TestHTMLCorpora(t *testing.T) {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		t.Skip("KBC_CORPORA is not set; fetch corpora with shared/corpora/get-corpora.sh and point KBC_CORPORA at them")
	}
	// Phrases that only navigation bars, sidebars and search boxes hold
	// (Sphinx's related bar reads "index modules | next | previous |").
	navPhrases := []string{"index modules |", "modules | next |", "next | previous |", "previous |\n",
		"Quick search", "Show Source", "Theme Auto Light Dark"}
	// Lines that are navigation whenever they stand alone.
	navLines := map[string]bool{
		"Navigation": true, "Table of Contents": true, "Previous topic": true, "Next topic": true,
		"This Page": true, "Report a Bug": true, "Quick search": true, "Show Source": true,
	}
	// Words that are navigation when three or more of one group stand alone
	// on a page; one or two are real terms ("index" and "modules" in
	// gitrepository-layout, "next" among 2to3's fixers).
	navGroups := [][]string{{"index", "modules", "next", "previous"}, {"Prev", "Up", "Home", "Next"}}
	for _, set := range []string{"python-3.11-html", "git-2.39-html"} {
		t.Run(set, func(t *testing.T) {
			dir := filepath.Join(root, set)
			if _, err := os.Stat(dir); err != nil {
				t.Skipf("corpus %s missing (%v); run get-corpora.sh", set, err)
			}
			var pages, withHeadings, noText, blocks int
			err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
				if err != nil || d.IsDir() || !strings.HasSuffix(p, ".html") {
					return err
				}
				src, err := os.ReadFile(p)
				if err != nil {
					return err
				}
				rel, _ := filepath.Rel(dir, p)
				doc, err := Parse(filepath.ToSlash(rel), src)
				if err != nil {
					var pe *Error
					if errors.As(err, &pe) && pe.Msg == "no body text" {
						noText++ // link-only pages: indexes, tables of contents
						return nil
					}
					t.Errorf("%s: %v", rel, err)
					return nil
				}
				checkHTMLDoc(t, src, doc)
				pages++
				blocks += len(doc.Blocks)
				if len(doc.Headings) > 0 {
					withHeadings++
				}
				alone := map[string]bool{}
				for _, b := range doc.Blocks {
					if b.Kind == Code {
						continue
					}
					for _, line := range strings.Split(b.Text, "\n") {
						alone[strings.Trim(line, " |")] = true
					}
					for _, ph := range navPhrases {
						if strings.Contains(b.Text, ph) {
							t.Errorf("%s:%d: navigation text %q in %q", rel, b.Line, ph, b.Text)
						}
					}
					for _, line := range strings.Split(b.Text, "\n") {
						if navLines[strings.TrimSpace(line)] {
							t.Errorf("%s:%d: navigation line %q", rel, b.Line, line)
						}
					}
					if htmlURLPattern.MatchString(b.Text) {
						t.Errorf("%s:%d: URL in text %q", rel, b.Line, b.Text)
					}
				}
				for _, g := range navGroups {
					var found []string
					for _, w := range g {
						if alone[w] {
							found = append(found, w)
						}
					}
					if len(found) >= 3 {
						t.Errorf("%s: navigation words standing alone: %q", rel, found)
					}
				}
				ids := pageIDs(src)
				for _, h := range doc.Headings {
					if h.Anchor != "" && !ids[h.Anchor] {
						t.Errorf("%s:%d: heading %q anchor %q is no id or name in the page", rel, h.Line, h.Text, h.Anchor)
					}
				}
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%s: %d pages with text (%d blocks), %d with headings, %d without body text", set, pages, blocks, withHeadings, noText)
			if pages == 0 || withHeadings*100 < pages*95 {
				t.Errorf("only %d of %d pages have headings", withHeadings, pages)
			}
			if noText*10 > pages {
				t.Errorf("%d pages without body text, against %d with", noText, pages)
			}
		})
	}
}

// pageIDs lists the id and name attribute values of a page, read with the
// x/net/html tokenizer's own attribute parsing.
func pageIDs(src []byte) map[string]bool {
	ids := map[string]bool{}
	z := html.NewTokenizer(bytes.NewReader(src))
	for {
		tt := z.Next()
		if tt == html.ErrorToken {
			return ids
		}
		if tt == html.StartTagToken || tt == html.SelfClosingTagToken {
			for _, a := range z.Token().Attr {
				if a.Key == "id" || a.Key == "name" {
					ids[a.Val] = true
				}
			}
		}
	}
}

// BenchmarkParseHTML measures Parse (tokenize, tree, extraction, plus the
// hash Parse takes of every file) on a golden page, on real pages, and on
// each whole HTML corpus when KBC_CORPORA is set.
func BenchmarkParseHTML(b *testing.B) {
	type input struct {
		name  string
		files map[string][]byte
	}
	var inputs []input
	one := func(name, path string) {
		if src, err := os.ReadFile(path); err == nil {
			inputs = append(inputs, input{name, map[string][]byte{filepath.Base(path): src}})
		}
	}
	one("testdata/sphinx-page", filepath.Join("testdata", "html", "sphinx-page.html"))
	root := os.Getenv("KBC_CORPORA")
	if root != "" {
		one("python/library/functions", filepath.Join(root, "python-3.11-html", "library", "functions.html"))
		one("python/tutorial/introduction", filepath.Join(root, "python-3.11-html", "tutorial", "introduction.html"))
		one("git/git-commit", filepath.Join(root, "git-2.39-html", "git-commit.html"))
		for _, set := range []string{"python-3.11-html", "git-2.39-html"} {
			files := map[string][]byte{}
			filepath.WalkDir(filepath.Join(root, set), func(p string, d fs.DirEntry, err error) error {
				if err == nil && !d.IsDir() && strings.HasSuffix(p, ".html") {
					if src, err := os.ReadFile(p); err == nil {
						files[p] = src
					}
				}
				return nil
			})
			if len(files) > 0 {
				inputs = append(inputs, input{"corpus/" + set, files})
			}
		}
	}
	for _, in := range inputs {
		b.Run(in.name, func(b *testing.B) {
			var size int64
			for _, src := range in.files {
				size += int64(len(src))
			}
			b.SetBytes(size)
			b.ReportAllocs()
			for b.Loop() {
				for name, src := range in.files {
					Parse(name, src)
				}
			}
		})
	}
	if root == "" {
		b.Log("KBC_CORPORA is not set: real pages skipped")
	}
}

func ExampleParse_html() {
	page := `<!doctype html>
<html><head><title>Berths &amp; tides</title></head>
<body>
<nav><a href="/">Home</a> <a href="/fees">Fees</a></nav>
<main>
  <section id="booking">
    <h1>Booking a berth<a class="headerlink" href="#booking">¶</a></h1>
    <p>Run <code>harborctl book</code> with the vessel name.</p>
    <pre class="language-sh">harborctl book "MV Kestrel"</pre>
  </section>
</main>
<footer>Harbour Office</footer>
</body></html>`
	doc, err := Parse("berths.html", []byte(page))
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("title:", doc.Title)
	for _, h := range doc.Headings {
		fmt.Printf("h%d %q #%s (line %d)\n", h.Level, h.Text, h.Anchor, h.Line)
	}
	for _, b := range doc.Blocks {
		fmt.Printf("%s (lines %d-%d, under %q): %s\n", b.Kind, b.Line, b.EndLine, doc.Trail(b.Heading), b.Text)
	}
	// Output:
	// title: Berths & tides
	// h1 "Booking a berth" #booking (line 7)
	// paragraph (lines 8-8, under ["Booking a berth"]): Run harborctl book with the vessel name.
	// code (lines 9-9, under ["Booking a berth"]): harborctl book "MV Kestrel"
}
