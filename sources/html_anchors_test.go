package sources

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// sectionList renders each heading with its anchor and, under it, the
// blocks filed under it ("  text" or "  term #anchor: text"), so a test
// shows at a glance which section every block is cited under.
func sectionList(doc *Document) []string {
	var out []string
	emit := func(h int) {
		for _, b := range doc.Blocks {
			if b.Heading != h {
				continue
			}
			text := b.Text
			if r := []rune(text); len(r) > 40 {
				text = string(r[:40]) + "..."
			}
			if b.Anchor != "" {
				out = append(out, fmt.Sprintf("  term #%s: %s", b.Anchor, text))
			} else {
				out = append(out, "  "+text)
			}
		}
	}
	emit(-1)
	for i, h := range doc.Headings {
		out = append(out, fmt.Sprintf("h%d %s #%s", h.Level, h.Text, h.Anchor))
		emit(i)
	}
	return out
}

// TestHTMLReferencePages pins the sections, anchors and defined terms of
// hand-made pages shaped like the output of DocBook XSL (a reference page,
// an abbreviations appendix), Sphinx (an API module) and AsciiDoc (a
// manual page of settings). Each anchor must be the fragment a browser
// link lands on at or before the text it is cited for.
func TestHTMLReferencePages(t *testing.T) {
	tests := []struct {
		page string
		want []string
	}{
		{"docbook-reference", []string{
			// The empty title-page div before the name block does not
			// hide the refentry's id.
			"h2 wms-pick #APP-WMS-PICK",
			"  wms-pick — release pick waves to the flo...",
			// No id of its own, none on the div it opens: the nearest
			// enclosing id, the page's refentry, lands just above it.
			"h2 Synopsis #APP-WMS-PICK",
			"  wms-pick [option...] wave",
			"h2 Description #id-1.9.4.2.5",
			"  wms-pick releases a pick wave: it reserv...",
			// An admonition's title is text of the box, not a section: the
			// text after the box stays in Description.
			"  Note",
			"  A wave that holds chilled goods is relea...",
			"  Lines that cannot be reserved stay on th...",
			"h2 Options #APP-WMS-PICK-OPTIONS",
			"  The options are:",
			"  term #WMS-PICK-OPTION-BATCH: -b lines --batch=lines",
			"  Hand the lines to the scanners in batche...",
			"  term #WMS-PICK-OPTION-DRY-RUN: --dry-run",
			"  Reserve nothing; print the pick lists th...",
			"h2 Environment #APP-WMS-PICK-ENV",
			"  WMS_SITE",
			"  Warehouse code, such as OSL2.",
			"h2 Notes #APP-WMS-PICK-NOTES",
			"  Waves are numbered per site.",
			"h2 Examples #APP-WMS-PICK-EXAMPLES",
			"  To release wave 812 at the Oslo site in ...",
			"  $ WMS_SITE=OSL2 wms-pick --batch=25 812",
			"  Tip",
			"  Run with --dry-run first on a busy day.",
			"  The pick lists come out on the printer o...",
		}},
		{"docbook-abbreviations", []string{
			// Definitions that are links are the content of the page.
			"h2 Appendix K. Abbreviations #ACRONYMS",
			"  ASN",
			"  Advance Shipping Notice",
			"  FEFO",
			"  First Expired, First Out",
			"  LPN",
			"  Licence Plate Number",
			"  SSCC",
			"  Serial Shipping Container Code",
			"  WMS",
			"  Warehouse Management System",
		}},
		{"sphinx-api", []string{
			"h1 harbour.pick — Pick waves #module-harbour.pick",
			"  Source code: harbour/pick.py",
			"  This module releases pick waves to the w...",
			"  Note",
			"  Every function here takes the site code ...",
			"h2 Releasing waves #releasing-waves",
			"  term #harbour.pick.release: harbour.pick.release(site, wave, batch=4...",
			"  Release wave at site, handing its lines ...",
			"  Raise ShortageError when no line can be ...",
			"  term #harbour.pick.hold: harbour.pick.hold(site, wave)",
			"  Stop handing out the lines of wave; line...",
			"  term #harbour.pick.ShortageError: exception harbour.pick.ShortageError",
			"  Raised when a wave has no line that stoc...",
			"h2 Settings #settings",
			"  term #cmdoption-pick-reefer-first: --reefer-first",
			"  Release chilled lines before the others.",
			"  term #term-wave: wave",
			"  A set of order lines released to the flo...",
		}},
		{"asciidoc-settings", []string{
			"h1 wms-config(5) Manual Page #header",
			"h2 NAME #header",
			"  wms-config - Settings of the Harbour WMS",
			"h2 DESCRIPTION #_description",
			"  The settings file /etc/wms/site.conf hol...",
			"  Note",
			"  Settings are read once, when the service...",
			"h2 SETTINGS #_settings",
			"  term #pick.batchSize: pick.batchSize",
			"  Lines handed to a scanner at a time. Def...",
			"  term #pick.reeferFirst: pick.reeferFirst",
			"  When true, chilled lines are released be...",
			"  pack.labelPrinter",
			"  Name of the printer for shipping labels.",
			"h2 FILES #_files",
			"h3 site.conf #_site_conf",
			"  Per site.",
			"h3 zone.conf #_zone_conf",
			"  Per zone, read after site.conf.",
		}},
	}
	for _, tt := range tests {
		t.Run(tt.page, func(t *testing.T) {
			src, err := os.ReadFile(filepath.Join("testdata", "html", tt.page+".html"))
			if err != nil {
				t.Fatal(err)
			}
			doc, err := Parse(tt.page+".html", src)
			if err != nil {
				t.Fatal(err)
			}
			checkHTMLDoc(t, src, doc)
			sameList(t, "sections", sectionList(doc), tt.want)
		})
	}
}

// TestHTMLAnchorRule pins each step of the anchor rule on small cases.
func TestHTMLAnchorRule(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"empty div before heading",
			`<div class="sect1" id="S"><div class="titlepage"></div><h2>T</h2><p>x</p></div>`,
			[]string{"h2 T #S", "  x"}},
		{"white space only div before heading",
			`<div id="S"><div> </div><span></span><hr><div><h2>T</h2></div><p>x</p></div>`,
			[]string{"h2 T #S", "  x"}},
		{"text before heading is not skipped",
			`<div id="S"><p>intro</p><h2>T</h2><p>x</p></div>`,
			[]string{"  intro", "h2 T #S", "  x"}},
		{"anchor just before beats enclosing id",
			`<div id="S"><p>intro</p><a name="a"></a><h2>T</h2><p>x</p></div>`,
			[]string{"  intro", "h2 T #a", "  x"}},
		{"enclosing section of a later heading",
			`<section id="outer"><h2>A</h2><p>a</p><div><h3>B</h3><p>b</p></div></section>`,
			[]string{"h2 A #outer", "  a", "h3 B #outer", "  b"}},
		{"content root id is the page, not an anchor",
			`<main id="content"><p>lead</p><h2>T</h2><p>x</p></main>`,
			[]string{"  lead", "h2 T #", "  x"}},
		{"note box title is text",
			`<h2 id="a">A</h2><p>one</p><div class="note"><h3 class="title">Note</h3><p>boxed</p></div><p>two</p>`,
			[]string{"h2 A #a", "  one", "  Note", "  boxed", "  two"}},
		{"warning box with id keeps its text under the section",
			`<h2 id="a">A</h2><div class="warning" id="w"><h3>Warning</h3><p>hot</p></div><p>two</p>`,
			[]string{"h2 A #a", "  Warning", "  hot", "  two"}},
		{"blockquote heading is text",
			`<h2 id="a">A</h2><blockquote><h3>Said</h3><p>q</p></blockquote><p>two</p>`,
			[]string{"h2 A #a", "  Said", "  q", "  two"}},
		{"term with own id",
			`<h2 id="a">A</h2><dl><dt id="opt-x">-x</dt><dd>does x</dd></dl>`,
			[]string{"h2 A #a", "  term #opt-x: -x", "  does x"}},
		{"term with leading anchor",
			`<h2 id="a">A</h2><dl><dt><span class="term"><a id="opt-y"></a><code>-y</code></span></dt><dd>does y</dd></dl>`,
			[]string{"h2 A #a", "  term #opt-y: -y", "  does y"}},
		{"term with anchor after text is not",
			`<h2 id="a">A</h2><dl><dt>-z <a id="later"></a>zed</dt><dd>does z</dd></dl>`,
			[]string{"h2 A #a", "  -z zed", "  does z"}},
		{"term without id",
			`<h2 id="a">A</h2><dl><dt>plain</dt><dd>text</dd></dl>`,
			[]string{"h2 A #a", "  plain", "  text"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "sections", sectionList(parsePage(t, "<body>"+tt.src+"</body>")), tt.want)
		})
	}
}

// TestHTMLDefinitionLinks checks that a definition list whose definitions
// are links is content, while a list of links is still navigation.
func TestHTMLDefinitionLinks(t *testing.T) {
	tests := []struct {
		name, src string
		want      []string
	}{
		{"abbreviations", `<div><h2>Abbreviations</h2><dl><dt>ASN</dt><dd><a href="a">Advance Shipping Notice</a></dd>` +
			`<dt>LPN</dt><dd><a href="b">Licence Plate Number</a></dd><dt>WMS</dt><dd><a href="c">Warehouse Management System</a></dd></dl></div>`,
			[]string{"paragraph: ASN", "paragraph: Advance Shipping Notice", "paragraph: LPN", "paragraph: Licence Plate Number",
				"paragraph: WMS", "paragraph: Warehouse Management System"}},
		{"terms that are links are navigation", `<p>text</p><dl><dt><a href="a">Alpha chapter</a></dt><dd><a href="a1">One</a></dd>` +
			`<dt><a href="b">Beta chapter</a></dt><dd><a href="b1">Two</a></dd><dt><a href="c">Gamma chapter</a></dt></dl>`,
			[]string{"paragraph: text"}},
		{"definitions with several links each stay judged", `<p>text</p><dl><dt>See</dt><dd><a href="a">A</a> <a href="b">B</a> <a href="c">C</a></dd></dl>`,
			[]string{"paragraph: text", "paragraph: See"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sameList(t, "blocks", blockList(parsePage(t, "<body>"+tt.src+"</body>")), tt.want)
		})
	}
}

// TestHTMLTermsCorpora counts the defined terms found on the real pages,
// and checks that each term's anchor is an id or name of its page.
func TestHTMLTermsCorpora(t *testing.T) {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		t.Skip("KBC_CORPORA is not set")
	}
	dir := filepath.Join(root, "python-3.11-html")
	if _, err := os.Stat(dir); err != nil {
		t.Skipf("corpus missing: %v", err)
	}
	terms := 0
	for _, p := range []string{"library/os.path.html", "library/functions.html", "glossary.html", "using/cmdline.html"} {
		src, err := os.ReadFile(filepath.Join(dir, p))
		if err != nil {
			t.Fatal(err)
		}
		doc, err := Parse(p, src)
		if err != nil {
			t.Fatal(err)
		}
		ids := pageIDs(src)
		for _, b := range doc.Blocks {
			if b.Anchor == "" {
				continue
			}
			terms++
			if !ids[b.Anchor] {
				t.Errorf("%s:%d: term %q anchor %q is no id of the page", p, b.Line, b.Text, b.Anchor)
			}
			if strings.TrimSpace(b.Text) == "" {
				t.Errorf("%s:%d: empty term", p, b.Line)
			}
		}
	}
	if terms < 100 {
		t.Errorf("only %d terms on four reference pages", terms)
	}
	t.Logf("%d terms", terms)
}
