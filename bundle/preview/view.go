package preview

import (
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/bundle"
)

// The pages of the preview, by the path they answer on.
const (
	kindSearch     = "search"
	kindResults    = "results" // the search page's main part alone
	kindStale      = "stale"
	kindDuplicates = "duplicates"
	kindWarnings   = "warnings"
	kindSource     = "source"
)

// routes maps each page's path (a net/http pattern) to its kind.
var routes = map[string]string{
	"/{$}":        kindSearch,
	"/stale":      kindStale,
	"/duplicates": kindDuplicates,
	"/warnings":   kindWarnings,
	"/source":     kindSource,
}

// page is what the templates render.
type page struct {
	Kind   string
	State  string // stateID of what the page shows
	Title  string // of the browser tab
	Part   string // the URL of this page's main part, fetched after a rebuild
	Bundle bundleView
	Nav    navView
	Error  string
	CSS    template.CSS
	Script template.JS

	Search     *searchView
	Stale      *staleView
	Duplicates *duplicatesView
	Warnings   []warningView
	Source     *sourceView
}

// navView is what the links between the pages say.
type navView struct {
	Stale, Divergent, Warnings int
	HasSource                  bool
}

// bundleView is what the page tells of the bundle.
type bundleView struct {
	ID           string
	BuiltAt      string
	Tool         string
	SourceCommit string
	SourceDirty  bool
	Passages     int
	Counts       []countView // by label
}

// countView is one of the manifest's counts, with the words people use.
type countView struct {
	Label string
	N     int
}

// countLabels are the manifest's count keys as the page names them; a key
// not listed here is shown with its underscores as spaces.
var countLabels = map[string]string{
	"passages":            "passages",
	"tokens":              "tokens in passages",
	"documents":           "pages read",
	"empty_documents":     "pages with no text",
	"skipped":             "files skipped",
	"warnings":            "warnings",
	"boilerplate_dropped": "repeated site text dropped",
	"duplicates_removed":  "copies folded into one passage",
	"divergent_copies":    "copies that disagree",
	"stale_documents":     "stale or expired pages", // bundles built before "stale" and "expired" were counted apart
	"secrets_redacted":    "secrets removed",
	"hidden_dropped":      "hidden text dropped",
	"assistant_lints":     "text addressed to an assistant",
	// The names build --json gives the same counts.
	"files":          "files found",
	"empty":          "pages with no text",
	"duplicates":     "copies folded into one passage",
	"divergent":      "copies that disagree",
	"stale":          "stale pages",
	"expired":        "expired pages",
	"secrets":        "secrets removed",
	"hidden":         "hidden text dropped",
	"lints":          "text addressed to an assistant",
	"split_passages": "passages cut from a long block",
	"source_bytes":   "bytes read",
}

// label returns the human name of a count key.
func label(key string) string {
	if l, ok := countLabels[key]; ok {
		return l
	}
	return strings.ReplaceAll(key, "_", " ")
}

// navView counts what the links name, from the reports (so the counts
// agree with the pages they lead to): stale or expired pages judged now,
// divergent pairs, warnings.
func (s *Server) navView(h *handle, warnings int) navView {
	n := navView{Warnings: warnings, HasSource: s.Source != ""}
	if r, _ := h.staleness(); r != nil {
		now := s.now()
		for _, d := range r.Documents {
			if bundle.Visible(d.Audience, s.audiences) {
				if st := d.Info.StatusAt(now, h.dueSoon); st == fresh.Stale || st == fresh.Expired {
					n.Stale++
				}
			}
		}
	}
	if r, _ := h.duplicates(); r != nil {
		n.Divergent = len(r.Divergent)
	}
	return n
}

// view gathers what the page of kind shows for the request's query
// values, and the HTTP status to answer with.
func (s *Server) view(h *handle, ws []warningView, kind string, q url.Values) (*page, int) {
	m := h.b.Manifest()
	v := &page{
		Kind:   kind,
		State:  stateID(m.BundleID, ws),
		CSS:    template.CSS(pageCSS),
		Script: template.JS(pageJS),
		Bundle: bundleView{
			ID:           m.BundleID,
			BuiltAt:      "unknown",
			Tool:         m.Tool,
			SourceCommit: m.SourceCommit,
			SourceDirty:  m.SourceDirty,
			Passages:     m.Counts["passages"],
		},
		Nav: s.navView(h, len(ws)),
	}
	for k, n := range m.Counts {
		v.Bundle.Counts = append(v.Bundle.Counts, countView{label(k), n})
	}
	slices.SortFunc(v.Bundle.Counts, func(a, b countView) int { return strings.Compare(a.Label, b.Label) })
	if !m.BuiltAt.IsZero() {
		v.Bundle.BuiltAt = m.BuiltAt.UTC().Format(time.RFC3339)
	}
	status := http.StatusOK
	switch kind {
	case kindSearch, kindResults:
		v.Kind = kindSearch
		v.Search = s.searchView(h, q)
		v.Title = "Search"
		if v.Search.Query != "" {
			v.Title = v.Search.Query
		}
		v.Part = "/results?" + v.Search.Params.Encode()
		if v.Search.Error != "" {
			status = http.StatusInternalServerError
		}
	case kindStale:
		v.Title, v.Part = "Staleness", "/stale?part=main"
		v.Stale, v.Error = s.staleView(h)
	case kindDuplicates:
		v.Title, v.Part = "Duplicates", "/duplicates?part=main"
		v.Duplicates, v.Error = s.duplicatesView(h)
	case kindWarnings:
		v.Title, v.Part = "Warnings", "/warnings?part=main"
		v.Warnings = ws
	case kindSource:
		v.Title = "Source"
		v.Source, status = s.sourceView(h, q)
		p := url.Values{"part": {"main"}}
		for k, vs := range q {
			p[k] = vs
		}
		p.Set("part", "main")
		v.Part = "/source?" + p.Encode()
	}
	if v.Error != "" && status == http.StatusOK {
		status = http.StatusInternalServerError
	}
	return v, status
}

// searchView is the search page: the query, its filters and the results.
type searchView struct {
	Query    string
	Searched bool // Query has a word to search for
	K        int
	Filter   filter
	Params   url.Values // the query and filters, for links and the refresh
	Hits     []hitView
	More     bool // a filter left out passages, and more may match
	Took     string
	Error    string

	// The choices of the filters' menus.
	Owners, Audiences []string
	Statuses          []statusChoice
	Ks                []int
}

// statusChoice is an option of the status menu.
type statusChoice struct {
	Value, Label string
}

// filter narrows the results to what a writer is looking at. It never
// widens them: the audience filter picks among the audiences the server
// may show.
type filter struct {
	Owner    string
	Status   string // a fresh.Status, or "" for any
	Audience string // "" any, "public" passages without an audience, else one label
	Path     string // a path prefix, e.g. "safety/" or "safety/muster.md"
}

func (f filter) empty() bool { return f == filter{} }

// keep reports whether a hit passes the filter.
func (f filter) keep(h *bundle.Hit) bool {
	if f.Owner != "" && h.Owner != f.Owner {
		return false
	}
	if f.Status != "" && string(h.Status) != f.Status {
		return false
	}
	if f.Path != "" && !strings.HasPrefix(h.Path, f.Path) {
		return false
	}
	switch f.Audience {
	case "":
	case "public":
		return bundle.Visible(h.Audience, nil)
	default:
		return h.Audience != "" && bundle.Visible(h.Audience, []string{f.Audience})
	}
	return true
}

// ks are the numbers of results the page offers.
var ks = []int{5, DefaultResults, 20, MaxResults}

// parseK reads ?k=: DefaultResults when absent or not a number, else
// bounded to 1..MaxResults.
func parseK(s string) int {
	k, err := strconv.Atoi(s)
	if err != nil {
		return DefaultResults
	}
	return min(max(k, 1), MaxResults)
}

// searchView runs the search of q (?q=, ?k= and the filters) on h.
func (s *Server) searchView(h *handle, q url.Values) *searchView {
	sv := &searchView{
		Query: q.Get("q"),
		K:     parseK(q.Get("k")),
		Filter: filter{Owner: q.Get("owner"), Status: q.Get("status"), Audience: q.Get("audience"),
			Path: strings.TrimPrefix(strings.TrimSpace(q.Get("path")), "/")},
		Audiences: s.audiences,
		Ks:        ks,
	}
	if sv.Filter.Audience != "" && sv.Filter.Audience != "public" && !slices.Contains(s.audiences, sv.Filter.Audience) {
		sv.Filter.Audience = "" // not one this server may show: no narrowing to it
	}
	for _, st := range []fresh.Status{fresh.Fresh, fresh.DueSoon, fresh.Stale, fresh.Expired, fresh.Unknown} {
		sv.Statuses = append(sv.Statuses, statusChoice{string(st), statusLabels[st]})
	}
	sv.Owners = h.owners(s.audiences)
	sv.Params = url.Values{"q": {sv.Query}}
	if sv.K != DefaultResults {
		sv.Params.Set("k", strconv.Itoa(sv.K))
	}
	for name, val := range map[string]string{"owner": sv.Filter.Owner, "status": sv.Filter.Status, "audience": sv.Filter.Audience, "path": sv.Filter.Path} {
		if val != "" {
			sv.Params.Set(name, val)
		}
	}
	if strings.TrimSpace(sv.Query) == "" {
		return sv
	}
	sv.Searched = true
	start := time.Now()
	now := s.now()
	hits, more, err := s.query(h, sv.Query, sv.K, sv.Filter, now)
	sv.Took = fmt.Sprintf("%.1f ms", float64(time.Since(start).Microseconds())/1000)
	if err != nil {
		sv.Error = err.Error()
		return sv
	}
	sv.More = more
	sv.Hits = make([]hitView, len(hits))
	for i := range hits {
		sv.Hits[i] = newHitView(i+1, &hits[i], sv.Query, now, h.dueSoon)
		p := url.Values{"id": {hits[i].ID}}
		for k, v := range sv.Params {
			p[k] = v
		}
		// Trusted: every part is query-encoded by url.Values.
		sv.Hits[i].Source = template.URL("/source?" + p.Encode())
	}
	return sv
}

// maxFiltered bounds how many ranked passages a filtered search looks
// through for k that pass.
const maxFiltered = 2000

// query returns the k best hits for query that pass f, as bundle.Query
// ranks them for the server's audiences; more reports that the filter
// stopped looking at maxFiltered passages.
func (s *Server) query(h *handle, query string, k int, f filter, now time.Time) (hits []bundle.Hit, more bool, err error) {
	opts := bundle.SearchOptions{K: k, Audiences: s.audiences, Now: now}
	if f.empty() {
		hits, err = h.b.Query(query, opts)
		return hits, false, err
	}
	for fetch := k * 4; ; fetch *= 4 {
		opts.K = min(fetch, maxFiltered)
		all, err := h.b.Query(query, opts)
		if err != nil {
			return nil, false, err
		}
		hits = hits[:0]
		for i := range all {
			if f.keep(&all[i]) {
				hits = append(hits, all[i])
			}
		}
		if len(hits) >= k || len(all) < opts.K {
			return hits[:min(k, len(hits))], false, nil
		}
		if opts.K == maxFiltered {
			return hits, true, nil
		}
	}
}

// hitView is one result, ready to print.
type hitView struct {
	Rank          int
	ID            string
	Source        template.URL // the source view of the hit, keeping the search to go back to
	Score         string
	Title         []segment
	Trail         [][]segment // the headings under the title
	Ref           string      // path#anchor
	Path          string
	Line, EndLine int
	Status        fresh.Status
	StatusLabel   string
	ReviewBy      string
	Expires       string
	Owner         string
	Audience      string
	AlsoAt        []string
	Conflicts     []conflictView // other copies that state other facts
	Snippet       []segment
	Cut           bool // the snippet is not the whole text
}

// segment is a run of text, marked when it matches the query.
type segment struct {
	Text string
	Mark bool
}

// marked cuts text into segments at the words that match query (see
// bundle.MatchSpans).
func marked(text, query string) []segment {
	var segs []segment
	at := 0
	for _, sp := range bundle.MatchSpans(text, query) {
		if sp.Start > at {
			segs = append(segs, segment{Text: text[at:sp.Start]})
		}
		segs = append(segs, segment{Text: text[sp.Start:sp.End], Mark: true})
		at = sp.End
	}
	if at < len(text) || len(segs) == 0 {
		segs = append(segs, segment{Text: text[at:]})
	}
	return segs
}

// conflictView is a copy that disagrees with a hit, and the differing
// words.
type conflictView struct {
	With  string   // path#anchor of the other copy
	Words []string // e.g. “90 days” there, “30 days” here
}

// statusLabels are the statuses as the page names them.
var statusLabels = map[fresh.Status]string{
	fresh.Fresh:   "fresh",
	fresh.DueSoon: "due soon",
	fresh.Stale:   "stale",
	fresh.Expired: "expired",
	fresh.Unknown: "undated",
}

// trail returns the headings of p under its title: the first heading is
// left out when it only repeats the title (a page's h1 usually does).
func trail(p *build.Passage) []string {
	hs := p.Heading
	if len(hs) > 0 && strings.EqualFold(strings.TrimSpace(hs[0]), strings.TrimSpace(p.Title)) {
		hs = hs[1:]
	}
	return hs
}

func newHitView(rank int, hit *bundle.Hit, query string, now time.Time, dueSoon fresh.Duration) hitView {
	p := &hit.Passage
	st := fresh.Info{ReviewBy: p.ReviewBy, Expires: p.Expires}.StatusAt(now, dueSoon)
	hv := hitView{
		Rank:        rank,
		ID:          p.ID,
		Score:       fmt.Sprintf("%.3f", hit.Score),
		Title:       marked(p.Title, query),
		Ref:         p.Ref(),
		Path:        p.Path,
		Line:        p.Line,
		EndLine:     p.EndLine,
		Status:      st,
		StatusLabel: statusLabels[st],
		Owner:       p.Owner,
		Audience:    p.Audience,
		AlsoAt:      p.AlsoAt,
	}
	for _, hd := range trail(p) {
		hv.Trail = append(hv.Trail, marked(hd, query))
	}
	if !p.ReviewBy.IsZero() {
		hv.ReviewBy = p.ReviewBy.UTC().Format(time.DateOnly)
	}
	if p.Expires != nil {
		hv.Expires = p.Expires.UTC().Format(time.DateOnly)
	}
	var text string
	text, hv.Cut = snippet(p.Text, snippetLines, snippetBytes)
	hv.Snippet = marked(text, query)
	for _, c := range hit.Conflict {
		cv := conflictView{With: c.With}
		for _, d := range c.Differences {
			cv.Words = append(cv.Words, fmt.Sprintf("“%s” there, “%s” here", d.There, d.Here))
		}
		hv.Conflicts = append(hv.Conflicts, cv)
	}
	return hv
}

// snippet returns the first lines of text, at most maxLines lines and
// about maxBytes bytes (cut at a rune boundary), and whether it cut.
func snippet(text string, maxLines, maxBytes int) (string, bool) {
	end := len(text)
	for i, n := 0, 0; i < len(text); i++ {
		if text[i] == '\n' {
			if n++; n == maxLines {
				end = i
				break
			}
		}
	}
	if end > maxBytes {
		end = maxBytes
		for end > 0 && !utf8.RuneStart(text[end]) {
			end--
		}
	}
	return strings.TrimRight(text[:end], " \n"), end < len(text)
}
