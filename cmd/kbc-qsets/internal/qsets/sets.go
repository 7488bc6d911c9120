package qsets

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"hash/fnv"
	"io/fs"
	"math"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"github.com/kbc-project/kbc/bundle"
	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// Set is one question set: queries and their relevant documents at section
// level (docid path#anchor) and at page level (docid path), paths relative
// to the corpus root, slash-separated.
type Set struct {
	Name    string
	Corpus  string // folder the docids are relative to
	Queries []Query
	// Skipped counts link targets left out because no section could be
	// found for them (missing page, missing id, no heading before it);
	// SkippedQueries the queries left without any judged section.
	Skipped        int
	SkippedQueries int
	Note           string   // how the set was built, for the printout
	Problems       []string // why targets were skipped
}

// Query is one question with its judgements.
type Query struct {
	ID       string
	Text     string
	Sections []string // path#anchor, sorted, unique
	Pages    []string // path, sorted, unique
}

// pages caches parsed pages of one corpus.
type pages struct {
	fsys fs.FS
	m    map[string]*Page
}

func (c *pages) get(p string) (*Page, error) {
	if pg, ok := c.m[p]; ok {
		if pg == nil {
			return nil, fs.ErrNotExist
		}
		return pg, nil
	}
	f, err := c.fsys.Open(p)
	if err != nil {
		c.m[p] = nil
		return nil, err
	}
	defer f.Close()
	pg, err := ParsePage(bufio.NewReader(f))
	if err != nil {
		c.m[p] = nil
		return nil, fmt.Errorf("%s: %w", p, err)
	}
	c.m[p] = pg
	return pg, nil
}

// resolve maps a link from page `from` to (section docid, page docid). A
// target without a fragment, or one no section holds, has no section docid.
func (c *pages) resolve(from, href string) (section, page string, err error) {
	target, frag, _ := strings.Cut(href, "#")
	target, _, _ = strings.Cut(target, "?")
	if u, err := url.PathUnescape(target); err == nil {
		target = u
	}
	if u, err := url.PathUnescape(frag); err == nil {
		frag = u
	}
	if strings.Contains(target, ":") || strings.HasPrefix(target, "/") {
		return "", "", fmt.Errorf("%s: link %q leaves the corpus", from, href)
	}
	p := from
	if target != "" {
		p = path.Join(path.Dir(from), target)
	}
	if strings.HasPrefix(p, "../") {
		return "", "", fmt.Errorf("%s: link %q leaves the corpus", from, href)
	}
	pg, err := c.get(p)
	if err != nil {
		return "", "", fmt.Errorf("%s: link %q: %w", from, href, err)
	}
	if frag == "" {
		return "", p, nil
	}
	a, ok := pg.Section(frag)
	if !ok {
		if !pg.Has(frag) {
			return "", p, fmt.Errorf("%s: link %q: no element with id %q", from, href, frag)
		}
		return "", p, fmt.Errorf("%s: link %q: no section anchor holds %q", from, href, frag)
	}
	return p + "#" + a, p, nil
}

// indexEntry is one line of a back-of-book index.
type indexEntry struct {
	text  string
	hrefs []string
}

// PythonIndex builds the set from a Sphinx general index (genindex-*.html,
// one page per letter): every entry and sub-entry with a link is a query,
// written as the index shows it ("term, subterm"; a parenthesised
// sub-entry follows its term after a space). When there are more than
// limit entries, a deterministic sample of about limit is kept (see
// sampled).
func PythonIndex(fsys fs.FS, limit int) (*Set, error) {
	names, err := fs.Glob(fsys, "genindex-*.html")
	if err != nil {
		return nil, err
	}
	names = slices.DeleteFunc(names, func(n string) bool { return n == "genindex-all.html" })
	if len(names) == 0 {
		return nil, fmt.Errorf("no genindex-*.html pages")
	}
	sort.Strings(names)
	seen := map[string]bool{}
	type located struct {
		indexEntry
		from string
	}
	var all []located
	for _, n := range names {
		b, err := fs.ReadFile(fsys, n)
		if err != nil {
			return nil, err
		}
		root, err := html.Parse(bytes.NewReader(b))
		if err != nil {
			return nil, fmt.Errorf("%s: %w", n, err)
		}
		for _, e := range indexEntries(root) {
			if seen[e.text] {
				continue
			}
			seen[e.text] = true
			all = append(all, located{e, n})
		}
	}
	set := &Set{Name: "python-index", Corpus: "python-3.11-html"}
	var kept []located
	for _, e := range all {
		if sampled(e.text, limit, len(all)) {
			kept = append(kept, e)
		}
	}
	set.Note = sampleNote(len(kept), len(all), "index entries")
	c := &pages{fsys: fsys, m: map[string]*Page{}}
	for _, e := range kept {
		q := Query{Text: e.text}
		for _, h := range e.hrefs {
			s, p, err := c.resolve(e.from, h)
			if err != nil {
				set.Skipped++
				set.Problems = append(set.Problems, err.Error())
			}
			if s != "" {
				q.Sections = append(q.Sections, s)
			}
			if p != "" {
				q.Pages = append(q.Pages, p)
			}
		}
		set.add(q)
	}
	return set, nil
}

// sampled reports whether an item with this text is kept when about limit
// of total items are wanted (limit 0: all): its FNV-1a 64 hash falls in the
// first limit/total of the range, so one item's fate does not depend on
// the others and the sample stays put when the corpus changes elsewhere.
func sampled(text string, limit, total int) bool {
	if limit <= 0 || total <= limit {
		return true
	}
	h := fnv.New64a()
	h.Write([]byte(text))
	return float64(h.Sum64()) < float64(limit)/float64(total)*math.Exp2(64)
}

func sampleNote(kept, total int, what string) string {
	if kept == total {
		return fmt.Sprintf("all %d %s", total, what)
	}
	return fmt.Sprintf("%d of %d %s (sample by FNV-1a hash of the text)", kept, total, what)
}

// add appends q with its judgements sorted and unique, numbering it; a
// query with no judgement at all is counted and left out.
func (s *Set) add(q Query) {
	slices.Sort(q.Sections)
	q.Sections = slices.Compact(q.Sections)
	slices.Sort(q.Pages)
	q.Pages = slices.Compact(q.Pages)
	if len(q.Sections) == 0 {
		s.SkippedQueries++
		if len(q.Pages) == 0 {
			return
		}
	}
	q.Text = strings.Join(strings.Fields(q.Text), " ")
	q.ID = fmt.Sprintf("%s-%04d", s.Name, len(s.Queries)+1)
	s.Queries = append(s.Queries, q)
}

// indexEntries reads the entries of a Sphinx index table: each <li> in a
// table.indextable; its term is its text before any nested list, its links
// those before the nested list; sub-entries are the nested <li>s.
func indexEntries(root *html.Node) []indexEntry {
	var out []indexEntry
	var visit func(n *html.Node, inTable bool)
	var item func(li *html.Node, parent string)
	item = func(li *html.Node, parent string) {
		var text strings.Builder
		var hrefs []string
		var subs []*html.Node
		for c := li.FirstChild; c != nil; c = c.NextSibling {
			if c.Type == html.ElementNode && (c.DataAtom == atom.Ul || c.DataAtom == atom.Dl) {
				for s := c.FirstChild; s != nil; s = s.NextSibling {
					if s.Type == html.ElementNode && (s.DataAtom == atom.Li || s.DataAtom == atom.Dt) {
						subs = append(subs, s)
					}
				}
				continue
			}
			if c.Type == html.ElementNode && c.DataAtom == atom.A {
				if h := attr(c, "href"); h != "" {
					hrefs = append(hrefs, h)
				}
				// Further links are shown as [1], [2]: not part of the term.
				if len(hrefs) > 1 {
					continue
				}
			}
			if c.Type == html.TextNode && strings.TrimSpace(c.Data) == "," && len(hrefs) > 0 {
				continue
			}
			text.WriteString(" " + Text(c))
		}
		term := strings.TrimSpace(strings.Join(strings.Fields(text.String()), " "))
		term = strings.TrimRight(term, ", ")
		full := term
		if parent != "" {
			if strings.HasPrefix(term, "(") {
				// "f() (in module a)" with sub-entry "(in module b)"
				// reads "f() (in module b)".
				base := parent
				if i := strings.LastIndex(base, " ("); i > 0 && strings.HasSuffix(base, ")") {
					base = base[:i]
				}
				full = base + " " + term
			} else {
				full = parent + ", " + term
			}
		}
		if len(hrefs) > 0 && term != "" {
			out = append(out, indexEntry{text: full, hrefs: hrefs})
		}
		for _, s := range subs {
			item(s, full)
		}
	}
	visit = func(n *html.Node, inTable bool) {
		if n.Type == html.ElementNode {
			if n.DataAtom == atom.Table && hasClass(n, "indextable") {
				inTable = true
			}
			if inTable && n.DataAtom == atom.Li {
				item(n, "")
				return
			}
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			visit(c, inTable)
		}
	}
	visit(root, false)
	return out
}

// PythonFAQ builds the set from the FAQ pages (faq/*.html but the FAQ's
// own contents page): every heading of a section with no subsections,
// below the page title, is a question; its section is the relevant one.
func PythonFAQ(fsys fs.FS) (*Set, error) {
	names, err := fs.Glob(fsys, "faq/*.html")
	if err != nil {
		return nil, err
	}
	if len(names) == 0 {
		return nil, fmt.Errorf("no faq/*.html pages")
	}
	sort.Strings(names)
	set := &Set{Name: "python-faq", Corpus: "python-3.11-html", Note: "FAQ question headings"}
	for _, n := range names {
		if n == "faq/index.html" {
			continue
		}
		b, err := fs.ReadFile(fsys, n)
		if err != nil {
			return nil, err
		}
		pg, err := ParsePage(bytes.NewReader(b))
		if err != nil {
			return nil, fmt.Errorf("%s: %w", n, err)
		}
		for _, h := range pg.Headings() {
			if h.Level == 1 || !h.Leaf {
				continue
			}
			q := Query{Text: h.Text, Pages: []string{n}}
			if h.Anchor == "" {
				set.Skipped++
			} else {
				q.Sections = []string{n + "#" + h.Anchor}
			}
			set.add(q)
		}
	}
	return set, nil
}

// GitGlossary builds the set from gitglossary.html: each defined term
// (a <dt> holding an anchor def_*) is a query; the section holding its
// definition is the relevant one.
func GitGlossary(fsys fs.FS) (*Set, error) {
	const name = "gitglossary.html"
	b, err := fs.ReadFile(fsys, name)
	if err != nil {
		return nil, err
	}
	root, err := html.Parse(bytes.NewReader(b))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	pg, err := ParsePage(bytes.NewReader(b))
	if err != nil {
		return nil, err
	}
	set := &Set{Name: "git-glossary", Corpus: "git-2.39-html", Note: "gitglossary terms"}
	var visit func(n *html.Node)
	visit = func(n *html.Node) {
		if n.Type == html.ElementNode && n.DataAtom == atom.Dt {
			var id string
			var find func(x *html.Node)
			find = func(x *html.Node) {
				for c := x.FirstChild; c != nil && id == ""; c = c.NextSibling {
					if c.Type == html.ElementNode {
						if v := attr(c, "id"); strings.HasPrefix(v, "def_") {
							id = v
						}
						find(c)
					}
				}
			}
			find(n)
			if id != "" {
				q := Query{Text: Text(n), Pages: []string{name}}
				if a, ok := pg.Section(id); ok {
					q.Sections = []string{name + "#" + a}
				} else {
					set.Skipped++
				}
				set.add(q)
			}
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			visit(c)
		}
	}
	visit(root)
	return set, nil
}

// Handbook converts a JSON Lines file of {"query", "expect": "path#anchor"}
// lines into a set. Anchors are taken as written; see CheckAnchors.
func Handbook(file string) (*Set, error) {
	b, err := os.ReadFile(file)
	if err != nil {
		return nil, err
	}
	set := &Set{Name: "handbook", Corpus: "handbook", Note: "hand-written questions (" + filepath.Base(file) + ")"}
	for i, line := range bytes.Split(b, []byte("\n")) {
		if len(bytes.TrimSpace(line)) == 0 {
			continue
		}
		var v struct {
			Query  string `json:"query"`
			Expect string `json:"expect"`
		}
		if err := json.Unmarshal(line, &v); err != nil {
			return nil, fmt.Errorf("%s:%d: %v", file, i+1, err)
		}
		if v.Query == "" || v.Expect == "" {
			return nil, fmt.Errorf("%s:%d: want \"query\" and \"expect\"", file, i+1)
		}
		p, _, _ := strings.Cut(v.Expect, "#")
		set.add(Query{Text: v.Query, Sections: []string{v.Expect}, Pages: []string{p}})
	}
	return set, nil
}

// Uncited returns the section docids judged in s that no passage of the
// bundle in dir stands for (bundle.DocID at section level), sorted: a
// section the bundle folds into the passage of the one before it, or whose
// anchor it does not find, can never be retrieved by its own docid.
func Uncited(dir string, s *Set) ([]string, error) {
	ps, err := bundle.ReadPassages(dir)
	if err != nil {
		return nil, err
	}
	have := make(map[string]bool, len(ps))
	for i := range ps {
		have[bundle.DocID(&ps[i], bundle.LevelSection)] = true
	}
	var out []string
	for _, q := range s.Queries {
		for _, d := range q.Sections {
			if !have[d] {
				out = append(out, q.ID+" "+d)
			}
		}
	}
	return out, nil
}

// All builds every set whose corpus is present: python-index and
// python-faq from corpora/python-3.11-html, git-glossary from
// corpora/git-2.39-html and git-options, handbook from the handbook file ("" skips it). A
// set that cannot be built is reported in errs; the others are returned.
func All(corpora, handbook string, limit int) (sets []*Set, errs []error) {
	try := func(s *Set, err error) {
		if err != nil {
			errs = append(errs, err)
			return
		}
		sets = append(sets, s)
	}
	if corpora != "" {
		corpus := func(name string) fs.FS {
			dir := filepath.Join(corpora, name)
			if _, err := os.Stat(dir); err != nil {
				errs = append(errs, err)
				return nil
			}
			return os.DirFS(dir)
		}
		if py := corpus("python-3.11-html"); py != nil {
			try(PythonIndex(py, limit))
			try(PythonFAQ(py))
		}
		if git := corpus("git-2.39-html"); git != nil {
			try(GitGlossary(git))
			try(GitOptions(git, limit))
		}
	}
	if handbook != "" {
		try(Handbook(handbook))
	}
	return sets, errs
}

// Stats counts judgements.
type Stats struct{ Judged, Sections, Pages int }

// Stats counts the queries with a section judgement and the judgements.
func (s *Set) Stats() Stats {
	var st Stats
	for _, q := range s.Queries {
		if len(q.Sections) > 0 {
			st.Judged++
		}
		st.Sections += len(q.Sections)
		st.Pages += len(q.Pages)
	}
	return st
}

// GitOptions builds the set from the command pages (git-*.html): each
// command-line option the OPTIONS lists define (a <dt> whose text starts
// with "-", but not the bare "--" separator) is a query "git CMD OPTION", as a user would type it; the
// section that holds the option's entry is the relevant one. About limit
// are kept (see sampled).
func GitOptions(fsys fs.FS, limit int) (*Set, error) {
	names, err := fs.Glob(fsys, "git-*.html")
	if err != nil {
		return nil, err
	}
	if len(names) == 0 {
		return nil, fmt.Errorf("no git-*.html pages")
	}
	sort.Strings(names)
	type option struct {
		text, page, anchor string
	}
	var all []option
	seen := map[string]bool{}
	for _, n := range names {
		b, err := fs.ReadFile(fsys, n)
		if err != nil {
			return nil, err
		}
		pg, err := ParsePage(bytes.NewReader(b))
		if err != nil {
			return nil, fmt.Errorf("%s: %w", n, err)
		}
		cmd := strings.Replace(strings.TrimSuffix(n, ".html"), "-", " ", 1)
		pg.each(func(x *html.Node) {
			if x.DataAtom != atom.Dt {
				return
			}
			t := Text(x)
			if !strings.HasPrefix(t, "-") || strings.Trim(t, "-") == "" || seen[cmd+" "+t] {
				return
			}
			seen[cmd+" "+t] = true
			a := ""
			if h := pg.sectionOf(x); h != nil {
				a = pg.anchor(h)
			}
			all = append(all, option{cmd + " " + t, n, a})
		})
	}
	set := &Set{Name: "git-options", Corpus: "git-2.39-html"}
	kept := 0
	for _, o := range all {
		if !sampled(o.text, limit, len(all)) {
			continue
		}
		kept++
		q := Query{Text: o.text, Pages: []string{o.page}}
		if o.anchor != "" {
			q.Sections = []string{o.page + "#" + o.anchor}
		} else {
			set.Skipped++
			set.Problems = append(set.Problems, fmt.Sprintf("%s: no section anchor for option %q", o.page, o.text))
		}
		set.add(q)
	}
	set.Note = sampleNote(kept, len(all), "command-line options")
	return set, nil
}
