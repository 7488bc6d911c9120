package qsets

import (
	"bufio"
	"bytes"
	"flag"
	"os"
	"path"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

func parseFile(t *testing.T, name string) *Page {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", "site", name))
	if err != nil {
		t.Fatal(err)
	}
	p, err := ParsePage(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// TestSection checks the section rule on hand-made pages: Sphinx-style
// <section> wrappers, flat headings with anchors before or inside them,
// DocBook's titlepage divs, admonition headings, empty elements.
func TestSection(t *testing.T) {
	cases := []struct {
		page, frag, want string // want "" means no section
	}{
		// Sphinx-style: <section id> wraps each heading.
		{"pumps.html", "pumps", "pumps"},
		{"pumps.html", "pumps-intro", "pumps"},
		{"pumps.html", "priming", "priming"},
		{"pumps.html", "prime-label", "priming"}, // empty span before the heading
		{"pumps.html", "prime-step", "priming"},
		{"pumps.html", "pump.prime", "priming"},  // an API signature's id
		{"pumps.html", "prime-note", "priming"},  // the admonition box itself
		{"pumps.html", "in-note", "priming"},     // "Careful" in a note starts no section
		{"pumps.html", "after-note", "priming"},  // nor does it end Priming
		{"pumps.html", "back-in-pumps", "pumps"}, // after a subsection, back in its parent
		{"pumps.html", "seal-text", "seals"},     // a warning's <h2> starts no section
		{"pumps.html", "side", ""},               // sidebar: no section heading before it
		{"pumps.html", "before-any", ""},         // before any heading
		{"pumps.html", "nosuchid", ""},           //
		// Flat headings.
		{"ref/depot.html", "welcome", "depot"},         // the heading's own id
		{"ref/depot.html", "shift-times", "shifts"},    // <a name> just before the heading
		{"ref/depot.html", "shifts", "shifts"},         // a link to that <a name>
		{"ref/depot.html", "break-rule", "breaks"},     // <a id> inside the heading
		{"ref/depot.html", "rota-text", "rota"},        // empty <div id> just before the heading
		{"ref/depot.html", "rota", "rota"},             // the empty div itself: Rota's anchor
		{"ref/depot.html", "loose-text", "wrapper"},    // no anchor at all: nearest enclosing id
		{"ref/depot.html", "dock-text", "docks"},       // <section id> whose first heading it is
		{"ref/depot.html", "docks-top", "docks"},       // empty div before the heading, in the section
		{"ref/depot.html", "load-text", "loading"},     // DocBook: <a name> inside a titlepage heading
		{"ref/depot.html", "unload-text", "unloading"}, // DocBook: the sect1 div's id
		{"ref/depot.html", "yard-text", "yard"},        // the section div's first heading, after text
	}
	pages := map[string]*Page{}
	for _, c := range cases {
		p := pages[c.page]
		if p == nil {
			p = parseFile(t, c.page)
			pages[c.page] = p
		}
		got, ok := p.Section(c.frag)
		if ok != (c.want != "") || got != c.want {
			t.Errorf("%s#%s: section %q (ok %v), want %q", c.page, c.frag, got, ok, c.want)
		}
		if ok && !p.Has(got) {
			t.Errorf("%s#%s: section anchor %q is no id on the page", c.page, c.frag, got)
		}
	}
}

func TestHeadings(t *testing.T) {
	p := parseFile(t, "pumps.html")
	var got []string
	for _, h := range p.Headings() {
		leaf := ""
		if h.Leaf {
			leaf = " leaf"
		}
		got = append(got, h.Text+"#"+h.Anchor+leaf)
	}
	want := "Reefer pumps#pumps|Priming#priming leaf|Seals#seals leaf"
	if s := strings.Join(got, "|"); s != want {
		t.Errorf("headings %s, want %s", s, want)
	}
}

// TestPythonIndex reads a small hand-made general index: terms, sub-entries
// ("term, subterm"; a parenthesised one replaces the term's own), extra
// links shown as [1], a missing page, a missing id, and the all-in-one
// page that repeats the letter pages (left out).
func TestPythonIndex(t *testing.T) {
	s, err := PythonIndex(os.DirFS("testdata/site"), 0)
	if err != nil {
		t.Fatal(err)
	}
	if s.Skipped != 2 {
		t.Errorf("skipped %d targets, want 2 (missing page, missing id): %q", s.Skipped, s.Problems)
	}
	if s.SkippedQueries != 2 {
		t.Errorf("%d queries without a judged section, want 2", s.SkippedQueries)
	}
	dir := t.TempDir()
	if err := Write(dir, s); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"python-index.queries.tsv", "python-index.qrels", "python-index-page.qrels"} {
		golden(t, filepath.Join(dir, name), filepath.Join("testdata", "golden", name))
	}
}

func golden(t *testing.T, got, want string) {
	t.Helper()
	g, err := os.ReadFile(got)
	if err != nil {
		t.Fatal(err)
	}
	if *update {
		if err := os.MkdirAll(filepath.Dir(want), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(want, g, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	w, err := os.ReadFile(want)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(g, w) {
		t.Errorf("%s differs from %s (rewrite with -update):\n%s", filepath.Base(got), want, g)
	}
}

func TestHandbookAnchorsExist(t *testing.T) {
	s, err := Handbook("../../../../examples/queries.jsonl")
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Queries) != 25 {
		t.Errorf("%d handbook queries, want 25", len(s.Queries))
	}
	for _, q := range s.Queries {
		for _, d := range q.Sections {
			p, _, _ := strings.Cut(d, "#")
			if _, err := os.Stat(filepath.Join("../../../../examples/handbook", p)); err != nil {
				t.Errorf("%s: %s: %v", q.ID, d, err)
			}
		}
	}
}

// TestCorpora builds the sets from the real corpora ($KBC_CORPORA) and
// checks that the counts are sane and that every judged docid is a real
// id on a real page.
func TestCorpora(t *testing.T) {
	dir := os.Getenv("KBC_CORPORA")
	if dir == "" {
		t.Skip("KBC_CORPORA is not set: fetch the corpora with ../shared/corpora/get-corpora.sh DIR and set KBC_CORPORA=DIR")
	}
	sets, errs := All(dir, "", 1500)
	for _, err := range errs {
		t.Error(err)
	}
	min := map[string]int{"python-index": 1200, "python-faq": 150, "git-glossary": 80, "git-options": 1000}
	for _, s := range sets {
		t.Run(s.Name, func(t *testing.T) {
			st := s.Stats()
			t.Logf("%d queries, %d with a judged section, %d section and %d page judgements, %d targets skipped",
				len(s.Queries), st.Judged, st.Sections, st.Pages, s.Skipped)
			if st.Judged < min[s.Name] || len(s.Queries) > 2000 {
				t.Errorf("%d judged queries of %d, want at least %d and at most 2000 queries", st.Judged, len(s.Queries), min[s.Name])
			}
			if s.Skipped*50 > st.Sections {
				t.Errorf("%d targets skipped, more than 2%% of %d", s.Skipped, st.Sections)
			}
			root := filepath.Join(dir, s.Corpus)
			c := &pages{fsys: os.DirFS(root), m: map[string]*Page{}}
			for _, q := range s.Queries {
				if strings.ContainsAny(q.Text, "\t\n") || q.Text == "" {
					t.Errorf("%s: bad query text %q", q.ID, q.Text)
				}
				for _, d := range q.Sections {
					p, a, _ := strings.Cut(d, "#")
					pg, err := c.get(p)
					if err != nil {
						t.Errorf("%s: %s: %v", q.ID, d, err)
					} else if !pg.Has(a) {
						t.Errorf("%s: %s: no id %q on %s", q.ID, d, a, p)
					}
				}
				for _, p := range q.Pages {
					if path.Clean(p) != p || strings.HasPrefix(p, "../") {
						t.Errorf("%s: page %q is not a clean relative path", q.ID, p)
					}
				}
			}
		})
	}
}

// FuzzSection parses any input and resolves every id in it: no panic, and
// a section found is a real id on the page.
func FuzzSection(f *testing.F) {
	for _, name := range []string{"pumps.html", "ref/depot.html", "genindex-A.html"} {
		b, err := os.ReadFile(filepath.Join("testdata", "site", name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Add([]byte(`<section id=a><h2 id=b>x</h2><p id=c>y</section><a name=d></a><h1>z</h1>`))
	f.Fuzz(func(t *testing.T, b []byte) {
		p, err := ParsePage(bufio.NewReader(bytes.NewReader(b)))
		if err != nil {
			return
		}
		for id := range p.ids {
			if a, ok := p.Section(id); ok && !p.Has(a) {
				t.Fatalf("section of %q is %q, no id on the page", id, a)
			}
		}
		p.Headings()
	})
}

// TestSmallSets builds the FAQ, glossary and option sets from hand-made
// pages.
func TestSmallSets(t *testing.T) {
	show := func(s *Set) string {
		var b strings.Builder
		for _, q := range s.Queries {
			b.WriteString(q.Text + " -> " + strings.Join(q.Sections, ",") + " | " + strings.Join(q.Pages, ",") + "\n")
		}
		return b.String()
	}
	faq, err := PythonFAQ(os.DirFS("testdata/site"))
	if err != nil {
		t.Fatal(err)
	}
	// The FAQ's contents page is left out; category headings with
	// questions below them are not questions; the note's heading is none.
	want := `Where do I park? -> faq/general.html#where-do-i-park | faq/general.html
Who signs me in? -> faq/general.html#id1 | faq/general.html
Can I bring a guest? -> faq/general.html#can-i-bring-a-guest | faq/general.html
`
	if got := show(faq); got != want {
		t.Errorf("python-faq:\n%s\nwant:\n%s", got, want)
	}
	gl, err := GitGlossary(os.DirFS("testdata/git"))
	if err != nil {
		t.Fatal(err)
	}
	want = `bay -> gitglossary.html#_description | gitglossary.html
cold chain -> gitglossary.html#_description | gitglossary.html
`
	if got := show(gl); got != want {
		t.Errorf("git-glossary:\n%s\nwant:\n%s", got, want)
	}
	opt, err := GitOptions(os.DirFS("testdata/git"), 0)
	if err != nil {
		t.Fatal(err)
	}
	// "--" and "<path>" are no options; --quiet sits under a heading no
	// link lands on: page judgement only, and counted.
	want = `git frob -f -> git-frob.html#_options | git-frob.html
git frob --force -> git-frob.html#_options | git-frob.html
git frob --color[=<when>] -> git-frob.html#_output_options | git-frob.html
git frob --quiet ->  | git-frob.html
`
	if got := show(opt); got != want {
		t.Errorf("git-options:\n%s\nwant:\n%s", got, want)
	}
	if opt.Skipped != 1 || opt.SkippedQueries != 1 {
		t.Errorf("git-options: skipped %d targets, %d queries; want 1, 1", opt.Skipped, opt.SkippedQueries)
	}
}
