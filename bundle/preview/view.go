package preview

import (
	"fmt"
	"html/template"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/bundle"
)

// page is what the templates render.
type page struct {
	Query    string
	Searched bool // Query has a word to search for
	Bundle   bundleView
	Hits     []hitView
	Took     string // search time, e.g. "1.2 ms"
	Error    string
	CSS      template.CSS
	Script   template.JS
}

// bundleView is what the page tells of the bundle.
type bundleView struct {
	ID           string
	BuiltAt      string
	Tool         string
	SourceCommit string
	SourceDirty  bool
	Passages     int
	Counts       map[string]int
}

// hitView is one result, ready to print.
type hitView struct {
	Rank          int
	Score         string
	Title         string
	Trail         []string
	Ref           string // path#anchor
	Line, EndLine int
	Status        fresh.Status
	StatusLabel   string
	ReviewBy      string
	Expires       string
	Owner         string
	AlsoAt        []string
	Conflicts     []conflictView // other copies that state other facts
	Snippet       string
	Cut           bool // the snippet is not the whole text
}

// view runs the search for query on h and gathers what the page shows.
func (s *Server) view(h *handle, query string, k int) *page {
	m := h.b.Manifest()
	v := &page{
		Query:  query,
		CSS:    template.CSS(pageCSS),
		Script: template.JS(pageJS),
		Bundle: bundleView{
			ID:           m.BundleID,
			BuiltAt:      "unknown",
			Tool:         m.Tool,
			SourceCommit: m.SourceCommit,
			SourceDirty:  m.SourceDirty,
			Passages:     m.Counts["passages"],
			Counts:       m.Counts,
		},
	}
	if !m.BuiltAt.IsZero() {
		v.Bundle.BuiltAt = m.BuiltAt.UTC().Format(time.RFC3339)
	}
	if strings.TrimSpace(query) == "" {
		return v
	}
	v.Searched = true
	start := time.Now()
	now := s.now()
	hits, err := h.b.Query(query, bundle.SearchOptions{K: k, Audiences: s.audiences, Now: now})
	v.Took = fmt.Sprintf("%.1f ms", float64(time.Since(start).Microseconds())/1000)
	if err != nil {
		v.Error = err.Error()
		return v
	}
	v.Hits = make([]hitView, len(hits))
	for i, hit := range hits {
		v.Hits[i] = newHitView(i+1, hit.Score, &hit.Passage, now, h.dueSoon)
		for _, c := range hit.Conflict {
			cv := conflictView{With: c.With}
			for _, d := range c.Differences {
				cv.Words = append(cv.Words, fmt.Sprintf("“%s” there, “%s” here", d.There, d.Here))
			}
			v.Hits[i].Conflicts = append(v.Hits[i].Conflicts, cv)
		}
	}
	return v
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

func newHitView(rank int, score float64, p *build.Passage, now time.Time, dueSoon fresh.Duration) hitView {
	st := fresh.Info{ReviewBy: p.ReviewBy, Expires: p.Expires}.StatusAt(now, dueSoon)
	hv := hitView{
		Rank:        rank,
		Score:       fmt.Sprintf("%.3f", score),
		Title:       p.Title,
		Trail:       p.Heading,
		Ref:         p.Ref(),
		Line:        p.Line,
		EndLine:     p.EndLine,
		Status:      st,
		StatusLabel: statusLabels[st],
		Owner:       p.Owner,
		AlsoAt:      p.AlsoAt,
	}
	if !p.ReviewBy.IsZero() {
		hv.ReviewBy = p.ReviewBy.UTC().Format(time.DateOnly)
	}
	if p.Expires != nil {
		hv.Expires = p.Expires.UTC().Format(time.DateOnly)
	}
	hv.Snippet, hv.Cut = snippet(p.Text, snippetLines, snippetBytes)
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
