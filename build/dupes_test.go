package build

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/sources"
)

func TestCanonicalRules(t *testing.T) {
	day := func(d int) time.Time { return time.Date(2026, 1, d, 0, 0, 0, 0, time.UTC) }
	ps := []Passage{
		{Path: "b/long/path.md", Line: 1, Updated: day(5)},
		{Path: "a/x.md", Line: 1, Updated: day(9)},
		{Path: "a/y.md", Line: 1, Updated: day(9)},
		{Path: "zz.md", Line: 1, Updated: day(9)},
		{Path: "zz.md", Line: 9, Updated: day(9)},
		{Path: "old/marked.md", Line: 1, Updated: day(1)},
	}
	docs := map[string]*sources.Document{"old/marked.md": {Front: map[string]any{"canonical": true}}}
	tests := []struct {
		members []int
		want    int
		reason  string
	}{
		{[]int{0, 5, 1}, 5, "marked canonical"},
		{[]int{0, 1}, 1, "freshest"},
		{[]int{1, 3}, 3, "shortest path"},
		{[]int{2, 1}, 1, "path order"},
		{[]int{4, 3}, 3, "path order"}, // same page: the earlier line
	}
	for _, tc := range tests {
		got, reason := canonical(tc.members, ps, docs)
		if got != tc.want || reason != tc.reason {
			t.Errorf("canonical(%v) = %d (%s), want %d (%s)", tc.members, got, reason, tc.want, tc.reason)
		}
	}
}

func TestConflicts(t *testing.T) {
	tests := []struct {
		d    dedupe.Difference
		want bool
	}{
		{dedupe.Difference{A: "30 days", B: "90 days", Fact: true}, true},
		{dedupe.Difference{A: "v1.2", B: "v1.3", Fact: true}, true},
		{dedupe.Difference{A: "Tuesday", B: "Thursday", Fact: true}, true},
		{dedupe.Difference{A: "requests", B: "requests (default 64", Fact: true}, false},
		{dedupe.Difference{A: "", B: "30 days", Fact: true}, false},
		{dedupe.Difference{A: "in", B: "on the sheet and in", Fact: false}, false},
	}
	for _, tc := range tests {
		if got := len(conflicts([]dedupe.Difference{tc.d})) > 0; got != tc.want {
			t.Errorf("conflicts(%+v) = %v, want %v", tc.d, got, tc.want)
		}
	}
}

func TestMaskFigures(t *testing.T) {
	for in, want := range map[string]string{
		"checked every 30 days\nby v1.2 (or 2026-01-04) tools": "checked every 0 days\nby 0 (or 0 tools",
		"":               "",
		"no figures":     "no figures",
		"7":              "0",
		" 7 a9\t\tb 10 ": " 0 0\t\tb 0 ",
	} {
		if got := maskFigures(in); got != want {
			t.Errorf("maskFigures(%q) = %q, want %q", in, got, want)
		}
	}
}

// maskWords is maskFigures written the plain way, word by word, to check
// the fast one against.
func maskWords(s string) string {
	var b strings.Builder
	for i := 0; i < len(s); {
		j := i
		for j < len(s) && !asciiSpace(s[j]) {
			j++
		}
		if word := s[i:j]; strings.ContainsAny(word, "0123456789") {
			b.WriteByte('0')
		} else {
			b.WriteString(word)
		}
		for j < len(s) && asciiSpace(s[j]) {
			b.WriteByte(s[j])
			j++
		}
		i = j
	}
	return b.String()
}

func FuzzMaskFigures(f *testing.F) {
	f.Add("checked every 30 days\nby v1.2 (or 2026-01-04) tools")
	f.Add(" 7 a9\t\tb 10 ")
	f.Fuzz(func(t *testing.T, s string) {
		if got, want := maskFigures(s), maskWords(s); got != want {
			t.Errorf("maskFigures(%q) = %q, want %q", s, got, want)
		}
	})
}

// TestDedupePassagesKeepsParallelSections: sections that share a shape
// but not a subject must not be folded, even though they are identical
// once figures are masked.
func TestDedupePassagesKeepsParallelSections(t *testing.T) {
	body := "The codec encodes text as UTF-%s and decodes it back; errors are handled by the handler named in errors, and byteorder picks the byte order when it is not given by a mark at the start of the data."
	ps := []Passage{
		{ID: "a", Path: "api.html", Line: 1, Text: strings.ReplaceAll(body, "%s", "16")},
		{ID: "b", Path: "api.html", Line: 9, Text: strings.ReplaceAll(body, "%s", "32")},
	}
	kept, rep, err := dedupePassages(ps, nil, dedupe.DefaultOptions(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(kept) != 2 || rep.Removed != 0 || len(rep.Divergent) != 0 {
		t.Errorf("kept %d, removed %d, divergent %d; want 2, 0, 0", len(kept), rep.Removed, len(rep.Divergent))
	}
}

// A divergent pair records each side's owner and dates and whether the
// bundle serves it: a folded copy is not served, a pair found only with
// figures masked keeps both. The cache key covers the owner, so a new
// owner is not hidden behind a remembered report.
func TestDivergentSides(t *testing.T) {
	day := func(d int) time.Time { return time.Date(2026, 3, d, 0, 0, 0, 0, time.UTC) }
	long := "Check the reefer door seals every %s days at the depot, and also after any reported impact to the rear doors, after the trailer has been off the road for more than two weeks, and before the first load of any pharma contract. Record the result in the fleet system against the trailer number."
	short := "Drain the %s litre tank on the trailer after %s days, refill it with %s litres of coolant, and log the level in the fleet system before %s in the morning."
	reviewed := day(20)
	ps := []Passage{
		{ID: "fold-a", Path: "fleet/seals.md", Line: 1, Text: strings.ReplaceAll(long, "%s", "30"), Owner: "fleet-ops", Updated: day(10), Reviewed: &reviewed},
		{ID: "fold-b", Path: "north/seals.md", Line: 1, Text: strings.ReplaceAll(long, "%s", "90"), Owner: "depot-north", Updated: day(2)},
		{ID: "keep-a", Path: "fleet/tank.md", Line: 1, Text: fmt.Sprintf(short, "40", "3", "20", "6"), Owner: "fleet-ops", Updated: day(10)},
		{ID: "keep-b", Path: "north/tank.md", Line: 1, Text: fmt.Sprintf(short, "60", "5", "25", "7"), Owner: "depot-north", Updated: day(2)},
	}
	for i := range ps {
		ps[i].Hash = ps[i].ID
	}
	_, rep, err := dedupePassages(append([]Passage(nil), ps...), nil, dedupe.DefaultOptions(), nil)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]DivergentCopy{}
	for _, d := range rep.Divergent {
		got[d.Canonical.ID+"/"+d.Copy.ID] = d
	}
	fold, ok := got["fold-a/fold-b"]
	if !ok {
		t.Fatalf("folded pair not reported: %+v", rep.Divergent)
	}
	if !fold.Canonical.InBundle || fold.Copy.InBundle {
		t.Errorf("folded pair in bundle: %v, %v; want true, false", fold.Canonical.InBundle, fold.Copy.InBundle)
	}
	if fold.Canonical.Owner != "fleet-ops" || fold.Copy.Owner != "depot-north" || !fold.Canonical.Updated.Equal(day(10)) ||
		fold.Canonical.Reviewed == nil || !fold.Canonical.Reviewed.Equal(reviewed) || fold.Copy.Reviewed != nil {
		t.Errorf("sides %+v, %+v", fold.Canonical, fold.Copy)
	}
	if d := fold.Differences; len(d) == 0 || !strings.Contains(d[0].SentenceA, "every 30 days at the depot") {
		t.Errorf("differences %+v lack the sentence", d)
	}
	if kept, ok := got["keep-a/keep-b"]; !ok || (!kept.Canonical.InBundle || !kept.Copy.InBundle) {
		t.Errorf("pair found by figures: in bundle %v, %v; want both", kept.Canonical.InBundle, kept.Copy.InBundle)
	}

	other := append([]Passage(nil), ps...)
	other[1].Owner = "depot-south"
	if dedupeDigest(ps, nil, dedupe.DefaultOptions()) == dedupeDigest(other, nil, dedupe.DefaultOptions()) {
		t.Error("the duplicate stage's cache key ignores the owner")
	}
	other = append([]Passage(nil), ps...)
	other[1].Reviewed = &reviewed
	if dedupeDigest(ps, nil, dedupe.DefaultOptions()) == dedupeDigest(other, nil, dedupe.DefaultOptions()) {
		t.Error("the duplicate stage's cache key ignores the reviewed date")
	}
}
