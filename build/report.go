package build

import (
	"fmt"
	"sort"
	"time"

	"github.com/kbc-project/kbc/build/fresh"
)

// StalenessCaution is printed at the top of every staleness report.
const StalenessCaution = "This report flags age, not truth: a fresh page can be wrong and an old one right. " +
	"Owners must review the pages flagged here; safety-relevant procedures follow the owning team's review rules, not this report."

// DocFreshness is one document's line in the staleness report.
type DocFreshness struct {
	Path  string `json:"path"`
	Title string `json:"title"`
	fresh.Info
	// OverdueDays counts whole days since the expiry date for expired
	// documents and since the review-by date for stale ones; DueInDays
	// counts days until the earlier of the two for the others.
	OverdueDays int `json:"overdue_days,omitempty"`
	DueInDays   int `json:"due_in_days,omitempty"`
}

// StatusCounts counts documents per freshness status.
type StatusCounts struct {
	Fresh   int `json:"fresh"`
	DueSoon int `json:"due_soon"`
	Stale   int `json:"stale"`
	Expired int `json:"expired"`
	Unknown int `json:"unknown"`
	Total   int `json:"total"`
}

// StaleOrExpired is the count the max-stale check reads.
func (c StatusCounts) StaleOrExpired() int { return c.Stale + c.Expired }

func (c *StatusCounts) add(s fresh.Status) {
	c.Total++
	switch s {
	case fresh.Fresh:
		c.Fresh++
	case fresh.DueSoon:
		c.DueSoon++
	case fresh.Stale:
		c.Stale++
	case fresh.Expired:
		c.Expired++
	default:
		c.Unknown++
	}
}

// AgeBucket is one bar of the age histogram: documents whose age in days
// is in [MinDays, MaxDays); MaxDays 0 means no upper bound.
type AgeBucket struct {
	Label     string `json:"label"`
	MinDays   int    `json:"min_days"`
	MaxDays   int    `json:"max_days,omitempty"`
	Documents int    `json:"documents"`
}

// OwnerGroup is the documents of one owner, worst first. The report lists
// owners by their worst document, so the first group holds the page that
// most needs attention.
type OwnerGroup struct {
	Owner     string         `json:"owner"` // "" for documents without one
	Counts    StatusCounts   `json:"counts"`
	Documents []DocFreshness `json:"documents"`
}

// StalenessReport says how fresh every document is at one instant.
type StalenessReport struct {
	GeneratedAt time.Time      `json:"generated_at"`
	Caution     string         `json:"caution"`
	Policy      fresh.Policy   `json:"policy"`
	Counts      StatusCounts   `json:"counts"`
	Histogram   []AgeBucket    `json:"age_histogram"`
	Owners      []OwnerGroup   `json:"owners"`
	Documents   []DocFreshness `json:"documents"` // worst first
	// Notes warn about the dating of the whole set (see datingNotes):
	// build prints each once on standard error.
	Notes []string `json:"notes,omitempty"`
}

// ageBuckets are the histogram's bars; the bounds follow calendar sense
// (a month, a quarter, half a year, a year, two, three), no source.
var ageBuckets = []AgeBucket{
	{Label: "under 30 days", MaxDays: 30},
	{Label: "30-89 days", MinDays: 30, MaxDays: 90},
	{Label: "90-179 days", MinDays: 90, MaxDays: 180},
	{Label: "180-364 days", MinDays: 180, MaxDays: 365},
	{Label: "1-2 years", MinDays: 365, MaxDays: 730},
	{Label: "2-3 years", MinDays: 730, MaxDays: 1095},
	{Label: "3 years or more", MinDays: 1095},
}

// NewStalenessReport builds the report for docs (whose Info was computed
// at now under policy p): worst first, then most overdue, then path.
func NewStalenessReport(docs []DocFreshness, now time.Time, p fresh.Policy) *StalenessReport {
	r := &StalenessReport{GeneratedAt: now.UTC(), Caution: StalenessCaution, Policy: p}
	r.Histogram = append([]AgeBucket(nil), ageBuckets...)
	r.Documents = append([]DocFreshness(nil), docs...)
	for i := range r.Documents {
		d := &r.Documents[i]
		// An expired page is overdue from its expiry date, whatever its
		// review-by date says: that is the day it stopped being true.
		due := d.ReviewBy
		if d.Expires != nil && (due.IsZero() || d.Expires.Before(due) || d.Status == fresh.Expired) {
			due = *d.Expires
		}
		d.OverdueDays, d.DueInDays = 0, 0
		if !due.IsZero() {
			days := int((now.Unix() - due.Unix()) / 86400)
			if d.Status == fresh.Stale || d.Status == fresh.Expired {
				d.OverdueDays = max(days, 0)
			} else {
				d.DueInDays = max(-days, 0)
			}
		}
	}
	sort.SliceStable(r.Documents, func(i, j int) bool {
		a, b := &r.Documents[i], &r.Documents[j]
		if c := worse(a, b); c != 0 {
			return c < 0
		}
		return a.Path < b.Path
	})
	byOwner := map[string]*OwnerGroup{}
	var owners []string
	for _, d := range r.Documents {
		r.Counts.add(d.Status)
		for i := range r.Histogram {
			b := &r.Histogram[i]
			if d.AgeDays >= b.MinDays && (b.MaxDays == 0 || d.AgeDays < b.MaxDays) {
				b.Documents++
				break
			}
		}
		g := byOwner[d.Owner]
		if g == nil {
			g = &OwnerGroup{Owner: d.Owner}
			byOwner[d.Owner] = g
			owners = append(owners, d.Owner)
		}
		g.Counts.add(d.Status)
		g.Documents = append(g.Documents, d)
	}
	// Owners by their worst page (each group is sorted worst first), then
	// by how many pages are stale or expired, then by name: the owner
	// whose page most needs attention comes first.
	sort.SliceStable(owners, func(i, j int) bool {
		a, b := byOwner[owners[i]], byOwner[owners[j]]
		if c := worse(&a.Documents[0], &b.Documents[0]); c != 0 {
			return c < 0
		}
		if x, y := a.Counts.StaleOrExpired(), b.Counts.StaleOrExpired(); x != y {
			return x > y
		}
		return owners[i] < owners[j]
	})
	for _, o := range owners {
		r.Owners = append(r.Owners, *byOwner[o])
	}
	r.Notes = datingNotes(r.Documents)
	return r
}

// worse orders two documents, worst first: by status (expired, stale,
// unknown, due soon, fresh), then most days overdue, then fewest days
// until due. It returns a negative number when a is worse, 0 on a tie.
func worse(a, b *DocFreshness) int {
	if sa, sb := a.Status.Severity(), b.Status.Severity(); sa != sb {
		return sa - sb
	}
	if a.OverdueDays != b.OverdueDays {
		return b.OverdueDays - a.OverdueDays
	}
	return a.DueInDays - b.DueInDays
}

// datingNotes warns, once for the whole set, when file times were set
// aside as stamped by a tool, and when more than half of the documents
// are dated by file time alone: copying or unpacking a tree resets those,
// so the report then says little.
func datingNotes(docs []DocFreshness) []string {
	var aside, byFile int
	var first *DocFreshness
	for i := range docs {
		d := &docs[i]
		switch {
		case d.SetAside != "":
			if aside++; first == nil || d.Path < first.Path {
				first = d
			}
		case d.UpdatedSource == "file time":
			byFile++
		}
	}
	var notes []string
	if aside > 0 {
		notes = append(notes, fmt.Sprintf("%d of %d documents have a file time that a tool stamped, not an author (%s: %s); "+
			"they are undated (status unknown): date them in front matter or build from a git checkout", aside, len(docs), first.Path, first.SetAside))
	}
	if 2*(byFile+aside) > len(docs) && byFile > 0 {
		notes = append(notes, fmt.Sprintf("%d of %d documents are dated only by their file time, which copying or unpacking resets; "+
			"date them in front matter or build from a git checkout", byFile+aside, len(docs)))
	}
	return notes
}

// At judges the report's documents again at the instant now, from the
// dates it recorded: a bundle built months ago tells which pages have gone
// stale since.
func (r *StalenessReport) At(now time.Time) *StalenessReport {
	dueSoon := r.Policy.DueSoon
	if dueSoon.Days <= 0 {
		dueSoon = fresh.DefaultPolicy().DueSoon
	}
	docs := append([]DocFreshness(nil), r.Documents...)
	for i := range docs {
		d := &docs[i]
		d.Status = d.StatusAt(now, dueSoon)
		base := d.Updated
		if d.Reviewed != nil && d.Reviewed.After(base) {
			base = *d.Reviewed
		}
		d.AgeDays = 0
		if !base.IsZero() {
			d.AgeDays = max(int((now.Unix()-base.Unix())/86400), 0)
		}
	}
	return NewStalenessReport(docs, now, r.Policy)
}
