package build

import (
	"slices"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build/fresh"
)

func day(s string) time.Time {
	t, err := time.Parse("2006-01-02", s)
	if err != nil {
		panic(err)
	}
	return t
}

func dayPtr(s string) *time.Time { t := day(s); return &t }

// An expired page is overdue from its expiry date, not from a review-by
// date that passed earlier; a stale page from its review-by date; a page
// due soon counts days to the earlier of the two.
func TestStalenessOverdue(t *testing.T) {
	now := day("2026-06-01")
	docs := []DocFreshness{
		{Path: "ferry/winter.md", Info: fresh.Info{Status: fresh.Expired, ReviewBy: day("2026-01-01"), Expires: dayPtr("2026-05-22")}},
		{Path: "ferry/summer.md", Info: fresh.Info{Status: fresh.Stale, ReviewBy: day("2026-05-02"), Expires: dayPtr("2026-09-01")}},
		{Path: "ferry/autumn.md", Info: fresh.Info{Status: fresh.DueSoon, ReviewBy: day("2026-08-01"), Expires: dayPtr("2026-06-11")}},
	}
	r := NewStalenessReport(docs, now, fresh.DefaultPolicy())
	got := map[string][2]int{}
	for _, d := range r.Documents {
		got[d.Path] = [2]int{d.OverdueDays, d.DueInDays}
	}
	want := map[string][2]int{"ferry/winter.md": {10, 0}, "ferry/summer.md": {30, 0}, "ferry/autumn.md": {0, 10}}
	for p, w := range want {
		if got[p] != w {
			t.Errorf("%s: overdue, due in = %v, want %v", p, got[p], w)
		}
	}
}

// Owners come in the order of their worst page: one expired page puts an
// owner before another with three stale ones; among equal worst pages the
// most overdue wins, then the name.
func TestStalenessOwnerOrder(t *testing.T) {
	now := day("2026-06-01")
	doc := func(path, owner string, st fresh.Status, reviewBy string) DocFreshness {
		return DocFreshness{Path: path, Info: fresh.Info{Owner: owner, Status: st, ReviewBy: day(reviewBy)}}
	}
	docs := []DocFreshness{
		doc("a.md", "pilots", fresh.Stale, "2026-05-01"),
		doc("b.md", "pilots", fresh.Stale, "2026-05-01"),
		doc("c.md", "pilots", fresh.Stale, "2026-05-01"),
		doc("d.md", "moorings", fresh.Fresh, "2026-12-01"),
		doc("e.md", "moorings", fresh.Expired, "2026-05-30"),
		doc("f.md", "chandlery", fresh.Stale, "2026-01-01"),
		doc("g.md", "", fresh.Unknown, "0001-01-01"),
		doc("h.md", "berths", fresh.Stale, "2026-01-01"),
	}
	r := NewStalenessReport(docs, now, fresh.DefaultPolicy())
	var owners []string
	for _, g := range r.Owners {
		owners = append(owners, g.Owner)
	}
	want := []string{"moorings", "berths", "chandlery", "pilots", ""}
	if !slices.Equal(owners, want) {
		t.Errorf("owners %q, want %q", owners, want)
	}
}
