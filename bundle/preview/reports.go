package preview

import (
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"html/template"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/build/secrets"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/agechart"
	"github.com/kbc-project/kbc/sources"
)

// maxReport bounds the size of a report the preview reads; the duplicate
// report of a million-passage bundle is far below it.
const maxReport = 256 << 20

// readReport decodes the report at name (a bundle.*JSON path) inside the
// bundle into v; found is false when the bundle has none.
func (h *handle) readReport(name string, v any) (found bool, err error) {
	p := filepath.Join(h.dir, filepath.FromSlash(name))
	f, err := os.Open(p)
	if errors.Is(err, fs.ErrNotExist) {
		return false, nil
	}
	if err != nil {
		return false, err
	}
	defer f.Close()
	if err := json.NewDecoder(io.LimitReader(f, maxReport)).Decode(v); err != nil {
		return true, fmt.Errorf("%s: %w", p, err)
	}
	return true, nil
}

// staleness returns the bundle's staleness report, read once; nil when
// it has none.
func (h *handle) staleness() (*build.StalenessReport, error) {
	h.staleOnce.Do(func() {
		var r build.StalenessReport
		found, err := h.readReport(bundle.StalenessJSON, &r)
		if found && err == nil {
			h.stale = &r
		}
		h.staleErr = err
	})
	return h.stale, h.staleErr
}

// owners returns the owners of the pages the server may show, sorted, for
// the owner filter; none when the bundle has no staleness report.
func (h *handle) owners(audiences []string) []string {
	r, _ := h.staleness()
	if r == nil {
		return nil
	}
	var out []string
	for _, d := range r.Documents {
		if d.Owner != "" && bundle.Visible(d.Audience, audiences) {
			out = append(out, d.Owner)
		}
	}
	slices.Sort(out)
	return slices.Compact(out)
}

// staleView is the staleness page: the chart and one row per page, worst
// first, judged again at the time of the request.
type staleView struct {
	Chart  template.HTML // agechart's SVG, which escapes every name it draws
	Counts []countView
	Rows   []staleRow
	Found  bool // the bundle has a staleness report
	Hidden int  // pages left out for their audience
}

type staleRow struct {
	Status      fresh.Status
	StatusLabel string
	Owner       string
	Title       string
	Path        string
	Updated     string
	Reviewed    string
	From        string // where the updated date came from
	ReviewBy    string
	Expires     string
	When        string // "12 days overdue", "due in 9 days"
}

// staleView reads the staleness report and judges each page's status at
// the server's clock with the bundle's due-soon window, as results are.
func (s *Server) staleView(h *handle) (*staleView, string) {
	r, err := h.staleness()
	if err != nil {
		return nil, err.Error()
	}
	v := &staleView{Found: r != nil}
	if r == nil {
		return v, ""
	}
	now := s.now()
	counts := map[fresh.Status]int{}
	byOwner := map[string][]agechart.Page{}
	for _, d := range r.Documents {
		if !bundle.Visible(d.Audience, s.audiences) {
			v.Hidden++
			continue
		}
		st := d.Info.StatusAt(now, h.dueSoon)
		counts[st]++
		row := staleRow{Status: st, StatusLabel: statusLabels[st], Owner: d.Owner, Title: d.Title, Path: d.Path,
			Updated: day(d.Updated), From: d.UpdatedSource, ReviewBy: day(d.ReviewBy)}
		if d.SetAside != "" {
			row.From = "set aside: " + d.SetAside
		}
		if d.Reviewed != nil {
			row.Reviewed = day(*d.Reviewed)
		}
		due := d.ReviewBy
		if d.Expires != nil {
			row.Expires = day(*d.Expires)
			if st == fresh.Expired || d.Expires.Before(due) {
				due = *d.Expires
			}
		}
		if !due.IsZero() {
			switch days := daysBetween(due, now); {
			case st == fresh.Stale || st == fresh.Expired:
				row.When = plural(max(days, 0), "day") + " overdue"
			case st == fresh.DueSoon:
				row.When = "due in " + plural(max(-days, 0), "day")
			}
		}
		v.Rows = append(v.Rows, row)
		age := -1
		if last := lastTouched(d.Info); !last.IsZero() {
			age = max(int(now.Sub(last).Hours()/24), 0)
		}
		byOwner[d.Owner] = append(byOwner[d.Owner], agechart.Page{AgeDays: age, Status: agechart.Status(st), Title: d.Title})
	}
	// Worst first, then by owner and path.
	slices.SortStableFunc(v.Rows, func(a, b staleRow) int {
		return cmp.Or(cmp.Compare(a.Status.Severity(), b.Status.Severity()), strings.Compare(a.Owner, b.Owner), strings.Compare(a.Path, b.Path))
	})
	for _, st := range []fresh.Status{fresh.Expired, fresh.Stale, fresh.DueSoon, fresh.Fresh, fresh.Unknown} {
		v.Counts = append(v.Counts, countView{statusLabels[st], counts[st]})
	}
	v.Chart = template.HTML(agechart.SVG(chartRows(byOwner), agechart.Options{Title: "Page age by owner and status", ID: "stale-chart"}))
	return v, ""
}

// chartRows orders the owners' bands by their worst page, then by name.
func chartRows(byOwner map[string][]agechart.Page) []agechart.Row {
	var rows []agechart.Row
	for o, ps := range byOwner {
		rows = append(rows, agechart.Row{Owner: o, Pages: ps})
	}
	worst := func(r agechart.Row) int {
		w := 9
		for _, p := range r.Pages {
			w = min(w, fresh.Status(p.Status).Severity())
		}
		return w
	}
	slices.SortFunc(rows, func(a, b agechart.Row) int {
		return cmp.Or(cmp.Compare(worst(a), worst(b)), strings.Compare(a.Owner, b.Owner))
	})
	return rows
}

// lastTouched is the later of a page's updated and reviewed dates.
func lastTouched(in fresh.Info) time.Time {
	t := in.Updated
	if in.Reviewed != nil && in.Reviewed.After(t) {
		t = *in.Reviewed
	}
	return t
}

// daysBetween counts the calendar days (UTC) from a to b; negative when b
// is before a.
func daysBetween(a, b time.Time) int {
	a, b = a.UTC(), b.UTC()
	da := time.Date(a.Year(), a.Month(), a.Day(), 0, 0, 0, 0, time.UTC)
	db := time.Date(b.Year(), b.Month(), b.Day(), 0, 0, 0, 0, time.UTC)
	return int(db.Sub(da).Hours() / 24)
}

// plural writes n and the noun, with an s unless n is 1.
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}

func day(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format(time.DateOnly)
}

// duplicatesView is the duplicates page: divergent copies side by side,
// then the clusters of copies folded into one passage.
type duplicatesView struct {
	Found     bool
	Divergent []divergentView
	Clusters  []clusterView
	Removed   int
	Passages  int // passages compared
	Hidden    int // pairs or clusters left out for their audience
	// MoreDivergent and MoreClusters count those past the page's bounds.
	MoreDivergent, MoreClusters int
}

type divergentView struct {
	A, B    sideView
	Jaccard string
	Rows    []diffRow
}

type sideView struct {
	ID, Ref, Owner, Updated string
	Line, EndLine           int
}

type diffRow struct {
	A, B string
	Fact bool
}

type clusterView struct {
	Canonical sideView
	Reason    string
	Exact     bool
	Copies    []string // path#anchor (Jaccard)
}

// The most divergent pairs and clusters the duplicates page lists: a
// large site has thousands of clusters, which no one reads on one page
// (the report files list them all).
const (
	maxDivergentShown = 300
	maxClustersShown  = 500
)

// duplicates returns the bundle's duplicate report, read once; nil when
// it has none.
func (h *handle) duplicates() (*build.DuplicateReport, error) {
	h.dupOnce.Do(func() {
		var r build.DuplicateReport
		found, err := h.readReport(bundle.DuplicatesJSON, &r)
		if found && err == nil {
			h.dup = &r
		}
		h.dupErr = err
	})
	return h.dup, h.dupErr
}

// duplicatesView reads the duplicate report. A pair or cluster is shown
// only when every passage of it that is in the bundle may be shown.
func (s *Server) duplicatesView(h *handle) (*duplicatesView, string) {
	r, err := h.duplicates()
	if err != nil {
		return nil, err.Error()
	}
	if r == nil {
		return &duplicatesView{}, ""
	}
	v := &duplicatesView{Found: true, Removed: r.Removed, Passages: r.Passages}
	side := func(l build.Location) (sideView, bool) {
		sv := sideView{ID: l.ID, Ref: l.Ref(), Line: l.Line, EndLine: l.EndLine}
		p, err := h.b.Passage(l.ID)
		if err != nil {
			return sv, false // not in this bundle: nothing known of its audience
		}
		if !bundle.Visible(p.Audience, s.audiences) {
			return sv, false
		}
		sv.Owner, sv.Updated = p.Owner, day(p.Updated)
		return sv, true
	}
	for _, d := range r.Divergent {
		if len(v.Divergent) == maxDivergentShown {
			v.MoreDivergent = len(r.Divergent) - maxDivergentShown
			break
		}
		a, okA := side(d.Canonical.Location)
		b, okB := side(d.Copy.Location)
		if !okA || !okB {
			v.Hidden++
			continue
		}
		dv := divergentView{A: a, B: b, Jaccard: fmt.Sprintf("%.2f", d.Jaccard)}
		for _, x := range d.Differences {
			dv.Rows = append(dv.Rows, diffRow{A: x.A, B: x.B, Fact: x.Fact})
		}
		v.Divergent = append(v.Divergent, dv)
	}
	for _, c := range r.Clusters {
		if len(v.Clusters) == maxClustersShown {
			v.MoreClusters = len(r.Clusters) - maxClustersShown
			break
		}
		canon, ok := side(c.Canonical)
		if !ok {
			v.Hidden++
			continue
		}
		cv := clusterView{Canonical: canon, Reason: c.Reason, Exact: c.Exact}
		for _, x := range c.Copies {
			cv.Copies = append(cv.Copies, fmt.Sprintf("%s (%.2f)", x.Ref(), x.Jaccard))
		}
		v.Clusters = append(v.Clusters, cv)
	}
	return v, ""
}

// warningView is one problem of the last build: where, and what is wrong.
type warningView struct {
	Where string // path:line or path:line:col, or the path alone
	Path  string
	Line  int
	Msg   string
}

// newWarningView takes a build problem as the warnings page shows it.
// The message may quote a line of the file: any credential in it is
// replaced by its marker, as in passages.
func newWarningView(e *sources.Error) warningView {
	w := warningView{Where: e.Path, Path: e.Path, Line: e.Line}
	switch {
	case e.Line > 0 && e.Col > 0:
		w.Where = fmt.Sprintf("%s:%d:%d", e.Path, e.Line, e.Col)
	case e.Line > 0:
		w.Where = fmt.Sprintf("%s:%d", e.Path, e.Line)
	}
	w.Msg, _ = secrets.Redact(e.Msg)
	return w
}
